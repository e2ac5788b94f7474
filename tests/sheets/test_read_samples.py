"""The demo sheets in ``sample_sheets/`` read as their README describes.

Workbook values are cross-checked cell by cell with openpyxl (an independent reader);
the ``;``/decimal-comma CSV must give the same table as the workbook.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest

from imputer_app.sheets._model import Sheet
from imputer_app.sheets._read import list_sheets, read_sheet

MEASURES = ["pH", "Conductivity", "Nitrate", "Phosphate", "Dissolved oxygen", "Temperature", "Turbidity"]


def _sample(samples_dir: Path, name: str) -> Path:
    path = samples_dir / name
    if not path.exists():
        pytest.skip(f"{name} not generated yet")
    return path


def _assert_matches_openpyxl(path: Path, sheet_name: str, sheet: Sheet) -> None:
    """Every observed number and every censored/marker text equals openpyxl's cell value."""
    reference = openpyxl.load_workbook(path, data_only=True, read_only=True)[sheet_name]
    grid = {
        cell.coordinate: cell.value
        for row in reference.iter_rows()
        for cell in row
        if cell.value not in (None, "")  # a formula's blank result is no value
    }
    frame, states = sheet.frame, sheet.states
    notes = {
        (r, c): t
        for r, c, t in zip(
            sheet.cell_notes["row"], sheet.cell_notes["column"], sheet.cell_notes["text"], strict=True
        )
    }
    for position, name in enumerate(frame.columns):
        if sheet.column(name).kind != "number":
            continue
        letter = openpyxl.utils.get_column_letter(position + 1)
        for row in frame.index:
            value, state = grid.get(f"{letter}{row}"), str(states.loc[row, name])
            if state == "observed":
                assert float(str(value)) == frame.loc[row, name], (row, name)
            elif value is None:
                assert state == "missing" and np.isnan(frame.loc[row, name])
            else:
                assert notes[(row, name)] == value, (row, name)


def test_river_survey_workbook(samples_dir: Path) -> None:
    path = _sample(samples_dir, "river_survey.xlsx")
    assert list_sheets(path) == ["Survey", "Methods"]
    # its title is merged across the table: a title, not part of the column names
    assert read_sheet(path).columns[3].name == "pH"
    sheet = read_sheet(path)
    assert sheet.source.sheet == "Survey"  # the first sheet, read without being named
    assert (sheet.source.header_row, sheet.source.units_row) == (2, 3)
    assert sheet.frame.shape == (304, 12)
    assert sheet.frame.index[0] == 4 and sheet.frame.index[-1] == 307
    assert sheet.kinds == {
        "Sample ID": "identifier", "Station": "category", "Sample date": "date",
        **dict.fromkeys(MEASURES, "number"), "Oxygen saturation": "number", "Notes": "category",
    }  # fmt: skip
    # the formula column is computed (carried by default), its stored results read as numbers
    assert sheet.column("Oxygen saturation").carry_reason.startswith("computed by formulas")
    assert sheet.units["Oxygen saturation"] == "%"
    both = sheet.frame[["Dissolved oxygen", "Temperature"]].notna().all(axis=1)
    assert sheet.frame.loc[both, "Oxygen saturation"].notna().all()
    assert sheet.frame.loc[~both, "Oxygen saturation"].isna().all()
    # the notes are free text on about one sample in ten
    assert 0.05 < sheet.frame["Notes"].notna().mean() < 0.15
    assert sheet.units["Conductivity"] == "µS/cm" and sheet.units["Temperature"] == "°C"
    censored = sheet.cell_notes[sheet.cell_notes["state"] == "censored"]
    assert set(censored["column"]) <= {"Nitrate", "Phosphate"}
    assert set(censored["limit"]) <= {0.1, 0.02} and set(censored["side"]) == {"<"}
    assert not (sheet.states == "text_in_number").to_numpy().any()
    gaps = (sheet.states[MEASURES] == "missing").to_numpy().mean()
    assert 0.05 < gaps < 0.15  # "about 10 % of the measurement cells"
    _assert_matches_openpyxl(path, "Survey", sheet)


def test_river_survey_csv_equals_workbook(samples_dir: Path) -> None:
    book = read_sheet(_sample(samples_dir, "river_survey.xlsx"))
    text = read_sheet(_sample(samples_dir, "river_survey.csv"))
    assert (text.source.delimiter, text.source.decimal, text.source.encoding) == (";", ",", "utf-8")
    assert text.source.header_row == 1 and text.frame.index[0] == 2
    # the workbook adds a formula column and a notes column; the rest is the same
    shared = list(text.frame.columns)
    assert shared == list(book.frame.columns)[: len(shared)]
    assert text.kinds == {name: book.kinds[name] for name in shared}
    # same data rows; the workbook has a title and a units row above them, the CSV has not
    book_frame = book.frame.reset_index(drop=True)
    text_frame = text.frame.reset_index(drop=True)
    pd.testing.assert_frame_equal(text_frame[MEASURES], book_frame[MEASURES])
    assert text_frame["Sample ID"].tolist() == book_frame["Sample ID"].tolist()
    assert (text_frame["Sample date"] == book_frame["Sample date"]).all()
    assert (text.states.to_numpy() == book.states[shared].to_numpy()).all()
    book_limits = book.cell_notes[book.cell_notes["state"] == "censored"]["limit"].tolist()
    assert text.cell_notes[text.cell_notes["state"] == "censored"]["limit"].tolist() == book_limits


def test_river_survey_wide_workbook(samples_dir: Path) -> None:
    path = _sample(samples_dir, "river_survey_wide.xlsx")
    sheet = read_sheet(path)
    assert sheet.source.sheet == "Panel" and sheet.source.header_row == 1
    assert sheet.frame.shape == (150, 61)
    assert sheet.frame.columns[0] == "Specimen" and sheet.frame.columns[-1] == "E60"
    assert sheet.column("Specimen").kind == "identifier"
    assert all(sheet.column(f"E{j:02d}").kind == "number" for j in range(1, 61))
    assert 0.04 < (sheet.states.iloc[:, 1:] == "missing").to_numpy().mean() < 0.10  # "about 7 %"
    _assert_matches_openpyxl(path, "Panel", sheet)
