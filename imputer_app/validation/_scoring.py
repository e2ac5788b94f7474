"""Score filled values against the hidden truth and summarise over repeats.

Numbers get RMSE, MAE and NRMSE (RMSE divided by the sample standard deviation,
``ddof=1``, of the column's observed values); categories get the error rate (share
of hidden cells given the wrong class). The overall score of a k is the mean NRMSE
over numeric fill columns; the error rate over category columns is kept apart.

Each repeat fills several folds. A mean is taken over every fold of every repeat; a
standard error is taken across the folds of one repeat (``std(ddof=1) / sqrt(folds)``,
as over the folds of one cross-validation in ESL 2nd ed., sec. 7.10) and averaged over
repeats, so it does not shrink as repeats are added.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

#: Columns of the long score table, in order.
SCORE_COLUMNS = (
    "k",
    "column",
    "repeat",
    "fold",
    "rmse",
    "mae",
    "nrmse",
    "error_rate",
    "n_hidden",
    "n_unfilled",
)

#: Per-cell metrics averaged in summaries.
METRICS = ("rmse", "mae", "nrmse", "error_rate")


@dataclass(frozen=True)
class ColumnOutcome:
    """Hidden cells of one fill column in one repeat and what each fill gave them.

    Attributes
    ----------
    column : str
        Fill column name.
    kind : {"number", "category"}
        Column kind.
    truth : ndarray of shape (m,)
        The hidden known values (float for numbers, class labels for categories).
    filled : ndarray of shape (n_ks, m)
        kNN values for every k, NaN (numbers) or None (categories) where no donor.
    baseline : ndarray of shape (m,)
        Column (or group) mean of the visible cells, or most common class of the known
        cells (see :mod:`~imputer_app.validation._baseline`); NaN or None where none.
    spread : float
        Sample standard deviation of the column's observed values (NRMSE scale).
    """

    column: str
    kind: str
    truth: np.ndarray
    filled: np.ndarray
    baseline: np.ndarray
    spread: float


def cell_errors(outcome: ColumnOutcome, values: np.ndarray, scored: np.ndarray) -> dict[str, np.ndarray]:
    """Return RMSE, MAE, NRMSE and error rate of each row of ``values``.

    Parameters
    ----------
    outcome : ColumnOutcome
        Truth, kind and NRMSE scale of the column.
    values : ndarray of shape (n_fills, m)
        Filled values to score, one row per fill (k or baseline).
    scored : bool ndarray of shape (m,)
        Cells that count (those the kNN fill reached); others are left out.

    Returns
    -------
    dict of str to float ndarray of shape (n_fills,)
        ``rmse``, ``mae``, ``nrmse`` (NaN for categories) and ``error_rate`` (NaN for
        numbers). All NaN when no cell is scored.
    """
    n = values.shape[0]
    nan = np.full(n, np.nan)
    if not scored.any():
        return {"rmse": nan, "mae": nan, "nrmse": nan, "error_rate": nan}
    if outcome.kind == "category":
        wrong = values[:, scored] != outcome.truth[scored]
        return {"rmse": nan, "mae": nan, "nrmse": nan, "error_rate": wrong.mean(axis=1).astype(float)}
    diff = values[:, scored].astype(float) - outcome.truth[scored]
    rmse = np.sqrt(np.mean(diff**2, axis=1))
    scale = outcome.spread if outcome.spread > 0 else np.nan
    return {"rmse": rmse, "mae": np.mean(np.abs(diff), axis=1), "nrmse": rmse / scale, "error_rate": nan}


def reached(outcome: ColumnOutcome) -> np.ndarray:
    """Cells the kNN fill gave a value at every k (bool of shape (m,))."""
    if outcome.kind == "category":
        return np.all(outcome.filled != None, axis=0)  # noqa: E711 - elementwise test on objects
    return np.all(np.isfinite(outcome.filled.astype(float)), axis=0)


def score_repeat(
    outcomes: Sequence[ColumnOutcome], ks: Sequence[int], repeat: int, fold: int = 0
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Score one fold of a repeat: every k and the baseline, for every column.

    Returns
    -------
    scores : DataFrame
        Long table with columns :data:`SCORE_COLUMNS` (one row per k and column).
    baseline : DataFrame
        Same columns without ``k``, one row per column, for the baseline fill.
    """
    knn_parts: list[dict[str, object]] = []
    base_parts: list[dict[str, object]] = []
    n_ks = len(ks)
    for out in outcomes:
        scored = reached(out)
        counts = {"n_hidden": int(scored.sum()), "n_unfilled": int(scored.size - scored.sum())}
        knn = cell_errors(out, out.filled, scored)
        base = cell_errors(out, out.baseline[np.newaxis, :], scored)
        where = {"repeat": repeat, "fold": fold}
        knn_parts.append({"k": np.asarray(ks), "column": [out.column] * n_ks, **where, **knn})
        knn_parts[-1].update(counts)
        base_parts.append({"column": [out.column], **where, **base, **counts})
    return _stack(knn_parts, SCORE_COLUMNS), _stack(base_parts, SCORE_COLUMNS[1:])


