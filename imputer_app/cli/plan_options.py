"""How the command line arrives at a plan: plan file or export, then options on top.

Reading the plan out of an earlier export (``--plan-from``) belongs beside the export's
writer: :func:`imputer_app.sheets.read_export_plan`.
"""

from __future__ import annotations

import difflib
from collections.abc import Sequence
from typing import Any

from imputer_app.errors import PlanError
from imputer_app.plan import FillPlan
from imputer_app.plan_text import LISTED_NAMES, shown_value


def build_plan(
    base: FillPlan,
    *,
    k: int | None = None,
    similarity: Sequence[str] | None = None,
    fill: Sequence[str] | None = None,
    carry: Sequence[str] | None = None,
    weights: Sequence[tuple[str, float]] = (),
    scaling: str | None = None,
    rounding: str | None = None,
    group: str | None = None,
    markers: Sequence[tuple[str, str]] = (),
) -> FillPlan:
    """Return ``base`` with the command line's options applied (validated again).

    Columns named on the command line win over the plan: a column given to
    ``similarity`` or ``fill`` leaves the plan's carried columns, and one given to
    ``carry`` leaves its similarity and fill columns. ``None`` leaves a setting as is.

    Raises
    ------
    PlanError
        A setting is invalid (k < 1, negative weight, a column both carried and filled).
    """
    changes: dict[str, Any] = {}
    if k is not None:
        changes["k"] = k
    if scaling is not None:
        changes["scaling"] = scaling
    if rounding is not None:
        changes["rounding"] = rounding
    if group is not None:
        changes["group_column"] = group
    if weights:
        changes["weights"] = {**base.weights, **dict(weights)}
    if markers:
        changes["markers"] = {**base.markers, **dict(markers)}
    wanted = {*(similarity or ()), *(fill or ())}
    if carry is not None:
        changes["carried_columns"] = tuple(carry)
    elif wanted:
        changes["carried_columns"] = tuple(c for c in base.carried_columns if c not in wanted)
    for key, given in (("similarity_columns", similarity), ("fill_columns", fill)):
        current = getattr(base, key)
        if given is not None:
            changes[key] = tuple(given)
        elif carry is not None and current is not None:
            changes[key] = tuple(c for c in current if c not in carry)
    return base.replace(**changes) if changes else base


def spell_out_roles(resolved: FillPlan, columns: Sequence[str]) -> FillPlan:
    """Return a resolved plan that also names every other column as carried.

    Parameters
    ----------
    resolved : FillPlan
        A plan whose similarity and fill columns are resolved (``FillResult.plan`` or
        ``prepare(...).plan``).
    columns : sequence of str
        The sheet's columns, in order; those with no role become carried columns.
    """
    used = {*(resolved.similarity_columns or ()), *(resolved.fill_columns or ()), resolved.group_column}
    carried = [c for c in columns if c not in used]
    return resolved.replace(carried_columns=tuple(dict.fromkeys((*resolved.carried_columns, *carried))))


def check_plan_columns(plan: FillPlan, sheet_name: str, columns: Sequence[str]) -> None:
    """Raise :class:`PlanError` naming the plan's columns the sheet lacks, with close matches.

    Examples
    --------
    >>> plan = FillPlan(similarity_columns=("nitrat",))
    >>> check_plan_columns(plan, "a.csv", ["Nitrate"])  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    imputer_app.errors.PlanError: a.csv has no column 'nitrat' (did you mean 'Nitrate'?); ...
    """
    present = list(columns)
    known = set(present)
    missing = [n for n in dict.fromkeys(plan.named_columns()) if n not in known]
    if not missing:
        return
    lowered = {c.lower(): c for c in present}
    parts = []
    # Close matches for the names shown only: difflib is slow over thousands of names.
    for name in missing[:LISTED_NAMES]:
        guess = difflib.get_close_matches(name.lower(), list(lowered), n=1, cutoff=0.6)
        parts.append(
            f"{shown_value(name)} (did you mean {shown_value(lowered[guess[0]])}?)"
            if guess
            else shown_value(name)
        )
    rest = len(missing) - len(parts)
    listed = ", ".join(parts) + (f" and {rest:,} more" if rest > 0 else "")
    shown = ", ".join(present[:30]) + (f" and {len(present) - 30:,} more" if len(present) > 30 else "")
    raise PlanError(f"{sheet_name} has no column {listed}; its columns are {shown}")
