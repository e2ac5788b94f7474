"""Intervals for filled values (split conformal) and per-column k, against published data sets."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from sklearn.datasets import load_diabetes, load_wine

from imputer_app.engine import impute
from imputer_app.engine._conformal import conformal_quantile, needed_cells
from imputer_app.engine._intervals import FAR, FEW_SHARED, WIDE_RANGE
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame


@pytest.mark.parametrize(("n", "level", "rank"), [(19, 0.9, 18), (9, 0.9, 9), (99, 0.9, 90), (4, 0.8, 4)])
def test_conformal_quantile_takes_the_ceil_n_plus_1_level_smallest(n: int, level: float, rank: int) -> None:
    # Lei, G'Sell, Rinaldo, Tibshirani & Wasserman 2018, JASA 113:1094-1111: the
    # ceil((n+1)(1-alpha))-th smallest calibration score.
    scores = np.random.default_rng(n).permutation(np.arange(1.0, n + 1.0))
    assert conformal_quantile(scores, level) == rank


@pytest.mark.parametrize(("level", "needed"), [(0.9, 9), (0.8, 4), (0.95, 19), (0.5, 1)])
def test_too_few_cells_give_no_quantile(level: float, needed: int) -> None:
    assert needed_cells(level) == needed
    assert math.isnan(conformal_quantile(np.ones(needed - 1), level)) or needed == 1
    assert math.isfinite(conformal_quantile(np.ones(needed), level))


def _coverage(loader: object, seeds: int) -> tuple[pd.Series, float, pd.Series]:
    """Share of fresh gaps (known to us, never seen by the calibration) inside their interval."""
    data = loader(as_frame=True).data  # type: ignore[operator]
    inside: dict[str, list[bool]] = {c: [] for c in data.columns}
    widths: dict[str, list[float]] = {c: [] for c in data.columns}
    for seed in range(seeds):
        rng = np.random.default_rng(seed)
        sheet = data.mask(rng.random(data.shape) < 0.1)
        log = impute(sheet, FillPlan(k=5)).log
        for column, part in log.groupby("column"):
            truth = data[column].loc[part["row"]].to_numpy()
            inside[column].extend(((truth >= part["lower"]) & (truth <= part["upper"])).tolist())
            widths[column].extend((part["upper"] - part["lower"]).tolist())
    per_column = pd.Series({c: np.mean(v) for c, v in inside.items()})
    overall = float(np.mean(np.concatenate([np.asarray(v) for v in inside.values()])))
    span = data.quantile(0.95) - data.quantile(0.05)
    ratio = pd.Series({c: np.mean(w) for c, w in widths.items()}) / span
    return per_column, overall, ratio


@pytest.mark.parametrize(("loader", "seeds"), [(load_diabetes, 20), (load_wine, 40)])
def test_coverage_on_fresh_cells_is_within_3_points_of_the_level(loader: object, seeds: int) -> None:
    """Diabetes (Efron et al. 2004) and wine (UCI), both shipped in scikit-learn.

    10 % of the cells are removed at random and filled; the removed values were never
    seen by the calibration, which hid other, known cells. Tolerance: with ~900 (diabetes,
    20 seeds) or ~600 (wine, 40 seeds) fresh cells per column the binomial standard
    error of a share near 0.9 is about 1-1.2 points, and each seed's calibration on
    40-100 cells per column adds about 0.5 point after averaging, so 3 points is about
    2.5 standard errors. The seeds are fixed, so the test gives the same answer on
    every run.
    """
    per_column, overall, ratio = _coverage(loader, seeds)
    assert 0.87 <= overall <= 0.93
    assert per_column.between(0.87, 0.93).all(), per_column.round(3).to_dict()
    # narrower on average than the column's own 5-95 % range
    assert ratio.mean() < 1.0


def test_no_interval_when_off_and_lower_upper_bracket_the_value() -> None:
    frame = random_frame(120, 4, 0.1, seed=3)
    off = impute(frame, FillPlan(k=3, interval_level=None))
    assert off.calibration is None
    assert off.log["lower"].isna().all() and off.log["upper"].isna().all()
    on = impute(frame, FillPlan(k=3))
    assert on.calibration is not None and on.calibration.level == 0.9
    assert (on.log["lower"] <= on.log["value"]).all() and (on.log["value"] <= on.log["upper"]).all()
    # the same fill either way: intervals never change a value
    pd.testing.assert_frame_equal(on.frame, off.frame)
    counts = {c: cal.n_hidden for c, cal in on.calibration.columns.items()}
    for column, n in counts.items():
        notes = on.log.loc[on.log["column"] == column, "note"]
        assert notes.str.contains(f"calibrated on {n} hidden known cells").all()


def test_too_few_hidden_cells_give_no_interval_and_say_so() -> None:
    frame = random_frame(12, 3, 0.15, seed=1)
    result = impute(frame, FillPlan(k=2, interval_level=0.95))
    assert result.log["lower"].isna().all()
    assert result.log["note"].str.contains("no interval: only").all()
    assert not any(cal.usable for cal in result.calibration.columns.values())


def test_interval_respects_bounds() -> None:
    frame = random_frame(150, 3, 0.1, seed=4).abs()
    result = impute(frame, FillPlan(k=3, bounds={"c0": (0.0, None)}))
    part = result.log[result.log["column"] == "c0"]
    assert (part["lower"] >= 0).all()


def test_categories_get_a_class_set_in_the_note() -> None:
    rng = np.random.default_rng(0)
    x = rng.normal(size=(200, 3))
    frame = pd.DataFrame(x, columns=["a", "b", "c"])
    frame["kind"] = np.where(x[:, 0] + 0.3 * rng.normal(size=200) > 0, "high", "low")
    frame.loc[rng.random(200) < 0.1, "kind"] = None
    result = impute(frame, FillPlan(k=5, fill_columns=("kind",), similarity_columns=("a", "b", "c")))
    notes = result.log["note"]
    assert notes.str.contains("90% set calibrated on").all()
    # the set always holds the filled class
    for value, note in zip(result.log["value"], notes, strict=True):
        assert value in note.split(": ", 1)[1].split(", ")
    assert result.log["lower"].isna().all()


def test_weak_support_is_absolute() -> None:
    """README "How the numbers are made": wide interval, far donors or few shared similarity columns."""
    frame = random_frame(200, 4, 0.15, seed=7)
    result = impute(frame, FillPlan(k=5))
    log = result.log
    span = frame.quantile(0.95) - frame.quantile(0.05)
    wide = (log["upper"] - log["lower"]) > WIDE_RANGE * log["column"].map(span)
    assert (log.loc[wide, "support"] == "weak").all()
    assert 0 < FEW_SHARED < 1 and FAR > 1


def _far_rows_sheet(seed: int = 0) -> tuple[pd.DataFrame, np.ndarray]:
    """Two correlated clusters of rows, plus 12 rows far from every other row.

    The far rows sit 8 SDs from both clusters on the similarity columns a, b, c; each
    has its value of d removed, as have 30 ordinary rows.
    """
    rng = np.random.default_rng(seed)
    centre = np.where(rng.random(300) < 0.5, -2.0, 2.0)
    base = centre[:, None] + 0.5 * rng.normal(size=(300, 3))
    d = base.mean(axis=1) + 0.3 * rng.normal(size=300)
    far = np.arange(288, 300)
    base[far] = 10.0 + 0.5 * rng.normal(size=(12, 3))
    frame = pd.DataFrame(np.column_stack([base, d]), columns=["a", "b", "c", "d"])
    ordinary = rng.choice(288, size=30, replace=False)
    frame.loc[np.concatenate([ordinary, far]), "d"] = np.nan
    return frame, far


def test_weak_support_singles_out_rows_far_from_every_donor() -> None:
    frame, far = _far_rows_sheet()
    log = impute(frame, FillPlan(k=5)).log
    weak = set(log.loc[log["support"] == "weak", "row"])
    assert weak == set(far.tolist())


def test_demo_sheet_has_few_weak_fills() -> None:
    """The demo sheet of README: weak support is the exception, not the rule."""
    from pathlib import Path

    from imputer_app.sheets import read_sheet

    sheet = read_sheet(Path(__file__).resolve().parents[2] / "sample_sheets" / "river_survey.xlsx")
    log = impute(sheet, FillPlan()).log
    knn = log[log["method"].isin(["knn", "knn_capped"])]
    share = float((knn["support"] == "weak").mean())
    assert 0 < share < 0.3


def test_each_column_uses_its_own_k_from_one_search() -> None:
    frame = random_frame(80, 4, 0.1, seed=2)
    plan = FillPlan(k=2, k_by_column={"c1": 6}, interval_level=None)
    mixed = impute(frame, plan)
    alone = impute(frame, FillPlan(k=6, interval_level=None))
    small = impute(frame, FillPlan(k=2, interval_level=None))
    log = mixed.log
    assert (
        set(log.loc[log["column"] == "c1", "k"]) <= set(range(1, 7))
        and log.loc[log["column"] == "c1", "k"].max() == 6
    )
    assert set(log.loc[log["column"] != "c1", "k"]) <= {1, 2}
    pd.testing.assert_series_equal(mixed.frame["c1"], alone.frame["c1"])
    for column in ("c0", "c2", "c3"):
        pd.testing.assert_series_equal(mixed.frame[column], small.frame[column])
