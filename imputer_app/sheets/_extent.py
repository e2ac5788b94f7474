"""Measure a worksheet's real extent from its XML before any grid is allocated.

The workbook parser builds a dense grid from cell A1 to the sheet's last used cell,
so one value at ``XFD1048576`` in a 5 KB file would ask for 17 billion cells. Here the
sheet's XML is streamed (decompressed a chunk at a time) and only the cell positions
are looked at: ``r="B7"`` references in an ``.xlsx`` worksheet (ECMA-376 Part 1, sec.
18.3.1.4; the ``<dimension>`` element is not trusted, it may be missing or wrong), and
rows and cells with their ``number-rows-repeated`` / ``number-columns-repeated``
counts in an ``.ods`` table (OpenDocument 1.2 Part 1, sec. 9.1.3 and 9.1.4). A sheet
beyond :data:`MAX_CELLS` or the ECMA-376 maximum of 1,048,576 rows x 16,384 columns
is refused with one line that says where its far cell is.

The same pass over an ``.xlsx`` sheet finds the cells whose cached value is a formula
error (``t="e"``) and formula cells stored without a value: the workbook parser reads
both as empty cells.
"""

from __future__ import annotations

import io
import re
import zipfile
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from xml.etree import ElementTree

import numpy as np

from imputer_app.errors import SheetError
from imputer_app.sheets._far_cell import XmlBytes, far_cell
from imputer_app.sheets._grid import column_letter
from imputer_app.sheets._xlsx_package import sheet_parts

#: Largest number of cells (rows x columns, from A1) Kinfill reads from one sheet.
MAX_CELLS = 50_000_000
#: Most rows and columns a worksheet may have (ECMA-376 Part 1; also Excel's limits).
MAX_ROWS, MAX_COLUMNS = 1_048_576, 16_384

_CHUNK = 1 << 22
# Spreadsheet programs write r first (<c r="B7" ...); other attribute orders take the slow form.
_REF_FIRST = re.compile(rb'<c r="([A-Z]{1,4}\d{1,10})"')
_REF = re.compile(rb'<c\s[^>]*?\br="([A-Z]{1,4}\d{1,10})"')
_REF_WIDTH = 14
_ERROR = re.compile(rb'<c\b[^>]*?\sr="([A-Z]{1,4})(\d{1,10})"[^>]*?\st="e"[^>]*>(.*?)</c>', re.S)
_ERROR_VALUE = re.compile(rb"<v>([^<]*)</v>")
_NO_VALUE = re.compile(
    rb'<c\b[^>]*?\sr="([A-Z]{1,4})(\d{1,10})"[^>]*>\s*<f\b(?:[^>]*/>|[^>]*>[^<]*</f>)\s*</c>'
)
# A cell whose first child is a formula (ECMA-376 Part 1, sec. 18.3.1.4: <f> comes before <v>).
_FORMULA = re.compile(rb'<c\b[^>]*?\sr="([A-Z]{1,4})(\d{1,10})"[^>/]*>\s*<f\b')
_TABLE = "urn:oasis:names:tc:opendocument:xmlns:table:1.0"
# LibreOffice's own attribute for a cell's value type ("error" for a cached formula error).
_CALC_TYPE = "{urn:org:documentfoundation:names:experimental:calc:xmlns:calcext:1.0}value-type"
_ODS_FORMULA = f"{{{_TABLE}}}formula"
#: Formula error cells of one .ods table put back into the grid; further ones read as blank.
MAX_ERROR_CELLS = 1_000_000


@dataclass
class Extent:
    """How far a sheet reaches and its formula cells that hold no plain value.

    Attributes
    ----------
    rows, columns : int
        1-based last used row and column (0 for an empty sheet).
    far_row, far_column : str
        A cell in the last row and one in the last column ("A1" style).
    errors : dict of (int, int) to str
        0-based (row, column) of each cell whose cached value is a formula error, and
        that error text ("#DIV/0!").
    no_value : set of (int, int)
        0-based (row, column) of formula cells saved without a value.
    formulas : dict of int to ndarray of int
        Per 0-based column, the 0-based rows of its formula cells (computed columns).
    """

    rows: int = 0
    columns: int = 0
    far_row: str = ""
    far_column: str = ""
    errors: dict[tuple[int, int], str] = field(default_factory=dict)
    no_value: set[tuple[int, int]] = field(default_factory=set)
    formulas: dict[int, np.ndarray] = field(default_factory=dict)

    def see(self, row: int, column: int) -> None:
        """Take note of a used cell at 1-based ``row`` and ``column``."""
        if row > self.rows:
            self.rows, self.far_row = row, f"{column_letter(column - 1)}{row}"
        if column > self.columns:
            self.columns, self.far_column = column, f"{column_letter(column - 1)}{row}"


def column_number(letters: bytes | str) -> int:
    """Spreadsheet column letters to a 1-based number (A -> 1, XFD -> 16384)."""
    number = 0
    for char in letters.decode() if isinstance(letters, bytes) else letters:
        number = number * 26 + ord(char) - 64
    return number


