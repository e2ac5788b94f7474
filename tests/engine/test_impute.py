"""impute() from DataFrames and sheets: roles, log, reasons, censored cells, safety."""

from __future__ import annotations

import math
import threading

import numpy as np
import pandas as pd
import pytest

import imputer_app.engine as engine
from imputer_app.engine import FillResult, default_roles, impute, prepare
from imputer_app.errors import Cancelled, PlanError
from imputer_app.plan import FillPlan
from tests.engine.helpers import fake_sheet, random_frame


def _lab() -> pd.DataFrame:
    """A small mixed sheet: ID, date, site, numbers and a category."""
    return pd.DataFrame(
        {
            "sample": [f"S{i}" for i in range(8)],
            "date": pd.date_range("2024-01-01", periods=8),
            "site": ["A", "A", "A", "A", "B", "B", "B", "B"],
            "ph": [7.0, 7.1, np.nan, 6.9, 8.0, 8.1, 8.2, np.nan],
            "nitrate": [1.0, 1.2, 1.1, np.nan, 3.0, np.nan, 3.3, 3.1],
            "soil": ["clay", "clay", None, "clay", "sand", "sand", "loam", "sand"],
            "flag": [True, False, True, False, True, False, True, False],
        }
    )


def test_all_names_import() -> None:
    # constants first, then the rest, each in order (ruff's RUF022 order)
    assert engine.__all__ == sorted(engine.__all__, key=lambda name: (not name.isupper(), name))
    for name in engine.__all__:
        assert getattr(engine, name) is not None


def test_default_roles_and_kinds() -> None:
    roles = default_roles(_lab())
    assert roles == {
        "sample": "carried",  # all distinct text: an identifier
        "date": "carried",
        "site": "similarity",
        "ph": "fill",
        "nitrate": "fill",
        "soil": "fill",
        "flag": "similarity",
    }
    plan = impute(_lab(), FillPlan()).plan
    assert plan.similarity_columns == ("site", "ph", "nitrate", "soil", "flag")
    assert plan.fill_columns == ("ph", "nitrate", "soil")
    assert plan.carried_columns == ("sample", "date")


def test_plan_kinds_override_detection() -> None:
    frame = _lab().assign(code=[1, 2, 1, 2, 1, 2, 1, 2])
    table = prepare(frame, FillPlan(kinds={"code": "category"}))
    assert table.kinds["code"] == "category"
    assert default_roles(frame)["code"] == "similarity"


def test_result_keeps_shape_dtypes_and_marks_filled() -> None:
    frame = _lab()
    result = impute(frame, FillPlan(k=2))
    assert isinstance(result, FillResult)
    assert list(result.frame.columns) == list(frame.columns)
    assert result.frame.index.equals(frame.index)
    assert result.frame["flag"].dtype == frame["flag"].dtype
    assert result.frame["date"].equals(frame["date"])
    assert not result.frame[["ph", "nitrate", "soil"]].isna().any().any()
    np.testing.assert_array_equal(result.filled.to_numpy(), frame.isna().to_numpy())
    assert not result.censored.to_numpy().any()
    assert result.unfilled.empty


def test_log_rows_explain_each_fill() -> None:
    frame = _lab()
    result = impute(
        frame, FillPlan(k=2, scaling="none", similarity_columns=("ph", "nitrate"), group_column="site")
    )
    log = result.log
    assert list(log.columns) == [
        "row", "column", "value", "original_state", "method", "k", "donors",
        "distances", "donor_values", "spread", "support", "note", "lower", "upper", "original_text",
    ]  # fmt: skip
    row = log[(log["row"] == 2) & (log["column"] == "ph")].iloc[0]
    # row 2 has only nitrate 1.1: nearest site-A rows with ph are 1 (1.2) and 0 (1.0), tied (in
    # exact arithmetic; listed by exact distance, which rounding sets apart); both take part
    assert dict(zip(row["donors"], row["donor_values"], strict=True)) == {0: 7.0, 1: 7.1}
    assert row["value"] == pytest.approx(7.05)
    assert row["distances"] == pytest.approx((0.1 * math.sqrt(2), 0.1 * math.sqrt(2)))
    assert row["spread"] == pytest.approx(np.std([7.0, 7.1], ddof=1))
    assert row["method"] == "knn" and row["original_state"] == "missing" and row["k"] == 2
    assert row["support"] in ("ok", "weak")
    assert set(log["support"]) <= {"ok", "weak"}


