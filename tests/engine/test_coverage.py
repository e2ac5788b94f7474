"""The coverage table: nominal against observed coverage on hidden cells the quantile never saw."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.datasets import load_diabetes, load_wine

from imputer_app.engine import impute
from imputer_app.engine._coverage import COVERAGE_LEVELS, crossfit, levels_with, row_quantile
from imputer_app.plan import FillPlan
from tests.engine.helpers import random_frame


@pytest.mark.parametrize("q", [0.05, 0.5, 0.95])
def test_row_quantile_is_numpys_nanquantile(q: float) -> None:
    x = np.random.default_rng(3).normal(size=(40, 25))
    x[x > 1.1] = np.nan
    x[7] = np.nan
    with pytest.warns(RuntimeWarning):  # numpy warns on the all-NaN row
        expected = np.nanquantile(x, q, axis=1)
    np.testing.assert_allclose(row_quantile(x, q), expected)


def test_crossfit_of_exchangeable_scores_reaches_the_level() -> None:
    """Split conformal guarantee (Lei et al. 2018, JASA 113:1094-1111): for exchangeable
    scores the share of fresh scores at or below the ceil((n+1)level)-th smallest of n
    others is at least the level, and less than level + 1/(n+1); 4000 cells give a
    binomial SE of under 0.5 point."""
    rng = np.random.default_rng(0)
    errors = rng.exponential(size=(2, 4000))
    sds = np.zeros((2, 4000))
    levels = (0.5, 0.8, 0.9, 0.95)
    inside, scored = crossfit(errors, sds, np.array([np.nan, np.nan]), levels, rng)
    observed = inside.sum(axis=0) / scored.sum(axis=0)
    assert (scored == 4000).all()
    np.testing.assert_allclose(observed, levels, atol=0.015)


def test_crossfit_skips_a_level_without_enough_cells() -> None:
    errors = np.arange(10.0)[None, :]
    inside, scored = crossfit(
        errors, np.zeros((1, 10)), np.array([np.nan]), (0.5, 0.95), np.random.default_rng(1)
    )
    # 8 calibration cells per part: enough for 50 % (1 needed), not for 95 % (19 needed)
    assert scored[0, 0] == 10 and scored[0, 1] == 0 and inside[0, 1] == 0


def _sheet(loader: object, seed: int) -> pd.DataFrame:
    data = loader(as_frame=True).data  # type: ignore[operator]
    return data.mask(np.random.default_rng(seed).random(data.shape) < 0.1)


@pytest.mark.parametrize("loader", [load_diabetes, load_wine])
def test_observed_coverage_at_90_percent_is_within_3_points(loader: object) -> None:
    """Diabetes (Efron et al. 2004) and wine (UCI), both shipped in scikit-learn.

    Three sheets with 10 % of the cells removed at random; the coverage table pools
    their hidden cells (about 3000 for diabetes, 1500 for wine: a binomial SE of 0.5-0.8
    point near 0.9, so 3 points is 4-6 SE).
    """
    tables = [impute(_sheet(loader, seed), FillPlan(k=5)).coverage for seed in range(3)]
    pooled = pd.concat([t[t["column"] == "(all)"] for t in tables if t is not None])
    inside = (pooled["observed"] * pooled["n_cells"]).groupby(pooled["level"]).sum()
    cells = pooled.groupby("level")["n_cells"].sum()
    observed = inside / cells
    assert 0.87 <= observed.loc[0.9] <= 0.93, observed.round(3).to_dict()
    assert list(observed.index) == list(COVERAGE_LEVELS)
    assert np.all(np.diff(observed.to_numpy()) > 0), observed.round(3).to_dict()
    for table in tables:
        assert table is not None
        assert list(table.columns) == ["column", "level", "observed", "n_cells"]


def test_table_rows_per_column_and_pooled() -> None:
    frame = random_frame(200, 4, 0.1, seed=5)
    result = impute(frame, FillPlan(k=4, interval_level=0.85))
    table = result.coverage
    assert table is not None and result.calibration is not None
    assert set(table["column"]) == {"(all)", *result.calibration.columns}
    assert set(table["level"]) == set(levels_with(0.85)) and 0.85 in set(table["level"])
    per_column = table[table["column"] != "(all)"]
    pooled = table[table["column"] == "(all)"].set_index("level")
    # the pooled row is the cell-weighted mean of the columns' rows
    inside = (per_column["observed"] * per_column["n_cells"]).groupby(per_column["level"]).sum()
    np.testing.assert_allclose(inside / per_column.groupby("level")["n_cells"].sum(), pooled["observed"])
    # every hidden cell is scored at a level its parts can calibrate
    n_hidden = {c: cal.n_hidden for c, cal in result.calibration.columns.items()}
    at_half = per_column[per_column["level"] == 0.5].set_index("column")["n_cells"]
    assert at_half.to_dict() == n_hidden


def test_no_table_when_intervals_are_off() -> None:
    assert impute(random_frame(60, 3, 0.1, seed=1), FillPlan(interval_level=None)).coverage is None
