"""Hiding known cells: shares, seeds, censored cells and rows kept usable.

These are properties of the recovery test's own design (README.md, "Choose k"), checked
on small hand-built layouts; no outside reference applies (common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest

from imputer_app.errors import KinfillError
from imputer_app.validation._masking import CellLayout, hide_cells, pattern_mask, random_mask


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


@pytest.mark.parametrize("fraction", [0.05, 0.1, 0.3])
def test_random_hides_the_share_of_each_fill_column(fraction: float) -> None:
    layout = _layout()
    mask = random_mask(layout, fraction, np.random.default_rng(0))
    observed = layout.hideable[:, layout.fill_idx].sum(axis=0)
    hidden = mask[:, layout.fill_idx].sum(axis=0)
    # Rounded share per column (at least one cell); the row guard rarely binds here.
    np.testing.assert_array_equal(hidden, np.maximum(1, np.floor(fraction * observed + 0.5)))
    assert not mask[:, 5].any()  # similarity-only columns are never hidden


@pytest.mark.parametrize("masking", ["random", "pattern"])
def test_only_observed_cells_are_hidden(masking: str) -> None:
    layout = _layout(gap_share=0.05)
    for seed in range(5):
        mask = hide_cells(layout, 0.2, masking, np.random.default_rng(seed))
        assert mask.any()
        assert not (mask & ~layout.hideable).any()  # never a gap, never a censored cell


def test_random_never_leaves_a_row_without_similarity_values() -> None:
    # Sparse rows: most rows keep only one or two similarity values, so the guard binds.
    rng = np.random.default_rng(7)
    hideable = rng.random((300, 4)) < 0.4
    layout = CellLayout(hideable=hideable, gaps=~hideable, fill_idx=np.arange(4), sim_idx=np.arange(4))
    mask = random_mask(layout, 0.5, np.random.default_rng(1))
    had = hideable.any(axis=1)
    left = (hideable & ~mask).any(axis=1)
    assert (left | ~had).all()
    assert mask.sum() > 0


@pytest.mark.parametrize(("n_rows", "expected"), [(1, 0), (2, 1), (3, 2), (4, 2), (40, 20)])
def test_hidden_count_is_rounded_share_leaving_a_donor(n_rows: int, expected: int) -> None:
    hideable = np.ones((n_rows, 2), dtype=bool)
    layout = CellLayout(hideable=hideable, gaps=~hideable, fill_idx=np.array([0]), sim_idx=np.array([1]))
    mask = random_mask(layout, 0.5, np.random.default_rng(0))
    assert mask[:, 0].sum() == expected
    assert n_rows == 0 or (~mask[:, 0]).sum() >= 1


@pytest.mark.parametrize("masking", ["random", "pattern"])
def test_same_seed_same_cells_other_seed_other_cells(masking: str) -> None:
    layout = _layout()
    first = hide_cells(layout, 0.1, masking, np.random.default_rng(11))
    again = hide_cells(layout, 0.1, masking, np.random.default_rng(11))
    other = hide_cells(layout, 0.1, masking, np.random.default_rng(12))
    np.testing.assert_array_equal(first, again)
    assert (first != other).any()


def test_pattern_copies_real_gap_patterns_onto_complete_rows() -> None:
    layout = _layout(n_rows=300, gap_share=0.08)
    mask = pattern_mask(layout, 0.1, np.random.default_rng(5))
    complete = layout.hideable.all(axis=1)
    receiving = mask.any(axis=1)
    assert receiving.any()
    assert complete[receiving].all()  # only complete rows receive a pattern
    real = {tuple(row) for row in layout.gaps[layout.gaps[:, :5].any(axis=1)]}
    assert all(tuple(row) in real for row in mask[receiving])
    # About the asked share of observed fill cells is hidden.
    share = mask[:, :5].sum() / layout.hideable[:, :5].sum()
    assert 0.05 < share < 0.15


def test_pattern_without_incomplete_rows_explains_itself() -> None:
    hideable = np.ones((10, 3), dtype=bool)
    layout = CellLayout(hideable=hideable, gaps=~hideable, fill_idx=np.arange(3), sim_idx=np.arange(3))
    with pytest.raises(KinfillError, match="masking='random'"):
        pattern_mask(layout, 0.1, np.random.default_rng(0))


def test_unknown_masking_names_the_choices() -> None:
    with pytest.raises(KinfillError, match="random, pattern"):
        hide_cells(_layout(), 0.1, "blocks", np.random.default_rng(0))