def test_fewer_donors_than_k_are_all_used_and_noted() -> None:
    frame = _lab()
    result = impute(frame, FillPlan(k=5, group_column="site", similarity_columns=("ph", "nitrate")))
    row = result.log[(result.log["row"] == 7) & (result.log["column"] == "ph")].iloc[0]
    # site B rows with ph: 4, 5, 6; row 5 lacks nitrate, the only column row 7 has
    assert row["k"] == 2 and row["donors"] == (4, 6)
    assert "only 2 donors (k=5)" in row["note"]
    assert row["value"] == pytest.approx(np.mean([8.0, 8.2]))


def test_weak_support_uses_the_95th_percentile() -> None:
    # Kinfill's own convention, no outside source: without intervals, support is weak when
    # the nearest donor is farther than the 95th percentile of every filled cell's
    # nearest-donor distance (README "How the numbers are made").
    frame = random_frame(200, 3, 0.1, seed=5)
    result = impute(frame, FillPlan(k=3, interval_level=None))
    nearest = np.array([d[0] for d in result.log["distances"]])
    assert result.k_weak_threshold == pytest.approx(np.percentile(nearest, 95))
    assert ((result.log["support"] == "weak") == (nearest > result.k_weak_threshold)).all()


def test_no_donor_reasons() -> None:
    frame = pd.DataFrame(
        {
            "g": ["A", "A", "B", "B", None],
            "x": [1.0, np.nan, 2.0, 3.0, 1.0],
            "y": [np.nan, np.nan, 1.0, 2.0, 3.0],
            "t": [np.nan, np.nan, np.nan, 5.0, 6.0],
            "empty": [np.nan] * 5,
        }
    )
    plan = FillPlan(similarity_columns=("x", "y"), fill_columns=("t", "empty"), group_column="g")
    result = impute(frame, plan)
    reasons = {(r.row, r.column): r.reason for r in result.unfilled.itertuples()}
    assert reasons[(0, "t")] == "no row of group 'A' has a value in 't'"
    assert reasons[(1, "t")] == "no row of group 'A' has a value in 't'"
    assert reasons[(0, "empty")] == "column 'empty' has no value to copy from"
    assert (2, "t") not in reasons  # row 3 (group B) is its donor
    one = impute(frame.drop(columns="g"), plan.replace(group_column=None, fill_columns=("t",)))
    reasons = {(r.row, r.column): r.reason for r in one.unfilled.itertuples()}
    assert reasons == {(1, "t"): "every similarity column is empty in this row"}
    assert np.isnan(one.frame.loc[1, "t"]) and not one.filled.loc[1, "t"]


def test_no_donor_column_mean_is_reported() -> None:
    frame = pd.DataFrame(
        {"x": [1.0, np.nan, 2.0, 3.0], "t": [4.0, np.nan, 6.0, 8.0], "c": ["a", None, "b", "b"]}
    )
    result = impute(
        frame, FillPlan(similarity_columns=("x",), fill_columns=("t", "c"), no_donor="column_mean")
    )
    assert result.frame.loc[1, "t"] == pytest.approx(6.0)
    assert result.frame.loc[1, "c"] == "b"
    log = result.log.set_index("column")
    assert (log["method"] == "column_mean").all() and (log["k"] == 0).all()
    assert log.loc["t", "note"].startswith("no donor: every similarity column is empty in this row")
    assert result.filled.loc[1, "t"] and result.unfilled.empty


def test_constant_column_is_left_out_with_a_warning() -> None:
    frame = random_frame(30, 3, 0.1, seed=2).assign(const=5.0)
    result = impute(frame, FillPlan())  # the default carries a constant column
    assert "const" in result.plan.carried_columns and not result.warnings
    result = impute(frame, FillPlan(similarity_columns=("c0", "c1", "c2", "const")))
    assert "column 'const' is constant; left out of the distance" in result.warnings
    assert not result.frame.isna().any().any()
    ref = impute(frame.drop(columns="const"), FillPlan())
    pd.testing.assert_frame_equal(result.frame.drop(columns="const"), ref.frame)


