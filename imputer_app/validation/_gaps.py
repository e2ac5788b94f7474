"""The gap check: whether the gaps look random, and if not, what they go with.

kNN filling assumes a gap can be predicted from the columns that hold values. The gap
check looks before the fill: Little's test of missing completely at random (on EM
estimates), a table of how rows with a gap differ from the others, and the table of
gap patterns.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy.stats import chi2

from imputer_app import engine
from imputer_app.plan import FillPlan
from imputer_app.validation._em import EM_MAX_ITERATIONS, EMEstimate, em_estimate, little_statistic
from imputer_app.validation._gap_tables import gap_differences, gap_patterns, headline
from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report

#: p-values below this count as "small" in the plain-words meaning.
SMALL_P = 0.05


@dataclass(frozen=True, eq=False)
class MCARTest:
    """Little's test of missing completely at random (Little 1988).

    Attributes
    ----------
    statistic : float
        Little's d² (NaN when there is nothing to test).
    df : int
        Degrees of freedom: the sum over gap patterns of the columns observed in the
        pattern, minus the number of columns.
    p_value : float
        Upper tail of the chi-square distribution with ``df`` degrees of freedom
        (NaN when ``df`` < 1).
    columns : tuple of str
        Number columns tested.
    n_patterns : int
        Gap patterns among the rows used.
    n_rows_used : int
        Rows with a value in at least one tested column.
    iterations : int
        EM iterations run.
    converged : bool
        False when EM stopped at its iteration cap.
    singular : bool
        True when the covariance was singular (a constant or duplicated column) and a
        pseudo-inverse was used; the p-value is then rough.
    mean, cov : ndarray
        EM mean (shape (p,)) and maximum-likelihood covariance (shape (p, p)), in the
        order of ``columns``.
    meaning : str
        What the result means, and what it does not, in plain words.
    """

    statistic: float
    df: int
    p_value: float
    columns: tuple[str, ...]
    n_patterns: int
    n_rows_used: int
    iterations: int
    converged: bool
    singular: bool
    mean: np.ndarray = field(repr=False)
    cov: np.ndarray = field(repr=False)
    meaning: str


@dataclass(frozen=True, eq=False)
class GapCheck:
    """Result of :func:`gap_check`.

    Attributes
    ----------
    mcar : MCARTest
        Little's test on the number columns checked.
    differences : DataFrame
        Per column with gaps and every other checked column, how the rows with a gap
        differ from the rows with a value (see
        :func:`~imputer_app.validation._gap_tables.gap_differences`), largest first.
    headline : str
        A plain sentence for the strongest difference.
    patterns : DataFrame
        Which combinations of gaps occur: a bool column per checked column (True =
        gap), ``count`` and ``share``; most frequent first.
    columns : tuple of str
        The checked columns (similarity and fill columns of the plan).
    similarity_columns : tuple of str
        Checked columns the plan uses for similarity.
    """

    mcar: MCARTest
    differences: pd.DataFrame
    headline: str
    patterns: pd.DataFrame
    columns: tuple[str, ...]
    similarity_columns: tuple[str, ...]


def gap_check(
    data: pd.DataFrame | engine.SheetLike,
    plan: FillPlan | None = None,
    *,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
) -> GapCheck:
    """Check whether the gaps look random, and what they go with.

    Parameters
    ----------
    data : DataFrame or sheet-like
        The sheet (a ``DataFrame``, or a read sheet: :class:`imputer_app.engine.SheetLike`):
        numbers as floats, categories as text, gaps as NaN. Never modified.
    plan : FillPlan or None, default=None
        Its similarity and fill columns are checked; ``None`` checks what the default
        plan uses (every number and category column that is not an identifier).
        Censored cells the plan substitutes count as values, not gaps.
    progress : callable(done, total) or None
        Called after each EM iteration and once at the end with ``done == total``.
    cancel : Event-like, callable or None
        When set, :class:`~imputer_app.errors.Cancelled` is raised promptly.

    Returns
    -------
    GapCheck

    Raises
    ------
    PlanError
        When the plan does not fit the sheet.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> rng = np.random.default_rng(0)
    >>> sheet = pd.DataFrame(rng.normal(size=(200, 3)), columns=["a", "b", "c"])
    >>> sheet.loc[sheet["a"] > 1, "b"] = np.nan  # gaps in b where a is high
    >>> check = gap_check(sheet)
    >>> check.mcar.p_value < 0.01, check.differences.iloc[0]["other_column"]
    (True, 'a')
    """
    raise_if_cancelled(cancel)
    table = engine.prepare(data, plan if plan is not None else FillPlan())
    checked = tuple(dict.fromkeys((*table.similarity_columns, *table.fill_columns)))
    similarity = tuple(c for c in table.similarity_columns if table.plan.weight(c) > 0)
    values, gaps = _checked_values(data, table, checked)
    kinds = {c: table.kinds[c] for c in checked}
    numbers = [c for c in checked if kinds[c] == "number"]
    mcar = mcar_test(values[numbers].to_numpy(dtype=float), tuple(numbers), progress=progress, cancel=cancel)
    differences = gap_differences(values, gaps, kinds)
    report(progress, EM_MAX_ITERATIONS, EM_MAX_ITERATIONS)
    return GapCheck(
        mcar=mcar,
        differences=differences,
        headline=headline(differences, similarity),
        patterns=gap_patterns(gaps),
        columns=checked,
        similarity_columns=similarity,
    )


def _checked_values(
    data: pd.DataFrame | engine.SheetLike, table: engine.PreparedTable, checked: tuple[str, ...]
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The checked columns as the fill sees them, and where their gaps are.

    Number fill columns come from the engine (censored entries substituted as the plan
    says); other number columns are read as floats; categories keep their labels.
    """
    frame = data if isinstance(data, pd.DataFrame) else data.frame
    out: dict[str, Any] = {}
    for column in checked:
        if table.kinds[column] == "number":
            source = table.values[column] if column in table.fill_columns else frame[column]
            out[column] = np.asarray(source, dtype=float)
        else:
            out[column] = frame[column].to_numpy(dtype=object)
    values = pd.DataFrame(out, index=frame.index, columns=list(checked))
    return values, values.isna()