def check_extent(data: bytes | Path, path: Path, fmt: str, sheet: str | None) -> Extent:
    """Measure ``sheet`` of the workbook ``data`` and refuse it when it is too large.

    Parameters
    ----------
    data : bytes or Path
        The workbook file's bytes, or the file (already passed by the zip checks).
    path : Path
        The file, for messages.
    fmt : {"xlsx", "xlsm", "ods", "xls"}
        Its format; an ``.xls`` file is measured by
        :func:`~imputer_app.sheets._xls_extent.xls_extents` instead.
    sheet : str or None
        The worksheet's name; None for every table of an ``.ods`` file (the parser
        loads all of them when it opens the file).

    Returns
    -------
    Extent
        Last row and column, error cells and formula cells without a value.

    Raises
    ------
    SheetError
        When the sheet reaches beyond the ECMA-376 maximum or :data:`MAX_CELLS`.
    """
    extent = Extent()
    if fmt == "xls":
        return extent
    try:
        with zipfile.ZipFile(io.BytesIO(data) if isinstance(data, bytes) else data) as package:
            if fmt == "ods":
                _scan_ods(package, sheet, path)
            elif sheet is not None and (part := sheet_parts(package).get(sheet)) in package.namelist():
                _scan_xlsx(package, str(part), extent)
    except SheetError:
        raise
    except (zipfile.BadZipFile, KeyError, ElementTree.ParseError, EOFError, OSError, ValueError):
        return extent  # the parser gives its own message for a damaged part
    refuse_if_too_large(extent, path, sheet or "")
    return extent


def refuse_if_too_large(extent: Extent, path: Path, sheet: str) -> None:
    where = f"sheet '{sheet}' of '{path.name}'"
    if extent.rows > MAX_ROWS or extent.columns > MAX_COLUMNS:
        far = extent.far_row if extent.rows > MAX_ROWS else extent.far_column
        raise SheetError(
            f"{where} has a cell at {far}, beyond the largest sheet a spreadsheet may have "
            f"({MAX_ROWS:,} rows x {MAX_COLUMNS:,} columns); the file is damaged"
        )
    cells = extent.rows * extent.columns
    if cells > MAX_CELLS:
        far = (
            extent.far_row
            if extent.far_row == extent.far_column
            else f"{extent.far_row} and {extent.far_column}"
        )
        raise SheetError(
            f"{where} reaches cell {far} ({extent.rows:,} rows x {extent.columns:,} columns = "
            f"{cells:,} cells), more than Kinfill reads ({MAX_CELLS:,}); clear the far cells "
            "or delete unused rows and columns"
        )


def _chunks(package: zipfile.ZipFile, part: str) -> Iterator[bytes]:
    """The part's bytes in pieces that end just before a ``<c`` or ``<row`` tag."""
    tail = b""
    with package.open(part) as stream:
        while chunk := stream.read(_CHUNK):
            buffer = tail + chunk
            cut = max(buffer.rfind(b"<c "), buffer.rfind(b"<row "))
            if cut <= 0:
                tail = buffer
                continue
            tail = buffer[cut:]
            yield buffer[:cut]
    if tail:
        yield tail


def _scan_xlsx(package: zipfile.ZipFile, part: str, extent: Extent) -> None:
    """Measure the part: its farthest cell, its formula error cells and its formula cells."""
    for chunk in _chunks(package, part):
        xml = XmlBytes(chunk)
        found = far_cell(xml)
        if found is not None:
            row, row_ref, column, column_ref = found
            if row > extent.rows:
                extent.rows, extent.far_row = row, row_ref
            if column > extent.columns:
                extent.columns, extent.far_column = column, column_ref
        else:  # a cell tag not in the plain form: list every reference
            refs = _REF_FIRST.findall(chunk)
            if len(refs) != chunk.count(b"<c "):
                refs = _REF.findall(chunk)
            if refs:
                _see_refs(extent, refs)
        errors = xml.has(b'"e') and b't="e"' in chunk
        for letters, row_text, body in _ERROR.findall(chunk) if errors else ():
            value = _ERROR_VALUE.search(body)
            text = value.group(1).decode("utf-8", "replace") if value else "#ERROR"
            extent.errors[(int(row_text) - 1, column_number(letters) - 1)] = text
        if xml.has(b"<f"):
            for letters, row_text in _NO_VALUE.findall(chunk):
                extent.no_value.add((int(row_text) - 1, column_number(letters) - 1))
            _see_formulas(extent, _FORMULA.findall(chunk))


def _see_formulas(extent: Extent, found: list[tuple[bytes, bytes]]) -> None:
    """Add the formula cells ``found`` ((letters, row) pairs) to ``extent.formulas``, by column."""
    by_column: dict[int, list[int]] = {}
    for letters, row_text in found:
        by_column.setdefault(column_number(letters) - 1, []).append(int(row_text) - 1)
    for column, rows in by_column.items():
        old = extent.formulas.get(column)
        new = np.asarray(rows, dtype=np.int64)
        extent.formulas[column] = new if old is None else np.concatenate([old, new])


