"""A ready-to-paste methods paragraph, written from what a fill actually did.

:func:`methods_paragraph` states facts of the run only: cells filled per column, the
distance with its weights and scaling, k and how it was chosen, how below-limit entries
were handled, the software and its version, and the references for the methods that
were used. Anything the run did not measure (say, the coverage of intervals that were
not computed) is left out, never guessed. The paragraph ends with "References:" and
then the works cited, so that its numbers can be told from the years of the works.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from imputer_app import CAUTIONS, __version__
from imputer_app.words import STAND_IN_ROUNDING, SUBSTITUTION_PHRASES

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.plan import FillPlan
    from imputer_app.sheets._model import Sheet

#: Works cited, by key; a paragraph cites only those its run used.
REFERENCES = {
    "dixon": "Dixon, J. K. (1979). Pattern recognition with partly missing data. "
    "IEEE Transactions on Systems, Man, and Cybernetics 9(10), 617-621.",
    "gower": "Gower, J. C. (1971). A general coefficient of similarity and some of its properties. "
    "Biometrics 27(4), 857-871.",
    "troyanskaya": "Troyanskaya, O. et al. (2001). Missing value estimation methods for DNA "
    "microarrays. Bioinformatics 17(6), 520-525.",
    "esl": "Hastie, T., Tibshirani, R. & Friedman, J. (2009). The Elements of Statistical "
    "Learning, 2nd ed., sec. 7.10. Springer.",
    "lei": "Lei, J., G'Sell, M., Rinaldo, A., Tibshirani, R. J. & Wasserman, L. (2018). "
    "Distribution-free predictive inference for regression. Journal of the American Statistical "
    "Association 113(523), 1094-1111.",
    "hornung": "Hornung, R. W. & Reed, L. D. (1990). Estimation of average concentration in the "
    "presence of nondetectable values. Applied Occupational and Environmental Hygiene 5(1), 46-51.",
    "helsel": "Helsel, D. R. & Cohn, T. A. (1988). Estimation of descriptive statistics for "
    "multiply censored water quality data. Water Resources Research 24(12), 1997-2004.",
}

#: The coverage table's rows pooling every fill column.
ALL_COLUMNS = "(all)"

#: Marker between the paragraph's statements and its works cited.
REFERENCES_HEADING = "References:"

_SCALING = {
    "zscore": "scaled to z-scores (minus the column mean, over its standard deviation)",
    "range": "scaled by their range (minus the minimum, over the range)",
    "robust": "scaled by median and interquartile range",
    "none": "left unscaled",
}
_DEFAULT_SIMILARITY = ": by default, every number and category column not carried"
_RULE = {"mean": "the mean", "median": "the median"}
_CENSORED_WAYS = {
    **SUBSTITUTION_PHRASES,
    "knn_capped": "filled by kNN and capped at the limit",
    "ros": "regression on order statistics (ROS)",
}


def methods_paragraph(
    result: FillResult,
    plan: FillPlan,
    report: Any = None,
    sheet: Sheet | None = None,
) -> str:
    """Return a methods paragraph that states what this fill did, with its references.

    Parameters
    ----------
    result : FillResult
        The fill; its ``plan`` (columns resolved), ``filled`` and ``log`` are read.
    plan : FillPlan
        The plan as given: when it names no similarity columns, the paragraph says the
        default set was used.
    report : RecoveryReport or None, default=None
        The recovery test behind k; its ``settings``, ``ks``, ``best_k``, ``best_k_1se``,
        ``overall`` and ``baseline`` are stated when given.
    sheet : Sheet or None, default=None
        The sheet filled; its file name is stated when given.

    Returns
    -------
    str
        One paragraph, then ``"References: "`` and the works cited.
    """
    used = result.plan
    cites: list[str] = ["troyanskaya", "dixon"]
    parts = [
        _filled_sentence(result, sheet),
        _distance_sentence(result, cites, plan.similarity_columns is None),
    ]
    categories = _has_categories(result)
    parts.append(_donor_sentence(used.numeric_rule, used.neighbour_weighting, used.k, categories))
    parts.append(_k_sentence(used.k, report, cites))
    parts.extend(_censored_sentences(result.log, cites))
    parts.extend(_interval_sentences(result, cites))
    parts.append(_rounding_sentence(result))
    parts.append(f"The fill was made with Kinfill {__version__}.")
    parts.append(CAUTIONS)
    works = " ".join(REFERENCES[key] for key in dict.fromkeys(cites))
    return " ".join(p for p in parts if p) + f" {REFERENCES_HEADING} {works}"


def number_text(value: float) -> str:
    """Return ``value`` with at most three significant digits (``0.672``, ``147``, ``5``)."""
    if float(value).is_integer():
        return str(int(value))
    return f"{float(value):.3g}"


def _filled_sentence(result: FillResult, sheet: Sheet | None) -> str:
    per_column = pd.Series(np.asarray(result.filled, dtype=bool).sum(axis=0), index=result.filled.columns)
    per_column = per_column[per_column > 0]
    where = f" in {sheet.source.path.name}" if sheet is not None else ""
    if per_column.empty:
        return f"No gaps{where} were filled by k-nearest-neighbour imputation."
    counts = _listing([f"{column} ({int(n)})" for column, n in per_column.items()])
    text = (
        f"Gaps{where} were filled by k-nearest-neighbour imputation (Troyanskaya et al. 2001): "
        f"{int(per_column.sum())} cells in {len(per_column)} columns: {counts}."
    )
    means = int((result.log["method"].astype(str) == "column_mean").sum()) if len(result.log) else 0
    if means:
        text += f" Of these, {means} had no donor and were given their column's mean."
    return text


def _distance_sentence(result: FillResult, cites: list[str], by_default: bool) -> str:
    used = result.plan
    columns = list(used.similarity_columns or ())
    categories = [c for c in columns if not pd.api.types.is_numeric_dtype(result.frame[c])]
    weights = {c: float(used.weights.get(c, 1.0)) for c in columns}
    if all(w == 1.0 for w in weights.values()):
        weighted = "all weighted equally"
    else:
        weighted = "with weights " + ", ".join(f"{c} {number_text(w)}" for c, w in weights.items())
    text = (
        "Similarity between rows was measured by Dixon's missing-aware Euclidean distance (Dixon 1979), "
        f"which rescales the sum over the columns both rows hold to all columns, over {len(columns)} "
        f"similarity columns ({', '.join(columns)}{_DEFAULT_SIMILARITY if by_default else ''}), "
        f"{weighted}; number columns were "
        f"{_SCALING.get(used.scaling, used.scaling)}."
    )
    if categories:
        cites.append("gower")
        text += (
            f" Category columns ({', '.join(categories)}) counted their weight when two rows differ "
            "and nothing when they match (Gower 1971)."
        )
    if used.group_column:
        text += f" Donors were taken only from rows of the same {used.group_column}."
    return text


def _donor_sentence(rule: str, weighting: str, k: int, categories: bool) -> str:
    combine = _RULE.get(rule, rule)
    if weighting == "inverse_distance":
        combine = "the inverse-distance-weighted mean"
    text = f"Each gap in a number column was given {combine} of the values of its k = {k} nearest donors"
    text += ", rows holding a value in that column"
    if categories:
        text += "; a gap in a category column the most frequent class among them"
    return text + "."


def _has_categories(result: FillResult) -> bool:
    fills = list(result.plan.fill_columns or ())
    return any(not pd.api.types.is_numeric_dtype(result.frame[c]) for c in fills)


def _k_sentence(k: int, report: Any, cites: list[str]) -> str:
    if report is None:
        return f"k = {k} was set by the user."
    settings: Mapping[str, Any] = getattr(report, "settings", {}) or {}
    ks = [int(v) for v in getattr(report, "ks", settings.get("ks", ())) or ()]
    text = (
        "k was chosen by a recovery test: a share of "
        f"{number_text(settings.get('hide_fraction', math.nan))} of the known cells of each fill column "
        f"was hidden ({settings.get('masking', 'random')} masking, {settings.get('repeats', '?')} repeats), "
        f"filled for every k in {_k_range(ks)}, and scored by the normalised root mean squared error "
        "(error rate for categories) against the hidden values."
    )
    best, one_se = int(report.best_k), int(report.best_k_1se)
    text += f" The lowest mean error was at k = {best}"
    overall = getattr(report, "overall", None)
    if isinstance(overall, pd.DataFrame) and best in overall.index and "score" in overall:
        text += f" (score {number_text(_cell(overall, best, 'score'))})"
    text += f"; the largest k within one standard error of it was {one_se}."
    baseline = getattr(report, "baseline", None)
    if isinstance(baseline, pd.DataFrame) and "overall" in baseline.index and "score" in baseline:
        score = _cell(baseline, "overall", "score")
        if math.isfinite(score):
            text += f" Filling with the column average scored {number_text(score)}."
    if k == one_se:
        cites.append("esl")
        text += f" k = {k} was used, by the one-standard-error rule (Hastie et al. 2009, sec. 7.10)."
    elif k == best:
        text += f" k = {k}, the k with the lowest error, was used."
    else:
        text += f" k = {k} was used, set by the user after the test."
    return text


def _cell(table: pd.DataFrame, row: Any, column: str) -> float:
    """One number of a table by row label and column (NaN when it is not a number)."""
    values = pd.to_numeric(table[column], errors="coerce").to_numpy(dtype=float)
    return float(values[table.index.get_loc(row)])


def _k_range(ks: Sequence[int]) -> str:
    if not ks:
        return "the tested range"
    if list(ks) == list(range(ks[0], ks[-1] + 1)) and len(ks) > 2:
        return f"{ks[0]}-{ks[-1]}"
    return ", ".join(str(k) for k in ks)


def _censored_sentences(log: pd.DataFrame, cites: list[str]) -> list[str]:
    if not len(log):
        return []
    censored = log[log["original_state"].astype(str) == "censored"]
    if censored.empty:
        return []
    keys = [censored["method"].astype(str), censored["column"].astype(str)]
    ways = censored.groupby(keys, sort=False).size()
    pieces = []
    for method in dict.fromkeys(ways.index.get_level_values(0)):
        columns = ways.loc[method]
        where = _listing([f"{c} ({int(n)})" for c, n in columns.items()])
        pieces.append(f"{_CENSORED_WAYS.get(method, method)} in {where}")
        if method == "limit_sqrt2":
            cites.append("hornung")
        elif method == "ros":
            cites.append("helsel")
    return [
        "Entries below a reporting limit were not treated as gaps: they were stood in by "
        f"{'; by '.join(pieces)}, and stay marked as censored in the export."
    ]


def _interval_sentences(result: FillResult, cites: list[str]) -> list[str]:
    """The interval level, the cells it was calibrated on and its measured coverage, when present."""
    level = getattr(result.plan, "interval_level", None)
    if level is None:
        return []
    percent = number_text(100 * float(level))
    text = f"Each filled number carries a prediction interval at the {percent} % level"
    calibration = getattr(result, "calibration", None)
    if calibration is not None and calibration.n_hidden:
        where = " hidden by the recovery test" if calibration.from_test else ""
        text += (
            f", calibrated by split conformal prediction (Lei et al. 2018) on {calibration.n_hidden} "
            f"known cells{where}"
        )
        cites.append("lei")
    coverage = getattr(result, "coverage", None)
    if isinstance(coverage, pd.DataFrame) and {"level", "observed"} <= set(coverage.columns):
        rows = coverage[np.isclose(coverage["level"].astype(float), float(level))]
        if "column" in rows.columns and (rows["column"] == ALL_COLUMNS).any():
            rows = rows[rows["column"] == ALL_COLUMNS]
        if len(rows):
            observed = float(rows["observed"].iloc[0])
            text += f"; {number_text(100 * observed)} % of "
            if "n_cells" in rows.columns:
                text += f"{int(rows['n_cells'].iloc[0])} "
            text += "hidden known cells fell inside an interval calibrated on the other hidden cells"
    return [text + "."]


def _rounding_sentence(result: FillResult) -> str:
    """How filled numbers were rounded, when any was ('' when none was)."""
    rounded = dict(getattr(result, "decimals", None) or {})
    if not rounded:
        return ""
    if getattr(result.plan, "rounding", "") == "measured":
        text = (
            "Filled numbers were rounded to the precision measured in their column (the most "
            "decimals among its measured values), interval bounds outward to the same decimals."
        )
    else:
        text = "Filled numbers were rounded to the decimals the plan names for their column."
    if _rounded_stand_ins(result.log, rounded):
        text += f" Values standing for below-limit entries were {STAND_IN_ROUNDING}."
    return text


def _rounded_stand_ins(log: pd.DataFrame, rounded: Mapping[str, int]) -> bool:
    """Whether the log holds a below-limit entry's stand-in in a rounded column."""
    if not len(log) or "original_state" not in log.columns:
        return False
    cells = log[log["original_state"].astype(str) == "censored"]
    stand_in = cells["method"].astype(str).isin(list(SUBSTITUTION_PHRASES))
    if "original_text" in cells.columns:  # an above-range entry stands for its limit, unrounded
        stand_in &= ~cells["original_text"].astype(str).str.lstrip().str.startswith(">")
    return bool((stand_in & cells["column"].astype(str).isin(list(rounded))).any())


def _listing(items: Sequence[str]) -> str:
    if len(items) <= 1:
        return "".join(items)
    return ", ".join(items[:-1]) + " and " + items[-1]