def test_zero_weight_drops_a_column() -> None:
    frame = random_frame(30, 3, 0.1, seed=3)
    a = impute(frame, FillPlan(weights={"c2": 0.0}, fill_columns=("c1",)))
    b = impute(frame, FillPlan(similarity_columns=("c0", "c1"), fill_columns=("c1",)))
    assert a.filled["c1"].sum() == 3
    pd.testing.assert_frame_equal(a.frame, b.frame)
    pd.testing.assert_frame_equal(a.log, b.log)


def test_one_row_sheet() -> None:
    frame = pd.DataFrame({"x": [1.0], "t": [np.nan]})
    result = impute(frame, FillPlan())  # t is empty: carried, nothing to fill
    assert result.plan.fill_columns == () and result.plan.carried_columns == ("t",)
    result = impute(frame, FillPlan(fill_columns=("t",)))
    assert result.unfilled["reason"].tolist() == ["column 't' has no value to copy from"]
    assert result.log.empty and math.isnan(result.k_weak_threshold)
    assert "column 'x' is constant; left out of the distance" in result.warnings


def test_bounds_and_decimals_apply_to_fills() -> None:
    frame = pd.DataFrame({"x": [0.0, 0.1, 0.2, 9.0], "t": [-3.0, -1.0, np.nan, 12.0], "n": [1, 2, 3, 4]})
    frame.loc[3, "x"] = np.nan
    frame["n"] = pd.array([1, 2, None, 4], dtype="Int64")
    plan = FillPlan(
        k=2, scaling="none", bounds={"t": (0.0, None)}, decimals={"n": 0}, similarity_columns=("x",),
        fill_columns=("t", "n", "x"),
    )  # fmt: skip
    result = impute(frame, plan)
    assert result.frame.loc[2, "t"] == 0.0  # mean -2 raised to the lower bound
    assert result.frame.loc[2, "n"] == 2 and result.frame["n"].dtype == "Int64"  # mean 1.5 -> 2
    # x in row 3 shares no column with anything: no similarity value
    assert "every similarity column is empty in this row" in result.unfilled["reason"].tolist()


def test_plan_errors_name_the_problem() -> None:
    with pytest.raises(PlanError, match="'nope'"):
        impute(_lab(), FillPlan(fill_columns=("nope",)))
    with pytest.raises(PlanError, match="'sample' is used as numbers"):
        impute(_lab(), FillPlan(kinds={"sample": "number"}, similarity_columns=("sample", "ph")))
    with pytest.raises(PlanError, match="'date' holds dates"):
        impute(_lab(), FillPlan(similarity_columns=("date", "ph")))


# ---------------------------------------------------------------- censored cells
def _censored_sheet():  # type: ignore[no-untyped-def]
    frame = pd.DataFrame(
        {
            "x": [1.0, 1.1, 1.2, 5.0, 5.1, 1.19],
            "lead": [0.5, 0.6, np.nan, 3.0, 3.1, np.nan],
            "hi": [100.0, 110.0, 120.0, np.nan, 500.0, 105.0],
        },
        index=[2, 3, 4, 5, 6, 7],
    )
    return fake_sheet(
        frame,
        [(4, "lead", "<0.2", "<", 0.2), (5, "hi", ">2000", ">", 2000.0), (7, "lead", "<LOD", "<", np.nan)],
    )


