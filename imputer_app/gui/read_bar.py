"""The slim bar above the table: how the sheet was read, changeable at any time.

A double-clicked workbook opens at once with Kinfill's best guess (the first visible
worksheet, the header row it detects); this bar shows those choices and the
missing-value markers found, and reading again with other choices is one change away.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import Signal
from PySide6.QtWidgets import (
    QComboBox,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QPushButton,
    QSizePolicy,
    QSpinBox,
    QVBoxLayout,
    QWidget,
)

from imputer_app.gui.open_dialog import parse_markers
from imputer_app.gui.widgets import buddy, named

if TYPE_CHECKING:
    from imputer_app.plan import FillPlan
    from imputer_app.sheets import Sheet
    from imputer_app.work import CancelFlag, Progress

#: Cell states of the reader that come from a marker, and what they mean.
_MEANINGS = {"missing": "a gap", "censored": "beyond a limit", "text": "unreadable"}


#: File endings that are workbooks (several worksheets possible).
WORKBOOK_SUFFIXES = (".xlsx", ".xlsm", ".xls", ".ods")


def worksheets(path: Path) -> list[str]:
    """The worksheets of a workbook ([] for delimited text, or when they cannot be listed).

    A file that cannot be opened is reported by the read itself, in one line.
    """
    if path.suffix.lower() not in WORKBOOK_SUFFIXES:
        return []
    from imputer_app.errors import KinfillError
    from imputer_app.sheets import list_sheets

    try:
        return list(list_sheets(path))
    except (KinfillError, OSError):
        return []


def read_job(
    path: Path, options: dict[str, Any], guess: bool
) -> Callable[[Progress, CancelFlag], tuple[Sheet | None, list[str]]]:
    """A worker job reading ``path``: ``(sheet, worksheets)``.

    With ``guess`` (a double-click: no choices made), a workbook whose best guess cannot
    be read gives ``(None, worksheets)``, so that the caller asks which to read.
    """

    def job(progress: Progress, cancel: CancelFlag) -> tuple[Sheet | None, list[str]]:
        from imputer_app.errors import KinfillError
        from imputer_app.sheets import read_sheet

        names = worksheets(path)
        try:
            return read_sheet(path, progress=progress, cancel=cancel, **options), names
        except KinfillError:
            if guess and len(names) > 1:
                return None, names
            raise

    return job


def markers_found(sheet: Sheet, most: int = 4) -> str:
    """Say which entries other than numbers the reader found, and how it took them.

    Example: ``'n.d. ×12, NA ×3 read as a gap; <0.5 ×4 beyond a limit'``.
    """
    notes = sheet.cell_notes
    if notes is None or not len(notes):
        return "no markers found"
    parts = []
    for state, meaning in _MEANINGS.items():
        texts = Counter(str(t).strip() for t in notes.loc[notes["state"] == state, "text"] if str(t).strip())
        if texts:
            shown = ", ".join(f"{text} ×{count}" for text, count in texts.most_common(most))
            more = " …" if len(texts) > most else ""
            parts.append(f"{shown}{more} read as {meaning}")
    return "Found: " + "; ".join(parts) if parts else "no markers found"


class ReadBar(QWidget):
    """Worksheet, header row and extra markers of the sheet shown; a change asks to read again.

    Signals
    -------
    reread(dict)
        ``read_sheet`` keywords (sheet, header_row, markers) the user chose.
    use_plan(FillPlan)
        The user takes the plan of this file's last fill instead of the defaults.
    """

    use_plan = Signal(object)
    reread = Signal(dict)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        named(
            self,
            "readBar",
            "How the sheet was read",
            "Worksheet, header row and markers; change to read again",
        )
        # The table's column decides the window's minimum; a narrow window clips this bar.
        self.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Fixed)
        rows = QVBoxLayout(self)
        rows.setContentsMargins(0, 0, 0, 0)
        rows.setSpacing(2)
        row, second = QHBoxLayout(), QHBoxLayout()
        rows.addLayout(row)
        rows.addLayout(second)
        self.sheet_combo = named(
            QComboBox(self), "readSheet", "Worksheet", "The worksheet shown; pick another"
        )
        self.header_spin = named(
            QSpinBox(self), "readHeader", "Header row", "Row of the file holding the column names"
        )
        self.header_spin.setRange(1, 10_000)
        self.markers_edit = named(
            QLineEdit(self),
            "readMarkers",
            "Extra missing-value markers",
            "Texts or numbers meaning 'no value' in this file, comma-separated (e.g. -999, lost); "
            "Enter reads the sheet again",
        )
        self.markers_edit.setPlaceholderText("extra markers, e.g. -999")
        self.markers_edit.setMinimumWidth(150)
        self.markers_edit.setMaximumWidth(220)
        self.found = named(
            QLabel(self), "readFound", "Markers found", "Entries that are not numbers, and how they were read"
        )
        self.sheet_label = buddy("Worksheet:", self.sheet_combo, self)
        row.addWidget(self.sheet_label)
        row.addWidget(self.sheet_combo)
        row.addWidget(buddy("Header row:", self.header_spin, self))
        row.addWidget(self.header_spin)
        row.addWidget(buddy("Markers:", self.markers_edit, self))
        row.addWidget(self.markers_edit)
        row.addStretch(1)
        second.addWidget(self.found, 1)
        self.plan_note = named(
            QLabel(self),
            "planSource",
            "Where the settings come from",
            "Settings belong to this sheet: defaults, or the plan of its last fill",
        )
        self.plan_button = named(
            QPushButton(self),
            "usePlanButton",
            "Use the last plan",
            "Take the settings of this file's last fill instead of the defaults",
        )
        self.plan_button.clicked.connect(self._use_offer)
        self.plan_button.hide()
        # a long list of markers is clipped (full text in the tooltip)
        self.found.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)
        row.addWidget(self.plan_note)
        row.addWidget(self.plan_button)
        self._offer: FillPlan | None = None
        self._filling = False
        self.sheet_combo.activated.connect(lambda _i: self._changed())
        self.header_spin.editingFinished.connect(self._changed)
        self.markers_edit.editingFinished.connect(self._changed)
        self._shown: dict[str, Any] = {}
        self.hide()

    def show_sheet(self, sheet: Sheet | None, sheets: list[str]) -> None:
        """Show how ``sheet`` was read; ``sheets`` are the workbook's worksheets ([] for text)."""
        if sheet is None:
            self.hide()
            return
        self._filling = True
        self.sheet_combo.clear()
        self.sheet_combo.addItems(sheets)
        source = sheet.source
        if source.sheet is not None:
            self.sheet_combo.setCurrentText(source.sheet)
        self.sheet_combo.setVisible(len(sheets) > 1)
        self.sheet_label.setVisible(len(sheets) > 1)
        self.header_spin.setValue(max(1, int(source.header_row or 1)))
        self.found.setText(markers_found(sheet))
        self.found.setToolTip(self.found.text())
        self._filling = False
        self._shown = self.options()
        self.show()

    def show_plan_source(self, text: str, offer: FillPlan | None = None) -> None:
        """Say where the settings come from; ``offer`` is a plan the user may take instead."""
        self.plan_note.setText(text)
        self._offer = offer
        if offer is not None:
            self.plan_button.setText(f"Use the plan of its last fill (k = {offer.k})")
        self.plan_button.setVisible(offer is not None)

    def _use_offer(self) -> None:
        if self._offer is not None:
            self.use_plan.emit(self._offer)

    def options(self) -> dict[str, Any]:
        """The ``read_sheet`` keywords the bar shows."""
        return {
            "sheet": self.sheet_combo.currentText() or None,
            "header_row": self.header_spin.value(),
            "markers": parse_markers(self.markers_edit.text()),
        }

    def _changed(self) -> None:
        options = self.options()
        if self._filling or options == self._shown:
            return
        if options["sheet"] != self._shown.get("sheet"):
            options["header_row"] = None  # another worksheet: let the reader find its header
        self._shown = options
        self.reread.emit(options)