def mcar_test(
    x: np.ndarray,
    columns: tuple[str, ...],
    *,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
) -> MCARTest:
    """Little's test of missing completely at random on the number matrix ``x``.

    Parameters
    ----------
    x : ndarray of shape (n_rows, p)
        Numbers with NaN gaps. Rows without any value, and columns without any
        value, are left out.
    columns : tuple of str
        Names of the columns of ``x``.
    progress, cancel
        As for :func:`gap_check`.

    Returns
    -------
    MCARTest
    """
    keep_cols = ~np.all(np.isnan(x), axis=0) if x.size else np.zeros(x.shape[1], dtype=bool)
    x = x[:, keep_cols]
    used = tuple(c for c, k in zip(columns, keep_cols, strict=True) if k)
    x = x[~np.all(np.isnan(x), axis=1)] if x.shape[1] else x[:0]
    if x.shape[0] < 2 or not np.isnan(x).any():
        return _nothing_to_test(used, x)
    estimate = em_estimate(x, progress=progress, cancel=cancel)
    stat = little_statistic(x, estimate.mean, estimate.cov)
    p_value = float(chi2.sf(stat.statistic, stat.df)) if stat.df >= 1 else math.nan
    singular = estimate.singular or stat.singular
    return MCARTest(
        statistic=stat.statistic,
        df=stat.df,
        p_value=p_value,
        columns=used,
        n_patterns=stat.n_patterns,
        n_rows_used=int(x.shape[0]),
        iterations=estimate.iterations,
        converged=estimate.converged,
        singular=singular,
        mean=estimate.mean,
        cov=estimate.cov,
        meaning=mcar_meaning(p_value, estimate, singular),
    )


def _nothing_to_test(used: tuple[str, ...], x: np.ndarray) -> MCARTest:
    p = x.shape[1]
    mean = x.mean(axis=0) if x.shape[0] else np.full(p, np.nan)
    cov = np.cov(x, rowvar=False, ddof=0).reshape(p, p) if x.shape[0] else np.full((p, p), np.nan)
    return MCARTest(
        statistic=math.nan,
        df=0,
        p_value=math.nan,
        columns=used,
        n_patterns=1 if x.shape[0] else 0,
        n_rows_used=int(x.shape[0]),
        iterations=0,
        converged=True,
        singular=False,
        mean=mean,
        cov=cov,
        meaning="Nothing to test: the number columns checked have no gaps (or too few rows).",
    )


def mcar_meaning(p_value: float, estimate: EMEstimate, singular: bool) -> str:
    """What Little's test says here, and what it does not, in plain words."""
    if not math.isfinite(p_value):
        return "Nothing to test: every row with a value has the same columns filled in."
    if p_value < SMALL_P:
        text = (
            f"p = {p_value:.3g}: the gaps are not completely at random; where they fall depends on "
            "something, such as the values in other columns. kNN can still fill them well when the "
            "gaps depend on columns used for similarity; look at the differences table to see which. "
            "A column average would be biased."
        )
    else:
        text = (
            f"p = {p_value:.3g}: the test found no sign that the gaps depend on the other columns. "
            "This does not prove that the gaps are random: the test only compares means, and gaps that "
            "depend on the missing value itself (a saturated instrument, say) can pass unseen."
        )
    if singular:
        text += (
            " Some columns are constant or duplicates of others; a pseudo-inverse was used,"
            " so the p-value is rough."
        )
    if not estimate.converged:
        text += (
            f" The EM estimates had not settled after {estimate.iterations} iterations;"
            " treat the p-value as rough."
        )
    return text
