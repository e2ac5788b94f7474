"""Cell states one by one: missing markers, censored entries, text in numbers, kinds.

Each case is a hand-written CSV with one column ``x`` of four plain numbers and the cell
under test in row 6 (file row numbers: header 1, data 2-6), so the expected value,
state and note of that cell are known exactly.
"""

from __future__ import annotations

import math
import threading
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest

from imputer_app.errors import Cancelled
from imputer_app.sheets._cell_classes import BLANK, BOOL, CENSORED, DATE, NUMBER, TEXT
from imputer_app.sheets._cells import parse_column
from imputer_app.sheets._markers import DEFAULT_MARKERS, make_markers
from imputer_app.sheets._model import CELL_STATES
from imputer_app.sheets._read import read_sheet
from imputer_app.sheets._text_classes import parse_numbers


def _one_cell(tmp_path: Path, cell: str, sep: str = ",", **options: Any) -> tuple[float, str, pd.DataFrame]:
    path = tmp_path / "cell.csv"
    rows = ["1.5", "2.5", "3.5", "4.5", cell] if sep == "," else ["1,5", "2,5", "3,5", "4,5", cell]
    quoted = [f'"{v}"' if sep in v else v for v in rows]
    text = f"id{sep}x\n" + "".join(f"S{i}{sep}{v}\n" for i, v in enumerate(quoted))
    path.write_text(text, encoding="utf-8")
    sheet = read_sheet(path, **options)
    assert sheet.frame["x"].iloc[:4].tolist() == [1.5, 2.5, 3.5, 4.5]
    notes = sheet.cell_notes[(sheet.cell_notes["row"] == 6) & (sheet.cell_notes["column"] == "x")]
    return float(str(sheet.frame.loc[6, "x"])), str(sheet.states.loc[6, "x"]), notes


@pytest.mark.parametrize("marker", [*DEFAULT_MARKERS, "na", "n/a", " NA ", "Missing", "LOST", "#n/a", "nan"])
def test_default_markers_are_missing(tmp_path: Path, marker: str) -> None:
    value, state, notes = _one_cell(tmp_path, marker)
    assert math.isnan(value) and state == "missing"
    assert notes[["state", "text", "side"]].values.tolist() == [["missing", marker.strip(), ""]]


@pytest.mark.parametrize("marker", ["n.d.", "N.D.", "ND", "not detected", " nd "])
def test_not_detected_markers_are_below_an_unknown_limit(tmp_path: Path, marker: str) -> None:
    # common practice in analytical labs, no source: "n.d." is below the limit of detection
    value, state, notes = _one_cell(tmp_path, marker)
    assert math.isnan(value) and state == "censored"
    assert notes[["state", "text", "side"]].values.tolist() == [["censored", marker.strip(), "<"]]
    assert math.isnan(notes["limit"].iloc[0])


@pytest.mark.parametrize(
    ("cell", "meanings", "state"),
    [
        ("n.d.", {"n.d.": "missing"}, "missing"),
        ("N.D.", {"n.d.": "missing"}, "missing"),
        ("-", {"-": "below-limit"}, "censored"),
        ("BDL", {"bdl": "missing"}, "missing"),
        ("NA", {}, "missing"),
    ],
)
def test_user_gives_a_marker_its_meaning(tmp_path: Path, cell: str, meanings: dict, state: str) -> None:
    assert _one_cell(tmp_path, cell, markers=meanings)[1] == state


def test_blank_cell_is_missing_without_a_note(tmp_path: Path) -> None:
    value, state, notes = _one_cell(tmp_path, "   ")
    assert math.isnan(value) and state == "missing" and notes.empty


