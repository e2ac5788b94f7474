"""Choose which known cells a recovery test hides, fold by fold.

Each repeat splits the cells it may hide into folds, and each fold is filled once
(k-fold cross-validation over cells; Hastie, Tibshirani & Friedman, *The Elements of
Statistical Learning*, 2nd ed., sec. 7.10). A known cell is hidden at most once per
repeat, and the spread of the folds' scores gives the standard error behind the
one-standard-error rule. Two ways to fold, both seeded through a
:class:`numpy.random.Generator`:

* ``random`` splits each fill column's hideable cells at random into
  ``round(1 / hide_fraction)`` folds of about ``hide_fraction`` of the column each (MCAR).
* ``pattern`` splits the complete rows into as many folds and gives every complete row
  the gap pattern of a randomly drawn incomplete row of the sheet, so the hidden cells
  come in the blocks the sheet's real gaps come in.

``auto`` (the recovery test's default) uses ``pattern`` when the sheet has at least
:data:`AUTO_MIN_PATTERNS` incomplete rows to copy from and :data:`AUTO_MIN_COMPLETE`
complete rows to copy onto, else ``random``.

Either way a censored cell is never hidden (it is not a known value), a column keeps
visible cells to act as donors (the other folds), and a row never loses its last
similarity value in a fold (a row without one has no neighbours at all).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from imputer_app.errors import KinfillError

#: Allowed values of ``masking``.
MASKINGS = ("auto", "random", "pattern")

#: ``auto`` copies patterns when the sheet has at least this many incomplete rows with a
#: gap in a fill column (enough different patterns to draw from; Kinfill's own choice) ...
AUTO_MIN_PATTERNS = 10
#: ... and at least this many complete rows to receive them (two per fold at the default
#: hide_fraction of 0.1; Kinfill's own choice).
AUTO_MIN_COMPLETE = 20


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


def fold_count(fraction: float) -> int:
    """Folds per repeat: ``round(1 / fraction)``, at least 2 (each fold hides about ``fraction``)."""
    return max(2, int(np.floor(1.0 / fraction + 0.5)))


def resolve_masking(layout: CellLayout, masking: str) -> str:
    """The hiding ``masking`` stands for: ``auto`` becomes ``pattern`` or ``random``.

    Raises
    ------
    KinfillError
        For a value not in :data:`MASKINGS`.
    """
    if masking not in MASKINGS:
        raise KinfillError(f"masking must be one of {', '.join(MASKINGS)}; got {masking!r}")
    if masking != "auto":
        return masking
    used = np.union1d(layout.fill_idx, layout.sim_idx)
    n_patterns = _gap_patterns(layout, used).shape[0]
    n_complete = int(layout.hideable[:, used].all(axis=1).sum())
    enough = n_patterns >= AUTO_MIN_PATTERNS and n_complete >= AUTO_MIN_COMPLETE
    return "pattern" if enough else "random"


def hide_folds(
    layout: CellLayout, fraction: float, masking: str, rng: np.random.Generator
) -> list[np.ndarray]:
    """Return one repeat's folds: masks of cells to hide, no cell in two folds.

    Parameters
    ----------
    layout : CellLayout
        Hideable cells, real gaps and column roles.
    fraction : float
        Share of each fill column's hideable cells per fold; ``round(1 / fraction)`` folds.
    masking : {"random", "pattern"}
        How to choose the cells (``auto`` is resolved first, see :func:`resolve_masking`).
    rng : numpy.random.Generator
        Source of randomness; the same state gives the same folds.

    Returns
    -------
    list of bool ndarray of shape (n_rows, n_columns)
        One mask per fold, True where a known cell is hidden; never True on a cell that
        is not hideable, and no cell True in two folds.
    """
    folds = fold_ids(layout, fraction, resolve_masking(layout, masking), rng)
    n_folds = int(folds.max()) + 1 if (folds >= 0).any() else 0
    return [folds == f for f in range(n_folds)]


def fold_ids(layout: CellLayout, fraction: float, masking: str, rng: np.random.Generator) -> np.ndarray:
    """Fold of every hidden cell (-1 where never hidden), int array of shape (n_rows, n_columns)."""
    if masking == "random":
        return random_folds(layout, fold_count(fraction), rng)
    if masking == "pattern":
        return pattern_folds(layout, fold_count(fraction), rng)
    raise KinfillError(f"masking must be one of {', '.join(MASKINGS)}; got {masking!r}")


def random_mask(layout: CellLayout, fraction: float, rng: np.random.Generator) -> np.ndarray:
    """One random fold: about ``fraction`` of each fill column's hideable cells, hidden.

    The first of ``round(1 / fraction)`` random folds (:func:`random_folds`), for work
    that needs one hiding rather than a whole split (the suggested weights' fit and
    judge sets).

    Returns
    -------
    bool ndarray of shape (n_rows, n_columns)
    """
    return random_folds(layout, fold_count(fraction), rng) == 0


def random_folds(layout: CellLayout, n_folds: int, rng: np.random.Generator) -> np.ndarray:
    """Split each fill column's hideable cells at random into ``n_folds`` folds.

    Columns are visited in a random order; within a column the cells are shuffled
    and dealt to the folds in turn (from a random first fold), so the folds differ in
    size by at most one cell. A similarity cell that would leave its row without a
    visible similarity value in its fold moves to the row's fold with the most left;
    a cell that fits no fold (its row's only similarity value) is never hidden. A
    column with fewer than two hideable cells is not hidden.

    Returns
    -------
    int ndarray of shape (n_rows, n_columns)
        Fold of each hidden cell, -1 elsewhere.
    """
    folds = np.full(layout.shape, -1, dtype=np.intp)
    is_sim = np.zeros(layout.shape[1], dtype=bool)
    is_sim[layout.sim_idx] = True
    has_sim = layout.hideable[:, layout.sim_idx].sum(axis=1)
    sim_left = np.repeat(has_sim[:, np.newaxis], n_folds, axis=1)  # per row and fold
    for j in rng.permutation(layout.fill_idx):
        rows = np.flatnonzero(layout.hideable[:, j])
        if rows.size < 2:
            continue
        rows = rng.permutation(rows)
        fold = (np.arange(rows.size) + rng.integers(n_folds)) % n_folds
        if is_sim[j]:
            tight = sim_left[rows, fold] < 2
            fold[tight] = np.argmax(sim_left[rows[tight]], axis=1)
            fits = sim_left[rows, fold] >= 2
            rows, fold = rows[fits], fold[fits]
            sim_left[rows, fold] -= 1
        folds[rows, j] = fold
    return folds


def pattern_folds(layout: CellLayout, n_folds: int, rng: np.random.Generator) -> np.ndarray:
    """Give every complete row the gap pattern of a random incomplete row, in ``n_folds`` folds.

    A pattern is a row's gaps over the fill and similarity columns; rows with a gap
    in at least one fill column and at least one similarity value left give patterns.
    Complete rows (every fill and similarity cell observed) are shuffled and dealt to
    the folds (fewer folds when there are fewer complete rows); each receives a
    pattern drawn at random (with replacement).

    Returns
    -------
    int ndarray of shape (n_rows, n_columns)
        Fold of each hidden cell, -1 elsewhere.

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
    targets = rng.permutation(complete)
    fold = np.arange(targets.size) % min(n_folds, targets.size)
    sources = rng.integers(0, patterns.shape[0], size=targets.size)
    folds = np.full(layout.shape, -1, dtype=np.intp)
    block = np.where(patterns[sources], fold[:, np.newaxis], -1)
    folds[np.ix_(targets, used)] = block
    return folds


def _gap_patterns(layout: CellLayout, used: np.ndarray) -> np.ndarray:
    """Gap patterns (over ``used`` columns) of rows worth copying."""
    gaps = layout.gaps[:, used]
    sim_pos = np.searchsorted(used, layout.sim_idx)
    fill_pos = np.searchsorted(used, layout.fill_idx)
    # The receiving row is complete, so every non-gap similarity cell stays visible.
    useful = gaps[:, fill_pos].any(axis=1) & (~gaps[:, sim_pos]).any(axis=1)
    return gaps[useful]
