"""How the window shares its width, and the layout it remembers between runs (QSettings)."""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6.QtWidgets import QStyle

if TYPE_CHECKING:
    from imputer_app.gui.main_window import MainWindow

#: Width of the map of gaps beside the data table, in pixels.
GAP_MAP_WIDTH = 56
#: The window's first size (smaller on a smaller screen).
DEFAULT_SIZE = (1400, 900)


def initial_split(width: int, setup_min: int, panels_min: int) -> list[int]:
    """Widths of setup, data and panels for a window ``width`` pixels wide.

    The data table gets what the two sides leave: the setup about a fifth (at most
    300 px), the panels about a quarter, and neither less than it needs (its minimum).

    >>> initial_split(1400, 280, 360)
    [280, 742, 378]
    """
    setup = max(setup_min, min(300, round(0.2 * width)))
    panels = max(panels_min, round(0.27 * width))
    return [setup, max(300, width - setup - panels), panels]


def restore_layout(w: MainWindow) -> bool:
    """Restore size, splitters and toolbars; True when the main splitter's sizes came back."""
    geometry = w.settings.bytes_value("window/geometry")
    if geometry is None or not w.restoreGeometry(geometry):
        screen = w.screen().availableGeometry()
        w.resize(min(DEFAULT_SIZE[0], screen.width()), min(DEFAULT_SIZE[1], screen.height()))
    restored = False
    for key, splitter in (("window/splitter", w.splitter), ("window/tableSplitter", w.table_split)):
        state = w.settings.bytes_value(key)
        if state is not None and splitter.restoreState(state) and splitter is w.splitter:
            restored = True
    state = w.settings.bytes_value("window/state")
    if state is not None:
        w.restoreState(state)
    return restored


def share_width(w: MainWindow) -> None:
    """First show without remembered sizes: the table gets the most, each side its minimum at least."""
    bar = w.style().pixelMetric(QStyle.PixelMetric.PM_ScrollBarExtent)
    setup_min = w.setup.minimumSizeHint().width() + bar
    panels_min = max(panel.minimumSizeHint().width() for panel in w.panels()) + 2 * bar
    w.splitter.setSizes(initial_split(max(w.width(), 900), setup_min, panels_min))
    w.table_split.setSizes([max(200, w.table_split.width() - GAP_MAP_WIDTH), GAP_MAP_WIDTH])


def save_layout(w: MainWindow) -> None:
    """Remember geometry, toolbars and splitter positions."""
    w.settings.set_bytes("window/geometry", w.saveGeometry())
    w.settings.set_bytes("window/state", w.saveState())
    w.settings.set_bytes("window/splitter", w.splitter.saveState())
    w.settings.set_bytes("window/tableSplitter", w.table_split.saveState())
    w.settings.sync()