@pytest.mark.parametrize(
    ("cell", "markers", "state", "value"),
    [
        ("-999", None, "observed", -999.0),
        ("-999", ["-999"], "missing", math.nan),
        ("-999.0", [-999], "missing", math.nan),
        ("-999,0", ["-999"], "observed", math.nan),  # "," is not this file's decimal mark: text
        ("9999", ["-999"], "observed", 9999.0),
        ("ERR", ["err"], "missing", math.nan),
        ("NA", ["-999"], "missing", math.nan),  # given markers extend the defaults
    ],
)
def test_user_markers_extend_defaults(
    tmp_path: Path, cell: str, markers: list[object] | None, state: str, value: float
) -> None:
    got, got_state, _ = _one_cell(tmp_path, cell, markers=markers)
    if cell == "-999,0":
        assert got_state == "text_in_number"
        return
    assert got_state == state
    assert (math.isnan(got) and math.isnan(value)) or got == value


@pytest.mark.parametrize(
    ("cell", "side", "limit"),
    [
        ("<0.05", "<", 0.05),
        ("< 0.05", "<", 0.05),
        ("<=0.05", "<", 0.05),
        ("≤0.05", "<", 0.05),
        ("<.5", "<", 0.5),
        ("<LOD", "<", math.nan),
        ("< LOD", "<", math.nan),
        ("<lod", "<", math.nan),
        ("<LOQ", "<", math.nan),
        ("below LOD", "<", math.nan),
        ("Below detection limit", "<", math.nan),
        ("BDL", "<", math.nan),
        (">2000", ">", 2000.0),
        ("> 2000", ">", 2000.0),
        (">=1e3", ">", 1000.0),
        ("above 2000", ">", 2000.0),
        ("<0,05", "<", 0.05),  # a comma limit in a point file is still read
    ],
)
def test_censored_forms(tmp_path: Path, cell: str, side: str, limit: float) -> None:
    value, state, notes = _one_cell(tmp_path, cell)
    assert math.isnan(value) and state == "censored"
    assert notes["side"].tolist() == [side] and notes["text"].tolist() == [cell]
    np.testing.assert_array_equal(notes["limit"].to_numpy(), [limit])


def test_censored_with_decimal_comma_file(tmp_path: Path) -> None:
    _, state, notes = _one_cell(tmp_path, "<0,05", sep=";")
    assert state == "censored" and notes["limit"].tolist() == [0.05]


@pytest.mark.parametrize(
    ("form", "limit_column"),
    [("<LOD", "x LOD"), ("< LOD", "x_LOD"), ("below LOD", "LOD x"), ("<LOQ", "x LOQ"), ("<DL", "x (LOD)")],
)
def test_limit_from_limit_column(tmp_path: Path, form: str, limit_column: str) -> None:
    path = tmp_path / "lod.csv"
    path.write_text(
        f"id,x,{limit_column}\nS1,0.5,0.1\nS2,{form},0.2\nS3,{form},\nS4,0.7,0.1\n", encoding="utf-8"
    )
    sheet = read_sheet(path)
    limits = dict(zip(sheet.cell_notes["row"], sheet.cell_notes["limit"], strict=True))
    assert limits[3] == 0.2
    assert math.isnan(limits[4])
    assert sheet.states["x"].astype(str).tolist() == ["observed", "censored", "censored", "observed"]


def test_limit_column_with_units_in_names(tmp_path: Path) -> None:
    path = tmp_path / "lod_units.csv"
    path.write_text("id;nitrate [mg/L];nitrate LOD [mg/L]\nS1;<LOD;0,05\nS2;0,5;0,05\n", encoding="utf-8")
    sheet = read_sheet(path)
    assert sheet.cell_notes["limit"].tolist() == [0.05]
    assert sheet.units["nitrate LOD [mg/L]"] == "mg/L"


# "#DIV/0!" in a number column is a formula_error cell (see test_read_hardening.py)
@pytest.mark.parametrize("cell", ["broken vial", "7.2.1", "approx 5", "1/2", "inf"])
def test_text_in_number_column_is_reported(tmp_path: Path, cell: str) -> None:
    value, state, notes = _one_cell(tmp_path, cell)
    assert math.isnan(value) and state == "text_in_number"
    assert notes[["state", "text"]].values.tolist() == [["text_in_number", cell]]
    problems = read_sheet(tmp_path / "cell.csv").problems
    assert problems == [f"'x' row 6: '{cell}' is not a number; it is read as a gap and marked text_in_number"]


