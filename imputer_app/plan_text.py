r"""The text around plans: reading a plan file safely, and wording about its names.

A plan file is read only when it is an ordinary file of at most :data:`MAX_PLAN_BYTES`
(checked on the open file before reading, so a pipe never blocks and a device such as
``/dev/zero`` is never read). Errors about a plan name the line that sets a key and
quote names briefly, so that a message stays one short line at any plan size.

Examples
--------
>>> name_list(["pH", "Lead", "Zinc"], limit=2)
"'pH', 'Lead' and 1 more"
>>> line_of("format = 1\nk = 3\n", "k")
' (line 2)'
"""

from __future__ import annotations

import os
import re
import stat
from collections.abc import Callable, Collection, Sequence
from pathlib import Path

from imputer_app.errors import PlanError

#: Largest plan file read (bytes); a plan written by Kinfill for 10,000 columns is far smaller.
MAX_PLAN_BYTES = 1_000_000

#: How many names an error lists before "and N more".
LISTED_NAMES = 5


def name_list(names: Sequence[object], limit: int = LISTED_NAMES) -> str:
    """Return ``names`` quoted for a one-line message: the first ``limit``, then "and N more".

    Examples
    --------
    >>> name_list(["a", "b", "c"], limit=2)
    "'a', 'b' and 1 more"
    """
    shown = ", ".join(shown_value(n) for n in names[:limit])
    rest = len(names) - limit
    return f"{shown} and {rest:,} more" if rest > 0 else shown


def shown_value(value: object, width: int = 60) -> str:
    """Return ``repr(value)`` cut to ``width`` characters, so one bad entry keeps a message short."""
    if isinstance(value, str | bytes):
        text = repr(value[: width + 1])
    elif isinstance(value, Collection) and len(value) > width:  # never build a huge repr
        text = f"a {type(value).__name__} of {len(value):,} entries"
    else:
        text = repr(value)
    return text if len(text) <= width else text[: width - 1] + "\u2026"


def read_plan_text(source: Path) -> str:
    """Return the text of plan file ``source``, refusing what is not a small ordinary file.

    Parameters
    ----------
    source : Path
        The plan file.

    Raises
    ------
    PlanError
        One line naming the file: missing, a folder, a device or pipe, over
        :data:`MAX_PLAN_BYTES`, unreadable, or not UTF-8 text.
    """
    # Non-blocking open and fstat before reading: a pipe never blocks, a device such
    # as /dev/zero is never read, and a huge file is refused by its size.
    limit = f"a plan file may be at most {MAX_PLAN_BYTES // 1_000_000} MB"
    try:
        fd = os.open(source, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0))
    except FileNotFoundError:
        raise PlanError(f"plan file not found: {source}") from None
    except OSError as exc:
        raise PlanError(f"cannot read plan {source}: {exc.strerror or exc}") from None
    try:
        info = os.fstat(fd)
        if stat.S_ISDIR(info.st_mode):
            raise PlanError(f"cannot read plan {source}: it is a folder, not a plan file")
        if not stat.S_ISREG(info.st_mode):
            raise PlanError(f"cannot read plan {source}: it is not an ordinary file (a device or a pipe)")
        if info.st_size > MAX_PLAN_BYTES:
            raise PlanError(f"cannot read plan {source}: it is {info.st_size:,} bytes; {limit}")
        with os.fdopen(os.dup(fd), "rb") as handle:
            data = handle.read(MAX_PLAN_BYTES + 1)
    except OSError as exc:
        raise PlanError(f"cannot read plan {source}: {exc.strerror or exc}") from None
    finally:
        os.close(fd)
    if len(data) > MAX_PLAN_BYTES:  # grew while we looked
        raise PlanError(f"cannot read plan {source}: it is over {MAX_PLAN_BYTES:,} bytes; {limit}")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise PlanError(f"cannot read plan {source}: it is not UTF-8 text (byte {exc.start})") from None


def line_of(text: str | None, key: str) -> str:
    """Return ' (line N)' for the first line that sets ``key``, if the text is known."""
    if not text:
        return ""
    pattern = re.compile(rf"^\s*(\[\s*)?{re.escape(key)}\s*(=|\])")
    for number, line in enumerate(text.splitlines(), start=1):
        if pattern.match(line):
            return f" (line {number})"
    return ""


