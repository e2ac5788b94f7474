"""Checks on the files a command reads and writes: the input exists, outputs never replace it.

``--force`` replaces earlier outputs, never the input sheet; the "is this the input
file" test and every write are the one atomic writer's (:mod:`imputer_app.files`). A link
at an output counts as an existing output, dangling or not.
"""

from __future__ import annotations

import codecs
import csv
import os
from collections.abc import Sequence
from pathlib import Path

from imputer_app.cli.exit_codes import UsageError
from imputer_app.files import same_file, write_text_atomic

#: Output formats ``kinfill fill`` can write, by extension.
OUTPUT_SUFFIXES = (".xlsx", ".csv", ".tsv")


def existing_input(path: Path) -> Path:
    """Return ``path`` when it is an existing file; else raise :class:`UsageError`."""
    if not path.exists():
        raise UsageError(f"file not found: {path}")
    if path.is_dir():
        raise UsageError(f"{path} is a folder; give a sheet file")
    return path


def fill_output(source: Path, out: Path | None) -> Path:
    """Return the export file of ``kinfill fill``: ``--out`` or ``<input>.filled.xlsx``, checked."""
    target = out if out is not None else source.with_name(source.stem + ".filled.xlsx")
    if target.suffix.lower() not in OUTPUT_SUFFIXES:
        raise UsageError(f"--out must end in {' or '.join(OUTPUT_SUFFIXES)}; got {target.name}")
    if same_file(target, source):
        raise UsageError(f"--out is the input file {source.name}; Kinfill never overwrites its input")
    if not target.parent.is_dir():
        raise UsageError(f"folder not found for --out: {target.parent}")
    return target


def remove_stale(old_sidecars: Sequence[Path], written: Sequence[Path], source: Path) -> list[Path]:
    """Remove side files of an earlier export (replaced with --force) that this one lacks; return them."""
    removed = []
    for path in old_sidecars:
        if path not in written and os.path.lexists(path) and not same_file(path, source):
            path.unlink()
            removed.append(path)
    return removed


def refuse_input(paths: Sequence[Path], source: Path) -> None:
    """Refuse any output that is the input sheet: --force replaces outputs, never the input."""
    for path in paths:
        if same_file(path, source):
            raise UsageError(
                f"{path.name} would replace the input file {source.name}; "
                "Kinfill never overwrites its input, choose another name"
            )


def refuse_overwrite(paths: Sequence[Path], force: bool) -> None:
    """Refuse outputs that exist already (a link too, dangling or not) unless ``--force`` was given."""
    existing = [p for p in paths if os.path.lexists(p)]
    if existing and not force:
        names = ", ".join(str(p) for p in existing)
        raise UsageError(f"{names} already exist{'s' if len(existing) == 1 else ''}; add --force to replace")


def write_text(path: Path, text: str, *, source: Path, force: bool) -> None:
    """Write a small UTF-8 text output (the ``--json`` report) atomically; a failure is one line."""
    write_text_atomic(path, text, source=source, force=force)


#: Size of an xlsx worksheet (ECMA-376; Microsoft's "Excel specifications and limits"),
#: the limits the xlsx writer checks again when it writes.
XLSX_MAX_ROWS, XLSX_MAX_COLUMNS = 1_048_576, 16_384
#: How much of a text sheet is looked at for its header's width.
_HEAD_BYTES = 4 * 1024**2
_SEPARATORS = (",", ";", "\t", "|")


def refuse_too_wide_for_xlsx(source: Path, out: Path) -> None:
    """Refuse, before reading, a text sheet whose header has more columns than an xlsx sheet holds.

    Workbooks cannot be wider than the xlsx limit (their own formats stop there); a
    csv can, and reading 16,000 columns costs minutes that would be lost. The header is
    split on its most frequent separator, so this errs towards letting the reader judge.
    """
    if out.suffix.lower() != ".xlsx" or source.suffix.lower() not in (".csv", ".tsv", ".txt"):
        return
    width = header_width(source)
    if width > XLSX_MAX_COLUMNS:
        raise UsageError(
            f"{source.name} has {width:,} columns, more than an xlsx sheet holds ({XLSX_MAX_COLUMNS:,}); "
            "use --out with a .csv name"
        )


def header_width(path: Path) -> int:
    """Return the number of fields in the first non-empty line of a text sheet (0 if unreadable)."""
    try:
        with path.open("rb") as handle:
            head = handle.read(_HEAD_BYTES)
    except OSError:
        return 0  # the reader says what is wrong, in its own words
    boms = {codecs.BOM_UTF16_LE: "utf-16", codecs.BOM_UTF16_BE: "utf-16"}
    encoding = next((name for bom, name in boms.items() if head.startswith(bom)), "utf-8")
    text = head.decode(encoding, errors="replace").lstrip("\ufeff")
    first = next((line for line in text.splitlines() if line.strip()), "")
    if not first:
        return 0
    separator = "\t" if path.suffix.lower() == ".tsv" else max(_SEPARATORS, key=first.count)
    return len(next(csv.reader([first], delimiter=separator)))
