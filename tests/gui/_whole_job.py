"""Drive ``kinfill-gui FILE`` through the whole job in a real window, then quit with Ctrl+Q.

Run as its own process under Xvfb: ``python tests/gui/_whole_job.py SHEET EXPORT``. The
app starts exactly as a double-click starts it (:func:`imputer_app.gui.launch.main`);
this script only presses what a user would: recovery test, use its best k, preview,
apply, export, then Ctrl+Q. Exit code 0 when the window closed after the export.
"""

from __future__ import annotations

import sys
from pathlib import Path

from PySide6.QtCore import Qt, QTimer
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QApplication

from imputer_app.gui import launch
from imputer_app.gui.main_window import MainWindow

EXIT_STUCK = 5


def main(sheet: str, export: str) -> int:
    app = QApplication.instance() or QApplication(["kinfill-gui"])
    assert isinstance(app, QApplication)

    def window() -> MainWindow:
        return next(w for w in app.topLevelWidgets() if isinstance(w, MainWindow))

    def exported(_paths: list) -> None:
        w = window()
        w.activateWindow()
        w.raise_()
        # Ctrl+Q where a user presses it: the focused widget of the window.
        QTimer.singleShot(
            300,
            lambda: QTest.keyClick(app.focusWidget() or w, Qt.Key.Key_Q, Qt.KeyboardModifier.ControlModifier),
        )

    def previewed() -> None:
        w = window()
        w.apply_fill()
        w.exported.connect(exported)
        w.export(Path(export))

    def hook() -> None:
        w = window()
        w.sheet_loaded.connect(lambda: launch.drive_to(w, "preview", previewed))

    QTimer.singleShot(0, hook)  # before launch's own open, so sheet_loaded is heard
    QTimer.singleShot(110_000, lambda: app.exit(EXIT_STUCK))
    return launch.main([sheet])


if __name__ == "__main__":
    sys.exit(main(sys.argv[1], sys.argv[2]))
