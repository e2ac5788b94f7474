"""Check k against the sheet before a fill: a k larger than the donors available.

A gap can take values only from rows that hold a value in its column (and, with a group
column, share its group). When the plan's k exceeds the most donors any gap can have,
the fill averages every donor there is; the app and the command line say so before the
fill, with the k that is in effect.
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass

import pandas as pd

from imputer_app import engine
from imputer_app.engine import SheetLike
from imputer_app.errors import KinfillError
from imputer_app.plan import FillPlan


def _frame(data: pd.DataFrame | SheetLike) -> pd.DataFrame:
    return data if isinstance(data, pd.DataFrame) else data.frame


def fill_columns(data: pd.DataFrame | SheetLike, plan: FillPlan) -> list[str]:
    """Return the plan's fill columns, resolved as the engine does when the plan names none.

    Unset fill columns are the similarity columns with gaps; a sheet without gaps gives
    every similarity column (what a recovery test scores).
    """
    frame = _frame(data)
    if plan.fill_columns is not None:
        return [c for c in plan.fill_columns if c in frame.columns]
    if plan.similarity_columns is not None:
        similar = [c for c in plan.similarity_columns if c in frame.columns]
    else:
        try:
            roles = engine.default_roles(data)
        except KinfillError:
            return [str(c) for c in frame.columns]
        excluded = {*plan.carried_columns, plan.group_column}
        similar = [c for c, role in roles.items() if role in ("similarity", "fill") and c not in excluded]
    known = known_counts(frame)
    with_gaps = [c for c in similar if int(known[c]) < len(frame)]
    return with_gaps or similar


def most_donors(data: pd.DataFrame | SheetLike, plan: FillPlan) -> int:
    """The most donors a gap can have: known cells of the best-filled fill column.

    With a group column, counted inside the largest group (donors never cross groups).
    """
    frame = _frame(data)
    columns = fill_columns(data, plan)
    if not columns:
        return 0
    group = plan.group_column
    if group is not None and group in frame.columns:
        known = frame[columns].notna()
        return int(known.groupby(frame[group].to_numpy(), dropna=False).sum().to_numpy().max(initial=0))
    return int(known_counts(frame)[columns].max())


#: The last frame counted and its known cells per column: asked before every fill and
#: on every change of plan, and counting a million rows each time would hold up the
#: app's window (its reading worker counts a sheet's frame first).
_counted: tuple[weakref.ref[pd.DataFrame], pd.Series] | None = None


def known_counts(frame: pd.DataFrame) -> pd.Series:
    """Known (not blank) cells of every column of ``frame``: ``frame.notna().sum()``.

    The counts of the last frame asked are kept while it lives (a frame is never
    changed in place once read), so that asking again costs nothing.

    Examples
    --------
    >>> import pandas as pd
    >>> known_counts(pd.DataFrame({"a": [1.0, None], "b": [1.0, 2.0]})).to_dict()
    {'a': 1, 'b': 2}
    """
    global _counted
    counted = _counted  # one read: another thread may count another frame meanwhile
    if counted is not None and counted[0]() is frame:
        return counted[1]
    counts = frame.notna().sum()
    _counted = (weakref.ref(frame), counts)
    return counts


@dataclass(frozen=True)
class KCheck:
    """The outcome of :func:`check_k`.

    Attributes
    ----------
    asked : int
        The plan's k.
    used : int
        The k in effect: at most the donors available (``asked`` when that many exist).
    """

    asked: int
    used: int

    @property
    def too_large(self) -> bool:
        """True when the plan asks for more donors than any gap can have."""
        return self.used < self.asked

    def message(self) -> str:
        """One line for the user ('' when k is fine)."""
        if not self.too_large:
            return ""
        return (
            f"k = {self.asked} is more than the {self.used} donors any gap can have; "
            f"the fill averages all of them, so k = {self.used} is in effect "
            "(run the recovery test to choose k)."
        )


def check_k(data: pd.DataFrame | SheetLike, plan: FillPlan) -> KCheck:
    """Compare the plan's k with the donors the sheet offers.

    Examples
    --------
    >>> import pandas as pd
    >>> frame = pd.DataFrame({"a": [1.0, 2.0, None], "b": [1.0, 2.0, 3.0]})
    >>> check_k(frame, FillPlan(k=5)).message().split(";")[0]
    'k = 5 is more than the 2 donors any gap can have'
    """
    donors = most_donors(data, plan)
    return KCheck(asked=plan.k, used=max(1, min(plan.k, donors)))