def _stack(parts: list[dict[str, object]], columns: Sequence[str]) -> pd.DataFrame:
    if not parts:
        return pd.DataFrame({name: pd.Series(dtype=float) for name in columns})
    frame = pd.concat([pd.DataFrame(part) for part in parts], ignore_index=True)
    return frame.loc[:, list(columns)]


def standard_error(values: pd.Series | np.ndarray) -> float:
    """Standard error of the mean, ``std(ddof=1) / sqrt(n)`` over non-NaN values.

    NaN when fewer than two values are present (one fold gives no spread).
    """
    data = np.asarray(values, dtype=float)
    data = data[np.isfinite(data)]
    if data.size < 2:
        return float("nan")
    return float(np.std(data, ddof=1) / np.sqrt(data.size))


def over_folds(values: pd.Series, by: list[str]) -> pd.DataFrame:
    """Mean over every fold and repeat, and the standard error across folds, per ``by``.

    Parameters
    ----------
    values : Series
        Indexed by ``(*by, "repeat", "fold")``; NaN values (a fold that hid no cell of a
        column) are left out.
    by : list of str
        Index levels to summarise per (for instance ``["k", "column"]``).

    Returns
    -------
    DataFrame
        Indexed by ``by``, columns ``mean`` (mean of the repeats' fold means) and ``se``
        (mean over repeats of :func:`standard_error` across that repeat's folds).
    """
    per_repeat = values.groupby(level=[*by, "repeat"], sort=False).agg(["mean", standard_error])
    return per_repeat.groupby(level=by, sort=False).mean().set_axis(["mean", "se"], axis=1)


def with_folds(scores: pd.DataFrame) -> pd.DataFrame:
    """``scores`` with a ``fold`` column; without one, its repeats count as the folds of one repeat."""
    if "fold" in scores.columns:
        return scores
    return scores.assign(fold=scores["repeat"], repeat=0)


def column_score(scores: pd.DataFrame, kinds: dict[str, str]) -> pd.Series:
    """Per-row score: NRMSE for number columns, error rate for category columns."""
    is_category = scores["column"].map(kinds).eq("category").to_numpy()
    return pd.Series(
        np.where(is_category, scores["error_rate"], scores["nrmse"]), index=scores.index, name="score"
    )


def summarise(scores: pd.DataFrame, kinds: dict[str, str]) -> pd.DataFrame:
    """Mean and standard error (across folds, see :func:`over_folds`) of each column's score, per k.

    Returns
    -------
    DataFrame
        Indexed by k; columns a MultiIndex ``(column, "mean" | "se")`` in the order the
        columns appear in ``kinds``.
    """
    table = with_folds(scores).assign(score=column_score(scores, kinds))
    stats = over_folds(table.set_index(["k", "column", "repeat", "fold"])["score"], ["k", "column"])
    means, ses = stats["mean"].unstack("column"), stats["se"].unstack("column")
    present = [c for c in kinds if c in means.columns]
    parts = {(c, stat): table[c] for c in present for stat, table in (("mean", means), ("se", ses))}
    wide = pd.DataFrame(parts).sort_index()
    wide.columns = pd.MultiIndex.from_tuples(list(parts), names=["column", "stat"])
    wide.index.name = "k"
    return wide


def overall_by_k(scores: pd.DataFrame, kinds: dict[str, str]) -> pd.DataFrame:
    """Overall score per k: mean NRMSE over number columns, error rate over categories.

    Each fold's overall value is the mean over columns; the table gives the mean and
    standard error of those values (see :func:`over_folds`).

    Returns
    -------
    DataFrame
        Indexed by k with columns ``score``, ``se``, ``category_error``, ``category_se``.
    """
    numeric = [c for c, kind in kinds.items() if kind == "number"]
    category = [c for c, kind in kinds.items() if kind == "category"]
    scores = with_folds(scores)
    by = ["k", "repeat", "fold"]
    per_fold_num = _mean_over_columns(scores, numeric, "nrmse", by)
    per_fold_cat = _mean_over_columns(scores, category, "error_rate", by)
    ks = np.sort(scores["k"].unique())
    out = pd.DataFrame(index=pd.Index(ks, name="k"))
    for name, se_name, per_fold in (
        ("score", "se", per_fold_num),
        ("category_error", "category_se", per_fold_cat),
    ):
        stats = over_folds(per_fold, ["k"]) if len(per_fold) else pd.DataFrame(columns=["mean", "se"])
        out[name] = stats["mean"].reindex(ks).to_numpy(dtype=float)
        out[se_name] = stats["se"].reindex(ks).to_numpy(dtype=float)
    return out


