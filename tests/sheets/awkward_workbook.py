"""An awkward workbook written by an independent writer (xlsxwriter), for the reader's fast paths.

Sheet "Data" (invented values), header in row 1, 120 data rows; every column holds a
different mixture of what a lab workbook can hold:

- ``sample``: text identifiers, one a number stored as text;
- ``mixed``: floats, whole numbers, blanks, markers ("NA", "n.d.", "-"), censored entries
  ("<0.5", "> 100", "< LOD"), numbers stored as text ("7.25", " 12 "), a boolean, a date,
  a formula with its cached value and one with a cached error;
- ``plain``: floats only, with blanks (the plain number column);
- ``decimals``: numbers shown with the format ``0.000`` (three decimals);
- ``when``: dates and date-times with a date format, one text date;
- ``flag``: booleans and one blank;
- ``double``: a formula (``=C2*2``) in every row, cached values written;
- ``percent``: numbers in ``0.0%`` with a merged range of two data cells.

:func:`lying_dimension` copies the file with a ``<dimension>`` element that claims a much
smaller sheet, as some writers leave it.
"""

from __future__ import annotations

import datetime as dt
import re
import zipfile
from pathlib import Path

import numpy as np
import xlsxwriter

N_ROWS = 120
HEADER = ("sample", "mixed", "plain", "decimals", "when", "flag", "double", "percent")
#: Cells of the "mixed" column that are not plain floats, by 0-based data row.
MIXED_SPECIAL: dict[int, object] = {
    0: "NA", 3: "n.d.", 5: "<0.5", 8: "> 100", 11: "< LOD", 14: "7.25", 17: " 12 ", 20: "-",
    23: True, 26: dt.datetime(2024, 3, 1), 29: 7, 32: "text", 35: "", 38: "#N/A",
}  # fmt: skip


def build(path: Path) -> Path:
    """Write the workbook to ``path`` and return it."""
    rng = np.random.default_rng(11)
    book = xlsxwriter.Workbook(str(path))
    sheet = book.add_worksheet("Data")
    three = book.add_format({"num_format": "0.000"})
    date = book.add_format({"num_format": "yyyy-mm-dd"})
    stamp = book.add_format({"num_format": "yyyy-mm-dd hh:mm"})
    percent = book.add_format({"num_format": "0.0%"})
    sheet.write_row(0, 0, HEADER)
    for i in range(N_ROWS):
        row = i + 1
        sheet.write_string(row, 0, f"S{i:03d}" if i != 7 else "1001")
        _write_mixed(sheet, row, i, round(float(rng.lognormal(0, 1)), 2), date)
        if i % 9:
            sheet.write_number(row, 2, round(float(rng.normal(10, 2)), 3))
        sheet.write_number(row, 3, float(rng.normal(1, 0.1)), three)
        if i == 4:
            sheet.write_string(row, 4, "2024-05-06")
        elif i % 2:
            sheet.write_datetime(row, 4, dt.datetime(2024, 1, 1) + dt.timedelta(days=i), date)
        else:
            sheet.write_datetime(row, 4, dt.datetime(2024, 1, 1, 8, 30) + dt.timedelta(hours=i), stamp)
        if i != 10:
            sheet.write_boolean(row, 5, bool(i % 3))
        sheet.write_formula(row, 6, f"=C{row + 1}*2", None, 2.0 * i)
        if i != 51:
            sheet.write_number(row, 7, float(rng.random()), percent)
    sheet.merge_range(51, 7, 52, 7, 0.5, percent)  # rows 52-53 of the file
    book.close()
    return path


def _write_mixed(
    sheet: xlsxwriter.worksheet.Worksheet, row: int, i: int, value: float, date: xlsxwriter.format.Format
) -> None:
    special = MIXED_SPECIAL.get(i)
    if i == 41:
        sheet.write_formula(row, 1, "=1/0", None, "#DIV/0!")
    elif i == 44:
        sheet.write_formula(row, 1, "=C2+1", None, 4.5)
    elif special is None:
        if i % 13 != 12:  # a few blank cells
            sheet.write_number(row, 1, value)
    elif isinstance(special, bool):
        sheet.write_boolean(row, 1, special)
    elif isinstance(special, dt.datetime):
        sheet.write_datetime(row, 1, special, date)
    elif isinstance(special, int):
        sheet.write_number(row, 1, special)
    else:
        sheet.write_string(row, 1, str(special))


def lying_dimension(source: Path, target: Path, claim: str = "A1:B3") -> Path:
    """Copy ``source`` with the first sheet's ``<dimension ref>`` set to ``claim`` (added if missing)."""
    element = f'<dimension ref="{claim}"/>'.encode()
    with zipfile.ZipFile(source) as old, zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as new:
        for item in old.infolist():
            data = old.read(item.filename)
            if item.filename == "xl/worksheets/sheet1.xml":
                data, count = re.subn(rb'<dimension ref="[^"]*"/>', element, data)
                if not count:
                    data = data.replace(b"<sheetData>", element + b"<sheetData>", 1)
            new.writestr(item, data)
    return target
