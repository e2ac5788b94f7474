"""Each number column's measured precision, read from cell text and number formats.

Number format codes and built-in ids: ECMA-376 Part 1, sec. 18.8.30-18.8.31. The test
workbooks are written by xlsxwriter, an independent writer.
"""

from __future__ import annotations

import numpy as np
import pytest
import xlsxwriter

from imputer_app.sheets import read_sheet
from imputer_app.sheets._precision import format_decimals, text_decimals


@pytest.mark.parametrize(
    "code, expected",
    [
        ("0.00", 2),
        ("0.000", 3),
        ("0", 0),
        ("#,##0.0", 1),
        ("0.00;[Red]-0.00", 2),
        ('0.0" mg/L"', 1),  # quoted text is no digit
        ("0.0%", 3),  # 12.3% shows 0.123
        ("General", None),
        ("@", None),
        ("0.00E+00", None),
        ("yyyy-mm-dd", None),
        ("[h]:mm:ss", None),
    ],
)
def test_format_decimals(code, expected) -> None:
    assert format_decimals(code) == expected


@pytest.mark.parametrize(
    "texts, decimal, expected",
    [
        (["6.4", "6.42", "6.420"], ".", 3),  # the trailing zero is measured precision
        (["139", " 140 ", "-3"], ".", 0),
        (["0,020", "1,5"], ",", 3),
        (["1.234,5"], ",", 1),  # "." groups thousands
        (["1,234"], ".", 0),  # "," groups thousands
        (["1.5e-3", "2"], ".", 4),
        (["2E2"], ".", 0),
    ],
)
def test_text_decimals(texts, decimal, expected) -> None:
    assert text_decimals(np.array(texts, dtype=object), decimal) == expected


def test_a_workbook_column_takes_its_number_format_s_decimals(tmp_path) -> None:
    path = tmp_path / "formats.xlsx"
    book = xlsxwriter.Workbook(str(path))
    sheet = book.add_worksheet("Data")
    two, three = book.add_format({"num_format": "0.00"}), book.add_format({"num_format": "0.000"})
    sheet.write_row(0, 0, ["Sample", "pH", "Cond", "Ca", "Noisy"])
    for i, (ph, cond, ca) in enumerate([(6.4, 1.5, 139), (7.0, 2.25, 140), (6.85, 1.125, 151)], start=1):
        sheet.write(i, 0, f"S{i}")
        sheet.write_number(i, 1, ph, two)  # stored 6.4, shown 6.40
        sheet.write_number(i, 2, cond, three)
        sheet.write_number(i, 3, ca)  # General
        sheet.write_number(i, 4, [7.233749999999999, 0.1 + 0.2, 5.0][i - 1])  # General
    book.close()
    decimals = {c.name: c.decimals for c in read_sheet(path).columns}
    assert decimals == {"Sample": None, "pH": 2, "Cond": 3, "Ca": 0, "Noisy": 5}


def test_a_csv_column_takes_the_most_decimals_of_its_texts(tmp_path) -> None:
    path = tmp_path / "mixed.csv"
    path.write_text("Sample;pH;Ca;Note\nS1;6,4;139;a\nS2;6,425;;b\nS3;;140;\nS4;7;141;c\n", encoding="utf-8")
    decimals = {c.name: c.decimals for c in read_sheet(path).columns}
    assert decimals == {"Sample": None, "pH": 3, "Ca": 0, "Note": None}
