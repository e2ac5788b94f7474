"""The main window: column setup | data table with legend and gap map | test, donors, unfilled.

The window is thin: the :class:`~imputer_app.gui.state.Session` holds what the user
works on, panels show it, and reading, filling and exporting run in a
:class:`~imputer_app.gui.workers.TaskRunner` with progress and Cancel in the status
bar. Dialog and file questions live in :mod:`imputer_app.gui.file_actions`.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeVar

from PySide6.QtCore import QEvent, QModelIndex, Qt, QTimer, Signal
from PySide6.QtGui import QAction, QCloseEvent, QDragEnterEvent, QDropEvent, QShowEvent
from PySide6.QtWidgets import QMainWindow, QMenu, QSplitter, QStackedWidget, QToolBar, QWidget

from imputer_app.gui import file_actions as fa
from imputer_app.gui import fill_questions as fq
from imputer_app.gui import window_layout
from imputer_app.gui.about import AboutDialog
from imputer_app.gui.column_setup import ColumnSetup
from imputer_app.gui.data_view import DataView
from imputer_app.gui.donor_panel import DonorPanel
from imputer_app.gui.gaps_view import GapsView
from imputer_app.gui.guide import GuideDialog
from imputer_app.gui.markers import CENSORED, palette_is_dark
from imputer_app.gui.methods_copy import copy_methods_text
from imputer_app.gui.panel_tabs import PanelTabs
from imputer_app.gui.pictures_view import PicturesView
from imputer_app.gui.plan_files import PlanFiles
from imputer_app.gui.preview_follow import PreviewFollower
from imputer_app.gui.read_bar import read_job, worksheets
from imputer_app.gui.recovery_panel import RecoveryPanel
from imputer_app.gui.settings import AppSettings
from imputer_app.gui.sheet_facts import SheetFacts, with_layer, with_sheet_facts
from imputer_app.gui.start_view import StartView
from imputer_app.gui.state import Session, export_fill
from imputer_app.gui.status_text import fill_remarks, layer_note, plan_source, state_line
from imputer_app.gui.unfilled_panel import UnfilledPanel
from imputer_app.gui.window_actions import build_actions, build_menus, enabled_actions, fill_recent_menu
from imputer_app.gui.window_jobs import JobDesk
from imputer_app.plan import FillPlan

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.gui.table_arrays import LayerArrays
    from imputer_app.sheets import Sheet
    from imputer_app.work import CancelFlag, Progress

log = logging.getLogger(__name__)

_T = TypeVar("_T")


class MainWindow(QMainWindow):
    """Kinfill's window. Signals say when background work has delivered."""

    sheet_loaded = Signal()
    preview_ready = Signal()
    exported = Signal(list)

    def __init__(self, settings: AppSettings | None = None, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("mainWindow")
        self.setAccessibleName("Kinfill")
        self.settings = settings or AppSettings()
        self.session = Session()
        self.jobs = JobDesk(self, self.statusBar(), self.show_error)
        self.runner, self.busy = self.jobs.runner, self.jobs.busy
        self.plan_files = PlanFiles(self, self.session, self.statusBar(), self.show_error)
        self.runner.running_changed.connect(lambda _r: self._update_actions())
        #: False in unattended runs (``--screenshot``): problems go to the log, not to a message box.
        self.interactive = True
        self.recent_menu = QMenu("&Recent files", self)
        self.toolbar: QToolBar | None = None
        #: What to do once the export under way has been written (quit, open another sheet).
        self._after_export: Callable[[], object] | None = None
        self._reading_remarks = ""
        #: The (preview, applied) fills the table was last drawn with: Apply says both that
        #: the preview went and that a fill was applied, and one drawing serves both.
        self._drawn: tuple[FillResult | None, FillResult | None] | None = None
        #: The plan of the last fill of the open file (offered, never imposed), or None.
        self._last_plan: FillPlan | None = None
        self.setAcceptDrops(True)
        self._build()
        self.actions_ = build_actions(self, self._slots())
        self.toolbar = build_menus(self, self.actions_, self.recent_menu, self.data.filter_menu)
        self.data.add_table_actions([self.actions_[k] for k in ("previous_weak", "next_weak", "next_gap")])
        self.session.subscribe(self._on_session)
        #: Moving k (or another combining setting) after a preview previews again at once.
        self.follower = PreviewFollower(self.session, self.runner, self.preview_fill, self)
        self._sizes_restored = window_layout.restore_layout(
            self, self.settings, self.splitter, self.table_split
        )
        self.recent_changed(self.settings.recent_files())
        self._update_title()
        self._update_actions()

    # ------------------------------------------------------------------ layout
    def _build(self) -> None:
        self.setup = ColumnSetup(self, session=self.session)

        self.data = DataView(self, session=self.session)
        self.table, self.table_model, self.gap_map = self.data.table, self.data.model, self.data.gap_map
        self.table_split, self.notice = self.data.splitter, self.data.notice
        self.table.selectionModel().currentChanged.connect(self._on_current_cell)
        self.data.cell_not_found.connect(lambda text: self.statusBar().showMessage(text, 5000))
        self.data.read_bar.reread.connect(self._reread)
        self.data.read_bar.use_plan.connect(self.session.set_plan)

        self.tabs = PanelTabs(self)
        self.recovery_panel = RecoveryPanel(self.tabs, session=self.session)
        self.donor_panel = DonorPanel(self.tabs)
        self.unfilled_panel = UnfilledPanel(self.tabs)
        self.gaps_view = GapsView(self.tabs, session=self.session)
        self.pictures_view = PicturesView(self.tabs, session=self.session)
        self.tabs.add_panels(
            [
                (self.recovery_panel, "&Recovery test", "Choose k: hide known values and score every k"),
                (self.donor_panel, "&Donors", "Where the selected filled value came from"),
                (self.unfilled_panel, "U&nfilled", "Cells the fill could not fill, with the reason"),
                (
                    self.pictures_view,
                    "Pictures",
                    "Filled values against measured ones: click a point to see its cell",
                ),
                (self.gaps_view, "Gaps", "Why the gaps are there: Little's test, differences and patterns"),
            ]
        )
        self.recovery_panel.use_k.connect(self._use_k)
        self.recovery_panel.said.connect(lambda text: self.statusBar().showMessage(text, 8000))
        self.recovery_panel.report_ready.connect(self.session.set_report)
        self.recovery_panel.report_ready.connect(
            lambda _r: self.tabs.fit_panel(self.recovery_panel, self.splitter)
        )
        self.donor_panel.jump_requested.connect(self.select_cell)
        self.unfilled_panel.jump_requested.connect(self.select_cell)
        self.pictures_view.point_chosen.connect(self.select_cell)

        setup_area = window_layout.setup_area(self.setup, self)
        self.splitter: QSplitter = window_layout.main_splitter(self, setup_area, self.data, self.tabs)
        # No sheet yet: a start page instead of empty panels showing "k from 1 to 1".
        self.start = StartView(self.open_dialog, self.open_path, self)
        self.pages = QStackedWidget(self)
        self.pages.setObjectName("pages")
        self.pages.addWidget(self.start)
        self.pages.addWidget(self.splitter)
        self.setCentralWidget(self.pages)
        self.summary = window_layout.summary_label(self)
        self.statusBar().setObjectName("statusBar")
        self.statusBar().addPermanentWidget(self.summary)
        QWidget.setTabOrder(self.setup.focus_chain()[-1], self.table)
        QWidget.setTabOrder(self.gap_map, self.tabs)

    def _slots(self) -> dict[str, Callable[[], object]]:
        """What each action of the menus and toolbar does (see :func:`window_actions.build_actions`)."""
        focus = Qt.FocusReason.ShortcutFocusReason
        return {
            "open": self.open_dialog,
            "open_options": lambda: self.open_dialog(with_options=True),
            "open_plan": self.open_plan,
            "save_plan": self.save_plan,
            "export": self.export,
            "quit": self.close,
            "undo": self.undo,
            "redo": self.redo,
            "recovery": self.run_recovery_test,
            "preview": self.preview_fill,
            "apply": self.apply_fill,
            "next_gap": self.next_gap,
            "next_weak": self.data.next_weak_fill,
            "previous_weak": self.data.previous_weak_fill,
            "focus_setup": lambda: self.setup.table.setFocus(focus),
            "focus_table": lambda: self.table.setFocus(focus),
            "focus_panels": lambda: self.tabs.setFocus(focus),
            "guide": lambda: GuideDialog(self).exec(),
            "about": self.show_about,
            "copy_methods": lambda: copy_methods_text(self.session, self.statusBar()),
        }

    # ------------------------------------------------------------- background
    def run_job(
        self, title: str, job: Callable[[Progress, CancelFlag], _T], on_done: Callable[[_T], None]
    ) -> bool:
        """Run ``job(progress, cancel)`` off the GUI thread (see :meth:`JobDesk.run`)."""
        started = self.jobs.run(title, job, on_done)
        self._update_actions()
        return started

    def show_error(self, message: str) -> None:
        """Show a one-line problem in a message box."""
        first = message.strip().splitlines()[0] if message.strip() else "unknown problem"
        if self.interactive:
            fa.warn(self, first)
        else:
            log.error("%s", first)

    # ------------------------------------------------------------------ opening
    def open_path(
        self, path: str | Path, options: dict[str, Any] | None = None, confirmed: bool = False
    ) -> None:
        """Read ``path`` in the background (``options`` None: a double-click's best guess).

        ``options`` are ``read_sheet`` keywords (``_sheet``: a sheet already read with them);
        ``confirmed`` says the user already agreed to leave an unexported fill.
        """
        path = Path(path)
        if not confirmed and not fq.may_leave(self, lambda: self.open_path(path, options, confirmed=True)):
            return
        guess = options is None  # a double-click: open the best guess, ask only if it cannot be read
        options = dict(options or {})
        sheet = options.pop("_sheet", None)
        if sheet is not None:
            self._show_sheet((sheet, worksheets(path), None))
            return

        def done(payload: tuple[Sheet | None, list[str], SheetFacts | None]) -> None:
            sheet, names, facts = payload
            if sheet is None:
                chosen = fa.options_dialog(self, path, names)
                if chosen is not None:
                    self.open_path(path, chosen, confirmed=True)
                return
            self._show_sheet((sheet, names, facts))

        # the sheet's column facts and table arrays are made in the worker too
        self.run_job(f"Reading {path.name}…", with_sheet_facts(read_job(path, options, guess)), done)

    def open_dialog(self, with_options: bool = False) -> None:
        """File > Open (or Open with options): choose a sheet."""
        if not fq.may_leave(self, lambda: self.open_dialog(with_options)):
            return
        path = fa.ask_sheet_path(self)
        if path is None:
            return
        options = fa.options_dialog(self, path) if with_options else None
        if with_options and options is None:
            return
        self.open_path(path, options, confirmed=True)

    def _show_sheet(self, payload: tuple[Sheet, list[str], SheetFacts | None]) -> None:
        sheet, names, facts = payload
        self.setup.use_facts(facts)
        self.data.use_facts(facts)
        self._last_plan = self.settings.sheet_plan(sheet.source.path)
        self.session.load(sheet)  # the panels show it and the setup writes the plan for its columns
        self.data.read_bar.show_sheet(sheet, names)
        self._show_plan_source()
        self.recent_changed(self.settings.add_recent(sheet.source.path))
        self.settings.set_last_folder(sheet.source.path)
        problems = "; ".join(sheet.problems[:3])
        self._reading_remarks = f"Remarks on reading: {problems}" if problems else ""
        self._show_remarks()
        self.statusBar().showMessage(f"Opened {Path(sheet.source.path).name}.", 5000)
        self.sheet_loaded.emit()

    def _reread(self, options: dict[str, Any]) -> None:
        if self.session.path is not None:
            self.open_path(self.session.path, options)

    def recent_changed(self, files: list[Path]) -> None:
        """Rebuild File > Recent files."""
        fill_recent_menu(self.recent_menu, files, self.open_path, self._clear_recent)
        self.start.set_recent(files)

    def _clear_recent(self) -> None:
        self.settings.clear_recent()
        self.recent_changed([])

    # ------------------------------------------------------------------- plans
    def _use_k(self, k: int) -> None:
        # The panel has already put k into the session's plan; every view follows from there.
        then = "the preview follows" if self.session.following else "preview the fill to see its effect"
        self.statusBar().showMessage(f"k set to {k}; {then}.", 6000)

    def open_plan(self, path: str | Path | None = None) -> None:
        """Make a ``*.plan.toml`` the session's plan (see :meth:`PlanFiles.open`)."""
        self.plan_files.open(path)

    def save_plan(self, path: str | Path | None = None) -> Path | None:
        """Save the session's plan as ``*.plan.toml`` (see :meth:`PlanFiles.save`)."""
        return self.plan_files.save(path)

    # -------------------------------------------------------------------- fill
    def run_recovery_test(self) -> None:
        """Fill > Run recovery test."""
        self.tabs.show_panel(self.recovery_panel)
        self.recovery_panel.run()

    def preview_fill(self) -> None:
        """Compute the fill in the background and show it over the data."""
        sheet, plan = self.session.sheet, self.session.plan
        if sheet is None or not fq.k_fits(self, sheet):
            return
        plan = self.session.plan
        job = self.session.preview_job(plan)  # re-combines the last search's lists when it can

        def done(payload: tuple[FillResult, LayerArrays | None]) -> None:
            result, layer = payload
            if layer is not None:
                self.table_model.keep_layer(result, layer)
            if self.session.path is not None:
                self.settings.set_sheet_plan(self.session.path, plan)  # offered when the file opens again
                self._last_plan = plan
            if self.session.sheet is sheet and self.session.plan == plan:
                self.session.set_preview(result)  # the status bar says so (see _on_session)
                self.preview_ready.emit()

        # the table's layer arrays are made in the worker too
        self.run_job("Computing the fill preview…", with_layer(job, self.table_model.arrays), done)

    def apply_fill(self) -> None:
        """Write the preview into the working table."""
        if self.session.can_apply:
            self.session.apply()

    def undo(self) -> None:
        """Take back the last applied fill."""
        if self.session.can_undo:
            self.session.undo()

    def redo(self) -> None:
        """Apply again the fill last taken back."""
        if self.session.can_redo:
            self.session.redo()

    def export(self, path: str | Path | None = None) -> bool:
        """Write the applied fill and its log (never over the source; asks before replacing).

        A preview on screen is settled first (apply it, or export the applied fill).
        Returns True when the export started.
        """
        if not fq.settle_preview(self):
            return False
        sheet, result, report = self.session.sheet, self.session.applied, self.session.report
        if sheet is None or result is None:
            self.show_error("Nothing to export yet: preview a fill and apply it first.")
            return False
        target = fa.ask_export_path(self, Path(sheet.source.path), path)
        if target is None:
            return False

        def job(progress: Progress, cancel: CancelFlag) -> list[Path]:
            return export_fill(target, sheet, result, report, progress=progress, cancel=cancel)

        def done(paths: list[Path]) -> None:
            if self.session.applied is result:
                self.session.mark_exported()
            from imputer_app.sheets import export_limits

            names = ", ".join(Path(p).name for p in paths)
            limits = export_limits(sheet, target)  # an .ods/.xls workbook comes back as an .xlsx copy
            more = f" Note: {limits}." if limits else ""
            self.statusBar().showMessage(
                f"Exported {names} to {Path(target).parent}.{more}", 30000 if more else 10000
            )
            self.exported.emit(list(paths))
            then, self._after_export = self._after_export, None
            if then is not None:
                then()

        return self.run_job(f"Exporting {target.name}…", job, done)

    # ------------------------------------------------------------------- table
    def shown_result(self) -> FillResult | None:
        """The fill drawn over the table: the preview, else the applied fill."""
        return self.session.preview if self.session.preview is not None else self.session.applied

    def select_position(self, row: int, column: int) -> None:
        """Make a table cell current and scroll to it."""
        self.data.select_position(row, column)

    def select_cell(self, row_label: Any, column: str) -> None:
        """Select the cell of a row label and column (from the panels' jump requests)."""
        self.data.select_cell(row_label, column)

    def next_gap(self) -> None:
        """Go to the next gap, unreadable or censored cell."""
        self.data.next_gap()

    def _on_current_cell(self, current: QModelIndex, _previous: QModelIndex) -> None:
        result = self.shown_result()
        current = self.data.source_index(current)  # the table may show only some rows
        if result is None or not current.isValid():
            self.donor_panel.clear()
            return
        row, col = current.row(), current.column()
        if self.table_model.is_filled(row, col) or self.table_model.codes[row, col] == CENSORED:
            sheet = self.session.sheet
            notes = sheet.cell_notes if sheet is not None else None
            label = self.table_model.row_label(row)
            self.donor_panel.show_cell(result, label, self.table_model.column_names()[col], notes=notes)
            if self.table_model.is_filled(row, col) and self.tabs.current_panel() is not self.unfilled_panel:
                self.tabs.show_panel(self.donor_panel)
        else:
            self.donor_panel.clear()

    def _show_current_cell(self) -> None:
        self._on_current_cell(self.table.currentIndex(), QModelIndex())

    def show_panel(self, panel: QWidget) -> None:
        """Bring a panel's tab to the front."""
        self.tabs.show_panel(panel)

    def panels(self) -> list[QWidget]:
        """The panels of the tabs: recovery test, donors, unfilled cells."""
        return self.tabs.panels()

    def current_panel(self) -> QWidget | None:
        """The panel whose tab is in front."""
        return self.tabs.current_panel()

    # ------------------------------------------------------------------ session
    def _on_session(self, event: str) -> None:
        if event == "sheet":
            self._drawn = None
            self.data.set_sheet(self.session.sheet)
            self.pages.setCurrentWidget(self.splitter if self.session.has_sheet else self.start)
        drawn = (self.session.preview, self.session.applied)
        if event in ("sheet", "preview", "applied") and not (
            self._drawn is not None and all(a is b for a, b in zip(drawn, self._drawn, strict=True))
        ):
            self._drawn = drawn
            self._refresh_layer()
        if event == "plan":
            self._show_plan_source()
        if event in ("sheet", "preview", "applied", "saved"):
            self.statusBar().showMessage(state_line(self.session), 15000)
        self._update_title()
        self._update_actions()

    def _refresh_layer(self) -> None:
        preview, applied = self.session.preview, self.session.applied
        if preview is not None:
            self.data.set_layer(preview, "preview")
        else:
            self.data.set_layer(applied, "applied")
        result = self.shown_result()
        self.unfilled_panel.set_result(result)
        self.donor_panel.clear()
        # the current cell's story on the next turn of the event loop: a long sheet's
        # table repaints first, so the window answers between the two
        QTimer.singleShot(0, self, self._show_current_cell)
        self.summary.setText(fa.summary_text(self.table_model, self.session))
        self.data.set_layer_note(layer_note(self.session))
        self._show_remarks()

    def _show_plan_source(self) -> None:
        sheet = self.session.sheet
        columns = list(map(str, sheet.frame.columns)) if sheet is not None else []
        self.data.read_bar.show_plan_source(*plan_source(self.session.plan, self._last_plan, columns))

    def _show_remarks(self) -> None:
        self.notice.setText(fill_remarks(self.session, self._reading_remarks))

    def _update_title(self) -> None:
        path = self.session.path
        self.setWindowTitle(f"{path.name}[*] — Kinfill" if path is not None else "Kinfill")
        self.setWindowModified(self.session.dirty)

    def _update_actions(self) -> None:
        if not hasattr(self, "actions_"):
            return
        busy = self.runner.is_running()
        for key, on in enabled_actions(self.session, busy).items():
            action = self.actions_.get(key)
            if isinstance(action, QAction):
                action.setEnabled(on)
        self.recent_menu.setEnabled(not busy and bool(self.settings.recent_files()))

    # ----------------------------------------------------------------- windows
    def show_about(self) -> None:
        """Help > About."""
        AboutDialog(self).exec()

    def dragEnterEvent(self, event: QDragEnterEvent) -> None:
        """Accept dropped local files."""
        if fa.dropped_path(event.mimeData()) is not None:
            event.acceptProposedAction()

    def dropEvent(self, event: QDropEvent) -> None:
        """Open a dropped sheet, or load a dropped plan."""
        path = fa.dropped_path(event.mimeData())
        if path is None:
            return
        event.acceptProposedAction()
        if path.name.endswith(".toml"):
            self.open_plan(path)
        else:
            self.open_path(path)

    def changeEvent(self, event: QEvent) -> None:
        """Follow the system palette (light or dark markers)."""
        if event.type() in (QEvent.Type.PaletteChange, QEvent.Type.ApplicationPaletteChange):
            self.table_model.set_dark(palette_is_dark(self.palette()))
        super().changeEvent(event)

    def showEvent(self, event: QShowEvent) -> None:
        """On the first show without remembered sizes, share the width sensibly."""
        super().showEvent(event)
        if not self._sizes_restored:
            self._sizes_restored = True
            window_layout.share_width(
                self.width(), self.splitter, self.table_split, self.setup, self.tabs.panels()
            )

    def save_layout(self) -> None:
        """Remember geometry and splitter positions."""
        window_layout.save_layout(self, self.settings, self.splitter, self.table_split)

    def closeEvent(self, event: QCloseEvent) -> None:
        """Offer to export an applied fill that was not exported; stop background work."""
        if not fq.may_leave(self, lambda: bool(self.close()), closing=True):
            event.ignore()
            return
        self.save_layout()
        self.stop_work()
        event.accept()

    def stop_work(self, msecs: int = 10_000) -> bool:
        """Cancel the window's background work, then wait for it (on close, and when the app quits).

        Every job is asked to stop before any is waited for, so they wind down side by
        side; False when one still runs after ``msecs`` (a job between two checks).
        """
        panel = self.recovery_panel
        for runner in (self.runner, panel.runner, panel.weights_view.runner, self.gaps_view.runner):
            runner.cancel()
        return all([self.runner.wait(msecs), panel.shutdown(msecs), self.gaps_view.shutdown(msecs)])
