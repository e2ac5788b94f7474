"""Turn parsed columns into a :class:`Sheet`'s frame, states, cell notes and problems."""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from imputer_app.errors import SheetError
from imputer_app.sheets._cell_classes import CENSORED, MARKER, NO_VALUE, in_codes
from imputer_app.sheets._cells import ParsedColumn
from imputer_app.sheets._grid import cell_text, column_letter
from imputer_app.sheets._header import unit_from_name
from imputer_app.sheets._kinds import (
    CENSORED_STATE,
    FORMULA_ERROR_STATE,
    TEXT_IN_NUMBER,
    Built,
    Detected,
    build,
    kind_of_parsed_column,
    text_date_format,
)
from imputer_app.sheets._model import CELL_STATES, COLUMN_KINDS, NOTE_COLUMNS
from imputer_app.sheets._threads import map_columns
from imputer_app.work import CancelFlag, raise_if_cancelled

#: The dtype of every column of ``Sheet.states``.
STATES_DTYPE = pd.CategoricalDtype(list(CELL_STATES))
#: Kinds a caller may force with ``kinds={name: kind}``.
OVERRIDE_KINDS = tuple(kind for kind in COLUMN_KINDS if kind != "empty")
#: Text-in-number cells listed one by one in ``problems`` per column (all are in cell_notes).
MAX_LISTED = 10
#: The text of a cell note for a formula saved without its result.
NO_VALUE_TEXT = "formula with no stored value"
#: Name patterns of a limit column for column ``base`` and limit family ``word``.
#: Names are compared by :func:`_limit_key`, so "x_LOD", "x (LOD)" and "X lod" all match.
LIMIT_COLUMN_FORMS = ("{base} {word}", "{word} {base}")


@dataclass(frozen=True)
class Column:
    """One parsed column with its place in the file and its header facts."""

    name: str
    original: str
    position: int
    unit: str | None
    notes: tuple[str, ...]
    parsed: ParsedColumn


@dataclass
class Assembled:
    """Everything :func:`assemble` builds for a Sheet except its source facts."""

    frame: pd.DataFrame
    states: pd.DataFrame
    kinds: dict[str, str]
    notes: dict[str, tuple[str, ...]]
    cell_notes: pd.DataFrame
    problems: list[str]


def resolve_kinds(columns: list[Column], kinds: Mapping[str, str] | None, where: str) -> dict[str, str]:
    """Check ``kinds`` overrides and key them by the unique column name."""
    if not kinds:
        return {}
    by_name = {column.name: column.name for column in columns}
    for column in columns:
        by_name.setdefault(column.original, column.name)
    resolved: dict[str, str] = {}
    for key, kind in kinds.items():
        if key not in by_name:
            listing = ", ".join(repr(column.name) for column in columns)
            raise SheetError(f"kinds: no column '{key}' in {where}; columns are {listing}")
        if kind not in OVERRIDE_KINDS:
            raise SheetError(f"kinds: '{kind}' for column '{key}' is not one of {', '.join(OVERRIDE_KINDS)}")
        resolved[by_name[key]] = kind
    return resolved


def detect(column: Column, forced: str | None) -> Detected:
    """The column's kind: detected, or forced by the caller (with a note)."""
    found = kind_of_parsed_column(column.parsed)
    if forced is None or forced == found.kind:
        return found
    note = f"kind set to {forced} by the user (detected {found.kind})"
    if forced == "date":
        fmt = text_date_format(column.parsed.text[column.parsed.text != ""])[0]
        return Detected("date", fmt, note)
    return Detected(forced, None, note)


def assemble(
    columns: list[Column],
    rows: np.ndarray,
    forced: Mapping[str, str],
    workbook: bool,
    cancel: CancelFlag | None = None,
    workers: int = 1,
) -> Assembled:
    """Build frame, states, notes and problems for the data ``rows`` (1-based file rows).

    ``workers`` threads detect and build the columns side by side (a long sheet).
    """
    index = pd.Index(rows, name="row")
    values: dict[str, object] = {}
    states: dict[str, pd.Categorical] = {}
    kinds: dict[str, str] = {}
    notes: dict[str, tuple[str, ...]] = {}
    note_frames: list[pd.DataFrame] = []
    problems: list[str] = []
    found_kinds = map_columns(lambda column: detect(column, forced.get(column.name)), columns, workers)
    detected = {column.name: found for column, found in zip(columns, found_kinds, strict=True)}
    numbers = {c.name: c for c in columns if detected[c.name].kind == "number"}
    # a column's frame values and states depend on it alone (limits are filled in after)
    builds = map_columns(lambda column: build(column.parsed, detected[column.name]), columns, workers)
    for column, built in zip(columns, builds, strict=True):
        raise_if_cancelled(cancel)
        found = detected[column.name]
        limit_note = _fill_limits(column, numbers) if found.kind == "number" else None
        values[column.name] = _series(built, found.kind, index)
        states[column.name] = pd.Categorical.from_codes(built.states, dtype=STATES_DTYPE)
        kinds[column.name] = found.kind
        notes[column.name] = column.notes + tuple(n for n in (found.note, limit_note) if n)
        frame = _cell_notes(column, built, rows)
        if not frame.empty:
            note_frames.append(frame)
        if found.kind == "empty":
            problems.append(_empty_problem(column))
        problems += _cell_problems(column, found.kind, frame, workbook)
    cell_notes = (
        pd.concat(note_frames, ignore_index=True) if note_frames else pd.DataFrame(columns=list(NOTE_COLUMNS))
    )
    return Assembled(
        frame=pd.DataFrame(values, index=index),
        states=pd.DataFrame(states, index=index),
        kinds=kinds,
        notes=notes,
        cell_notes=cell_notes,
        problems=problems,
    )