@pytest.mark.parametrize(
    ("mode", "value"), [("limit", 0.2), ("half_limit", 0.1), ("limit_sqrt2", 0.2 / math.sqrt(2))]
)
def test_censored_substitution(mode: str, value: float) -> None:
    # Hornung & Reed 1990, Appl. Occup. Environ. Hyg. 5(1):46-51: a below-limit entry
    # stands for the limit, limit/2 or limit/sqrt(2); an above-range entry for its limit.
    sheet = _censored_sheet()
    plan = FillPlan(
        k=2, scaling="none", censored=mode, similarity_columns=("x", "lead"), fill_columns=("lead", "hi")
    )
    result = impute(sheet, plan)
    assert result.frame.loc[4, "lead"] == pytest.approx(value)
    assert result.frame.loc[5, "hi"] == 2000.0
    assert result.censored.loc[4, "lead"] and result.censored.loc[5, "hi"] and result.censored.loc[7, "lead"]
    assert not result.filled.loc[4, "lead"] and not result.filled.loc[5, "hi"]
    log = result.log.set_index(["row", "column"])
    assert log.loc[(4, "lead"), "method"] == mode and log.loc[(4, "lead"), "original_state"] == "censored"
    assert log.loc[(5, "hi"), "method"] == "limit" and log.loc[(4, "lead"), "support"] == ""
    # unknown limit: filled by kNN, kept at or below the smallest measured lead (0.5),
    # and noted; the substituted cell 4 may be its donor
    assert log.loc[(7, "lead"), "method"] == "knn_capped" and result.filled.loc[7, "lead"]
    assert "no limit written" in log.loc[(7, "lead"), "note"] and "(0.5)" in log.loc[(7, "lead"), "note"]
    assert result.frame.loc[7, "lead"] == pytest.approx((value + 0.6) / 2)  # below 0.5: not cut
    assert log.loc[(7, "lead"), "donors"] == (4, 3)  # x 1.19: nearest 1.2 (the substituted cell), then 1.1
    assert log.loc[(7, "lead"), "donor_values"] == pytest.approx((value, 0.6))
    # the substituted number is an observed value in the distance too
    table = prepare(sheet, plan)
    assert table.features.numbers[2, 1] == pytest.approx(value)


def test_censored_entry_without_a_limit_stays_below_every_measured_value() -> None:
    # A "<LOD" with no number still passed no measurement's limit, so it cannot sit in
    # the middle of the measured range (common practice, no source).
    frame = pd.DataFrame(
        {"x": [1.0, 2.0, 3.0, 2.1], "conc": [1500.0, 1600.0, 1800.0, np.nan]}, index=[2, 3, 4, 5]
    )
    sheet = fake_sheet(frame, [(5, "conc", "<LOD", "<", np.nan)])
    result = impute(sheet, FillPlan(k=2, scaling="none", similarity_columns=("x",), fill_columns=("conc",)))
    assert result.frame.loc[5, "conc"] == 1500.0  # kNN mean 1700 capped at the lowest measured
    entry = result.log.set_index(["row", "column"]).loc[(5, "conc")]
    assert entry["method"] == "knn_capped" and "lowest measured value" in entry["note"]
    assert result.censored.loc[5, "conc"] and result.filled.loc[5, "conc"]


def test_censored_fill_capped() -> None:
    sheet = _censored_sheet()
    plan = FillPlan(
        k=2, scaling="none", censored="fill_capped", similarity_columns=("x",), fill_columns=("lead", "hi")
    )
    result = impute(sheet, plan)
    log = result.log.set_index(["row", "column"])
    # "<0.2" in row 4 (x 1.2): donors rows 3 (0.6) and 2 (0.5), row 7 is a gap -> 0.55, capped at 0.2
    assert result.frame.loc[4, "lead"] == pytest.approx(0.2)
    assert log.loc[(4, "lead"), "method"] == "knn_capped" and result.filled.loc[4, "lead"]
    # ">2000" in row 5 (x 5.0): donors rows 6 (500) and 7 (105): mean below 2000 -> raised to 2000
    assert result.frame.loc[5, "hi"] == 2000.0 and log.loc[(5, "hi"), "method"] == "knn_capped"
    assert result.censored.loc[4, "lead"] and result.censored.loc[5, "hi"]
    # the log says the kNN value lay beyond the limit, so nobody mistakes 0.2 for a neighbour mean
    assert "the limit was used" in log.loc[(4, "lead"), "note"]


# ---------------------------------------------------------------- safety
VARIANTS = [
    pytest.param(lambda: (_lab(), FillPlan(k=2)), id="mixed"),
    pytest.param(lambda: (_lab(), FillPlan(k=3, group_column="site", no_donor="column_mean")), id="group"),
    pytest.param(
        lambda: (_lab(), FillPlan(neighbour_weighting="inverse_distance", scaling="robust")), id="idw"
    ),
    pytest.param(lambda: (_lab(), FillPlan(numeric_rule="median", scaling="range")), id="median"),
    pytest.param(lambda: (_censored_sheet(), FillPlan(censored="half_limit")), id="sheet-half"),
    pytest.param(lambda: (_censored_sheet(), FillPlan(censored="fill_capped")), id="sheet-capped"),
]


