"""The app's session state, free of Qt so that it can be tested without a screen.

A :class:`Session` holds what the user is working on: the sheet as read, the current
plan, the latest recovery report, a preview fill (computed, not yet applied) and the
history of applied fills with undo and redo.

Every fill starts from the sheet as read, so filled values never act as donors for a
later fill; applying a new fill replaces the one applied before (and Undo brings the
earlier one back). The working table is therefore the sheet as read with the current
applied fill's values written in.

Widgets observe the session through :meth:`Session.subscribe`; they change it only
through its methods, and redraw from it when told. The session is the only holder of
the plan: a panel that changes a setting calls :meth:`Session.set_plan` (or
:meth:`Session.set_k`), and every view, the panel included, redraws on the ``"plan"``
event.

Previews are computed by :meth:`Session.preview_job` through the sheet's
:class:`~imputer_app.engine.NeighbourCache`: once a preview is on screen, a change of a
combining setting only (k, neighbour weighting, numeric rule, bounds, decimals,
censored rule, no-donor rule, interval level) drops it but sets
:attr:`Session.wants_preview`, and the new preview re-combines the kept neighbour
lists instead of searching again.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

from imputer_app.plan import FillPlan

if TYPE_CHECKING:
    import pandas as pd

    from imputer_app.engine import FillResult, NeighbourCache
    from imputer_app.sheets import Sheet
    from imputer_app.validation import RecoveryReport
    from imputer_app.work import CancelFlag, Progress

#: A preview's work, run off the GUI thread: ``job(progress, cancel) -> FillResult``.
PreviewJob = Callable[["Progress | None", "CancelFlag | None"], "FillResult"]

#: Names of the changes a listener is told about.
EVENTS = ("sheet", "plan", "report", "preview", "applied", "saved")

Listener = Callable[[str], None]


class SessionError(RuntimeError):
    """A session method was called when it does not apply (a programming error)."""


class Session:
    """What the user is working on, with undo and redo of applied fills.

    Examples
    --------
    >>> s = Session()
    >>> s.has_sheet, s.can_undo, s.dirty
    (False, False, False)
    """

    def __init__(self) -> None:
        self.sheet: Sheet | None = None
        self.path: Path | None = None
        self.plan: FillPlan = FillPlan()
        #: Why the settings being edited do not make a plan yet (None: ``plan`` is what they say).
        self.plan_problem: str | None = None
        self.report: RecoveryReport | None = None
        self.preview: FillResult | None = None
        #: The plan of the last preview while the preview follows the combining settings
        #: (None: a change of plan only drops the preview).
        self.following: FillPlan | None = None
        self._neighbours: NeighbourCache | None = None  # the open sheet's kept neighbour lists
        # history[:position] are the applied fills; history[position:] can be redone.
        self._history: list[FillResult] = []
        self._position = 0
        self._exported: FillResult | None = None
        self._listeners: list[Listener] = []

    # ---------------------------------------------------------------- observers
    def subscribe(self, listener: Listener) -> None:
        """Call ``listener(event)`` after every change; ``event`` is one of :data:`EVENTS`."""
        self._listeners.append(listener)

    def _emit(self, event: str) -> None:
        for listener in list(self._listeners):
            listener(event)

    # ------------------------------------------------------------------ queries
    @property
    def has_sheet(self) -> bool:
        """True once a sheet has been loaded."""
        return self.sheet is not None

    @property
    def applied(self) -> FillResult | None:
        """The fill currently applied to the working table (None: the sheet as read)."""
        return self._history[self._position - 1] if self._position else None

    @property
    def working(self) -> pd.DataFrame:
        """The working table: the sheet as read with the applied fill written in."""
        if self.sheet is None:
            raise SessionError("no sheet is loaded")
        applied = self.applied
        return applied.frame if applied is not None else self.sheet.frame

    @property
    def wants_preview(self) -> bool:
        """True when the preview was dropped by a change of combining settings and should follow.

        The app then computes a new preview at once (:meth:`preview_job`); it re-combines
        the last search's neighbour lists, so it is quick.
        """
        return self.following is not None and self.preview is None and self.plan_problem is None

    @property
    def can_undo(self) -> bool:
        """True when an applied fill can be taken back."""
        return self._position > 0

    @property
    def can_redo(self) -> bool:
        """True when a taken-back fill can be applied again."""
        return self._position < len(self._history)

    @property
    def can_apply(self) -> bool:
        """True when a preview waits to be applied."""
        return self.preview is not None

    @property
    def dirty(self) -> bool:
        """True when an applied fill has not been exported yet (closing would lose it)."""
        applied = self.applied
        return applied is not None and applied is not self._exported

    # ------------------------------------------------------------------ changes
    def load(self, sheet: Sheet, path: str | Path | None = None, plan: FillPlan | None = None) -> None:
        """Start a new session on ``sheet``; forgets preview, report and history.

        Parameters
        ----------
        sheet : Sheet
            The sheet as read.
        path : str or Path, optional
            Where it came from (defaults to ``sheet.source.path``).
        plan : FillPlan, optional
            The plan to start with (default: Kinfill's defaults; settings chosen for
            another sheet never carry over).
        """
        self.sheet = sheet
        self.path = Path(path) if path is not None else Path(sheet.source.path)
        self.plan = plan if plan is not None else FillPlan()
        self.plan_problem = None
        self.report = None
        self.preview = None
        self.following = None
        self._neighbours = None
        self._history.clear()
        self._position = 0
        self._exported = None
        self._emit("sheet")

    def set_plan(self, plan: FillPlan) -> None:
        """Use ``plan`` from now on; a preview made with another plan is dropped.

        When only combining settings changed since the last preview, the preview follows
        (:attr:`wants_preview`); any other change stops it following.
        """
        if plan == self.plan:
            return
        from imputer_app.engine import only_combining_changed

        if self.following is not None and not only_combining_changed(self.following, plan):
            self.following = None
        self.plan = plan
        if self.preview is not None:
            self.preview = None
            self._emit("preview")
        self._emit("plan")

    def set_k(self, k: int) -> None:
        """Use the current plan with ``k`` donors per cell (e.g. the recovery test's best k)."""
        self.set_plan(self.plan.replace(k=int(k)))

    def set_plan_problem(self, problem: str | None) -> None:
        """Say why the settings being edited make no plan (None: they do); the plan is kept."""
        if problem == self.plan_problem:
            return
        self.plan_problem = problem
        self._emit("plan")

    def set_report(self, report: RecoveryReport | None) -> None:
        """Keep the latest recovery report (passed to the export)."""
        self.report = report
        self._emit("report")

    def set_preview(self, result: FillResult | None) -> None:
        """Show ``result`` as a preview layer; nothing in the working table changes.

        ``result`` is a fill made with the session's plan. From now on the preview
        follows changes of the combining settings (None stops it).
        """
        self._require_sheet()
        self.preview = result
        self.following = self.plan if result is not None else None
        self._emit("preview")

    def preview_job(self, plan: FillPlan | None = None) -> PreviewJob:
        """The work of a preview of ``plan`` (default the session's), to run on any thread.

        The job fills the sheet loaded now through its
        :class:`~imputer_app.engine.NeighbourCache`: the same result as
        :func:`~imputer_app.engine.impute`, without a new neighbour search when only
        combining settings changed since the last preview. Show its result with
        :meth:`set_preview` if the plan is still the session's.

        Examples
        --------
        >>> result = session.preview_job()(None, None)  # doctest: +SKIP
        >>> session.set_preview(result)  # doctest: +SKIP
        """
        sheet = self.sheet
        if sheet is None:
            raise SessionError("no sheet is loaded")
        if self._neighbours is None:
            from imputer_app.engine import NeighbourCache

            self._neighbours = NeighbourCache()
        cache, chosen = self._neighbours, self.plan if plan is None else plan

        def job(progress: Progress | None, cancel: CancelFlag | None) -> FillResult:
            return cache.impute(sheet, chosen, progress=progress, cancel=cancel)

        return job

    def apply(self) -> FillResult:
        """Make the preview the applied fill; redo history beyond this point is dropped."""
        if self.preview is None:
            raise SessionError("there is no preview to apply")
        result = self.preview
        self.following = None
        del self._history[self._position :]
        self._history.append(result)
        self._position += 1
        self.preview = None
        self._emit("preview")
        self._emit("applied")
        return result

    def undo(self) -> None:
        """Take back the last applied fill (the one before it, if any, is shown again).

        A preview on screen is dropped, so that the table shows what is applied.
        """
        if not self.can_undo:
            raise SessionError("nothing to undo")
        self._drop_preview()
        self._position -= 1
        self._emit("applied")

    def redo(self) -> None:
        """Apply again the fill last taken back (a preview on screen is dropped)."""
        if not self.can_redo:
            raise SessionError("nothing to redo")
        self._drop_preview()
        self._position += 1
        self._emit("applied")

    def mark_exported(self) -> None:
        """Record that the applied fill has been written out (no longer dirty)."""
        self._exported = self.applied
        self._emit("saved")

    def _drop_preview(self) -> None:
        # Undo and redo change what is applied; the table then shows it, not an older preview.
        self.following = None
        if self.preview is not None:
            self.preview = None
            self._emit("preview")

    def _require_sheet(self) -> None:
        if self.sheet is None:
            raise SessionError("no sheet is loaded")


def export_fill(
    target: str | Path,
    sheet: Sheet,
    result: FillResult,
    report: RecoveryReport | None,
    progress: Progress | None = None,
    cancel: CancelFlag | None = None,
) -> list[Path]:
    """The app's export of an applied fill: the same writer as ``kinfill fill``.

    The app gives the plan as the fill used it (``result.plan``), so that a later
    ``kinfill fill --plan-from`` of the export fills the same columns. Returns the
    files written.
    """
    from imputer_app.sheets import write_result

    return write_result(target, sheet, result, result.plan, report, progress=progress, cancel=cancel)


def default_export_path(source: str | Path) -> Path:
    """Return ``<folder>/<stem>.filled.xlsx`` next to ``source``.

    >>> default_export_path("/data/river.csv").name
    'river.filled.xlsx'
    """
    source = Path(source)
    return source.with_name(f"{source.stem}.filled.xlsx")
