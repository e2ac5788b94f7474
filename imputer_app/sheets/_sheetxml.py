"""Render worksheet rows as SpreadsheetML (Office Open XML) text, column by column.

xlsxwriter builds the workbook around them (styles, comments, images, the small
sheets), but its per-cell API costs several microseconds a cell, too slow for
100,000 rows and their fill log. Here each column of a chunk of rows becomes a list
of ``<c>`` elements with one list comprehension, and the rows are joined from those
lists. Element and attribute names follow ECMA-376 Part 1, sec. 18.3.1 (``row``,
``c``, ``v``, ``is``/``t`` for inline strings); text escapes follow sec. 22.4.2.4
(``_xHHHH_`` for characters XML 1.0 cannot carry).

Text is always written as an inline string, never as a formula, so a cell that
begins with ``=`` cannot run in a spreadsheet program.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date, datetime
from typing import Any

import numpy as np

#: Longest text a cell may hold (Excel specification limit, quoted from memory).
MAX_CELL_TEXT = 32767

# Characters XML cannot carry (control characters, lone surrogates, U+FFFE/U+FFFF),
# CR (which XML parsers turn into LF) and a literal "_xHHHH_" that readers would decode.
_SPECIAL = re.compile("[&<>\x00-\x08\x0b\x0c\x0d\x0e-\x1f\ud800-\udfff\ufffe\uffff]|_x[0-9A-Fa-f]{4}_")
_ENTITIES = {"&": "&amp;", "<": "&lt;", ">": "&gt;"}
#: Whole numbers below this are written without ".0" (a float holds every whole number up to 2**53).
_EXACT_WHOLE = 2.0**53
_EXCEL_EPOCH = np.datetime64("1899-12-30T00:00:00", "ns")


def column_letter(index: int) -> str:
    """Return the spreadsheet letters of a 0-based column index (0 -> A, 26 -> AA)."""
    letters = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


def _escape_one(match: re.Match[str]) -> str:
    text = match.group()
    if text in _ENTITIES:
        return _ENTITIES[text]
    if len(text) > 1:  # a literal _xHHHH_: escape its underscore
        return "_x005F" + text
    return f"_x{ord(text):04X}_"


def escape_text(text: str) -> str:
    """Escape ``text`` for an XML text node of a cell (cut to :data:`MAX_CELL_TEXT`)."""
    if len(text) > MAX_CELL_TEXT:
        text = text[:MAX_CELL_TEXT]
    if _SPECIAL.search(text) is None:
        return text
    return _SPECIAL.sub(_escape_one, text)


def inline_body(text: str) -> str:
    """Return the ``<is>`` element holding ``text`` (escaped, spaces kept)."""
    body = escape_text(text)
    if body[:1].isspace() or body[-1:].isspace():
        return f'<is><t xml:space="preserve">{body}</t></is>'
    return f"<is><t>{body}</t></is>"


def inline_bodies(values: list[str | None]) -> list[str | None]:
    """Return :func:`inline_body` of each text (None stays None), checking all at once.

    One regular-expression search over the joined texts finds whether any needs
    escaping; usually none does and each body is a plain f-string.
    """
    texts = [v for v in values if v is not None]
    if not texts:
        return list(values)
    if _SPECIAL.search("\n".join(texts)) is not None or max(map(len, texts)) > MAX_CELL_TEXT:
        return [None if v is None else inline_body(v) for v in values]
    return [
        None
        if v is None
        else f"<is><t>{v}</t></is>"
        if v.strip() == v
        else f'<is><t xml:space="preserve">{v}</t></is>'
        for v in values
    ]


def text_cell(ref: str, text: str, style: str = "") -> str:
    """Return an inline-string ``<c>`` element (never a formula)."""
    return f'<c r="{ref}"{style} t="inlineStr">{inline_body(text)}</c>'


def value_cell(ref: str, value: Any, style: str = "", date_style: str = "") -> str:
    """Return the ``<c>`` element for one Python value (empty string for a blank).

    Numbers become numbers, ``bool`` a boolean, dates Excel serial numbers in
    ``date_style``, text inline strings, and anything else its ``str``.
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return f'<c r="{ref}"{style}/>' if style else ""
    if isinstance(value, str):
        return text_cell(ref, value, style)
    if isinstance(value, bool | np.bool_):
        return f'<c r="{ref}"{style} t="b"><v>{int(value)}</v></c>'
    if isinstance(value, int | np.integer):
        return f'<c r="{ref}"{style}><v>{int(value)}</v></c>'
    if isinstance(value, float | np.floating):
        number = float(value)
        if math.isinf(number):
            return text_cell(ref, repr(number), style)
        if number.is_integer() and abs(number) < _EXACT_WHOLE:  # 139, not 139.0
            return f'<c r="{ref}"{style}><v>{int(number)}</v></c>'
        return f'<c r="{ref}"{style}><v>{number!r}</v></c>'
    if isinstance(value, datetime | date | np.datetime64):
        serial = excel_serial(np.array([value], dtype="datetime64[ns]"))[0]
        if math.isnan(serial):
            return f'<c r="{ref}"{style}/>' if style else ""
        return f'<c r="{ref}"{style or date_style}><v>{serial!r}</v></c>'
    return text_cell(ref, str(value), style)


def excel_serial(values: np.ndarray) -> np.ndarray:
    """Return Excel serial day numbers (1900 date system) for datetime64 ``values``.

    NaT becomes NaN. Shape is kept.
    """
    stamps = values.astype("datetime64[ns]")
    days = (stamps - _EXCEL_EPOCH) / np.timedelta64(1, "D")
    return np.where(np.isnat(stamps), np.nan, days)