_HEADER = re.compile(r"^\s*\[\s*([^\[\]]+?)\s*\]\s*(#.*)?$")


def _bare(part: str) -> str:
    return part.strip().strip("\"'")


def line_in_table(text: str | None, table: str, key: str) -> str:
    """Return ' (line N)' for the line that sets ``key`` of ``table`` (e.g. weights.pH).

    Knows ``[table]`` sections, ``[table.key]`` sub-tables and dotted ``table.key = ...``
    lines; otherwise falls back to the line of the table itself.
    """
    if not text:
        return ""
    either = "|".join(map(re.escape, sorted({key, f'"{key}"', f"'{key}'"})))
    assign = re.compile(rf"^\s*({either})\s*=")
    dotted = re.compile(rf"^\s*{re.escape(table)}\s*\.\s*({either})\s*=")
    section: list[str] = []
    for number, line in enumerate(text.splitlines(), start=1):
        header = _HEADER.match(line)
        if header:
            section = [_bare(p) for p in header.group(1).split(".")]
            if section == [table, key]:
                return f" (line {number})"
            continue
        if (section == [table] and assign.match(line)) or (not section and dotted.match(line)):
            return f" (line {number})"
    return line_of(text, table)


#: One-line comment written above each key of a plan file: what it takes.
_KEY_NOTES = {
    "format": "plan file format; this Kinfill reads 1",
    "k": "donors per filled cell: a whole number from 1 (the recovery test helps choose it)",
    "similarity_columns": "column names used to find similar rows; leave out the key for every usable column",
    "fill_columns": "column names whose gaps are filled; leave out the key for similarity columns with gaps",
    "carried_columns": "column names copied unchanged (identifiers, dates, notes)",
    "group_column": "a column name: donors come only from rows of the same group; leave out for no groups",
    "weights": "column = weight in the distance, a number from 0 to 1000 (default 1)",
    "bounds": "column = { lower = number, upper = number }: filled values are kept inside",
    "decimals": "column = decimals a filled value is rounded to, a whole number from 0",
    "kinds": 'column = "number" or "category", overriding what was detected',
    "k_by_column": "column = k for that fill column (a whole number from 1); k is used for the others",
    "interval_level": 'level of every filled number\'s interval, from 0.5 to 0.99, or "off"',
    "fill_formula_errors": "true fills cells holding a formula error (#DIV/0!) like gaps; false leaves them",
    "markers": 'marker text = "missing" or "below-limit": what a marker in a cell stands for',
    "limits": "column = the limit a below-limit marker stands under, where the sheet gives none",
    "id_column": "a column name naming samples in the fill log; leave out for the first identifier",
    "rounding": "filled numbers to each column's measured precision, or as computed; decimals wins",
}


def commented_toml(
    data: dict[str, object], choices: dict[str, tuple[str, ...]], dumps: Callable[[dict], str]
) -> str:
    """Write plan data as TOML with a one-line comment above each key listing what it takes.

    Parameters
    ----------
    data : dict
        :meth:`FillPlan.to_dict` output (keys first, tables after, as TOML requires).
    choices : dict
        Allowed values of each choice key (``plan.CHOICES``).
    dumps : callable
        The TOML writer of one ``{key: value}`` (``tomli_w.dumps``).

    Examples
    --------
    >>> import tomli_w
    >>> choices = {"no_donor": ("leave_empty", "column_mean")}
    >>> print(commented_toml({"k": 5, "no_donor": "leave_empty"}, choices, tomli_w.dumps), end="")
    # donors per filled cell: a whole number from 1 (the recovery test helps choose it)
    k = 5
    # one of: "leave_empty", "column_mean"
    no_donor = "leave_empty"
    """
    plain = [key for key, value in data.items() if not isinstance(value, dict)]
    tables = [key for key, value in data.items() if isinstance(value, dict)]
    parts = []
    for key in plain + tables:
        if key in choices:
            note = "one of: " + ", ".join(f'"{value}"' for value in choices[key])
            note = f"{_KEY_NOTES[key]}; {note}" if key in _KEY_NOTES else note
        else:
            note = _KEY_NOTES.get(key, "")
        block = dumps({key: data[key]})
        parts.append((f"# {note}\n" if note else "") + block)
    return "".join(part if part.endswith("\n") else part + "\n" for part in parts)
