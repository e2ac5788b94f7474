"""The one-pass column counts behind kind detection agree with the plain numpy forms."""

from __future__ import annotations

import numpy as np
import pytest

from imputer_app.sheets._cell_classes import all_whole, class_counts


@pytest.mark.parametrize(
    ("values", "whole"),
    [
        (np.arange(5000.0), True),
        (np.r_[np.arange(5000.0), 0.5], False),  # the first non-whole value after the head
        (np.r_[0.5, np.arange(5000.0)], False),
        (np.r_[np.arange(3000.0), np.nan], False),  # NaN equals no rounding
        (np.array([]), True),
        (np.array([-0.0, 1e300, -7.0]), True),
    ],
)
def test_all_whole_equals_comparing_with_rounding(values: np.ndarray, whole: bool) -> None:
    # reference: numpy.array_equal(values, numpy.round(values))
    assert all_whole(values) is whole
    assert whole == np.array_equal(values, np.round(values))


def test_class_counts_equal_counting_each_class() -> None:
    rng = np.random.default_rng(3)
    cls = rng.integers(0, 9, 10_000).astype(np.int8)
    counts = class_counts(cls)
    assert counts.shape == (16,)
    assert [int(counts[k]) for k in range(9)] == [int((cls == k).sum()) for k in range(9)]
    assert counts[9:].sum() == 0