@pytest.mark.parametrize("make", VARIANTS)
def test_input_is_never_modified(make) -> None:  # type: ignore[no-untyped-def]
    data, plan = make()
    frame = data if isinstance(data, pd.DataFrame) else data.frame
    before = frame.copy(deep=True)
    extra = (
        None
        if isinstance(data, pd.DataFrame)
        else (data.states.copy(deep=True), data.cell_notes.copy(deep=True))
    )
    result = impute(data, plan)
    pd.testing.assert_frame_equal(frame, before)
    if extra is not None:
        pd.testing.assert_frame_equal(data.states, extra[0])
        pd.testing.assert_frame_equal(data.cell_notes, extra[1])
    assert result.frame is not frame


def test_impute_cancel_and_progress() -> None:
    frame = random_frame(400, 4, 0.2, seed=8)
    calls: list[tuple[int, int]] = []
    impute(frame, FillPlan(), progress=lambda d, t: calls.append((d, t)))
    assert calls and calls[-1][0] == calls[-1][1]
    # the bar is full only once the log is built: the search's last step is one short
    assert calls[-2] == (calls[-1][0] - 1, calls[-1][1])
    assert all(t == calls[-1][1] for _, t in calls)
    flag = threading.Event()
    flag.set()
    with pytest.raises(Cancelled):
        impute(frame, FillPlan(), cancel=flag)


@pytest.mark.parametrize("late", [False, True])
def test_cancel_is_checked_inside_prepare_and_while_building_the_result(
    monkeypatch: pytest.MonkeyPatch, late: bool
) -> None:
    # The first check is on entry and the second inside the preparation (before scaling):
    # a cancel then never reaches the search. The last check of a whole run is inside
    # the building of the result (after the log's tuples): a cancel there still stops it.
    from imputer_app.engine._log import Records

    frame = random_frame(200, 3, 0.1, seed=2)
    steps: list[str] = []
    search, log_table = engine._impute.search_cells, Records.log_table
    monkeypatch.setattr(
        engine._impute, "search_cells", lambda *a, **k: steps.append("search") or search(*a, **k)
    )
    monkeypatch.setattr(Records, "log_table", lambda *a, **k: steps.append("log") or log_table(*a, **k))
    checks: list[int] = []
    impute(frame, FillPlan(), cancel=lambda: bool(checks.append(1)))
    stop_at, checks[:], steps[:] = (len(checks) if late else 2), [], []

    def cancel() -> bool:
        checks.append(1)
        return len(checks) >= stop_at

    with pytest.raises(Cancelled):
        impute(frame, FillPlan(), cancel=cancel)
    # the calibration's searches of the hidden cells go through the same search
    assert list(dict.fromkeys(steps)) == (["search", "log"] if late else [])
    assert len(checks) == stop_at


def test_same_input_same_result() -> None:
    # Reproducible fills (README.md: "The same fill can be redone ... with the same answer").
    frame = random_frame(150, 5, 0.2, seed=12).round(1)
    first, second = impute(frame, FillPlan(k=4)), impute(frame, FillPlan(k=4))
    pd.testing.assert_frame_equal(first.frame, second.frame)
    pd.testing.assert_frame_equal(first.log, second.log)


@pytest.mark.parametrize("k", [299, 10**9])
def test_a_k_beyond_the_donors_uses_every_donor_at_no_extra_cost(k):
    # Common practice, no source: k equal to the number of donors gives the column mean.
    rng = np.random.default_rng(0)
    frame = pd.DataFrame(rng.normal(size=(300, 3)), columns=["a", "b", "c"])
    frame.iloc[0, 0] = np.nan
    result = impute(frame, FillPlan(k=k, scaling="none"))
    assert result.frame.iloc[0, 0] == pytest.approx(frame["a"].iloc[1:].mean(), abs=1e-12)
    assert any("299 possible donors" in w for w in result.warnings) == (k > 299)
