"""The fill log built for all columns at once: content per cell, order, types, shared tuples."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.impute import KNNImputer
from sklearn.metrics.pairwise import nan_euclidean_distances

from imputer_app.engine import _log, impute, nearest_donors, prepare
from imputer_app.engine._combine import spread
from imputer_app.engine._log import tuples
from imputer_app.engine._search import ColumnDonors, search_cells
from imputer_app.engine._stack import Stack
from imputer_app.plan import FillPlan
from tests.engine.helpers import fake_sheet, random_frame

LOG_DTYPES = {
    "row": "int64", "column": "str", "value": "object", "original_state": "str", "method": "str",
    "k": "int64", "donors": "object", "distances": "object", "donor_values": "object",
    "spread": "float64", "support": "str", "note": "str", "lower": "float64", "upper": "float64",
    "original_text": "str",
}  # fmt: skip


def _sparse_column_frame(seed: int) -> pd.DataFrame:
    """Many gaps per row, and a column with only 2 values (cells with fewer donors than k)."""
    frame = random_frame(40, 12, 0.2, seed)
    frame.loc[2:, "c0"] = np.nan
    frame.loc[[0, 1], "c0"] = [0.5, -0.5]
    return frame


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_every_log_row_matches_a_cell_by_cell_reference(seed: int) -> None:
    """Each row checked alone against scikit-learn.

    Distances: ``nan_euclidean_distances`` (the engine's distance with weights 1 and
    no scaling); donors: the k nearest rows observed in the column (ties by row
    order); values: ``KNNImputer`` (default settings); spread: ``np.std(ddof=1)``.
    """
    frame = _sparse_column_frame(seed)
    k = 4
    result = impute(frame, FillPlan(k=k, scaling="none", interval_level=None))
    x = frame.to_numpy()
    dist = nan_euclidean_distances(x, x)
    reference = KNNImputer(n_neighbors=k).fit_transform(x)
    log = result.log
    assert len(log) == int(np.isnan(x).sum())  # every gap filled, none left empty
    for row in log.itertuples(index=False):
        j = frame.columns.get_loc(row.column)
        donors_ok = np.flatnonzero(~np.isnan(x[:, j]))
        order = donors_ok[np.argsort(dist[row.row, donors_ok], kind="stable")][:k]
        assert row.donors == tuple(order.tolist())
        assert row.k == len(order) == len(row.distances) == len(row.donor_values)
        assert row.distances == pytest.approx(tuple(dist[row.row, order]), rel=1e-12)
        assert row.donor_values == tuple(x[order, j].tolist())
        assert row.value == pytest.approx(reference[row.row, j], rel=1e-12, abs=1e-12)
        expected_spread = np.std(x[order, j], ddof=1) if len(order) > 1 else np.nan
        assert row.spread == pytest.approx(expected_spread, rel=1e-12, nan_ok=True)
        assert row.note == ("" if len(order) == k else f"only {len(order)} donors (k={k})")
        assert all(type(v) is int for v in row.donors)
        assert all(type(v) is float for v in (*row.distances, *row.donor_values, row.value))


def test_log_is_sorted_by_row_then_frame_column_with_contract_dtypes() -> None:
    """Fill columns named out of frame order still give a log in (row, frame column) order."""
    frame = _sparse_column_frame(3)
    frame["soil"] = np.random.default_rng(3).choice(["clay", "sand", None], len(frame)).astype(object)
    plan = FillPlan(k=3, fill_columns=("soil", "c5", "c0", "c2"))
    result = impute(frame, plan)
    log = result.log
    position = {c: j for j, c in enumerate(frame.columns)}
    keys = list(zip(log["row"], log["column"].map(position), strict=True))
    assert keys == sorted(keys)
    assert {c: str(t) for c, t in log.dtypes.items()} == LOG_DTYPES
    assert list(result.unfilled.columns) == ["row", "column", "reason"]
    soil = log[log["column"] == "soil"]
    assert len(soil) == frame["soil"].isna().sum()
    assert all(v in {"clay", "sand"} for v in soil["value"])
    assert all(set(t) <= {"clay", "sand"} for t in soil["donor_values"])
    # the filled frame holds exactly the logged values (numbers keep float64)
    for row in log.itertuples(index=False):
        assert result.frame.at[row.row, row.column] == row.value
    assert result.frame["c0"].dtype == np.float64
    assert result.filled.to_numpy().sum() == len(log)


@pytest.mark.parametrize("categorical", [True, False])
def test_original_state_and_censored_flags_come_from_the_sheet(categorical: bool) -> None:
    """Half the limit for a below-limit entry: Hornung & Reed 1990."""
    frame = random_frame(20, 4, 0.2, 9)
    frame.loc[[3, 5], ["c1", "c2"]] = np.nan
    sheet = fake_sheet(frame, [(5, "c2", "<0.1", "<", 0.1)])
    sheet.states.loc[3, "c1"] = "text_in_number"
    if not categorical:
        sheet.states = sheet.states.astype(object)
    result = impute(sheet, FillPlan(k=3, censored="half_limit"))
    log = result.log.set_index(["row", "column"])
    assert log.loc[(3, "c1"), "original_state"] == "text_in_number"
    assert log.loc[(3, "c1"), "method"] == "knn"
    cell = log.loc[(5, "c2")]
    assert (cell["original_state"], cell["method"], cell["value"]) == ("censored", "half_limit", 0.05)
    others = log.drop(index=[(3, "c1"), (5, "c2")])
    assert set(others["original_state"]) == {"missing"}
    flags = result.censored.to_numpy()
    assert flags.sum() == 1 and flags[5, frame.columns.get_loc("c2")]
    assert not result.filled.at[5, "c2"] and result.frame.at[5, "c2"] == 0.05


def test_labels_of_the_index_are_the_donors() -> None:
    frame = random_frame(25, 6, 0.2, 8)
    labelled = frame.set_axis([f"r{i}" for i in range(len(frame))], axis=0)
    by_position, by_label = impute(frame, FillPlan(k=3)).log, impute(labelled, FillPlan(k=3)).log
    assert by_label["row"].tolist() == [f"r{i}" for i in by_position["row"]]
    assert by_label["donors"].tolist() == [tuple(f"r{i}" for i in t) for t in by_position["donors"]]
    pd.testing.assert_series_equal(by_label["distances"], by_position["distances"])


@pytest.mark.parametrize(("share", "slice_rows"), [(False, 32_768), (True, 32_768), (False, 2), (True, 3)])
def test_tuples_cut_rows_and_share_equal_neighbours(
    share: bool, slice_rows: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Against a plain per-row slice (common practice, no source), made in one go or in slices."""
    monkeypatch.setattr(_log, "TUPLE_ROWS", slice_rows)
    rng = np.random.default_rng(4)
    matrix = rng.integers(0, 5, size=(30, 4))
    matrix[1::3] = matrix[0::3]  # every third row repeats the row before it
    used = rng.integers(0, 5, size=30)
    used[1::3] = used[0::3]
    same = np.zeros(30, dtype=bool)
    same[1::3] = True
    got = tuples(matrix, used, same if share else None)
    assert got.dtype == object and got.shape == (30,)
    assert got.tolist() == [tuple(matrix[i, : used[i]].tolist()) for i in range(30)]
    assert all(type(v) is int for t in got for v in t)
    assert (got[1::3][0] is got[0::3][0]) == share


