"""The gap check's tables: how rows with a gap differ, and which gap patterns occur.

:func:`gap_differences` compares, for each column with gaps, the rows where it has a
gap with the rows where it has a value, in every other checked column: the
standardized mean difference for numbers (difference of means over the pooled SD,
common practice, no source) and the largest difference in class shares for
categories. :func:`gap_patterns` counts the combinations of gaps.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

#: Columns of :attr:`GapCheck.differences`.
DIFFERENCE_COLUMNS = ("gap_column", "other_column", "kind", "difference", "detail", "n_gap", "n_present")

#: Below this size (in SD, or share points for categories) no difference is worth a sentence.
NOTABLE_DIFFERENCE = 0.2


def gap_differences(frame: pd.DataFrame, gaps: pd.DataFrame, kinds: Mapping[str, str]) -> pd.DataFrame:
    """How the rows with a gap in one column differ from the rows without it.

    Parameters
    ----------
    frame : DataFrame
        The checked columns: floats (numbers, NaN = no value) or labels (categories).
    gaps : DataFrame of bool, same shape
        True at every gap.
    kinds : mapping of str to {"number", "category"}
        Kind of every column of ``frame``.

    Returns
    -------
    DataFrame
        Columns :data:`DIFFERENCE_COLUMNS`: for numbers ``difference`` is the
        standardized mean difference (gap rows minus rows with a value, over the pooled
        SD; positive = higher where the gap is) and ``detail`` is empty; for categories
        it is the largest difference in a class's share (gap rows minus the others) and
        ``detail`` names that class. ``n_gap`` and ``n_present`` count the rows where
        the other column holds a value. Sorted by absolute difference, largest first;
        NaN (too few rows) last.
    """
    rows: list[dict[str, object]] = []
    numbers = [c for c in frame.columns if kinds[c] == "number"]
    values = frame[numbers].to_numpy(dtype=float) if numbers else np.empty((len(frame), 0))
    for gap_column in [c for c in frame.columns if bool(gaps[c].any())]:
        in_gap = gaps[gap_column].to_numpy(dtype=bool)
        smd, n_gap, n_present = _standardized_differences(values, in_gap)
        for j, other in enumerate(numbers):
            if other != gap_column:
                rows.append(_row(gap_column, other, "number", smd[j], "", n_gap[j], n_present[j]))
        for other in frame.columns:
            if kinds[other] == "category" and other != gap_column:
                rows.append(_share_difference(gap_column, other, frame[other], gaps[other], in_gap))
    table = pd.DataFrame(rows, columns=list(DIFFERENCE_COLUMNS))
    if table.empty:
        return table.astype({"difference": float, "n_gap": int, "n_present": int})
    order = np.argsort(
        -np.nan_to_num(np.abs(table["difference"].to_numpy(dtype=float)), nan=-1.0), kind="stable"
    )
    return table.iloc[order].reset_index(drop=True)


def _row(
    gap: str, other: str, kind: str, diff: float, detail: str, n_gap: int, n_present: int
) -> dict[str, object]:
    return {
        "gap_column": gap,
        "other_column": other,
        "kind": kind,
        "difference": float(diff),
        "detail": detail,
        "n_gap": int(n_gap),
        "n_present": int(n_present),
    }


def _standardized_differences(
    values: np.ndarray, in_gap: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per column of ``values``: (mean over gap rows − mean over the rest) / pooled SD."""
    known = ~np.isnan(values)
    filled = np.where(known, values, 0.0)
    groups = (known & in_gap[:, None], known & ~in_gap[:, None])
    counts, means, squares = [], [], []
    for group in groups:
        n = group.sum(axis=0)
        mean = np.where(group, filled, 0.0).sum(axis=0) / np.maximum(n, 1)
        ss = np.where(group, (filled - mean) ** 2, 0.0).sum(axis=0)
        counts.append(n)
        means.append(mean)
        squares.append(ss)
    n_gap, n_present = counts
    dof = n_gap + n_present - 2
    with np.errstate(invalid="ignore", divide="ignore"):
        pooled = np.sqrt((squares[0] + squares[1]) / dof)
        smd = (means[0] - means[1]) / pooled
    ok = (n_gap >= 1) & (n_present >= 1) & (dof > 0) & (pooled > 0)
    return np.where(ok, smd, np.nan), n_gap, n_present


