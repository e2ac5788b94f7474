"""What the engine accepts as input, and reading it (a DataFrame or a sheet-like object).

:class:`SheetLike` names what the engine (and the recovery test) read from a read
sheet; :func:`unpack` checks the input once and :class:`Input` carries it on. The
functions here read cell states and censored entries' notes into numpy arrays, so
that nothing after them looks at the sheet again.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any, Protocol, runtime_checkable

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from imputer_app.engine._censored import Censored
from imputer_app.engine._log import repeated
from imputer_app.errors import PlanError


class ColumnFacts(Protocol):
    """What the engine reads of one column's facts: its name and detected kind."""

    @property
    def name(self) -> str: ...

    @property
    def kind(self) -> str: ...


@runtime_checkable
class SheetLike(Protocol):
    """A read sheet as the engine and the recovery test see it.

    Attributes
    ----------
    frame : DataFrame of shape (n_rows, n_columns)
        The values; NaN where a cell holds none.
    states : DataFrame of str, same shape and labels as ``frame``, or None
        Per cell ``observed``, ``missing``, ``censored``, ``text_in_number`` or
        ``formula_error`` (a formula's error result: left alone unless the plan says).
    cell_notes : DataFrame or None
        One row per censored cell: ``row`` (label), ``column``, ``text``, ``side``
        (``"<"`` or ``">"``) and ``limit``.

    A sheet may also have ``columns``, a sequence of :class:`ColumnFacts` whose kinds
    the engine then uses instead of detecting them (:class:`SheetWithKinds`).
    """

    @property
    def frame(self) -> pd.DataFrame: ...

    @property
    def states(self) -> pd.DataFrame | None: ...

    @property
    def cell_notes(self) -> pd.DataFrame | None: ...


@runtime_checkable
class SheetWithKinds(SheetLike, Protocol):
    """A :class:`SheetLike` that also says each column's kind."""

    @property
    def columns(self) -> Sequence[ColumnFacts]: ...


@dataclass(frozen=True)
class Input:
    """The input, checked: a frame with text column names, and what the sheet adds.

    Attributes
    ----------
    names : tuple of str
        The frame's column names as text (iterating a pandas Index is slow).
    frame : DataFrame
        Its columns named by ``names``.
    states, notes : DataFrame or None
        The sheet's cell states and censored entries' notes (None for a DataFrame).
    sheet_kinds : dict of str to str or None
        The sheet's kind per column, when it says.
    labels : Index or None
        The input's own column labels when some were not text (integers, ...): the
        result gets them back. None when they were all text.
    sheet_reasons : dict of str to str
        Why the sheet says a column must be carried by default (a computed column,
        free text), from its column facts' ``carry_reason``; empty for a DataFrame.
    decimals : dict of str to int
        The measured precision the sheet read for its number columns (column facts'
        ``decimals``: from cell text or number formats); empty for a DataFrame.
    """

    names: tuple[str, ...]
    frame: pd.DataFrame
    states: pd.DataFrame | None
    notes: pd.DataFrame | None
    sheet_kinds: dict[str, str] | None
    labels: pd.Index | None = None
    sheet_reasons: dict[str, str] = field(default_factory=dict)
    decimals: dict[str, int] = field(default_factory=dict)