def _see_refs(extent: Extent, refs: list[bytes]) -> None:
    """Take note of the farthest row and column among ``refs`` ("AB12"), vectorised."""
    codes = np.array(refs, dtype=f"S{_REF_WIDTH}").view(np.uint8).reshape(-1, _REF_WIDTH).astype(np.int64)
    rows = np.zeros(len(refs), dtype=np.int64)
    columns = np.zeros(len(refs), dtype=np.int64)
    for k in range(_REF_WIDTH):  # letters then digits, left-aligned, padded with NUL
        code = codes[:, k]
        letter, digit = code >= 65, (code >= 48) & (code <= 57)
        columns = np.where(letter, columns * 26 + code - 64, columns)
        rows = np.where(digit, rows * 10 + code - 48, rows)
    far_row, far_column = int(rows.argmax()), int(columns.argmax())
    if rows[far_row] > extent.rows:
        extent.rows, extent.far_row = int(rows[far_row]), refs[far_row].decode()
    if columns[far_column] > extent.columns:
        extent.columns, extent.far_column = int(columns[far_column]), refs[far_column].decode()


def _repeat(element: ElementTree.Element, name: str) -> int:
    value = element.get(f"{{{_TABLE}}}{name}", "1")
    return int(value) if value.isdigit() else 1


def ods_extents(data: bytes | Path, path: Path) -> dict[str, Extent]:
    """Measure every table of the ``.ods`` file ``data``; refuse one too large (see :func:`check_extent`).

    Returns each table's extent with its cached formula errors, by table name; empty
    when content.xml cannot be read (the parser then gives its own message).
    """
    try:
        with zipfile.ZipFile(io.BytesIO(data) if isinstance(data, bytes) else data) as package:
            return _scan_ods(package, None, path)
    except SheetError:
        raise
    except (zipfile.BadZipFile, KeyError, ElementTree.ParseError, EOFError, OSError, ValueError):
        return {}


def _scan_ods(package: zipfile.ZipFile, sheet: str | None, path: Path) -> dict[str, Extent]:
    """Measure table ``sheet`` (every table when None) of content.xml, counting repeats.

    Each table is refused as soon as it is found too large; rows are cleared once
    measured, so memory stays small however long the table. A cell LibreOffice marks
    ``calcext:value-type="error"`` holds a cached formula error (its text is the error,
    "#DIV/0!"); the parser reads it as an empty cell.
    """
    table, row_tag = f"{{{_TABLE}}}table", f"{{{_TABLE}}}table-row"
    extent, name, row = Extent(), "", 0
    formula_rows: dict[int, list[range]] = {}
    found: dict[str, Extent] = {}
    with package.open("content.xml") as stream:
        for event, element in ElementTree.iterparse(stream, events=("start", "end")):
            if element.tag == table:
                if event == "start":
                    extent, name, row = Extent(), element.get(f"{{{_TABLE}}}name", ""), 0
                    formula_rows = {}
                elif sheet is None or name == sheet:
                    refuse_if_too_large(extent, path, name)
                    extent.formulas = {
                        column: np.concatenate([np.arange(r.start, r.stop) for r in runs])
                        for column, runs in formula_rows.items()
                    }
                    found[name] = extent
                    element.clear()
                continue
            if event != "end" or element.tag != row_tag:
                continue
            repeat = _repeat(element, "number-rows-repeated")
            last = _last_used_column(element, extent, row, repeat, formula_rows)
            if last:
                extent.see(row + repeat, last)
            row += repeat
            element.clear()
    return found


def _last_used_column(
    row: ElementTree.Element,
    extent: Extent,
    first_row: int,
    n_rows: int,
    formula_rows: dict[int, list[range]],
) -> int:
    """1-based last column of ``row`` holding a value or text (0 when none does).

    Its error cells go into ``extent.errors`` (0-based positions; the row may stand for
    ``n_rows`` repeated rows), up to :data:`MAX_ERROR_CELLS` per table; its formula
    cells (``table:formula``) into ``formula_rows`` as runs of rows per column, so that
    a computed column of an .ods is carried like one of an .xlsx.
    """
    column, last = 0, 0
    for cell in row:
        repeat = _repeat(cell, "number-columns-repeated")
        if cell.get(_ODS_FORMULA) is not None:
            for c in range(column, column + repeat):
                formula_rows.setdefault(c, []).append(range(first_row, first_row + n_rows))
        if len(cell) or any(key.endswith("value-type") for key in cell.attrib):
            last = column + repeat
            if cell.get(_CALC_TYPE) == "error" and len(extent.errors) + n_rows * repeat <= MAX_ERROR_CELLS:
                text = "".join(cell.itertext()).strip() or "#ERROR"
                block = range(column, column + repeat)
                for r in range(first_row, first_row + n_rows):
                    extent.errors.update(dict.fromkeys(((r, c) for c in block), text))
        column += repeat
    return last