def test_many_text_cells_are_summarised(tmp_path: Path) -> None:
    path = tmp_path / "many.csv"
    rows = "".join(f"{i}.5\n" for i in range(30)) + "".join("oops\n" for _ in range(12))
    path.write_text("x\n" + rows, encoding="utf-8")
    sheet = read_sheet(path)
    assert (sheet.states["x"] == "text_in_number").sum() == 12
    assert len(sheet.cell_notes) == 12
    assert len([p for p in sheet.problems if p.startswith("'x' row ")]) == 10
    assert (
        sheet.problems[-1]
        == "'x': 2 more cells hold text that is not a number (all are listed in the cell notes)"
    )


@pytest.mark.parametrize(
    ("cell", "expected"),
    [("  7.25  ", 7.25), ("+3", 3.0), ("-0.5", -0.5), ("1e-3", 0.001), ("1,234.5", 1234.5), ("−2", -2.0)],
)
def test_number_spellings(tmp_path: Path, cell: str, expected: float) -> None:
    value, state, _ = _one_cell(tmp_path, cell)
    assert (value, state) == (expected, "observed")


@pytest.mark.parametrize(
    ("values", "kind"),
    [
        (["1", "2", "3", "", "5"], "number"),
        (["1", "2", "x", "<0.1", "n.d."], "number"),  # 3 of 4 present cells read as numbers
        (["a", "b", "a", "b", "a"], "category"),
        (["a", "b", "c", "d", "e"], "identifier"),
        (["a", "b", "", "NA", ""], "category"),  # two values are too few for an identifier
        (["2024-03-01", "2024-03-02", "2024-03-03", "", "2024-03-05"], "date"),
        (["01.03.2024", "02.03.2024", "15.03.2024", "NA", "31.12.2024"], "date"),
        (["10:30", "11:45", "12:00", "13:15", "14:00"], "date"),
        (["", "NA", "-", "", "lost"], "empty"),
        (["a", "1", "2", "a", "b"], "category"),  # 2 of 5 numbers: not a number column
        (["001", "002", "003", "010", "011"], "identifier"),  # zero-padded codes keep their text
        (["01", "02", "01", "02", ""], "category"),
    ],
)
def test_kind_detection(tmp_path: Path, values: list[str], kind: str) -> None:
    path = tmp_path / "kinds.csv"
    path.write_text("id,v\n" + "".join(f"S{i},{v}\n" for i, v in enumerate(values)), encoding="utf-8")
    sheet = read_sheet(path)
    assert sheet.column("v").kind == kind
    present = [v.strip() not in ("", "NA", "-", "n.d.") for v in values]
    if kind == "empty":
        assert sheet.frame["v"].isna().all() and (sheet.states["v"] == "missing").all()
    elif kind in ("category", "identifier"):
        assert sheet.frame["v"].tolist() == [
            v if p else math.nan for v, p in zip(values, present, strict=True)
        ] or (sheet.frame["v"].isna().tolist() == [not p for p in present])


def test_text_dates_day_first(tmp_path: Path) -> None:
    path = tmp_path / "dates.csv"
    path.write_text(
        "id;datum\nA;01.03.2024\nB;15.03.2024\nC;kaputt\nD;31.12.2024\nE;02.01.2025\n", encoding="utf-8"
    )
    sheet = read_sheet(path)
    assert sheet.column("datum").kind == "date"
    assert sheet.frame["datum"].tolist()[:2] == [pd.Timestamp(2024, 3, 1), pd.Timestamp(2024, 3, 15)]
    assert str(sheet.states.loc[4, "datum"]) == "text_in_number"
    assert any("'kaputt' is not a date" in p for p in sheet.problems)
    assert "day.month.year" in sheet.column("datum").notes[0]


