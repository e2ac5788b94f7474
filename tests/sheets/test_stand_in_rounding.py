"""A below-limit entry's stand-in is rounded like a fill of its column, keeping 2 significant digits.

The rule is Kinfill's own (README.md, "Rounding of filled numbers"): the column's measured
decimals, but never fewer than two significant digits, and never above the entry's limit.
Rounding to a column's measured decimals is common practice in lab reporting (no source).
The expected numbers below are worked by hand; the workbook is written by xlsxwriter
and read back with openpyxl, both independent of Kinfill.
"""

from __future__ import annotations

import csv
import json
import math
from pathlib import Path

import numpy as np
import openpyxl
import pytest
import xlsxwriter

from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet, write_result
from imputer_app.words import STAND_IN_ROUNDING

#: Nitrate shown with 2 decimals (some "<0.10"), phosphate with 3 (some "<0.020" and a
#: gap), temperature with 1. Invented, seeded.
_N = 40
_NITRATE_BELOW = (3, 11, 19, 27)
_PHOSPHATE_BELOW = (5, 13, 21, 33)
_PHOSPHATE_GAP = (8, 30)


def _rows() -> list[list[str]]:
    rng = np.random.default_rng(11)
    rows = [["Sample", "Temp", "Nitrate", "Phosphate"]]
    for i in range(_N):
        temp = round(float(rng.uniform(4, 20)), 1)
        nitrate = f"{float(rng.uniform(0.12, 0.90)):.2f}" if i not in _NITRATE_BELOW else "<0.10"
        phosphate = f"{float(rng.uniform(0.021, 0.150)):.3f}"
        phosphate = "<0.020" if i in _PHOSPHATE_BELOW else "" if i in _PHOSPHATE_GAP else phosphate
        rows.append([f"S{i + 1:02d}", f"{temp:.1f}", nitrate, phosphate])
    return rows


def _csv(path: Path) -> Path:
    with path.open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(_rows())
    return path


def _workbook(path: Path) -> Path:
    book = xlsxwriter.Workbook(str(path))
    sheet = book.add_worksheet("Data")
    formats = {1: book.add_format({"num_format": "0.0"}), 2: book.add_format({"num_format": "0.00"})}
    formats[3] = book.add_format({"num_format": "0.000"})
    for i, row in enumerate(_rows()):
        for j, text in enumerate(row):
            if i == 0 or j == 0 or text.startswith("<"):
                sheet.write_string(i, j, text)
            elif text:
                sheet.write_number(i, j, float(text), formats[j])
            else:
                sheet.write_blank(i, j, None, formats[j])
    book.close()
    return path


def _stand_ins(result, column: str, rows: tuple[int, ...]) -> list[float]:  # type: ignore[no-untyped-def]
    return [float(v) for v in result.frame[column].to_numpy()[list(rows)]]


@pytest.mark.parametrize(
    "censored, nitrate, phosphate",
    [
        # half of 0.10 has 2 decimals already; half of 0.020 is 0.010 (3 decimals)
        ("half_limit", 0.05, 0.010),
        # 0.10 / sqrt(2) = 0.0707 -> 2 significant digits 0.071 (2 decimals would give 0.07);
        # 0.020 / sqrt(2) = 0.01414 -> 0.014 (Hornung & Reed 1990, quoted from memory)
        ("limit_sqrt2", 0.071, 0.014),
        ("limit", 0.10, 0.020),
    ],
)
def test_substituted_stand_ins_follow_the_column_decimals_with_two_significant_digits(
    tmp_path: Path, censored: str, nitrate: float, phosphate: float
) -> None:
    sheet = read_sheet(_csv(tmp_path / "river.csv"))
    result = impute(sheet, FillPlan(k=3, censored=censored, interval_level=None))
    assert _stand_ins(result, "Nitrate", _NITRATE_BELOW) == [nitrate] * 4
    assert _stand_ins(result, "Phosphate", _PHOSPHATE_BELOW) == [phosphate] * 4
    # the fill log says the same number the table holds
    log = result.log.set_index(["row", "column"])
    labels = result.frame.index[list(_NITRATE_BELOW)]
    assert [float(log.loc[(r, "Nitrate"), "value"]) for r in labels] == [nitrate] * 4
    # a similarity-only column's stand-ins are rounded too, and named in the decimals
    assert dict(result.decimals) == {"Phosphate": 3, "Nitrate": 2}
    as_computed = impute(sheet, FillPlan(k=3, censored=censored, interval_level=None, rounding="as_computed"))
    exact = {"half_limit": 0.5, "limit_sqrt2": 1 / math.sqrt(2), "limit": 1.0}[censored]
    assert _stand_ins(as_computed, "Nitrate", _NITRATE_BELOW) == pytest.approx([0.10 * exact] * 4, abs=0)


