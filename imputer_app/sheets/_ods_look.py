"""What an .ods file says about its cells beyond their values: number formats and merges.

python-calamine reads an OpenDocument spreadsheet's values but not how they are shown.
The workbook copy (:mod:`imputer_app.sheets._workbook_copy`) keeps both, so they are
read here from ``content.xml``: each cell's style (its own, else its column's default)
names a data style (``number:number-style``, ``percentage-style``, ``date-style``,
``time-style``), written again as the spreadsheet number format that shows the value
the same way (``0.00``, ``0.0%``, ``yyyy-mm-dd``); a cell spanning several columns or
rows gives a merged range; a formula is kept when it translates to .xlsx syntax. Only
cells holding a value are looked at, so the empty rows an .ods repeats to the sheet's
end cost nothing.
"""

from __future__ import annotations

import io
import zipfile
from collections.abc import Iterator
from dataclasses import dataclass, field
from xml.etree import ElementTree

from imputer_app.sheets._ods_formula import excel_formula

_NS = {
    "table": "urn:oasis:names:tc:opendocument:xmlns:table:1.0",
    "style": "urn:oasis:names:tc:opendocument:xmlns:style:1.0",
    "number": "urn:oasis:names:tc:opendocument:xmlns:datastyle:1.0",
    "office": "urn:oasis:names:tc:opendocument:xmlns:office:1.0",
}
_T, _S, _N, _O = (f"{{{_NS[p]}}}" for p in ("table", "style", "number", "office"))

#: The largest repeat Kinfill walks cell by cell (longer runs are the empty sheet's end).
_MAX_REPEAT = 20_000

#: Date and time parts of an .ods data style, as spreadsheet format codes (short, long).
_DATE_PARTS = {
    "year": ("yy", "yyyy"),
    "month": ("m", "mm"),
    "day": ("d", "dd"),
    "hours": ("h", "hh"),
    "minutes": ("m", "mm"),
    "seconds": ("s", "ss"),
    "day-of-week": ("ddd", "dddd"),
}


@dataclass
class SheetLook:
    """What one table shows beyond its values.

    Number formats by (0-based row, column) of the cells holding a value, merged ranges,
    and the formulas that translate to .xlsx syntax (:func:`excel_formula`).
    """

    formats: dict[tuple[int, int], str] = field(default_factory=dict)
    merges: list[tuple[int, int, int, int]] = field(default_factory=list)
    formulas: dict[tuple[int, int], str] = field(default_factory=dict)


def ods_look(data: bytes) -> dict[str, SheetLook]:
    """Return each table's number formats and merged ranges, by table name.

    Parameters
    ----------
    data : bytes
        The .ods file.

    Returns
    -------
    dict of str to SheetLook
        Empty when the package cannot be read (the values are still copied).
    """
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as package:
            styles = package.read("styles.xml") if "styles.xml" in package.namelist() else b""
            content = package.read("content.xml")
    except (OSError, KeyError, zipfile.BadZipFile):
        return {}
    try:
        codes = _data_styles(styles) if styles else {}
        codes.update(_data_styles(content))
        cell_codes = _cell_styles(content, codes)
        return {name: look for name, look in _tables(content, cell_codes)}
    except ElementTree.ParseError:
        return {}


def _data_styles(xml: bytes) -> dict[str, str]:
    """Data style name -> spreadsheet number format (number, percent, date and time styles)."""
    found: dict[str, str] = {}
    for _event, element in ElementTree.iterparse(io.BytesIO(xml)):
        kind = element.tag.removeprefix(_N)
        name = element.get(f"{_S}name")
        if name is None or not element.tag.startswith(_N):
            continue
        if kind == "number-style":
            code = _number_code(element.find(f"{_N}number"))
        elif kind == "percentage-style":
            number = _number_code(element.find(f"{_N}number"))
            code = f"{number}%" if number else ""
        elif kind in ("date-style", "time-style"):
            code = _date_code(element)
        else:
            continue
        if code:
            found[name] = code
    return found


def _number_code(number: ElementTree.Element | None) -> str:
    if number is None:
        return ""
    places = int(number.get(f"{_N}decimal-places", "0") or 0)
    grouped = number.get(f"{_N}grouping") == "true"
    whole = "#,##0" if grouped else "0"
    return whole + ("." + "0" * places if places > 0 else "")