def test_kinds_override_validated_and_applied(tmp_path: Path) -> None:
    path = tmp_path / "over.csv"
    path.write_text("code,reading\n1,0.5\n2,0.6\n3,x\n", encoding="utf-8")
    sheet = read_sheet(path, kinds={"code": "category", "reading": "number"})
    assert sheet.frame["code"].tolist() == ["1", "2", "3"]
    assert sheet.column("code").kind == "category"
    as_id = read_sheet(path, kinds={"code": "identifier"})
    assert as_id.column("code").kind == "identifier"


def test_states_are_categorical_with_all_states(tmp_path: Path) -> None:
    _one_cell(tmp_path, "<1")
    sheet = read_sheet(tmp_path / "cell.csv")
    for name in sheet.states:
        assert isinstance(sheet.states[name].dtype, pd.CategoricalDtype)
        assert tuple(sheet.states[name].cat.categories) == CELL_STATES
    assert sheet.states.shape == sheet.frame.shape
    assert (sheet.states.index == sheet.frame.index).all()


def test_progress_and_cancel(tmp_path: Path) -> None:
    _one_cell(tmp_path, "1")
    seen: list[tuple[int, int]] = []
    read_sheet(tmp_path / "cell.csv", progress=lambda done, total: seen.append((done, total)))
    assert seen[-1] == (1000, 1000)
    assert [d for d, _ in seen] == sorted(d for d, _ in seen)
    flag = threading.Event()
    flag.set()
    with pytest.raises(Cancelled):
        read_sheet(tmp_path / "cell.csv", cancel=flag)
    with pytest.raises(Cancelled):
        read_sheet(tmp_path / "cell.csv", cancel=lambda: True)


# ---- unit level: the column classifier on object arrays as calamine returns them


def test_parse_column_mixed_python_types() -> None:
    import datetime as dt

    raw = np.array(
        [1.5, "", " 7,5 ", "n.d.", True, dt.datetime(2024, 1, 1), 3, "<2", "x", None], dtype=object
    )
    parsed = parse_column(raw, ",", make_markers())
    # "n.d." is below an unknown limit of detection: a censored cell
    assert parsed.cls.tolist() == [NUMBER, BLANK, NUMBER, CENSORED, BOOL, DATE, NUMBER, CENSORED, TEXT, BLANK]
    np.testing.assert_array_equal(parsed.number, [1.5, NAN, 7.5, NAN, NAN, NAN, 3.0, NAN, NAN, NAN])
    assert parsed.limit[7] == 2.0 and parsed.side[7] == "<"
    assert parsed.text[8] == "x" and parsed.text[3] == "n.d."


NAN = math.nan


@pytest.mark.parametrize(
    ("texts", "decimal", "expected"),
    [
        (["7,21", "1.234,5", "1.234.567", "-0,5", "1,5e-3"], ",", [7.21, 1234.5, 1234567.0, -0.5, 0.0015]),
        (["7.21", "1,234.5", "1,234,567", "nan", "inf"], ".", [7.21, 1234.5, 1234567.0, NAN, NAN]),
        (["12,3456", "1e400", "", "0x10", "1_000"], ",", [12.3456, NAN, NAN, NAN, NAN]),
    ],
)
def test_parse_numbers(texts: list[str], decimal: str, expected: list[float]) -> None:
    got = parse_numbers(pd.Series(texts, dtype=str), decimal)
    np.testing.assert_array_equal(got, expected)


def test_make_markers_splits_text_and_numbers() -> None:
    markers = make_markers(["-999", 9999, "ERR", " <NA> "])
    assert {-999.0, 9999.0} == set(markers.numbers)
    assert {"err", "<na>", "na", "n/a", "#n/a", "nan"} <= markers.texts