def test_ros_stand_ins_keep_two_significant_digits_under_their_limit(tmp_path: Path) -> None:
    sheet = read_sheet(_csv(tmp_path / "river.csv"))
    rounded = impute(sheet, FillPlan(k=3, interval_level=None))  # ROS is the default
    exact = impute(sheet, FillPlan(k=3, interval_level=None, rounding="as_computed"))
    for column, rows, places, limit in (
        ("Nitrate", _NITRATE_BELOW, 2, 0.10),
        ("Phosphate", _PHOSPHATE_BELOW, 3, 0.020),
    ):
        got = _stand_ins(rounded, column, rows)
        raw = _stand_ins(exact, column, rows)
        cells = [(r, column) for r in exact.frame.index[list(rows)]]
        assert set(exact.log.set_index(["row", "column"]).loc[cells, "method"]) == {"ros"}
        for value, estimate in zip(got, raw, strict=True):
            # worked by hand: the decimals a 2-significant-digit value of this size needs
            needed = max(places, 1 - math.floor(math.log10(estimate)))
            assert value == min(round(estimate, needed), limit) and value > 0
            assert value != round(estimate, places) or needed == places  # 0.01 would hide the estimate
    # ROS estimates below 0.020 need 3 decimals, below 0.1 in a 2-decimal column too
    assert all(len(f"{v:g}".split(".")[1]) <= 3 for v in _stand_ins(rounded, "Phosphate", _PHOSPHATE_BELOW))


def test_donor_values_are_the_rounded_stand_ins_the_table_shows(tmp_path: Path) -> None:
    sheet = read_sheet(_csv(tmp_path / "river.csv"))
    result = impute(sheet, FillPlan(k=_N, censored="limit_sqrt2", interval_level=None))  # every donor
    phosphate = result.frame["Phosphate"]
    log = result.log[(result.log["column"] == "Phosphate") & (result.log["method"] == "knn")]
    assert len(log) == len(_PHOSPHATE_GAP)
    used = [(d, v) for donors, values in zip(log["donors"], log["donor_values"], strict=True)
            for d, v in zip(donors, values, strict=True)]  # fmt: skip
    below = set(result.frame.index[list(_PHOSPHATE_BELOW)])
    assert any(d in below for d, _ in used), "a censored cell is among the donors"
    assert all(float(v) == float(phosphate.loc[d]) for d, v in used)


def test_a_stand_in_never_rounds_above_its_limit(tmp_path: Path) -> None:
    rows = [["Sample", "Temp", "Lead"]]
    rows += [[f"S{i}", f"{5 + i * 0.5:.1f}", f"{0.02 + 0.01 * i:.2f}"] for i in range(12)]
    rows[3][2] = "<0.0126"
    path = tmp_path / "lead.csv"
    with path.open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(rows)
    sheet = read_sheet(path)
    lead = impute(sheet, FillPlan(k=3, censored="limit", interval_level=None)).frame["Lead"]
    assert float(lead.iloc[2]) == 0.0126  # 2 significant digits would give 0.013, above the limit
    half = impute(sheet, FillPlan(k=3, censored="half_limit", interval_level=None)).frame["Lead"]
    assert float(half.iloc[2]) == 0.0063


def test_the_plan_s_decimals_set_the_stand_in_s_decimals(tmp_path: Path) -> None:
    sheet = read_sheet(_csv(tmp_path / "river.csv"))
    plan = FillPlan(k=3, censored="limit_sqrt2", interval_level=None, decimals={"Nitrate": 4})
    result = impute(sheet, plan)
    assert _stand_ins(result, "Nitrate", _NITRATE_BELOW) == [0.0707] * 4


