"""The csv export, read back with Python's csv module (RFC 4180) and json.

References: OWASP "CSV Injection" (a text cell beginning with = + - @ tab or CR gets
a leading single quote; numbers stay numbers); RFC 4180 (CRLF, quoting); RFC 8259
(JSON, no NaN).
"""

from __future__ import annotations

import csv
import json
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from imputer_app import CAUTIONS, __version__
from imputer_app.engine import impute
from imputer_app.sheets import write_result
from imputer_app.sheets._write_csv import guard
from tests.sheets.write_support import LAB_PLAN, fake_result, lab_sheet


def read_rows(path: Path, delimiter: str = ",", encoding: str = "utf-8-sig") -> list[list[str]]:
    with path.open(encoding=encoding, newline="") as handle:
        return list(csv.reader(handle, delimiter=delimiter))


@pytest.mark.parametrize(
    "text, written",
    [
        ("=1+1", "'=1+1"),
        ("+1", "'+1"),
        ("-1", "'-1"),
        ("@SUM(A1)", "'@SUM(A1)"),
        ("\t=1", "'\t=1"),
        ("\r=1", "'\r=1"),
        ('=HYPERLINK("http://x.test","click")', '\'=HYPERLINK("http://x.test","click")'),
        ("=cmd|' /C calc'!A0", "'=cmd|' /C calc'!A0"),
        ("plain", "plain"),
        ("a=b", "a=b"),
        (" =1", " =1"),
    ],
)
def test_formula_like_text_gets_a_quote(tmp_path, text, written) -> None:
    """OWASP CSV Injection guidance, one case per dangerous first character."""
    frame = pd.DataFrame({"note": [text], "x": [-2.5]})
    result = fake_result(frame)
    write_result(tmp_path / "out.csv", None, result, result.plan)
    rows = read_rows(tmp_path / "out.csv")
    assert rows == [["note", "x"], [written, "-2.5"]]  # the negative number is not touched
    assert guard(text) == written


def test_header_names_and_log_texts_are_guarded_too(tmp_path) -> None:
    frame = pd.DataFrame({"=bad": [1.0, np.nan], "site": ["-east", "@west"]})
    result = fake_result(frame, {(1, "=bad"): 1.0})
    files = write_result(tmp_path / "out.csv", None, result, result.plan)
    assert read_rows(files[0])[0] == ["'=bad", "site"]
    assert read_rows(files[0])[1:] == [["1", "'-east"], ["1", "'@west"]]  # whole numbers stay whole
    log = read_rows(files[1])
    assert log[1][1] == "'=bad"


@pytest.fixture
def lab_csv(tmp_path):
    sheet = lab_sheet(tmp_path)
    result = impute(sheet, LAB_PLAN)
    files = write_result(tmp_path / "lab.filled.csv", sheet, result, LAB_PLAN)
    return sheet, result, files


def test_files_are_table_log_and_record(lab_csv, tmp_path) -> None:
    _, _, files = lab_csv
    assert [f.name for f in files] == ["lab.filled.csv", "lab.filled.fill-log.csv", "lab.filled.run.json"]
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([*(f.name for f in files), "lab.xlsx"])
    raw = files[0].read_bytes()
    assert raw.startswith(b"\xef\xbb\xbf") and b"\r\n" in raw  # BOM for spreadsheet programs; RFC 4180 CRLF


def test_table_holds_filled_values_and_original_texts(lab_csv) -> None:
    sheet, result, files = lab_csv
    rows = read_rows(files[0])
    assert rows[0] == list(sheet.frame.columns)
    assert rows[1] == [u or "" for u in sheet.units.values()]  # the input's units row stays
    assert len(rows) == len(result.frame) + 2
    for line, (label, values) in zip(rows[2:], result.frame.iterrows(), strict=True):
        for text, column in zip(line, result.frame.columns, strict=True):
            value = values[column]
            state = sheet.states.loc[label, column]
            if isinstance(value, float) and not np.isnan(value):
                assert float(text) == value  # shortest repr: exact round trip
            elif isinstance(value, str):
                assert text == guard(value)
            elif state in ("censored", "text_in_number"):
                note = sheet.cell_notes[(sheet.cell_notes.row == label) & (sheet.cell_notes.column == column)]
                assert text == note.text.iloc[0]
            else:
                assert text == ""


def test_fill_log_csv_matches_the_log(lab_csv) -> None:
    _, result, files = lab_csv
    rows = read_rows(files[1])
    assert rows[0] == ["row", "column", "original_state", "method", "value", "lower", "upper", "k",
                       "donors", "distances", "donor_values", "spread", "support", "note",
                       "original_text", "sample_id"]  # fmt: skip
    assert len(rows) == len(result.log) + 1
    for line, entry in zip(rows[1:], result.log.itertuples(index=False), strict=True):
        record = dict(zip(rows[0], line, strict=True))
        assert int(record["row"]) == entry.row and record["column"] == entry.column
        assert record["method"] == entry.method and record["original_state"] == entry.original_state
        assert record["donors"] == "; ".join(map(str, entry.donors))
        if isinstance(entry.value, float):
            assert float(record["value"]) == entry.value
        else:
            assert record["value"] == guard(entry.value)