def _mean_over_columns(scores: pd.DataFrame, columns: list[str], metric: str, by: list[str]) -> pd.Series:
    part = scores[scores["column"].isin(columns)]
    if part.empty:
        return pd.Series(dtype=float, index=pd.MultiIndex.from_arrays([[]] * len(by), names=by))
    return part.groupby(by)[metric].mean()


def baseline_table(base_scores: pd.DataFrame, kinds: dict[str, str]) -> pd.DataFrame:
    """Summarise the baseline fill: one row per column plus an ``overall`` row.

    Returns
    -------
    DataFrame
        Indexed by column name (and ``"overall"``); columns ``kind``, :data:`METRICS`,
        ``n_hidden`` (mean per repeat), ``score`` (NRMSE for numbers, error rate for
        categories; mean NRMSE over number columns on the overall row), ``se``, and on
        the overall row ``category_error`` and ``category_se``.
    """
    base_scores = with_folds(base_scores)
    table = base_scores.assign(score=column_score(base_scores, kinds))
    rows = table.groupby("column", sort=False)[[*METRICS, "n_hidden", "score"]].mean()
    rows["n_hidden"] = (
        table.groupby(["column", "repeat"], sort=False)["n_hidden"].sum().groupby(level=0).mean()
    )
    rows["se"] = over_folds(table.set_index(["column", "repeat", "fold"])["score"], ["column"])["se"]
    rows = rows.reindex([c for c in kinds if c in rows.index])
    rows.insert(0, "kind", [kinds[c] for c in rows.index])
    with_k = base_scores.assign(k=0)
    overall = overall_by_k(with_k, kinds).iloc[0]
    rows.loc["overall", ["kind", "score", "se", "category_error", "category_se"]] = [
        "overall",
        overall["score"],
        overall["se"],
        overall["category_error"],
        overall["category_se"],
    ]
    rows.index.name = "column"
    return rows


def best_k(ks: Sequence[int], scores: Sequence[float] | np.ndarray) -> int:
    """Return the k with the lowest score (the smallest such k on a tie).

    Parameters
    ----------
    ks : sequence of int of shape (n,)
        Candidate k values.
    scores : array-like of shape (n,)
        Score of each k, lower is better; NaN scores are ignored.

    Raises
    ------
    ValueError
        When every score is NaN.
    """
    values = np.asarray(scores, dtype=float)
    if not np.isfinite(values).any():
        raise ValueError("no k has a score")
    return int(np.asarray(ks)[np.nanargmin(values)])


def one_se_rule(
    ks: Sequence[int], scores: Sequence[float] | np.ndarray, se: Sequence[float] | np.ndarray
) -> int:
    """Return the largest k whose score is within one standard error of the best.

    The one-standard-error rule (Hastie, Tibshirani & Friedman, *The Elements of
    Statistical Learning*, 2nd ed., sec. 7.10) picks the simplest model whose error is
    no more than one standard error above the lowest error. A larger k averages more
    donors, so it is the simpler (smoother) fill.

    Parameters
    ----------
    ks : sequence of int of shape (n,)
        Candidate k values.
    scores : array-like of shape (n,)
        Mean score of each k over repeats, lower is better; NaN scores are ignored.
    se : array-like of shape (n,)
        Standard error of each score. Only the best k's SE is used; NaN (a single
        repeat) counts as 0, so the rule then returns the best k.

    Returns
    -------
    int
        The chosen k.

    Examples
    --------
    >>> one_se_rule([1, 3, 5, 7], [0.50, 0.40, 0.42, 0.47], [0.02, 0.03, 0.03, 0.03])
    5
    """
    values = np.asarray(scores, dtype=float)
    errors = np.asarray(se, dtype=float)
    k_values = np.asarray(ks)
    best = int(np.nanargmin(values)) if np.isfinite(values).any() else None
    if best is None:
        raise ValueError("no k has a score")
    margin = errors[best] if np.isfinite(errors[best]) else 0.0
    # A tiny tolerance keeps ties at exactly one SE inside the band despite rounding.
    limit = values[best] + margin + 1e-12 * max(1.0, abs(values[best]))
    within = np.isfinite(values) & (values <= limit)
    return int(k_values[within].max())


def best_k_by_column(summary: pd.DataFrame) -> dict[str, int]:
    """Per fill column, the k with the lowest mean score (smallest k on a tie)."""
    out: dict[str, int] = {}
    for column in summary.columns.get_level_values("column").unique():
        means = summary[(column, "mean")].to_numpy(dtype=float)
        if np.isfinite(means).any():
            out[str(column)] = best_k([int(k) for k in summary.index], means)
    return out
