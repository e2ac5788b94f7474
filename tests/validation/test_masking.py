"""Hiding known cells in folds: shares, seeds, censored cells and rows kept usable.

These are properties of the recovery test's own design (README.md, "Choose k"), checked
on small hand-built layouts. The folds follow k-fold cross-validation (ESL 2nd ed.,
sec. 7.10): every hideable cell lands in at most one fold of a repeat.
"""

from __future__ import annotations

import numpy as np
import pytest

from imputer_app.errors import KinfillError
from imputer_app.validation._masking import (
    AUTO_MIN_COMPLETE,
    AUTO_MIN_PATTERNS,
    CellLayout,
    fold_count,
    hide_folds,
    pattern_folds,
    random_folds,
    resolve_masking,
)


def _layout(n_rows: int = 200, n_cols: int = 6, gap_share: float = 0.1, seed: int = 3) -> CellLayout:
    """Columns 0-4 are similarity and fill columns, column 5 is similarity only."""
    rng = np.random.default_rng(seed)
    gaps = rng.random((n_rows, n_cols)) < gap_share
    censored = ~gaps & (rng.random((n_rows, n_cols)) < 0.03)
    return CellLayout(
        hideable=~gaps & ~censored,
        gaps=gaps,
        fill_idx=np.arange(5),
        sim_idx=np.arange(6),
    )


@pytest.mark.parametrize(("fraction", "folds"), [(0.5, 2), (0.3, 3), (0.1, 10), (0.07, 14), (0.05, 20)])
def test_fold_count_is_the_rounded_inverse_of_the_share(fraction: float, folds: int) -> None:
    assert fold_count(fraction) == folds


@pytest.mark.parametrize("fraction", [0.1, 0.2, 0.5])
def test_random_folds_split_each_fill_column_evenly_and_hide_each_cell_once(fraction: float) -> None:
    layout = _layout()
    folds = hide_folds(layout, fraction, "random", np.random.default_rng(0))
    assert len(folds) == fold_count(fraction)
    stacked = np.stack(folds)
    assert stacked.sum(axis=0).max() == 1  # no cell in two folds
    per_fold = stacked[:, :, layout.fill_idx].sum(axis=1)  # (folds, fill columns)
    observed = layout.hideable[:, layout.fill_idx].sum(axis=0)
    # every cell of a fill column is hidden once ...
    np.testing.assert_array_equal(per_fold.sum(axis=0), observed)
    # ... in folds of about equal size (dealt in turn; the row guard moves a few cells)
    assert np.all(per_fold.max(axis=0) - per_fold.min(axis=0) <= np.maximum(1, 0.05 * observed))
    assert not stacked[:, :, 5].any()  # similarity-only columns are never hidden


@pytest.mark.parametrize("masking", ["random", "pattern"])
def test_only_observed_cells_are_hidden(masking: str) -> None:
    layout = _layout(gap_share=0.05)
    for seed in range(5):
        folds = np.stack(hide_folds(layout, 0.2, masking, np.random.default_rng(seed)))
        assert folds.any()
        assert not (folds & ~layout.hideable).any()  # never a gap, never a censored cell
        assert folds.sum(axis=0).max() == 1


def test_random_never_leaves_a_row_without_similarity_values_in_any_fold() -> None:
    # Sparse rows: most rows keep only one or two similarity values, so the guard binds.
    rng = np.random.default_rng(7)
    hideable = rng.random((300, 4)) < 0.4
    layout = CellLayout(hideable=hideable, gaps=~hideable, fill_idx=np.arange(4), sim_idx=np.arange(4))
    folds = hide_folds(layout, 0.5, "random", np.random.default_rng(1))
    had = hideable.any(axis=1)
    for mask in folds:
        left = (hideable & ~mask).any(axis=1)
        assert (left | ~had).all()
        assert mask.sum() > 0
    # a row with a single similarity value never loses it; a row with two loses each once
    only = hideable.sum(axis=1) == 1
    assert not np.stack(folds)[:, only].any()


