"""A lab workbook written by an independent writer (xlsxwriter), for the workbook export.

Sheet "Harvest" (invented data): a title merged across row 1, header in row 3, units
in row 4, a blank row 5, data from row 6 (with a blank row inside the table), a
"Notes" text column, a formula column "Base sum" = Ca + Mg + K, numbers with two and
three decimals, fonts, widths, frozen panes, a conditional format, data validation,
a comment, a defined name, a chart and an image. Sheet "Methods" holds text.
"""

from __future__ import annotations

import io
import struct
import zlib
from pathlib import Path

import xlsxwriter

HEADER_ROW, UNITS_ROW = 3, 4
HEADER = ("Sample", "pH", "Ca", "Mg", "K", "Base sum", "Notes")
UNITS = ("", "", "mmol/L", "mmol/L", "mmol/L", "mmol/L", "")
# Data rows start at row 6; row 10 is blank inside the table (skipped by the reader).
BLANK_ROW = 10
# (pH, Ca, Mg, K, note); None is a gap.
ROWS = [
    (6.42, 5.21, 1.454, 0.338, "re-run requested"),
    (6.85, 4.98, 1.392, 0.402, None),
    (None, 5.64, None, 0.351, None),
    (7.12, 6.02, 1.611, None, None),
    (6.55, None, 1.288, 0.297, None),  # row 11 (row 10 is blank)
    (7.01, 5.87, 1.503, 0.415, None),
    (6.73, 5.33, 1.444, 0.366, None),
    (6.94, 5.71, None, 0.389, None),
    (6.61, 5.12, 1.402, 0.321, None),
    (7.20, 6.15, 1.655, 0.431, None),
]
VBA_BYTES = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"kinfill-test-vba-project" * 8


def file_rows() -> list[int]:
    """Sheet row number of each entry of :data:`ROWS`."""
    rows, row = [], UNITS_ROW + 2
    for _ in ROWS:
        if row == BLANK_ROW:
            row += 1
        rows.append(row)
        row += 1
    return rows


def tiny_png() -> bytes:
    """A 2 x 2 red PNG built from raw bytes (PNG specification, W3C 2003)."""

    def chunk(kind: bytes, data: bytes) -> bytes:
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data))

    raw = b"".join(b"\x00" + b"\xff\x00\x00" * 2 for _ in range(2))
    header = struct.pack(">IIBBBBB", 2, 2, 8, 2, 0, 0, 0)
    return (
        b"\x89PNG\r\n\x1a\n"
        + chunk(b"IHDR", header)
        + chunk(b"IDAT", zlib.compress(raw))
        + chunk(b"IEND", b"")
    )


def build(
    path: Path,
    *,
    macros: bool = False,
    extra_sheets: tuple[str, ...] = (),
    censored: bool = False,
    bare: bool = False,
) -> Path:
    """Write the lab workbook to ``path`` (.xlsx, or .xlsm with a stand-in vbaProject part).

    ``censored`` writes K of the last row (E16) as the text "<0.250" (below a limit);
    ``bare`` leaves out the comment, chart and image (the data sheet then has no
    relationships part).
    """
    book = xlsxwriter.Workbook(str(path))
    title = book.add_format({"bold": True, "font_size": 14, "align": "center"})
    head = book.add_format({"bold": True, "bottom": 1, "font_name": "Arial"})
    units = book.add_format({"italic": True})
    two = book.add_format({"num_format": "0.00", "font_name": "Arial"})
    three = book.add_format({"num_format": "0.000", "font_name": "Arial"})
    text = book.add_format({"font_color": "#333399"})
    sheet = book.add_worksheet("Harvest")
    sheet.merge_range(0, 0, 0, len(HEADER) - 1, "Harvest panel (invented)", title)
    for j, (name, unit) in enumerate(zip(HEADER, UNITS, strict=True)):
        sheet.write_string(HEADER_ROW - 1, j, name, head)
        if unit:
            sheet.write_string(UNITS_ROW - 1, j, unit, units)
    for number, (row, values) in enumerate(zip(file_rows(), ROWS, strict=True), start=1):
        r = row - 1
        sheet.write_string(r, 0, f"H-{number:03d}")
        ph, ca, mg, k, note = values
        for j, (value, fmt) in enumerate(((ph, two), (ca, two), (mg, three), (k, three)), start=1):
            if value is None and j != 3:  # Mg gaps stay absent cells: no style of their own
                sheet.write_blank(r, j, None, fmt)
            elif value is None:
                continue
            else:
                sheet.write_number(r, j, value, fmt)
        stored = sum(v for v in (ca, mg, k) if v is not None)
        sheet.write_formula(r, 5, f"=C{row}+D{row}+E{row}", three, stored)
        if note:
            sheet.write_string(r, 6, note, text)
        if censored and number == len(ROWS):
            sheet.write_string(r, 4, "<0.250", three)
    last = file_rows()[-1]
    sheet.set_column(0, 0, 11)
    sheet.set_column(1, 5, 9.5)
    sheet.set_column(6, 6, 24)
    sheet.freeze_panes(UNITS_ROW, 1)
    sheet.conditional_format(f"B6:B{last}", {"type": "cell", "criteria": ">", "value": 7, "format": units})
    sheet.data_validation(
        f"B6:B{last}", {"validate": "decimal", "criteria": "between", "minimum": 0, "maximum": 14}
    )
    book.define_name("PhValues", f"=Harvest!$B$6:$B${last}")
    if not bare:
        sheet.write_comment("A6", "First sample of the season")
        chart = book.add_chart({"type": "line"})
        chart.add_series({"name": "Ca", "values": f"=Harvest!$C$6:$C${last}"})
        sheet.insert_chart("I3", chart)
        sheet.insert_image("I20", "logo.png", {"image_data": io.BytesIO(tiny_png())})
    methods = book.add_worksheet("Methods")
    methods.write_string(0, 0, "Cations by ICP-OES; pH by glass electrode (invented).")
    methods.write_formula(1, 0, "=SUM(Harvest!C6:C8)", None, 1.0)
    for name in extra_sheets:
        book.add_worksheet(name).write_string(0, 0, "the lab's own sheet")
    if macros:
        bin_path = path.with_suffix(".bin")
        bin_path.write_bytes(VBA_BYTES)
        book.add_vba_project(str(bin_path))
    book.close()
    return path
