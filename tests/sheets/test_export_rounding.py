"""Filled numbers leave every export rounded alike, in the column's number format.

Rounding to the most decimals among a column's observed values is common practice in
lab reporting (no source). The workbook is written by xlsxwriter and read back with
openpyxl, both independent of Kinfill.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import openpyxl
import pytest
import xlsxwriter

from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet, write_result


#: pH shown with 0.00 (some stored with one decimal), conductivity with 0.000, calcium
#: whole in General; None is a gap. Invented, seeded.
def _lab_rows(n: int = 60) -> list[tuple[str, float | None, float | None, int | None]]:
    rng = np.random.default_rng(7)
    rows = []
    for i in range(n):
        ph = round(float(rng.normal(7.0, 0.3)), 2 if i % 3 else 1)
        cond = round(ph * 0.4 + float(rng.uniform(-0.2, 0.2)), 3)
        ca = round(ph * 20 + float(rng.normal(0, 3)))
        gap = i % 7  # a gap in pH, conductivity or calcium in three of every seven rows
        rows.append((f"S{i + 1:02d}", *(None if gap == g else v for g, v in ((1, ph), (3, cond), (5, ca)))))
    return rows


_ROWS = _lab_rows()
_PLAN = FillPlan(k=3, carried_columns=("Sample",), interval_level=0.9)
_DECIMALS = {"pH": 2, "Cond": 3, "Ca": 0}


def _workbook(path: Path) -> Path:
    book = xlsxwriter.Workbook(str(path))
    sheet = book.add_worksheet("Data")
    formats = {1: book.add_format({"num_format": "0.00"}), 2: book.add_format({"num_format": "0.000"})}
    sheet.write_row(0, 0, ["Sample", "pH", "Cond", "Ca"])
    for i, row in enumerate(_ROWS, start=1):
        sheet.write_string(i, 0, row[0])
        for j in (1, 2, 3):
            if row[j] is not None:
                sheet.write_number(i, j, row[j], formats.get(j))
            elif j in formats:
                sheet.write_blank(i, j, None, formats[j])  # a gap keeps its column's format
    book.close()
    return path


def _filled_cells(result) -> list[tuple[int, str]]:
    rows, cols = np.nonzero(result.filled.to_numpy())
    labels, names = result.frame.index, result.frame.columns
    return [(int(labels[i]), str(names[j])) for i, j in zip(rows, cols, strict=True)]


def _at_most(value: float, places: int) -> bool:
    """The number has at most ``places`` decimals (6.42 has 2, 6.4199999 has many)."""
    return float(value) == round(float(value), places)


@pytest.mark.parametrize("rounding", ["measured", "as_computed"])
def test_workbook_export_writes_rounded_values_in_the_column_format(tmp_path, rounding) -> None:
    sheet = read_sheet(_workbook(tmp_path / "lab.xlsx"))
    plan = _PLAN.replace(rounding=rounding)
    result = impute(sheet, plan)
    assert dict(result.decimals) == (_DECIMALS if rounding == "measured" else {})
    target = tmp_path / "lab.filled.xlsx"
    write_result(target, sheet, result, plan)
    data = openpyxl.load_workbook(target)["Data"]
    letters = {"Sample": "A", "pH": "B", "Cond": "C", "Ca": "D"}
    log = result.log.set_index(["row", "column"])
    cells = _filled_cells(result)
    assert {c for _, c in cells} == {"pH", "Cond", "Ca"}
    for row, column in cells:
        cell = data[f"{letters[column]}{row}"]
        value = result.frame.loc[row, column]
        assert cell.value == value == log.loc[(row, column), "value"]  # app, fill log and export alike
        assert cell.number_format == {"pH": "0.00", "Cond": "0.000", "Ca": "General"}[column]
        if rounding == "measured":
            places = _DECIMALS[column]
            lower, upper = log.loc[(row, column), ["lower", "upper"]]
            assert _at_most(cell.value, places) and _at_most(lower, places) and _at_most(upper, places)
            assert lower <= value <= upper  # bounds rounded outward keep the rounded value inside
    for i, row in enumerate(_ROWS, start=2):  # observed cells are untouched
        for j, letter in ((1, "B"), (2, "C"), (3, "D")):
            if row[j] is not None:
                assert data[f"{letter}{i}"].value == row[j]
    calcium = [data[f"D{r}"].value for r, c in cells if c == "Ca"]
    if rounding == "measured":
        assert all(type(v) is int for v in calcium)  # a whole-number column stays whole: 147, not 147.0
    else:  # as computed: means of three donors
        assert any(not float(v).is_integer() for v in calcium)
        assert any(not _at_most(data[f"B{r}"].value, 2) for r, c in cells if c == "pH")


_CSV = [
    "Sample;pH;Ca;Nitrate",
    ";;mg/L;mg/L",
    "S01;6,4;139;0,12",
    "S02;6,42;;0,125",
    "S03;;142;0,2",
    "S04;7,1;151;",
    "S05;6,85;;0,31",
    "S06;7,02;148;0,275",
    "S07;;150;0,3",
    "S08;6,61;144;0,15",
    "S09;7,2;153;0,33",
    "S10;6,77;146;",
]


def _rows(path: Path) -> list[list[str]]:
    return list(csv.reader(io.StringIO(path.read_text(encoding="utf-8-sig")), delimiter=";"))


@pytest.mark.parametrize("rounding", ["measured", "as_computed"])
def test_csv_export_keeps_the_lab_s_text_and_writes_fills_at_measured_precision(tmp_path, rounding) -> None:
    source = tmp_path / "lab.csv"
    source.write_bytes("\r\n".join([*_CSV, ""]).encode("utf-8"))
    sheet = read_sheet(source)
    plan = FillPlan(k=3, carried_columns=("Sample",), rounding=rounding)
    result = impute(sheet, plan)
    assert dict(result.decimals) == ({"pH": 2, "Ca": 0, "Nitrate": 3} if rounding == "measured" else {})
    target = tmp_path / "lab.filled.csv"
    files = write_result(target, sheet, result, plan)
    written, original = _rows(target), [line.split(";") for line in _CSV]
    assert written[:2] == original[:2]  # header and units row, separator ";"
    filled = result.filled.to_numpy()
    calcium = []
    for i, (out_row, in_row) in enumerate(zip(written[2:], original[2:], strict=True)):
        for j, (out_cell, in_cell) in enumerate(zip(out_row, in_row, strict=True)):
            if not filled[i, j]:
                assert out_cell == in_cell  # byte for byte
                continue
            value = result.frame.iloc[i, j]
            column = result.frame.columns[j]
            if rounding == "measured":
                assert out_cell == f"{value:.{result.decimals[column]}f}".replace(".", ",")  # 6,80 and 147
            else:
                assert float(out_cell.replace(",", ".")) == pytest.approx(value, rel=1e-14)
            if column == "Ca":
                calcium.append(out_cell)
    assert calcium and all(c.isdigit() for c in calcium) is (rounding == "measured")
    log = list(csv.DictReader(io.StringIO(files[1].read_text(encoding="utf-8-sig")), delimiter=";"))
    labels = dict(zip(sheet.frame.index, sheet.frame["Sample"], strict=True))
    assert log and all(entry["sample_id"] == labels[int(entry["row"])] for entry in log)