@pytest.mark.parametrize(("n_rows", "sizes"), [(1, []), (2, [1, 1]), (3, [1, 2]), (5, [2, 3])])
def test_small_columns_keep_a_donor_in_every_fold(n_rows: int, sizes: list[int]) -> None:
    hideable = np.ones((n_rows, 2), dtype=bool)
    layout = CellLayout(hideable=hideable, gaps=~hideable, fill_idx=np.array([0]), sim_idx=np.array([1]))
    ids = random_folds(layout, 2, np.random.default_rng(0))
    counts = sorted(int((ids[:, 0] == f).sum()) for f in range(2)) if n_rows >= 2 else []
    assert counts == sizes
    assert (ids[:, 1] == -1).all()


@pytest.mark.parametrize("masking", ["random", "pattern"])
def test_same_seed_same_cells_other_seed_other_cells(masking: str) -> None:
    layout = _layout()
    first = np.stack(hide_folds(layout, 0.1, masking, np.random.default_rng(11)))
    again = np.stack(hide_folds(layout, 0.1, masking, np.random.default_rng(11)))
    other = np.stack(hide_folds(layout, 0.1, masking, np.random.default_rng(12)))
    np.testing.assert_array_equal(first, again)
    assert (first != other).any()


def test_pattern_copies_real_gap_patterns_onto_every_complete_row_once() -> None:
    layout = _layout(n_rows=300, gap_share=0.08)
    ids = pattern_folds(layout, 10, np.random.default_rng(5))
    complete = layout.hideable.all(axis=1)
    receiving = (ids >= 0).any(axis=1)
    assert complete[receiving].all()  # only complete rows receive a pattern
    assert receiving[complete].all()  # ... and every one of them does, in one fold
    assert all(np.unique(ids[r][ids[r] >= 0]).size == 1 for r in np.flatnonzero(receiving))
    real = {tuple(row) for row in layout.gaps[layout.gaps[:, :5].any(axis=1)]}
    assert all(tuple(row) in real for row in ids[receiving] >= 0)
    rows_per_fold = np.bincount(ids[receiving].max(axis=1), minlength=10)
    assert rows_per_fold.max() - rows_per_fold.min() <= 1


def test_pattern_without_incomplete_rows_explains_itself() -> None:
    hideable = np.ones((10, 3), dtype=bool)
    layout = CellLayout(hideable=hideable, gaps=~hideable, fill_idx=np.arange(3), sim_idx=np.arange(3))
    with pytest.raises(KinfillError, match="masking='random'"):
        pattern_folds(layout, 10, np.random.default_rng(0))


def _blocks(n_incomplete: int, n_complete: int) -> CellLayout:
    gaps = np.zeros((n_incomplete + n_complete, 3), dtype=bool)
    gaps[:n_incomplete, 0] = True
    return CellLayout(hideable=~gaps, gaps=gaps, fill_idx=np.arange(3), sim_idx=np.arange(3))


@pytest.mark.parametrize(
    ("n_incomplete", "n_complete", "used"),
    [
        (AUTO_MIN_PATTERNS, AUTO_MIN_COMPLETE, "pattern"),
        (AUTO_MIN_PATTERNS - 1, 100, "random"),
        (50, AUTO_MIN_COMPLETE - 1, "random"),
        (0, 100, "random"),
    ],
)
def test_auto_copies_patterns_only_when_the_sheet_has_enough_rows(
    n_incomplete: int, n_complete: int, used: str
) -> None:
    assert (AUTO_MIN_PATTERNS, AUTO_MIN_COMPLETE) == (10, 20)  # the numbers the README states
    layout = _blocks(n_incomplete, n_complete)
    assert resolve_masking(layout, "auto") == used
    assert resolve_masking(layout, "random") == "random"


def test_unknown_masking_names_the_choices() -> None:
    with pytest.raises(KinfillError, match="auto, random, pattern"):
        hide_folds(_layout(), 0.1, "blocks", np.random.default_rng(0))