def _series(built: Built, kind: str, index: pd.Index) -> pd.Series:
    # the built values are the column's own new array: no copy (pandas copies arrays by default)
    if kind in ("category", "identifier"):
        return pd.Series(built.values, index=index, dtype=object, copy=False)
    return pd.Series(built.values, index=index, copy=False)


def _limit_key(name: str) -> str:
    """A name without its unit suffix, lower case, runs of space _ - ( ) as one space."""
    if unit_from_name(name):
        name = re.sub(r"\s*[\[(][^\[\]()]*[\])]\s*$", "", name)
    return " ".join(re.sub(r"[_\-()\s]+", " ", name).lower().split())


def _fill_limits(column: Column, numbers: Mapping[str, Column]) -> str | None:
    """Take limits of "<LOD"-style cells from a "<name> LOD" column of the same row."""
    parsed = column.parsed
    open_cells = np.flatnonzero(parsed.cls == CENSORED)  # few: test the rest on those only
    open_cells = open_cells[np.isnan(parsed.limit[open_cells]) & (parsed.token[open_cells] != "")]
    if not open_cells.size:
        return None
    base = _limit_key(column.original or column.name)
    lookup = {_limit_key(c.original or c.name): c for c in numbers.values() if c.name != column.name}
    used: list[str] = []
    for word in sorted(set(parsed.token[open_cells])):
        cells = open_cells[parsed.token[open_cells] == word]
        source = next(
            (
                lookup[key]
                for form in LIMIT_COLUMN_FORMS
                if (key := _limit_key(form.format(base=base, word=word))) in lookup
            ),
            None,
        )
        if source is not None:
            parsed.limit[cells] = source.parsed.number[cells]
            used.append(source.name)
    if not used:
        return None
    return f"limits of censored cells without a number taken from {', '.join(repr(u) for u in used)}"


def _cell_notes(column: Column, built: Built, rows: np.ndarray) -> pd.DataFrame:
    parsed = column.parsed
    noted = np.flatnonzero(
        in_codes(parsed.cls, (MARKER, NO_VALUE))
        | in_codes(built.states, (CENSORED_STATE, TEXT_IN_NUMBER, FORMULA_ERROR_STATE))
    )
    if not noted.size:
        return pd.DataFrame(columns=list(NOTE_COLUMNS))
    text = parsed.text[noted].copy()
    raw_text = np.flatnonzero(text == "")
    if raw_text.size:
        text[raw_text] = [cell_text(value) for value in parsed.raw[noted[raw_text]]]
    text[parsed.cls[noted] == NO_VALUE] = NO_VALUE_TEXT
    censored = built.states[noted] == CENSORED_STATE
    return pd.DataFrame(
        {
            "row": rows[noted],
            "column": column.name,
            "state": np.asarray(CELL_STATES, dtype=object)[built.states[noted]],
            "text": text,
            "side": np.where(censored, parsed.side[noted], ""),
            "limit": np.where(censored, parsed.limit[noted], np.nan),
        }
    )


def _cell_problems(column: Column, kind: str, notes: pd.DataFrame, workbook: bool) -> list[str]:
    if notes.empty:
        return []
    problems: list[str] = []
    bad = notes[notes["state"] == CELL_STATES[TEXT_IN_NUMBER]]
    what = "a date" if kind == "date" else "a number"
    letter = column_letter(column.position)
    for row, text in zip(bad["row"].head(MAX_LISTED), bad["text"].head(MAX_LISTED), strict=True):
        cell = f" (cell {letter}{row})" if workbook else ""
        problems.append(
            f"'{column.name}' row {row}{cell}: '{text}' is not {what}; it is read as a gap "
            "and marked text_in_number"
        )
    if len(bad) > MAX_LISTED:
        problems.append(
            f"'{column.name}': {len(bad) - MAX_LISTED} more cells hold text that is not {what} "
            "(all are listed in the cell notes)"
        )
    problems += _formula_problems(column, notes, workbook)
    censored = notes[notes["state"] == CELL_STATES[CENSORED_STATE]]
    unknown = censored[censored["limit"].isna()]
    if len(unknown):
        problems.append(
            f"'{column.name}': {len(unknown)} censored cell(s) such as '{unknown['text'].iloc[0]}' give no "
            f"number and no limit column such as '{column.name} LOD' was found; their limit is unknown"
        )
    return problems


def _empty_problem(column: Column) -> str:
    if (column.parsed.cls == NO_VALUE).any():
        return (
            f"column '{column.name}' holds no value (its cells are blank, missing markers, formula errors "
            "or formulas with no stored value)"
        )
    return f"column '{column.name}' holds no value (every cell is blank or a missing marker)"


def _formula_problems(column: Column, notes: pd.DataFrame, workbook: bool) -> list[str]:
    """One line each for cached formula errors and for formulas with no stored value."""
    problems: list[str] = []
    letter = column_letter(column.position)
    errors = notes[(notes["state"] == CELL_STATES[FORMULA_ERROR_STATE]) & (notes["text"] != NO_VALUE_TEXT)]
    if len(errors):
        row, text = errors["row"].iloc[0], errors["text"].iloc[0]
        cell = f"cell {letter}{row}" if workbook else f"row {row}"
        problems.append(
            f"'{column.name}': {len(errors)} cell(s) hold a formula error such as '{text}' ({cell}); "
            "they are marked formula_error and are not gaps to fill"
        )
    empty = notes[notes["text"] == NO_VALUE_TEXT]
    if len(empty):
        row = empty["row"].iloc[0]
        problems.append(
            f"'{column.name}': {len(empty)} formula cell(s) such as cell {letter}{row} have no stored value "
            "(the file was saved without calculating); they are formulas, not gaps: marked formula_error"
        )
    return problems
