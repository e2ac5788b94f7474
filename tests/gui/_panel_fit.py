"""Measure the recovery panel in a real window after "Use each column's best k".

Run as its own process under Xvfb: ``python tests/gui/_panel_fit.py SHEET WIDTH HEIGHT``.
Prints one line of JSON: the panel page's visible size, the panel's minimum size, the
height its layout asks for at the visible width, and the scroll ranges. Exit code 0
when the facts were printed.
"""

from __future__ import annotations

import json
import sys
from collections.abc import Callable
from pathlib import Path

from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QApplication

from imputer_app.gui.launch import drive_to
from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.settings import AppSettings

EXIT_STUCK = 5


def in_real_window(
    sheet: str, width: int, height: int, state: str, measure: Callable[[MainWindow], object]
) -> int:
    """Open ``sheet`` in a window of ``width`` x ``height``, bring it to ``state``
    (:func:`~imputer_app.gui.launch.drive_to`), print ``measure(window)`` as JSON and quit."""
    app = QApplication(["kinfill-gui"])
    window = MainWindow(AppSettings())
    window.interactive = False
    window.resize(width, height)
    window.show()

    def done() -> None:
        print(json.dumps(measure(window)), flush=True)
        window.session.mark_exported()
        window.recovery_panel.shutdown(10_000)
        app.exit(0)

    window.sheet_loaded.connect(lambda: drive_to(window, state, lambda: QTimer.singleShot(400, done)))
    window.open_path(Path(sheet), {})
    QTimer.singleShot(110_000, lambda: app.exit(EXIT_STUCK))
    return app.exec()


def panel_facts(window: MainWindow) -> dict[str, object]:
    """The recovery panel's page: visible size, minimum size, height for its width, scroll ranges."""
    panel = window.recovery_panel
    page = window.tabs.currentWidget()
    view = page.viewport()
    return {
        "viewport": [view.width(), view.height()],
        "minimum": [panel.minimumSizeHint().width(), panel.minimumSizeHint().height()],
        "height_for_width": panel.heightForWidth(view.width()),
        "scroll": [page.horizontalScrollBar().maximum(), page.verticalScrollBar().maximum()],
        "per_column_k": bool(panel.session.plan.k_by_column),
    }


def main(sheet: str, width: int, height: int) -> int:
    return in_real_window(sheet, width, height, "per-column", panel_facts)


if __name__ == "__main__":
    sys.exit(main(sys.argv[1], int(sys.argv[2]), int(sys.argv[3])))