def test_csv_export_fill_log_and_run_record_show_the_rounded_stand_ins(tmp_path: Path) -> None:
    sheet = read_sheet(_csv(tmp_path / "river.csv"))
    plan = FillPlan(k=3, censored="limit_sqrt2", interval_level=None)
    result = impute(sheet, plan)
    out = tmp_path / "river.filled.csv"
    write_result(out, sheet, result, plan)
    with out.open(encoding="utf-8") as handle:
        table = list(csv.reader(handle))
    assert [table[r + 1][2] for r in _NITRATE_BELOW] == ["0.071"] * 4
    assert [table[r + 1][3] for r in _PHOSPHATE_BELOW] == ["0.014"] * 4
    with (tmp_path / "river.filled.fill-log.csv").open(encoding="utf-8") as handle:
        log = [row for row in csv.DictReader(handle) if row["original_state"] == "censored"]
    assert sorted({row["value"] for row in log}) == ["0.014", "0.071"]
    record = json.loads((tmp_path / "river.filled.run.json").read_text(encoding="utf-8"))
    assert record["rounding"]["decimals"] == {"Phosphate": 3, "Nitrate": 2}
    assert record["rounding"]["below_limit_stand_ins"] == STAND_IN_ROUNDING
    assert f"Values standing for below-limit entries were {STAND_IN_ROUNDING}." in record["methods_text"]


def test_the_methods_text_leaves_out_stand_in_rounding_when_nothing_was_rounded(tmp_path: Path) -> None:
    sheet = read_sheet(_csv(tmp_path / "river.csv"))
    plan = FillPlan(k=3, censored="limit_sqrt2", interval_level=None, rounding="as_computed")
    out = tmp_path / "river.filled.csv"
    write_result(out, sheet, impute(sheet, plan), plan)
    record = json.loads((tmp_path / "river.filled.run.json").read_text(encoding="utf-8"))
    assert "below_limit_stand_ins" not in record["rounding"]
    assert "Values standing for below-limit entries" not in record["methods_text"]


@pytest.mark.parametrize(
    "censored, nitrate, nitrate_format",
    [
        ("limit_sqrt2", 0.071, "General"),  # 3 decimals: "0.00" would show 0.07
        ("half_limit", 0.05, "0.00"),  # fits the column's format: kept
    ],
)
def test_workbook_export_shows_every_digit_of_a_stand_in(
    tmp_path: Path, censored: str, nitrate: float, nitrate_format: str
) -> None:
    source = _workbook(tmp_path / "river.xlsx")
    sheet = read_sheet(source)
    plan = FillPlan(k=3, censored=censored, interval_level=None)
    result = impute(sheet, plan)
    out = tmp_path / "river.filled.xlsx"
    write_result(out, sheet, result, plan)
    data = openpyxl.load_workbook(out)["Data"]
    for r in _NITRATE_BELOW:
        cell = data.cell(row=r + 2, column=3)
        assert (cell.value, cell.number_format, cell.fill.fgColor.rgb) == (
            nitrate,
            nitrate_format,
            "FFF4E3C9",
        )
    observed = data.cell(row=2, column=3)
    assert observed.number_format == "0.00"  # the lab's own cells are untouched


def _low_lead(path: Path) -> Path:
    """Lead with 2 decimals; rows 2 and 5 "<0.05", their nearest rows (by Temp) 0.01-0.03."""
    rows = [["Sample", "Temp", "Lead"]]
    for i in range(20):
        lead = "<0.05" if i in (2, 5) else f"{0.01 + 0.01 * (i % 3):.2f}" if i < 8 else f"{0.05 * i:.2f}"
        rows.append([f"S{i:02d}", f"{4 + 0.37 * i:.2f}", lead])  # a number, not a running one
    with path.open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(rows)
    return path


def test_a_censored_cell_filled_by_knn_keeps_two_significant_digits_under_its_cap(tmp_path: Path) -> None:
    sheet = read_sheet(_low_lead(tmp_path / "lead.csv"))
    plan = FillPlan(k=3, censored="fill_capped", fill_columns=("Lead",), interval_level=None)
    rounded = impute(sheet, plan).frame["Lead"].to_numpy()[[2, 5]]
    exact = impute(sheet, plan.replace(rounding="as_computed")).frame["Lead"].to_numpy()[[2, 5]]
    # donors' values are 0.01-0.03, so their mean needs a third decimal (hand check)
    assert all(0.01 < v < 0.03 and round(v, 2) != v for v in exact)
    assert rounded.tolist() == [round(v, 3) for v in exact]
    # a fill of an ordinary gap in the same column still gets the column's 2 decimals
    gaps = impute(sheet, FillPlan(k=3, censored="half_limit", interval_level=None)).frame["Lead"]
    assert gaps.to_numpy()[[2, 5]].tolist() == [0.025, 0.025]
