"""Qt-free: the status-bar sentences that say what the window shows right now.

Every message is made from the session's present state (sheet, preview, applied fill,
export), so that after Undo, Redo, Apply or a dropped preview the status bar never
describes a state that is gone.
"""

from __future__ import annotations

import contextlib
import weakref
from typing import TYPE_CHECKING

from imputer_app.errors import KinfillError
from imputer_app.plan import FillPlan

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.gui.state import Session


#: The last fill counted and its count: the status line is written on every change of
#: the session, and counting a million rows' cells each time would hold up the window.
_counted: tuple[weakref.ref[FillResult], int] | None = None


def _count(result: FillResult) -> int:
    global _counted
    counted = _counted
    if counted is not None and counted[0]() is result:
        return counted[1]
    count = int(result.filled.to_numpy().sum())
    with contextlib.suppress(TypeError):  # a stand-in without weak references: counted each time
        _counted = (weakref.ref(result), count)
    return count


def layer_note(session: Session) -> str:
    """The line above the table when a preview is drawn over an applied fill ('' otherwise)."""
    preview, applied = session.preview, session.applied
    if preview is None or applied is None:
        return ""
    return (
        f"The table shows a preview at k = {preview.plan.k} over the fill applied at k = {applied.plan.k}. "
        "Apply (Ctrl+Return) makes the preview the applied fill; Export asks which one to write."
    )


def state_line(session: Session) -> str:
    """One status-bar sentence describing what the table shows now.

    Examples
    --------
    >>> from imputer_app.gui.state import Session
    >>> state_line(Session())
    'No sheet open: File > Open, drop a file here, or pick a recent file.'
    """
    if session.sheet is None:
        return "No sheet open: File > Open, drop a file here, or pick a recent file."
    preview, applied = session.preview, session.applied
    if preview is not None and applied is not None:
        return (
            f"Preview at k = {preview.plan.k}: {_count(preview):,} values proposed over the fill applied "
            f"at k = {applied.plan.k}. Ctrl+Return applies the preview; Export asks which to write."
        )
    if preview is not None:
        return (
            f"Preview at k = {preview.plan.k}: {_count(preview):,} values proposed, nothing changed yet. "
            "Select one to see its donors; Ctrl+Return applies."
        )
    if applied is not None:
        text = f"Fill at k = {applied.plan.k} applied: {_count(applied):,} values filled"
        text += " (estimates, not measurements)."
        if session.dirty:
            return text + " Export (Ctrl+E) writes them marked, with the fill log."
        return text + " Exported."
    text = "The sheet as read: nothing filled."
    if session.can_redo:
        text += " Redo (Ctrl+Shift+Z) applies the fill taken back again."
    return text + " Preview a fill (F5) to see proposed values."


def fill_remarks(session: Session, reading: str) -> str:
    """The remarks line under the table: the reading remarks, then those of the fill shown now.

    ``reading`` is the remarks on reading the sheet ('' for none). Remarks of a preview
    that was dropped, or of a fill taken back, are not repeated.
    """
    shown = session.preview if session.preview is not None else session.applied
    parts = [reading] if reading else []
    if shown is not None and shown.warnings:
        which = "the preview" if shown is session.preview else "the applied fill"
        parts.append(f"Remarks on {which}: " + "; ".join(shown.warnings[:3]))
    return "\n".join(parts)


def plan_source(plan: FillPlan, last: FillPlan | None, columns: list[str]) -> tuple[str, FillPlan | None]:
    """Say where the sheet's settings come from, and which plan to offer instead (or None).

    ``last`` is the plan of the file's last fill; it is offered only when it fits the
    sheet's ``columns``. Column roles are written by the setup for every sheet, so only
    the settings a user chooses are compared.

    Examples
    --------
    >>> plan_source(FillPlan(), None, ["a"])
    ("Settings: Kinfill's defaults (k = 5).", None)
    """
    if last is not None:
        try:
            last.check_columns(columns)
        except KinfillError:
            last = None  # made for other columns: nothing to offer
    defaults = FillPlan()
    same = last is not None and _chosen(plan) == _chosen(last)
    if same and last is not None:
        return f"Settings: the plan of this file's last fill (k = {last.k}).", None
    if _chosen(plan) == _chosen(defaults):
        return f"Settings: Kinfill's defaults (k = {plan.k}).", last
    return f"Settings: chosen for this sheet (k = {plan.k}).", last


def _chosen(plan: FillPlan) -> dict[str, object]:
    """A plan's settings without the roles the setup fills in for every sheet."""
    data = plan.to_dict()
    for key in ("similarity_columns", "fill_columns", "carried_columns"):
        data.pop(key, None)
    return data