@dataclass
class ColumnCells:
    """One column's values and cell styles, rendered a chunk of rows at a time.

    Attributes
    ----------
    letter : str
        Column letters (``A``, ``B``...).
    values : ndarray of shape (n,)
        float64 (NaN = blank) for ``"number"``, else object (None = blank).
    mode : {"number", "text", "any"}
        ``"number"`` and ``"text"`` (str or None only) skip per-cell type checks.
    codes : ndarray of shape (n,) of small ints, or None
        Index into ``styles`` per cell; 0 = the column's plain style. A non-zero
        code also marks a blank cell (so a filled-colour gap stays visible).
    styles : sequence of str
        `` s="N"`` attribute text per code; ``styles[0]`` applies to non-blank cells.
    texts : dict of int to str
        Cells (by position) written as this text instead of their value.
    date_style : str
        Style attribute for date values in an object column.
    """

    letter: str
    values: np.ndarray
    mode: str
    codes: np.ndarray | None = None
    styles: Sequence[str] = ("",)
    texts: dict[int, str] = field(default_factory=dict)
    date_style: str = ""

    def __post_init__(self) -> None:
        if self.mode == "number":
            infinite = np.flatnonzero(np.isinf(self.values))
            self.texts = {**{int(i): repr(float(self.values[i])) for i in infinite}, **self.texts}
        self._text_rows = np.array(sorted(self.texts), dtype=np.int64)

    def cells(self, start: int, stop: int, rows: list[str]) -> list[str]:
        """Return the ``<c>`` elements of rows ``start:stop`` ('' for an absent cell).

        ``rows`` holds the 1-based sheet row numbers of those rows, as text.
        """
        if self.mode == "number":
            out = self._numeric_cells(start, stop, rows)
        elif self.mode == "text":
            out = self._text_cells(start, stop, rows)
        else:
            out = self._object_cells(start, stop, rows)
        lo, hi = np.searchsorted(self._text_rows, [start, stop])
        for position in self._text_rows[lo:hi].tolist():
            out[position - start] = text_cell(
                f"{self.letter}{rows[position - start]}", self.texts[position], self._style(position)
            )
        return out

    def _style(self, position: int) -> str:
        code = 0 if self.codes is None else int(self.codes[position])
        return self.styles[code]

    def _numeric_cells(self, start: int, stop: int, rows: list[str]) -> list[str]:
        letter = self.letter
        numbers = list(map(repr, self.values[start:stop].tolist()))
        if self.codes is None:
            plain = self.styles[0]
            return [
                "" if n == "nan" else f'<c r="{letter}{r}"{plain}><v>{n}</v></c>'
                for r, n in zip(rows, numbers, strict=True)
            ]
        styles = self.styles
        codes = self.codes[start:stop].tolist()
        return [
            (f'<c r="{letter}{r}"{styles[c]}/>' if c else "")
            if n == "nan"
            else f'<c r="{letter}{r}"{styles[c]}><v>{n}</v></c>'
            for r, n, c in zip(rows, numbers, codes, strict=True)
        ]

    def _text_cells(self, start: int, stop: int, rows: list[str]) -> list[str]:
        letter, styles = self.letter, self.styles
        bodies = inline_bodies(self.values[start:stop].tolist())
        codes = [0] * len(bodies) if self.codes is None else self.codes[start:stop].tolist()
        return [
            (f'<c r="{letter}{r}"{styles[c]}/>' if c else "")
            if b is None
            else f'<c r="{letter}{r}"{styles[c]} t="inlineStr">{b}</c>'
            for r, b, c in zip(rows, bodies, codes, strict=True)
        ]

    def _object_cells(self, start: int, stop: int, rows: list[str]) -> list[str]:
        letter = self.letter
        values = self.values[start:stop].tolist()
        codes = [0] * len(values) if self.codes is None else self.codes[start:stop].tolist()
        cache: dict[tuple[str, int], str] = {}
        out: list[str] = []
        for r, value, code in zip(rows, values, codes, strict=True):
            ref = letter + r
            if type(value) is str:
                # Category columns repeat few values: escape each once per chunk.
                key = (value, code)
                body = cache.get(key)
                if body is None:
                    body = cache[key] = text_cell("\0", value, self.styles[code])
                out.append(body.replace('r="\0"', f'r="{ref}"', 1))
            else:
                out.append(value_cell(ref, value, self.styles[code], self.date_style))
        return out


def render_rows(columns: Sequence[ColumnCells], rows: np.ndarray, start: int, stop: int) -> str:
    """Return ``<row>`` elements for data rows ``start:stop``.

    Parameters
    ----------
    columns : sequence of ColumnCells
        The columns, left to right.
    rows : ndarray of int of shape (n,)
        1-based sheet row number of every data row (strictly increasing).
    start, stop : int
        The chunk of data rows to render.
    """
    numbers = [str(r) for r in rows[start:stop].tolist()]
    per_column = [column.cells(start, stop, numbers) for column in columns]
    if not per_column:
        return ""
    lines = zip(numbers, zip(*per_column, strict=True), strict=True)
    return "".join([f'<row r="{r}">{"".join(cells)}</row>' for r, cells in lines])


def render_line(row: int, values: Sequence[Any], style: str = "") -> str:
    """Return one ``<row>`` element holding ``values`` from column A on (None = blank)."""
    cells = [
        value_cell(f"{column_letter(j)}{row}", v, style if v is not None else "")
        for j, v in enumerate(values)
    ]
    return f'<row r="{row}">{"".join(cells)}</row>'