def unpack(data: pd.DataFrame | SheetLike | NDArray[Any]) -> Input:
    """Check ``data`` and take it apart; raise :class:`PlanError` for anything else.

    A 2-D ndarray becomes a DataFrame with columns 0..n-1 (named "0", "1", ... in a
    plan). Column labels that are not text are named by their text (``str(label)``)
    inside the engine, in messages and in the fill log; :attr:`Input.labels` keeps them.
    """
    kinds: dict[str, str] | None = None
    if isinstance(data, np.ndarray):
        if data.ndim != 2:
            raise PlanError(
                f"cannot fill an array of {data.ndim} dimensions; give a 2-D array (rows x columns)"
            )
        data = pd.DataFrame(data)
    reasons: dict[str, str] = {}
    decimals: dict[str, int] = {}
    if isinstance(data, pd.DataFrame):
        frame, states, notes = data, None, None
    elif isinstance(data, SheetLike):
        frame, states, notes = data.frame, data.states, data.cell_notes
        if isinstance(data, SheetWithKinds) and isinstance(data.columns, list | tuple) and data.columns:
            kinds = {c.name: c.kind for c in data.columns}
            reasons = {c.name: why for c in data.columns if (why := getattr(c, "carry_reason", None))}
            decimals = {c.name: d for c in data.columns if isinstance(d := getattr(c, "decimals", None), int)}
    else:
        raise PlanError(f"cannot fill a {type(data).__name__}; give a table (DataFrame) or a read sheet")
    if not isinstance(frame, pd.DataFrame):
        raise PlanError("the sheet's frame is not a table")
    if frame.columns.has_duplicates:
        dup = frame.columns[frame.columns.duplicated()][0]
        raise PlanError(f"column {str(dup)!r} appears twice; column names must be unique")
    labels = frame.columns
    names = tuple(str(c) for c in labels.tolist())
    if all(isinstance(c, str) for c in labels.tolist()):
        return Input(names, frame, states, notes, kinds, sheet_reasons=reasons, decimals=decimals)
    text = pd.Index(names)
    if text.has_duplicates:
        dup = text[text.duplicated()][0]
        raise PlanError(f"two columns are both named {dup!r} as text; column names must be unique")
    frame = frame.copy(deep=False)
    frame.columns = text
    if states is not None:
        states = states.copy(deep=False)
        states.columns = pd.Index([str(c) for c in states.columns.tolist()])
    if notes is not None and "column" in notes.columns:
        notes = notes.assign(column=notes["column"].map(str))
    return Input(names, frame, states, notes, kinds, labels, reasons, decimals)


def state_masks(inp: Input, columns: list[str], words: tuple[str, ...]) -> dict[str, NDArray[np.bool_]]:
    """Per state word, bool (n_rows, len(columns)): the sheet's state of the cell is that word.

    All False without states or for a column the states lack. Categorical states (what
    the sheet reader gives) are compared by code, column by column: far faster than
    turning the whole table of states into text.
    """
    n = len(inp.frame)
    if inp.states is None or not columns:
        return {word: np.zeros((n, len(columns)), dtype=bool) for word in words}
    none = np.zeros(n, dtype=bool)
    parts: dict[str, list[NDArray[np.bool_]]] = {word: [none] * len(columns) for word in words}
    for j, col in enumerate(columns):
        if col not in inp.states.columns:
            continue
        series = inp.states[col]
        if isinstance(series.dtype, pd.CategoricalDtype):
            codes, classes = np.asarray(series.array.codes), series.dtype.categories
            for word in words:
                if word in classes:
                    parts[word][j] = codes == classes.get_loc(word)
        else:
            text = series.astype(object).to_numpy()
            for word in words:
                parts[word][j] = text == word
    # the columns stacked once: writing them one by one into a row-major array is slower
    return {word: np.stack(cols, axis=1) for word, cols in parts.items()}


def censored_cells(inp: Input, col: str, mask: NDArray[np.bool_]) -> Censored:
    """Censored cells ``mask`` of ``col`` with their side, limit and text from the cell notes."""
    n = len(mask)
    side = np.full(n, "", dtype="<U1")
    limit = np.full(n, np.nan)
    text = repeated("", n)
    notes = inp.notes
    if notes is not None and len(notes) and {"row", "column"} <= set(notes.columns):
        mine = notes[notes["column"] == col]
        pos = inp.frame.index.get_indexer(pd.Index(mine["row"]))
        ok = (pos >= 0) & mask[np.maximum(pos, 0)]
        if "side" in mine.columns:
            side[pos[ok]] = mine["side"].fillna("").astype(str).to_numpy()[ok]
        if "limit" in mine.columns:
            limit[pos[ok]] = pd.to_numeric(mine["limit"], errors="coerce").to_numpy(dtype=float)[ok]
        if "text" in mine.columns:
            text[pos[ok]] = mine["text"].fillna("").astype(str).to_numpy()[ok]
    return Censored(mask, side, limit, text)
