"""Choose which known cells a recovery test hides.

Two ways to hide cells, both seeded through a :class:`numpy.random.Generator`:

* ``random`` hides a fixed share of the observed cells of every fill column (MCAR).
* ``pattern`` copies the gap patterns of the sheet's own incomplete rows onto its
  complete rows, so the test resembles the sheet's real missingness.

Either way a censored cell is never hidden (it is not a known value), a column keeps
at least one visible cell to act as a donor, and a row never loses its last
similarity value (a row without one has no neighbours at all).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from imputer_app.errors import KinfillError

#: Allowed values of ``masking``.
MASKINGS = ("random", "pattern")


@dataclass(frozen=True)
class CellLayout:
    """Which cells of a sheet may be hidden and which are real gaps.

    Attributes
    ----------
    hideable : bool ndarray of shape (n_rows, n_columns)
        Observed (known, not censored) cells; only these may be hidden.
    gaps : bool ndarray of shape (n_rows, n_columns)
        Real gaps (missing or unreadable, not censored); the source of patterns.
    fill_idx : int ndarray of shape (n_fill,)
        Positions of the fill columns in the frame.
    sim_idx : int ndarray of shape (n_similarity,)
        Positions of the similarity columns that count in the distance (weight > 0).
    """

    hideable: np.ndarray
    gaps: np.ndarray
    fill_idx: np.ndarray
    sim_idx: np.ndarray

    @property
    def shape(self) -> tuple[int, int]:
        """``(n_rows, n_columns)`` of the frame."""
        rows, cols = self.hideable.shape
        return int(rows), int(cols)


def hide_cells(layout: CellLayout, fraction: float, masking: str, rng: np.random.Generator) -> np.ndarray:
    """Return one repeat's mask of cells to hide.

    Parameters
    ----------
    layout : CellLayout
        Hideable cells, real gaps and column roles.
    fraction : float
        Share of each fill column's observed cells to hide (``random``), or the share
        of all observed fill cells that the copied patterns should cover (``pattern``).
    masking : {"random", "pattern"}
        How to choose the cells.
    rng : numpy.random.Generator
        Source of randomness; the same state gives the same cells.

    Returns
    -------
    bool ndarray of shape (n_rows, n_columns)
        True where a known cell is hidden. Never True on a cell that is not hideable.
    """
    if masking == "random":
        return random_mask(layout, fraction, rng)
    if masking == "pattern":
        return pattern_mask(layout, fraction, rng)
    raise KinfillError(f"masking must be one of {', '.join(MASKINGS)}; got {masking!r}")


def _hide_count(n_observed: int, fraction: float) -> int:
    """Cells to hide in a column: the rounded share, at least 1, leaving 1 donor."""
    if n_observed < 2:
        return 0
    return int(min(max(1, np.floor(fraction * n_observed + 0.5)), n_observed - 1))


def random_mask(layout: CellLayout, fraction: float, rng: np.random.Generator) -> np.ndarray:
    """Hide ``fraction`` of each fill column's observed cells, chosen at random.

    Columns are visited in a random order; within a column the choice is one
    vectorised draw without replacement among the rows that may lose the cell.
    A cell is skipped when hiding it would leave its row without any visible
    similarity value; the count is rounded and is at least one cell (when the column
    has two or more observed cells) and leaves at least one cell visible.

    Returns
    -------
    bool ndarray of shape (n_rows, n_columns)
    """
    mask = np.zeros(layout.shape, dtype=bool)
    is_sim = np.zeros(layout.shape[1], dtype=bool)
    is_sim[layout.sim_idx] = True
    sim_left = layout.hideable[:, layout.sim_idx].sum(axis=1)
    for j in rng.permutation(layout.fill_idx):
        observed = layout.hideable[:, j]
        # Hiding a similarity value costs the row one of its similarity values.
        candidates = np.flatnonzero(observed & (sim_left >= (2 if is_sim[j] else 1)))
        n_hide = min(_hide_count(int(observed.sum()), fraction), candidates.size)
        rows = rng.choice(candidates, size=n_hide, replace=False)
        mask[rows, j] = True
        if is_sim[j]:
            sim_left[rows] -= 1
    return mask


def pattern_mask(layout: CellLayout, fraction: float, rng: np.random.Generator) -> np.ndarray:
    """Copy gap patterns of real incomplete rows onto randomly chosen complete rows.

    A pattern is a row's gaps over the fill and similarity columns; rows with a gap
    in at least one fill column and at least one similarity value left give patterns.
    Complete rows (every fill and similarity cell observed) receive a pattern drawn at
    random (with replacement). The number of receiving rows is chosen so that about
    ``fraction`` of all observed fill cells are hidden, and at least one complete row
    stays untouched.

    Returns
    -------
    bool ndarray of shape (n_rows, n_columns)

    Raises
    ------
    KinfillError
        When the sheet has no incomplete row to copy from or fewer than two complete rows.
    """
    used = np.union1d(layout.fill_idx, layout.sim_idx)
    patterns = _gap_patterns(layout, used)
    complete = np.flatnonzero(layout.hideable[:, used].all(axis=1))
    if patterns.shape[0] == 0 or complete.size < 2:
        raise KinfillError(
            "masking='pattern' needs at least one incomplete row and two complete rows "
            f"(found {patterns.shape[0]} and {complete.size}); use masking='random'"
        )
    fill_pos = np.searchsorted(used, layout.fill_idx)
    per_pattern = patterns[:, fill_pos].sum(axis=1).mean()
    observed_cells = layout.hideable[:, layout.fill_idx].sum()
    wanted = int(np.floor(fraction * observed_cells / per_pattern + 0.5))
    n_rows = int(np.clip(wanted, 1, complete.size - 1))
    targets = rng.choice(complete, size=n_rows, replace=False)
    sources = rng.integers(0, patterns.shape[0], size=n_rows)
    mask = np.zeros(layout.shape, dtype=bool)
    mask[np.ix_(targets, used)] = patterns[sources]
    return mask


def _gap_patterns(layout: CellLayout, used: np.ndarray) -> np.ndarray:
    """Gap patterns (over ``used`` columns) of rows worth copying."""
    gaps = layout.gaps[:, used]
    sim_pos = np.searchsorted(used, layout.sim_idx)
    fill_pos = np.searchsorted(used, layout.fill_idx)
    # The receiving row is complete, so every non-gap similarity cell stays visible.
    useful = gaps[:, fill_pos].any(axis=1) & (~gaps[:, sim_pos]).any(axis=1)
    return gaps[useful]
