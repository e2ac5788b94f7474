"""File > Open plan and File > Save plan: a ``*.plan.toml`` into the session, the session's plan out.

The session is the one holder of the plan: opening a plan file hands it to
:meth:`Session.set_plan` (the setup and the recovery panel redraw from there) and
saving writes exactly the session's plan.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from PySide6.QtWidgets import QStatusBar, QWidget

from imputer_app.gui import file_actions as fa
from imputer_app.gui.state import Session
from imputer_app.plan import FillPlan


class PlanFiles:
    """Open and save plan files for ``session``; problems go to ``show_error`` in one line.

    Parameters
    ----------
    parent : QWidget
        Parent of the file dialogs.
    session : Session
        Owner of the plan.
    status : QStatusBar
        Where a short confirmation is shown.
    show_error : callable
        Shows a one-line problem to the user.
    """

    def __init__(
        self, parent: QWidget, session: Session, status: QStatusBar, show_error: Callable[[str], None]
    ) -> None:
        self._parent = parent
        self._session = session
        self._status = status
        self._show_error = show_error

    def open(self, path: str | Path | None = None) -> None:
        """Make a ``*.plan.toml`` the session's plan (its columns must exist in the sheet)."""
        sheet = self._session.sheet
        if sheet is None:
            self._show_error("Open a sheet first; a plan is matched to the sheet's columns.")
            return
        path = Path(path) if path is not None else fa.ask_plan_path(self._parent, save=False)
        if path is None:
            return
        try:
            plan = FillPlan.load(path)
            plan.check_columns(list(map(str, sheet.frame.columns)))
        except Exception as exc:
            self._show_error(str(exc))
            return
        self._session.set_plan(plan)
        # an older plan is read as it filled then: say so
        note = f" Note: {plan.rounding_note}." if plan.rounding_note else ""
        self._status.showMessage(f"Plan {path.name} loaded.{note}", 15000 if note else 5000)

    def save(self, path: str | Path | None = None) -> Path | None:
        """Save the session's plan as ``*.plan.toml``; return the file written (None: not saved).

        The file dialog asks before replacing a file, so an existing file (or a link,
        replaced itself, never written through) is replaced; the open sheet never is.
        A failure (folder not writable, disk full) is one message, with the old file
        untouched and no temporary file left (:mod:`imputer_app.files`).
        """
        if self._session.plan_problem is not None:
            self._show_error("The settings are not valid yet; see the note under the setup.")
            return None
        target = Path(path) if path is not None else fa.ask_plan_path(self._parent, save=True)
        if target is None:
            return None
        try:
            written = self._session.plan.save(target, force=True, source=self._session.path)
        except Exception as exc:
            self._show_error(str(exc))
            return None
        self._status.showMessage(f"Plan saved to {written}.", 6000)
        return written