def test_spread_equals_numpy_nanstd() -> None:
    """Sample standard deviation of the first min(k, count) donors, as ``np.nanstd(ddof=1)``."""
    rng = np.random.default_rng(5)
    v = rng.normal(size=(50, 6)) * 1e3
    count = rng.integers(0, 7, size=50)
    index = np.where(np.arange(6)[None, :] < count[:, None], 1, -1)
    v[index < 0] = np.nan
    distance = np.broadcast_to(np.arange(1.0, 7.0), (50, 6))  # no ties: the k nearest exactly
    donors = ColumnDonors(np.arange(50), index, np.where(index >= 0, distance, np.inf), count)
    for k in (1, 3, 6):
        part = np.where(np.arange(6)[None, :] < np.minimum(count, k)[:, None], v, np.nan)[:, :k]
        many = np.minimum(count, k) >= 2
        expected = np.full(50, np.nan)
        expected[many] = np.nanstd(part[many], axis=1, ddof=1)
        np.testing.assert_array_equal(spread(v, donors, k), expected)


def test_flat_search_is_the_per_column_search_stacked() -> None:
    frame = _sparse_column_frame(6)
    table = prepare(frame, FillPlan(k=3))
    found, col = search_cells(table, kmax=3)
    stack = Stack.of_cells(table.fill_columns, found, col)
    per_column = nearest_donors(table, kmax=3)
    assert stack.columns == table.fill_columns
    for field in ("rows", "index", "distance", "count"):
        for name, got in stack.split(getattr(found, field)).items():
            np.testing.assert_array_equal(got, getattr(per_column[name], field))
    part = stack.select(["c5", "c0"])
    assert part.columns == ("c0", "c5")  # kept in the stack's order
    index = np.vstack([per_column["c0"].index, per_column["c5"].index])
    np.testing.assert_array_equal(part.donors.index, index)
    x = frame.to_numpy()
    column = np.where(part.col == 0, 0, 5)[:, None]
    expected = np.where(index >= 0, x[np.maximum(index, 0), column], np.nan)
    np.testing.assert_array_equal(part.gather([table.values["c0"], table.values["c5"]]), expected)


@pytest.mark.parametrize("enabled", [True, False])
def test_tuples_leave_the_garbage_collector_as_they_found_it(enabled: bool) -> None:
    # The collector is paused while tuples are made, and only turned back on if it was on.
    import gc

    was = gc.isenabled()
    try:
        (gc.enable if enabled else gc.disable)()
        out = tuples(np.arange(12.0).reshape(4, 3), np.array([3, 1, 0, 2]))
        assert gc.isenabled() is enabled
    finally:
        (gc.enable if was else gc.disable)()
    assert out.tolist() == [(0.0, 1.0, 2.0), (3.0,), (), (9.0, 10.0)]
