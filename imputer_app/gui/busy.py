"""Progress bar and Cancel button for background work, shown in the status bar."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QHBoxLayout, QLabel, QProgressBar, QPushButton, QWidget

from imputer_app.gui.workers import TaskRunner


class BusyBar(QWidget):
    """Shows what a :class:`TaskRunner` is doing, how far it got, and lets the user stop it."""

    def __init__(self, runner: TaskRunner, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("busyBar")
        self.setAccessibleName("Background work")
        self.runner = runner
        layout = QHBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        self.label = QLabel(self)
        self.label.setObjectName("busyLabel")
        self.label.setAccessibleName("Current work")
        self.progress = QProgressBar(self)
        self.progress.setObjectName("busyProgress")
        self.progress.setAccessibleName("Progress")
        self.progress.setMaximumWidth(220)
        self.progress.setTextVisible(True)
        self.cancel_button = QPushButton("Cancel", self)
        self.cancel_button.setObjectName("cancelButton")
        self.cancel_button.setAccessibleName("Cancel the current work")
        self.cancel_button.setToolTip("Stop the work in progress; nothing is changed (Esc).")
        self.cancel_button.setShortcut(Qt.Key.Key_Escape)
        self.cancel_button.clicked.connect(runner.cancel)
        layout.addWidget(self.label)
        layout.addWidget(self.progress)
        layout.addWidget(self.cancel_button)
        runner.progressed.connect(self._on_progress)
        runner.running_changed.connect(self._on_running)
        self._on_running(False)

    def start(self, title: str) -> None:
        """Show ``title`` and an empty bar (call before starting the job)."""
        self.label.setText(title)
        self.progress.setRange(0, 0)  # busy until the first progress report
        self._on_running(True)

    def _on_progress(self, done: int, total: int) -> None:
        if total > 0:
            self.progress.setRange(0, total)
            self.progress.setValue(min(done, total))

    def _on_running(self, running: bool) -> None:
        self.setVisible(running)
        self.cancel_button.setEnabled(running)
        if not running:
            self.progress.reset()
