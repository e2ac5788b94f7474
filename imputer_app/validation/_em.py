"""Little's test of missing completely at random, on EM estimates (numpy only).

The means and covariance of a multivariate normal with gaps come from the EM
algorithm (Dempster, Laird & Rubin 1977, JRSS B 39:1-38); Little's statistic
(Little 1988, JASA 83(404):1198-1202) compares, for every gap pattern, the mean of
the observed values with the EM mean of the same columns:

    d² = Σ_j n_j (ȳ_j − μ_j)ᵀ Σ_j⁻¹ (ȳ_j − μ_j),   df = Σ_j p_j − p,

where pattern j has n_j rows and p_j observed columns. Under "gaps completely at
random" d² is approximately chi-square with df degrees of freedom.

Rows are grouped by their gap pattern, so each EM step costs one matrix computation
per pattern, never a loop over rows or cells. A singular covariance (a constant or
duplicated column) is inverted with the Moore-Penrose pseudo-inverse, and the result
says so.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report

#: EM stops when no mean or covariance entry moves more than this (in column SDs).
EM_TOLERANCE = 1e-6
#: Largest number of EM iterations.
EM_MAX_ITERATIONS = 500
#: A covariance whose smallest eigenvalue is below this share of its largest is singular.
_SINGULAR_SHARE = 1e-10

FloatArray = NDArray[np.float64]


@dataclass(frozen=True)
class EMEstimate:
    """Maximum-likelihood mean and covariance of a multivariate normal with gaps.

    Attributes
    ----------
    mean : ndarray of shape (p,)
    cov : ndarray of shape (p, p)
        Maximum-likelihood covariance (divided by n, not n - 1).
    iterations : int
        EM iterations run.
    converged : bool
        False when ``EM_MAX_ITERATIONS`` was reached before the tolerance.
    singular : bool
        True when the covariance was singular and a pseudo-inverse was used.
    """

    mean: FloatArray
    cov: FloatArray
    iterations: int
    converged: bool
    singular: bool


@dataclass(frozen=True)
class Patterns:
    """Rows grouped by gap pattern.

    Attributes
    ----------
    missing : bool ndarray of shape (n_patterns, p)
        True where the pattern has a gap.
    rows : list of int ndarray
        Row positions of each pattern.
    """

    missing: NDArray[np.bool_]
    rows: list[NDArray[np.intp]]


def group_patterns(x: FloatArray) -> Patterns:
    """Group the rows of ``x`` (NaN = gap) by which columns are missing."""
    missing = np.isnan(x)
    unique, inverse = np.unique(missing, axis=0, return_inverse=True)
    inverse = np.asarray(inverse).reshape(-1)
    order = np.argsort(inverse, kind="stable")
    bounds = np.searchsorted(inverse[order], np.arange(unique.shape[0] + 1))
    rows = [order[bounds[i] : bounds[i + 1]] for i in range(unique.shape[0])]
    return Patterns(missing=unique.astype(bool), rows=rows)


def em_estimate(
    x: FloatArray,
    *,
    tol: float = EM_TOLERANCE,
    max_iter: int = EM_MAX_ITERATIONS,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
) -> EMEstimate:
    """EM estimates of the mean and covariance of ``x`` under a multivariate normal.

    Parameters
    ----------
    x : ndarray of shape (n, p)
        Numbers with NaN gaps; every row must hold at least one value and every
        column at least one value.
    tol : float, default=EM_TOLERANCE
        Stop when the largest change of a mean or covariance entry, in units of the
        column's standard deviation, is below ``tol``.
    max_iter : int, default=EM_MAX_ITERATIONS
        Largest number of iterations; ``converged`` is False when it is reached.
    progress : callable(done, total) or None
        Called after each iteration with ``(iteration, max_iter)``.
    cancel : Event-like, callable or None
        Checked every iteration.

    Returns
    -------
    EMEstimate
        In the units of ``x``. With nothing missing, the sample mean and the
        covariance divided by n.
    """
    centre, scale = _centre_scale(x)
    z = (x - centre) / scale  # unit-free, so the tolerance means the same for all columns
    sums = _pattern_sums(z, group_patterns(z))
    n = z.shape[0]
    mean = np.nanmean(z, axis=0)
    cov = np.diag(np.nanvar(z, axis=0) + 1e-12)
    converged, singular, iteration = False, False, 0
    for iteration in range(1, max_iter + 1):
        raise_if_cancelled(cancel)
        total, cross, singular = _expectations(sums, mean, cov)
        new_mean = total / n
        new_cov = cross / n - np.outer(new_mean, new_mean)
        new_cov = (new_cov + new_cov.T) / 2
        change = max(float(np.max(np.abs(new_mean - mean))), float(np.max(np.abs(new_cov - cov))))
        mean, cov = new_mean, new_cov
        report(progress, iteration, max_iter)
        if change < tol:
            converged = True
            break
    singular = singular or _is_singular(cov)
    return EMEstimate(
        mean=mean * scale + centre,
        cov=cov * np.outer(scale, scale),
        iterations=iteration,
        converged=converged,
        singular=singular,
    )


def _centre_scale(x: FloatArray) -> tuple[FloatArray, FloatArray]:
    centre = np.nanmean(x, axis=0)
    scale = np.nanstd(x, axis=0)
    return centre, np.where(scale > 0, scale, 1.0)


@dataclass(frozen=True)
class _PatternSums:
    """One gap pattern's sufficient statistics, computed once before EM starts."""

    n: int
    o: NDArray[np.intp]  # observed columns
    m: NDArray[np.intp]  # missing columns
    s: FloatArray  # sum over the pattern's rows of the observed values
    ss: FloatArray  # sum of their cross-products, shape (len(o), len(o))
    oo: tuple[NDArray[np.intp], ...]
    om: tuple[NDArray[np.intp], ...]
    mo: tuple[NDArray[np.intp], ...]
    mm: tuple[NDArray[np.intp], ...]


