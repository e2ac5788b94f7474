"""Qt-free: what the donor panel says about one cell of a fill preview.

:func:`describe_cell` turns a :class:`~imputer_app.engine.FillResult` row of the fill log
(or of ``unfilled``) into plain words and a list of donors, nearest first. The widget
in :mod:`imputer_app.gui.donor_panel` only lays these out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import pandas as pd

from imputer_app.engine import FAR, WIDE_RANGE
from imputer_app.gui.formatting import format_label, format_value
from imputer_app.words import STATE_WORDS, SUBSTITUTION_PHRASES

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.plan import FillPlan

#: How a substituted cell's method is told: "replaced by " + the shared phrase.
SUBSTITUTED = {method: f"replaced by {phrase}" for method, phrase in SUBSTITUTION_PHRASES.items()}


@dataclass(frozen=True)
class Donor:
    """One donor row of a filled cell.

    Attributes
    ----------
    label : object
        The donor's row label (file row number for a read sheet).
    distance : float
        Its distance to the filled row (after scaling and weights).
    value : object
        Its value in the filled column.
    sample_id : str
        The donor's name in the sheet's identifier column ("" when there is none).
    """

    label: Any
    distance: float
    value: Any
    sample_id: str = ""


@dataclass(frozen=True)
class CellStory:
    """Everything the donor panel shows for one cell.

    Attributes
    ----------
    status : {"filled", "substituted", "unfilled", "measured", "none"}
        What happened to the cell.
    headline : str
        One sentence, e.g. ``"Row 14, nitrate: filled with 2.31"``.
    facts : list of (str, str)
        Label and text pairs (value, method, k, spread, support, note, original entry).
    support : str
        ``"ok"``, ``"weak"`` or ``""``.
    support_text : str
        Plain-words account of the support; for weak support, why it is weak.
    donors : tuple of Donor
        Nearest first; empty for substitutions and unfilled cells.
    """

    status: str
    headline: str
    facts: list[tuple[str, str]] = field(default_factory=list)
    support: str = ""
    support_text: str = ""
    donors: tuple[Donor, ...] = ()


def _matches(frame: pd.DataFrame | None, row_label: Any, column: str) -> pd.DataFrame:
    """Rows of a log-like frame (``row``, ``column``) that belong to one cell."""
    if frame is None or len(frame) == 0:
        return pd.DataFrame()
    mask = (frame["column"] == column) & (frame["row"] == row_label)
    return frame[mask.to_numpy(dtype=bool)]


def _is_number_column(result: FillResult, column: str) -> bool:
    frame = getattr(result, "frame", None)
    if frame is None or column not in frame.columns:
        return True
    return bool(pd.api.types.is_numeric_dtype(frame[column]))


def method_words(method: str, plan: FillPlan | None, numeric: bool) -> str:
    """Return how a value was made, in plain words.

    Parameters
    ----------
    method : str
        The fill log's ``method`` (``knn``, ``column_mean``, ``limit``, ...).
    plan : FillPlan or None
        The resolved plan of the fill (for the numeric rule and weighting).
    numeric : bool
        True for a number column, False for a category column.
    """
    if method in ("knn", "knn_capped"):
        if not numeric:
            words = "majority vote of the nearest donors (a tie goes to the nearest donor's class)"
        elif getattr(plan, "neighbour_weighting", "uniform") == "inverse_distance":
            words = "distance-weighted mean of the nearest donors (nearer donors count more)"
        elif getattr(plan, "numeric_rule", "mean") == "median":
            words = "median of the nearest donors' values"
        else:
            words = "mean of the nearest donors' values"
        return words + (", capped at the entry's limit" if method == "knn_capped" else "")
    if method == "column_mean":
        if numeric:
            return "column average (no donor was available)"
        return "column's most common value (no donor was available)"
    if method in SUBSTITUTED:
        return SUBSTITUTED[method]
    return method or "–"


def _spread_words(spread: Any, numeric: bool) -> str:
    text = format_value(spread, 3)
    if text == "–":
        return "– (not applicable)"
    if numeric:
        return f"{text} (standard deviation of the donors' values)"
    return f"{float(spread):.0%} of the donors chose this value"


def support_words(
    support: str,
    nearest: float,
    threshold: float,
    width_share: float | None = None,
    far_share: float = math.nan,
) -> str:
    """Explain the support flag of a filled cell in plain words.

    Parameters
    ----------
    support : {"ok", "weak", ""}
        The fill log's flag.
    nearest : float
        Distance to the nearest donor (NaN when there is none).
    threshold : float
        ``FillResult.k_weak_threshold``: the 95th percentile of the nearest-donor
        distances of the cells filled in this sheet.
    width_share : float or None
        The cell's interval width as a share of its column's 5-95 % range, when it has
        an interval; support is then judged by the rule in README.md ("How the numbers
        are made") instead of the distance to the sheet's threshold.
    far_share : float, default=NaN
        The nearest donor's distance as a multiple of the column's typical one (the
        median over the hidden cells of the interval calibration).
    """
    if width_share is not None and math.isfinite(width_share) and support in ("weak", "ok"):
        return _interval_support_words(support, width_share, far_share)
    near = format_value(nearest, 3)
    limit = format_value(threshold, 3)
    if support == "weak":
        return (
            f"Weak support: the nearest donor is at distance {near}, farther than for 95% of "
            f"the cells filled in this sheet (threshold {limit}). No row is much like this "
            "one, so treat the value with extra care."
        )
    if support == "ok":
        return (
            f"Ordinary support: the nearest donor is at distance {near}, under the threshold "
            f"{limit} that only 5% of the cells filled in this sheet exceed."
        )
    return "Not applicable: this value was not taken from donors."


def _interval_support_words(support: str, width_share: float, far_share: float) -> str:
    wide = f"{width_share:.1f} times the width of the column's 5-95 % range"
    far = (
        f"; the nearest donor is {far_share:.1f} times as far as is typical for this column"
        if math.isfinite(far_share)
        else ""
    )
    if support == "weak":
        return (
            f"Weak support: the interval is {wide} (weak above {WIDE_RANGE:g}){far} (weak above "
            f"{FAR:g}), or the donors share few similarity columns with this row. Treat the "
            "value with extra care."
        )
    return (
        f"Ordinary support: the interval is {wide} (at most {WIDE_RANGE:g}){far} (at most "
        f"{FAR:g}), and the donors share most similarity columns with this row."
    )


def _interval(
    result: FillResult, entry: pd.Series, column: str, nearest: float
) -> tuple[str, float | None, float]:
    """The interval fact, its width against the range and the donor's distance against the typical.

    The width is a share of the column's 5-95 % range and the nearest donor's distance a
    multiple of the column's typical one: the weak-support yardsticks (README "How the
    numbers are made").
    """
    lower, upper = entry.get("lower", math.nan), entry.get("upper", math.nan)
    calibration = getattr(result, "calibration", None)
    if calibration is None or pd.isna(lower) or pd.isna(upper):
        return "", None, math.nan
    rule = calibration.columns.get(column)
    span = rule.column_range if rule is not None else math.nan
    width = (float(upper) - float(lower)) / span if math.isfinite(span) and span > 0 else math.nan
    typical = rule.typical_distance if rule is not None else math.nan
    far = nearest / typical if math.isfinite(typical) and typical > 0 else math.nan
    text = f"{format_value(lower)} to {format_value(upper)} ({calibration.level:.0%} interval)"
    return text, width, far


def _censored_entry(notes: pd.DataFrame | None, row_label: Any, column: str) -> str:
    """The original text of a censored cell, from a sheet's ``cell_notes``."""
    if notes is None or len(notes) == 0:
        return ""
    found = _matches(notes, row_label, column)
    if len(found) == 0:
        return ""
    entry = found.iloc[0]
    text = str(entry.get("text", ""))
    limit = entry.get("limit", math.nan)
    if limit is not None and not pd.isna(limit):
        text += f" (limit {format_value(limit)})"
    return text


def _donors(entry: pd.Series, ids: pd.Series | None = None) -> tuple[Donor, ...]:
    labels = tuple(entry.get("donors", ()) or ())
    distances = tuple(entry.get("distances", ()) or ())
    values = tuple(entry.get("donor_values", ()) or ())
    return tuple(
        Donor(label, float(distance), value, _id_of(ids, label))
        for label, distance, value in zip(labels, distances, values, strict=False)
    )


def sample_ids(result: FillResult) -> pd.Series | None:
    """The sheet's names of its rows, or None when there is none.

    The names are the plan's ``id_column``, else the first carried text column with a
    different value in every row.
    """
    frame, plan = result.frame, getattr(result, "plan", None)
    named = getattr(plan, "id_column", None)
    candidates = [named] if named else list(getattr(plan, "carried_columns", ()) or ())
    for name in candidates:
        if name in frame.columns:
            values = frame[name]
            present = values.dropna()
            texts = present.map(lambda v: isinstance(v, str)).all()
            if named or (len(present) == len(values) and texts and present.is_unique):
                return values
    return None


def _id_of(ids: pd.Series | None, label: Any) -> str:
    if ids is None or label not in ids.index:
        return ""
    value = ids.loc[label]
    return "" if pd.isna(value) else str(value)


def _filled_story(result: FillResult, entry: pd.Series, where: str, notes: pd.DataFrame | None) -> CellStory:
    column = str(entry["column"])
    numeric = _is_number_column(result, column)
    method = str(entry.get("method", ""))
    value = format_value(entry.get("value"))
    ids = sample_ids(result)
    donors = _donors(entry, ids)
    state = str(entry.get("original_state", "missing"))
    facts = [("Value", value), ("Method", method_words(method, getattr(result, "plan", None), numeric))]
    if _id_of(ids, entry["row"]):
        facts.insert(0, ("Sample", _id_of(ids, entry["row"])))
    if state == "censored":
        original = _censored_entry(notes, entry["row"], column) or "a censored entry (text not shown here)"
        facts.append(("Original entry", original))
    else:
        facts.append(("Before", STATE_WORDS.get(state, state)))
        if state == "formula_error":  # the error text the formula gave (#DIV/0!), from the sheet's notes
            facts.append(("Original entry", _censored_entry(notes, entry["row"], column) or "–"))
    if method in SUBSTITUTED:
        note = str(entry.get("note", "") or "")
        if note:
            facts.append(("Note", note))
        facts.append(("Flag", "stays marked as censored in every view and export"))
        return CellStory("substituted", f"{where}: {value} ({SUBSTITUTED[method]})", facts)
    k_used = entry.get("k")
    asked = getattr(getattr(result, "plan", None), "k", None)
    k_text = format_value(k_used)
    if asked is not None and k_used is not None and k_text != "–" and float(k_used) != float(asked):
        k_text += f" (the plan asks for {asked})"
    facts.append(("Donors used (k)", k_text))
    facts.append(("Spread", _spread_words(entry.get("spread"), numeric)))
    support = str(entry.get("support", "") or "")
    nearest = donors[0].distance if donors else math.nan
    interval, width, far = _interval(result, entry, column, nearest)
    threshold = getattr(result, "k_weak_threshold", math.nan)
    support_text = support_words(support, nearest, threshold, width, far)
    if interval:
        facts.insert(1, ("Interval", interval))
    facts.append(("Support", "weak" if support == "weak" else ("ok" if support == "ok" else "–")))
    note = str(entry.get("note", "") or "")
    if note:
        facts.append(("Note", note))
    if state == "censored":
        facts.append(("Flag", "stays marked as censored in every view and export"))
    headline = f"{where}: filled with {value}" + (f", {interval}" if interval else "")
    return CellStory("filled", headline, facts, support, support_text, donors)


def describe_cell(
    result: FillResult, row_label: Any, column: str, notes: pd.DataFrame | None = None
) -> CellStory:
    """Describe one cell of a fill preview in plain words.

    Parameters
    ----------
    result : FillResult or None
        The fill (its ``log``, ``unfilled``, ``frame``, ``plan``, ``k_weak_threshold``).
    row_label : object
        The cell's row label (as in ``result.frame.index``).
    column : str
        The cell's column name.
    notes : DataFrame, optional
        A sheet's ``cell_notes`` (columns ``row``, ``column``, ``text``, ``limit``...);
        gives a censored cell's original text.

    Returns
    -------
    CellStory
        ``status`` is ``"none"`` without a result, ``"filled"`` or ``"substituted"``
        when the fill log has the cell, ``"unfilled"`` when it stayed empty (with the
        reason), else ``"measured"``.
    """
    where = f"Row {format_label(row_label)}, {column}"
    if result is None:
        return CellStory("none", "No fill preview yet.")
    logged = _matches(result.log, row_label, column)
    if len(logged):
        return _filled_story(result, logged.iloc[0], where, notes)
    left = _matches(getattr(result, "unfilled", None), row_label, column)
    if len(left):
        reason = str(left.iloc[0].get("reason", "") or "no reason recorded")
        return CellStory("unfilled", f"{where}: not filled", [("Reason", reason)])
    frame = result.frame
    if column in frame.columns and row_label in frame.index and bool(pd.isna(frame.loc[row_label, column])):
        return CellStory("unfilled", f"{where}: not filled", [("Reason", "not a fill column in this plan")])
    return CellStory("measured", f"{where}: a value from the sheet; nothing was filled here.")
