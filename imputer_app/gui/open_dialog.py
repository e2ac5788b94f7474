"""Open with options: choose the worksheet, header row and missing-value markers.

The dialog reads the file in the background each time a setting changes (after a
short pause) and shows the first rows exactly as Kinfill will see them, with the
cell markers. When the user accepts, the sheet already read is handed over, so the
file is not read a second time.
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import QTimer
from PySide6.QtGui import QCloseEvent
from PySide6.QtWidgets import (
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QFormLayout,
    QLineEdit,
    QSpinBox,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from imputer_app.gui.table_model import SheetTableModel
from imputer_app.gui.widgets import buddy, named, row_height, text_label
from imputer_app.gui.workers import TaskRunner

if TYPE_CHECKING:
    from imputer_app.sheets import Sheet
    from imputer_app.work import CancelFlag, Progress

PREVIEW_ROWS = 30
_DELAY_MS = 250


def parse_markers(text: str) -> list[str | float] | None:
    """Split a comma-separated list of extra markers; None when empty.

    Numbers (``-999``) become floats, which ``read_sheet`` matches by value.

    >>> parse_markers(" n.d., NA ,, -999 ")
    ['n.d.', 'NA', -999.0]
    """
    markers: list[str | float] = []
    for part in text.split(","):
        part = part.strip()
        if not part:
            continue
        try:
            number = float(part)
        except ValueError:
            markers.append(part)
        else:
            markers.append(number if math.isfinite(number) else part)
    return markers or None


def head_of(sheet: Sheet, rows: int = PREVIEW_ROWS) -> Sheet:
    """A copy of ``sheet`` cut to its first ``rows`` data rows (for the preview)."""
    frame = sheet.frame.head(rows)
    notes = sheet.cell_notes
    if notes is not None and len(notes):
        notes = notes[notes["row"].isin(frame.index)]
    return dataclasses.replace(sheet, frame=frame, states=sheet.states.head(rows), cell_notes=notes)


class OpenDialog(QDialog):
    """Choose worksheet, header row and markers for ``path`` with a live preview."""

    def __init__(
        self,
        path: str | Path,
        sheets: list[str] | None = None,
        parent: QWidget | None = None,
        *,
        header_row: int | None = None,
        markers: list[str | float] | None = None,
    ) -> None:
        super().__init__(parent)
        self.path = Path(path)
        self.setObjectName("openDialog")
        self.setAccessibleName("Open with options")
        self.setWindowTitle(f"Open {self.path.name}")
        self.resize(860, 560)
        self._sheet: Sheet | None = None
        self._sheet_options: dict[str, Any] | None = None
        self._runner = TaskRunner(self)
        self._runner.finished.connect(self._on_read)
        self._runner.failed.connect(self._on_failed)
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(_DELAY_MS)
        self._timer.timeout.connect(self._read)
        self._build(sheets or [], header_row, markers)
        self._read()

    def _build(self, sheets: list[str], header_row: int | None, markers: list[str | float] | None) -> None:
        layout = QVBoxLayout(self)
        form = QFormLayout()
        self.sheet_combo = named(
            QComboBox(self), "sheetCombo", "Worksheet", "The worksheet of the workbook to open."
        )
        self.sheet_combo.addItems(sheets)
        self.sheet_combo.setEnabled(len(sheets) > 1)
        self.header_spin = named(
            QSpinBox(self),
            "headerSpin",
            "Header row",
            "Row of the file that holds the column names; 'find it' lets Kinfill look.",
        )
        self.header_spin.setRange(0, 10_000)
        self.header_spin.setSpecialValueText("find it")
        self.header_spin.setValue(header_row or 0)
        self.markers_edit = named(
            QLineEdit(self),
            "markersEdit",
            "Extra missing-value markers",
            "Texts or numbers that mean 'no value' in this file, separated by commas (e.g. -999, lost). "
            "They are added to Kinfill's own list: NA, N/A, n.d., nd, -, --, ?, missing, #N/A, NaN.",
        )
        self.markers_edit.setPlaceholderText("added to NA, n.d., -, … (e.g. -999, lost)")
        self.markers_edit.setText(", ".join(f"{m:g}" if isinstance(m, float) else m for m in markers or []))
        for text, widget in (
            ("&Worksheet", self.sheet_combo),
            ("&Header row", self.header_spin),
            ("Extra &missing markers", self.markers_edit),
        ):
            form.addRow(buddy(text, widget, self), widget)
        layout.addLayout(form)
        self.status = text_label(self, "openStatus", "Reading status", "What Kinfill found in the file")
        self.status.setText("Reading…")
        layout.addWidget(self.status)
        self.model = SheetTableModel(self)
        self.preview = named(
            QTableView(self),
            "openPreview",
            "Preview of the first rows",
            f"The first {PREVIEW_ROWS} rows as Kinfill reads them, with cell markers.",
        )
        self.preview.setModel(self.model)
        self.preview.setTabKeyNavigation(False)
        self.preview.verticalHeader().setDefaultSectionSize(row_height(self))  # as compact as the main table
        layout.addWidget(self.preview, 1)
        self.buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Open | QDialogButtonBox.StandardButton.Cancel, self
        )
        self.buttons.setObjectName("openButtons")
        self.buttons.setAccessibleName("Open or cancel")
        self.buttons.accepted.connect(self.accept)
        self.buttons.rejected.connect(self.reject)
        layout.addWidget(self.buttons)
        self.sheet_combo.currentIndexChanged.connect(self._schedule)
        self.header_spin.valueChanged.connect(self._schedule)
        self.markers_edit.textChanged.connect(self._schedule)

    # ----------------------------------------------------------------- reading
    def options(self) -> dict[str, Any]:
        """Keyword arguments for ``read_sheet`` (sheet, header_row, markers)."""
        return {
            "sheet": self.sheet_combo.currentText() or None,
            "header_row": self.header_spin.value() or None,
            "markers": parse_markers(self.markers_edit.text()),
        }

    def sheet(self) -> Sheet | None:
        """The sheet read with the current options, if the preview has read it."""
        return self._sheet if self._sheet_options == self.options() else None

    def _schedule(self, *_args: Any) -> None:
        self.buttons.button(QDialogButtonBox.StandardButton.Open).setEnabled(False)
        self.status.setText("Reading…")
        self._timer.start()

    def _read(self) -> None:
        options = self.options()
        path = self.path

        def job(progress: Progress, cancel: CancelFlag) -> tuple[dict[str, Any], Sheet]:
            from imputer_app.sheets import read_sheet

            return options, read_sheet(path, progress=progress, cancel=cancel, **options)

        self._runner.start(job)

    def _on_read(self, payload: tuple[dict[str, Any], Sheet]) -> None:
        options, sheet = payload
        self._sheet, self._sheet_options = sheet, options
        self.model.set_sheet(head_of(sheet))
        self.preview.resizeColumnsToContents()
        source = sheet.source
        units = f"; units on row {source.units_row}" if source.units_row else ""
        problems = f" {len(sheet.problems)} remark(s): {sheet.problems[0]}" if sheet.problems else ""
        self.status.setText(
            f"{len(sheet.frame):,} rows × {len(sheet.frame.columns):,} columns; "
            f"column names on row {source.header_row}{units}.{problems}"
        )
        self.buttons.button(QDialogButtonBox.StandardButton.Open).setEnabled(True)

    def _on_failed(self, message: str, _details: str) -> None:
        self._sheet = None
        self.model.set_sheet(None)
        self.status.setText(f"⚠ {message}")
        self.buttons.button(QDialogButtonBox.StandardButton.Open).setEnabled(False)

    def done(self, result: int) -> None:
        """Stop a running read before closing."""
        self._timer.stop()
        self._runner.wait()
        super().done(result)

    def closeEvent(self, event: QCloseEvent) -> None:
        """Stop a running read before closing."""
        self._runner.wait()
        super().closeEvent(event)