def _share_difference(
    gap_column: str, other: str, labels: pd.Series, other_gaps: pd.Series, in_gap: np.ndarray
) -> dict[str, object]:
    """The class of ``other`` whose share differs most between gap rows and the rest."""
    known = ~other_gaps.to_numpy(dtype=bool) & labels.notna().to_numpy()
    text = labels.astype(str).to_numpy()
    gap_rows, rest_rows = known & in_gap, known & ~in_gap
    n_gap, n_present = int(gap_rows.sum()), int(rest_rows.sum())
    if n_gap == 0 or n_present == 0:
        return _row(gap_column, other, "category", np.nan, "", n_gap, n_present)
    classes, codes = np.unique(text[known], return_inverse=True)
    share_gap = np.bincount(codes[in_gap[known]], minlength=classes.size) / n_gap
    share_rest = np.bincount(codes[~in_gap[known]], minlength=classes.size) / n_present
    diff = share_gap - share_rest
    best = int(np.argmax(np.abs(diff)))
    return _row(gap_column, other, "category", diff[best], str(classes[best]), n_gap, n_present)


def gap_patterns(gaps: pd.DataFrame) -> pd.DataFrame:
    """Which combinations of gaps occur, and how often.

    Parameters
    ----------
    gaps : DataFrame of bool
        True at every gap, one column per checked column.

    Returns
    -------
    DataFrame
        One row per pattern: a bool column per checked column (True = gap in that
        column), ``count`` and ``share`` (of all rows); most frequent first, ties in
        the order of the fewest gaps.
    """
    columns = list(gaps.columns)
    if gaps.empty:
        return pd.DataFrame(columns=[*columns, "count", "share"])
    counted = gaps.astype(bool).value_counts(sort=False).rename("count").reset_index()
    counted["gaps"] = counted[columns].sum(axis=1)
    counted = counted.sort_values(["count", "gaps"], ascending=[False, True], kind="stable")
    counted["share"] = counted["count"] / len(gaps)
    return counted[[*columns, "count", "share"]].reset_index(drop=True)


def headline(differences: pd.DataFrame, similarity: Sequence[str]) -> str:
    """A plain sentence for the strongest difference in ``differences``.

    Parameters
    ----------
    differences : DataFrame
        As returned by :func:`gap_differences` (largest first).
    similarity : sequence of str
        Columns the plan uses for similarity (with a weight above zero).
    """
    ranked = differences.dropna(subset=["difference"])
    if ranked.empty:
        return "No column has gaps that can be compared with the rows that have a value."
    top = ranked.iloc[0]
    gap, other, size = str(top["gap_column"]), str(top["other_column"]), float(top["difference"])
    if abs(size) < NOTABLE_DIFFERENCE:
        return (
            f"Rows with gaps look like the other rows: the largest difference (gaps in {gap}, "
            f"{other}) is small, so gaps here do not point to a pattern."
        )
    if top["kind"] == "number":
        word = "high" if size > 0 else "low"
        side = "higher" if size > 0 else "lower"
        what = f"Gaps in {gap} come with {word} {other} ({abs(size):.1f} SD {side})"
    else:
        side = "more" if size > 0 else "fewer"
        points = f"{abs(size) * 100:.0f} share points"
        what = f"Gaps in {gap} come with {side} rows of {other} '{top['detail']}' ({points})"
    if other in similarity:
        advice = f"kNN can still fill them, since {other} is a similarity column"
    else:
        advice = f"kNN can still fill them if {other} is made a similarity column"
    return f"{what}: {advice}; a column average would be biased."