def _pattern_sums(z: FloatArray, patterns: Patterns) -> list[_PatternSums]:
    out = []
    for missing, rows in zip(patterns.missing, patterns.rows, strict=True):
        o, m = np.flatnonzero(~missing), np.flatnonzero(missing)
        block = z[np.ix_(rows, o)]
        out.append(
            _PatternSums(
                n=int(rows.size),
                o=o,
                m=m,
                s=block.sum(axis=0),
                ss=block.T @ block,
                oo=np.ix_(o, o),
                om=np.ix_(o, m),
                mo=np.ix_(m, o),
                mm=np.ix_(m, m),
            )
        )
    return out


def _expectations(
    sums: list[_PatternSums], mean: FloatArray, cov: FloatArray
) -> tuple[FloatArray, FloatArray, bool]:
    """E-step: expected sums of the completed rows and of their cross-products.

    A missing block is predicted by regression on the observed block,
    ``x_m = c + B x_o`` with ``B = S_mo S_oo⁻¹`` and ``c = μ_m − B μ_o``, so each
    pattern needs only its row count, its sums and its cross-products.
    """
    p = mean.size
    total = np.zeros(p)
    cross = np.zeros((p, p))
    singular = False
    for st in sums:
        total[st.o] += st.s
        cross[st.oo] += st.ss
        if not st.m.size:
            continue
        inv_oo, flag = _inverse(cov[st.oo])
        singular |= flag
        coef = cov[st.mo] @ inv_oo
        const = mean[st.m] - coef @ mean[st.o]
        bs = coef @ st.s
        total[st.m] += st.n * const + bs
        om = np.outer(st.s, const) + st.ss @ coef.T
        cross[st.om] += om
        cross[st.mo] += om.T
        residual = cov[st.mm] - coef @ cov[st.om]  # conditional covariance of the missing block
        cross[st.mm] += (
            st.n * np.outer(const, const)
            + np.outer(const, bs)
            + np.outer(bs, const)
            + coef @ st.ss @ coef.T
            + st.n * residual
        )
    return total, cross, singular


def _inverse(matrix: FloatArray) -> tuple[FloatArray, bool]:
    """Inverse of a symmetric matrix; the pseudo-inverse (flagged) when it is singular."""
    if not matrix.size:
        return matrix, False
    if _is_singular(matrix):
        return np.asarray(np.linalg.pinv(matrix, hermitian=True), dtype=np.float64), True
    return np.asarray(np.linalg.inv(matrix), dtype=np.float64), False


def _is_singular(matrix: FloatArray) -> bool:
    eig = np.linalg.eigvalsh(matrix)
    return bool(eig[0] <= _SINGULAR_SHARE * max(float(eig[-1]), 0.0)) or bool(eig[-1] <= 0)


@dataclass(frozen=True)
class LittleStatistic:
    """Little's d², its degrees of freedom and the number of patterns it saw."""

    statistic: float
    df: int
    n_patterns: int
    singular: bool


def little_statistic(x: FloatArray, mean: FloatArray, cov: FloatArray) -> LittleStatistic:
    """Little's d² for ``x`` (NaN gaps) given the mean and covariance of all columns.

    Parameters
    ----------
    x : ndarray of shape (n, p)
        Rows with no value at all must already be left out.
    mean : ndarray of shape (p,)
        Mean of every column, usually the EM estimate (:func:`em_estimate`).
    cov : ndarray of shape (p, p)
        Covariance of the columns, usually the EM estimate.

    Returns
    -------
    LittleStatistic
        ``df = Σ_j p_j − p`` (Little 1988, eq. 5).
    """
    # d² does not change when columns are rescaled; unit columns keep the singular check fair.
    sd = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    sd = np.where(sd > 0, sd, 1.0)
    x, mean, cov = x / sd, mean / sd, cov / np.outer(sd, sd)
    patterns = group_patterns(x)
    d2, df, singular = 0.0, -x.shape[1], False
    for missing, rows in zip(patterns.missing, patterns.rows, strict=True):
        o = np.flatnonzero(~missing)
        diff = np.nanmean(x[np.ix_(rows, o)], axis=0) - mean[o]
        inv_oo, flag = _inverse(cov[np.ix_(o, o)])
        singular |= flag
        d2 += rows.size * float(diff @ inv_oo @ diff)
        df += o.size
    return LittleStatistic(statistic=d2, df=int(df), n_patterns=len(patterns.rows), singular=singular)
