"""The window's frame: its three columns, how they share the width, and the layout it remembers."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel, QMainWindow, QScrollArea, QSplitter, QStyle, QWidget

if TYPE_CHECKING:
    from imputer_app.gui.settings import AppSettings

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


def setup_area(setup: QWidget, parent: QWidget) -> QScrollArea:
    """The scrolling column that holds the column setup."""
    area = QScrollArea(parent)
    area.setObjectName("setupScroll")
    area.setAccessibleName("Column setup area")
    area.setWidgetResizable(True)
    area.setWidget(setup)
    area.setMinimumWidth(240)
    area.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
    area.setFocusPolicy(Qt.FocusPolicy.NoFocus)  # Tab goes to its controls, not to it
    return area


def main_splitter(parent: QWidget, setup: QWidget, data: QWidget, panels: QWidget) -> QSplitter:
    """Setup | data | panels side by side; the data column takes what the window gains."""
    splitter = QSplitter(Qt.Orientation.Horizontal, parent)
    splitter.setObjectName("mainSplitter")
    splitter.setAccessibleName("Setup, data and panels")
    for index, widget in enumerate((setup, data, panels)):
        splitter.addWidget(widget)
        splitter.setStretchFactor(index, 1 if widget is data else 0)
    splitter.setChildrenCollapsible(False)
    return splitter


def summary_label(parent: QWidget) -> QLabel:
    """The status bar's summary of the sheet and the fill shown over it."""
    label = QLabel(parent)
    label.setObjectName("sheetSummary")
    label.setAccessibleName("Sheet summary")
    label.setToolTip("Size of the sheet, its gaps, and what the fill shown over it holds")
    label.setContentsMargins(16, 0, 4, 0)  # keeps it apart from a long status message
    return label


def restore_layout(window: QMainWindow, settings: AppSettings, main: QSplitter, table: QSplitter) -> bool:
    """Restore size, splitters and toolbars; True when the ``main`` splitter's sizes came back."""
    geometry = settings.bytes_value("window/geometry")
    if geometry is None or not window.restoreGeometry(geometry):
        screen = window.screen().availableGeometry()
        window.resize(min(DEFAULT_SIZE[0], screen.width()), min(DEFAULT_SIZE[1], screen.height()))
    restored = False
    for key, splitter in (("window/splitter", main), ("window/tableSplitter", table)):
        state = settings.bytes_value(key)
        if state is not None and splitter.restoreState(state) and splitter is main:
            restored = True
    state = settings.bytes_value("window/state")
    if state is not None:
        window.restoreState(state)
    return restored


def share_width(
    width: int, main: QSplitter, table: QSplitter, setup: QWidget, panels: Sequence[QWidget]
) -> None:
    """First show without remembered sizes: the table gets the most, each side its minimum at least.

    ``main`` holds ``setup``, the data and the ``panels`` column; ``table`` holds the data
    table and the gap map.
    """
    bar = main.style().pixelMetric(QStyle.PixelMetric.PM_ScrollBarExtent)
    setup_min = setup.minimumSizeHint().width() + bar
    panels_min = max(panel.minimumSizeHint().width() for panel in panels) + 2 * bar
    main.setSizes(initial_split(max(width, 900), setup_min, panels_min))
    table.setSizes([max(200, table.width() - GAP_MAP_WIDTH), GAP_MAP_WIDTH])


def save_layout(window: QMainWindow, settings: AppSettings, main: QSplitter, table: QSplitter) -> None:
    """Remember geometry, toolbars and splitter positions."""
    settings.set_bytes("window/geometry", window.saveGeometry())
    settings.set_bytes("window/state", window.saveState())
    settings.set_bytes("window/splitter", main.saveState())
    settings.set_bytes("window/tableSplitter", table.saveState())
    settings.sync()