def test_run_record_json(lab_csv) -> None:
    sheet, result, files = lab_csv
    record = json.loads(files[2].read_text(encoding="utf-8"))
    assert record["input"]["file"] == "lab.xlsx" and record["input"]["sha256"] == sheet.source.sha256
    assert record["input"]["sheet"] == "Data" and record["input"]["header_row"] == 2
    assert record["plan"] == LAB_PLAN.to_dict() and record["plan_resolved"] == result.plan.to_dict()
    assert record["units"] == {"nitrate": "mg/L", "lead": "µg/L"}
    assert record["counts"]["filled"] == int(result.filled.to_numpy().sum())
    assert record["counts"]["censored_substituted"] == int(
        result.log.method.isin(["limit", "half_limit"]).sum()
    )
    assert record["versions"]["kinfill"] == __version__ and "numpy" in record["versions"]
    assert record["cautions"] == CAUTIONS
    assert record["run"]["created_utc"].endswith("Z")
    assert record["output"]["files"] == [f.name for f in files]


@pytest.mark.parametrize(
    "delimiter, decimal, encoding, suffix, expected_sep, bom",
    [
        (";", ",", "utf-8", ".csv", ";", False),
        (",", ".", "utf-8-sig", ".csv", ",", True),
        (";", ",", "cp1252", ".tsv", "\t", True),
        (None, None, None, ".csv", ",", True),
    ],
)
def test_a_delimited_input_keeps_its_delimiter_and_decimal_mark(
    tmp_path, delimiter, decimal, encoding, suffix, expected_sep, bom
) -> None:
    sheet = lab_sheet(tmp_path)
    sheet.source = replace(
        sheet.source, file_format="csv", delimiter=delimiter, decimal=decimal, encoding=encoding
    )
    result = impute(sheet, LAB_PLAN)
    files = write_result(tmp_path / f"out{suffix}", sheet, result, LAB_PLAN)
    mark = decimal or "."
    rows = read_rows(files[0], expected_sep, "utf-8-sig")
    assert rows[1][2:4] == ["mg/L", "µg/L"]  # the units row
    assert rows[2][2:5] == ["1", f"0{mark}8", f"7{mark}1"]  # a whole number stays whole
    assert rows[5][4] == "9"  # pH ">9" at row 7, written as its limit
    assert files[0].read_bytes().startswith(b"\xef\xbb\xbf") is bom  # UTF-8 always; BOM unless input had none
    record = json.loads(files[2].read_text(encoding="utf-8"))
    assert record["output"]["delimiter"] == expected_sep and record["output"]["decimal"] == mark


def test_cells_left_empty_get_their_own_file(tmp_path) -> None:
    frame = pd.DataFrame({"a": [1.0, np.nan]})
    unfilled = pd.DataFrame({"row": [1], "column": ["a"], "reason": ["no donor"]})
    result = fake_result(frame, unfilled=unfilled)
    files = write_result(tmp_path / "out.csv", None, result, result.plan)
    assert files[-1].name == "out.not-filled.csv"
    assert read_rows(files[-1]) == [["row", "column", "reason"], ["1", "a", "no donor"]]
    record = json.loads(files[2].read_text(encoding="utf-8"))
    assert record["unfilled_reasons"] == {"no donor": 1} and record["input"]["file"] is None


def test_run_record_is_strict_json_even_with_nan(tmp_path) -> None:
    """RFC 8259 has no NaN: missing numbers of the recovery summary become null."""
    from types import SimpleNamespace

    table = pd.DataFrame({"k": [1, 3], "score": [0.5, np.nan], "se": [np.nan, 0.1]}).set_index("k")
    report = SimpleNamespace(
        to_frame=lambda: table,
        best_k=1,
        best_k_1se=1,
        ks=(1, 3),
        settings={"seed": np.int64(0), "hide_fraction": np.float64(0.1)},
        baseline=pd.DataFrame({"score": [np.nan]}, index=["overall"]),
    )
    frame = pd.DataFrame({"a": [1.0, 2.0]})
    result = fake_result(frame)
    files = write_result(tmp_path / "out.csv", None, result, result.plan, report)
    text = files[2].read_text(encoding="utf-8")
    assert "NaN" not in text
    summary = json.loads(text)["recovery_test"]
    assert summary["per_k"] == [{"k": 1, "score": 0.5, "se": None}, {"k": 3, "score": None, "se": 0.1}]
    assert summary["baseline_score"] is None and summary["settings"] == {"seed": 0, "hide_fraction": 0.1}
    assert summary["chosen_k"] == 1 and summary["best_k"] == 1