def _date_code(element: ElementTree.Element) -> str:
    parts = []
    after_hours = False
    for child in element:
        kind = child.tag.removeprefix(_N)
        if kind == "text":
            text = child.text or ""
            parts.append(text if text in ("-", "/", ":", " ", ".", ",") else f'"{text}"')
            continue
        if kind not in _DATE_PARTS:
            continue
        short, long = _DATE_PARTS[kind]
        if kind == "month" and child.get(f"{_N}textual") == "true":
            short, long = "mmm", "mmmm"
        if kind == "hours":
            after_hours = True
        if kind == "minutes" and not after_hours:  # a lone "m" would read as a month
            short, long = "[m]", "[mm]"
        parts.append(long if child.get(f"{_N}style") == "long" else short)
    return "".join(parts)


def _cell_styles(content: bytes, codes: dict[str, str]) -> dict[str, str]:
    """Cell style name -> number format, for the styles that name a known data style."""
    found: dict[str, str] = {}
    for _event, element in ElementTree.iterparse(io.BytesIO(content)):
        if element.tag == f"{_S}style" and element.get(f"{_S}family") == "table-cell":
            code = codes.get(element.get(f"{_S}data-style-name", ""))
            if code:
                found[element.get(f"{_S}name", "")] = code
    return found


def _tables(content: bytes, cell_codes: dict[str, str]) -> Iterator[tuple[str, SheetLook]]:
    """Walk every table row by row: formats of the cells with a value, and spans."""
    for _event, table in ElementTree.iterparse(io.BytesIO(content)):
        if table.tag != f"{_T}table":
            continue
        look = SheetLook()
        defaults = _column_defaults(table)
        row = 0
        for row_element in table.iter(f"{_T}table-row"):
            repeat = _repeat(row_element, "rows")
            if _has_value(row_element):
                for offset in range(min(repeat, _MAX_REPEAT)):
                    _see_row(row_element, row + offset, defaults, cell_codes, look)
                if repeat == 1:  # a repeated formula would point at the first row's cells
                    _see_formulas(row_element, row, look)
            row += repeat
        name = table.get(f"{_T}name", "")
        table.clear()  # the next table is read without this one in memory
        yield name, look


def _column_defaults(table: ElementTree.Element) -> list[str]:
    styles: list[str] = []
    for column in table.iter(f"{_T}table-column"):
        repeat = min(_repeat(column, "columns"), _MAX_REPEAT)
        styles.extend([column.get(f"{_T}default-cell-style-name", "")] * repeat)
    return styles


def _see_row(
    row_element: ElementTree.Element,
    row: int,
    defaults: list[str],
    cell_codes: dict[str, str],
    look: SheetLook,
) -> None:
    column = 0
    for cell in row_element:
        if cell.tag not in (f"{_T}table-cell", f"{_T}covered-table-cell"):
            continue
        repeat = _repeat(cell, "columns")
        if cell.get(f"{_O}value-type") is not None:
            style = cell.get(f"{_T}style-name") or (defaults[column] if column < len(defaults) else "")
            code = cell_codes.get(style)
            for offset in range(min(repeat, _MAX_REPEAT)):
                if code:
                    look.formats[(row, column + offset)] = code
        wide = int(cell.get(f"{_T}number-columns-spanned", "1") or 1)
        tall = int(cell.get(f"{_T}number-rows-spanned", "1") or 1)
        if wide > 1 or tall > 1:
            look.merges.append((row, column, row + tall - 1, column + wide - 1))
        column += repeat


def _see_formulas(row_element: ElementTree.Element, row: int, look: SheetLook) -> None:
    """Keep the translated formula of each cell of the row that is not repeated."""
    column = 0
    for cell in row_element:
        if cell.tag not in (f"{_T}table-cell", f"{_T}covered-table-cell"):
            continue
        repeat = _repeat(cell, "columns")
        formula = cell.get(f"{_T}formula")
        if formula is not None and repeat == 1:
            translated = excel_formula(formula)
            if translated is not None:
                look.formulas[(row, column)] = translated
        column += repeat


def _has_value(row_element: ElementTree.Element) -> bool:
    return any(
        cell.get(f"{_O}value-type") is not None or cell.get(f"{_T}number-columns-spanned") is not None
        for cell in row_element
    )


def _repeat(element: ElementTree.Element, what: str) -> int:
    return max(int(element.get(f"{_T}number-{what}-repeated", "1") or 1), 1)
