"""What an empty window shows: open a sheet, open the demo, recent files, and the three steps."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QHBoxLayout, QLabel, QPushButton, QSizePolicy, QVBoxLayout, QWidget

from imputer_app.gui.widgets import named

#: The three steps, as the start view lists them.
STEPS = (
    "Open a sheet: gaps, values beyond a limit and unreadable entries are marked in the table.",
    "Run the recovery test: Kinfill hides known values, fills them for every k and shows which k "
    "brings them back best.",
    "Preview the fill with that k, apply it, and export: a new file with every filled value marked "
    "and a fill log (the sheet you opened is never changed).",
)


def demo_sheet() -> Path | None:
    """The demo sheet (``sample_sheets/river_survey.xlsx`` beside the package), or None if absent."""
    path = Path(__file__).resolve().parents[2] / "sample_sheets" / "river_survey.xlsx"
    return path if path.is_file() else None


class StartView(QWidget):
    """The start page shown while no sheet is open.

    Parameters
    ----------
    open_sheet : callable
        Asks for a sheet to open (File > Open).
    open_path : callable
        Opens a given file (the demo, a recent file).
    """

    def __init__(
        self,
        open_sheet: Callable[[], object],
        open_path: Callable[[Path], object],
        parent: QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        named(self, "startView", "Start", "Open a sheet to begin")
        self._open_path = open_path
        outer = QVBoxLayout(self)
        outer.addStretch(1)
        column = QVBoxLayout()
        outer.addLayout(column)
        outer.addStretch(2)
        title = QLabel("<h2>Fill the gaps of a measurement sheet</h2>", self)
        title.setWordWrap(True)
        column.addWidget(title)
        steps = "".join(f"<li>{step}</li>" for step in STEPS)
        self.steps = named(QLabel(f"<ol>{steps}</ol>", self), "startSteps", "The three steps", "")
        self.steps.setWordWrap(True)
        column.addWidget(self.steps)
        buttons = QHBoxLayout()
        self.open_button = named(
            QPushButton("Open a sheet…", self), "startOpen", "Open a sheet", "xlsx, xls, ods, csv"
        )
        self.open_button.clicked.connect(lambda: open_sheet())
        buttons.addWidget(self.open_button)
        demo = demo_sheet()
        self.demo_button = named(
            QPushButton("Open the demo sheet", self),
            "startDemo",
            "Open the demo sheet",
            f"An invented river survey with gaps and values below a limit ({demo})",
        )
        self.demo_button.clicked.connect(lambda: demo is not None and open_path(demo))
        self.demo_button.setVisible(demo is not None)
        buttons.addWidget(self.demo_button)
        buttons.addStretch(1)
        column.addLayout(buttons)
        self.recent_title = QLabel("<b>Recent files</b>", self)
        column.addWidget(self.recent_title)
        self.recent_box = QVBoxLayout()
        column.addLayout(self.recent_box)
        hint = QLabel("You can also drop a sheet or a *.plan.toml on this window.", self)
        hint.setEnabled(False)
        column.addWidget(hint)
        for widget in (title, self.steps):
            widget.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.recent_buttons: list[QPushButton] = []

    def set_recent(self, files: Sequence[Path]) -> None:
        """List the recent files as buttons (the title hides when there are none)."""
        for old in self.recent_buttons:
            old.deleteLater()
        self.recent_buttons = []
        for path in files[:5]:
            button = named(
                QPushButton(f"{path.name}  —  {path.parent}", self), "startRecent", path.name, str(path)
            )
            button.setFlat(True)
            # a long path must never widen the window's minimum (the page shares it with the panels)
            button.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Fixed)
            button.setStyleSheet("text-align: left;")
            button.clicked.connect(lambda _c=False, p=path: self._open_path(p))
            self.recent_box.addWidget(button)
            self.recent_buttons.append(button)
        self.recent_title.setVisible(bool(files))
