"""The panels column of the main window: recovery test, donors and unfilled cells as tabs.

Each panel sits in a scroll area of its own, so that the column can be narrower than
a panel on a small screen.
"""

from __future__ import annotations

from collections.abc import Sequence

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QScrollArea, QSplitter, QTabWidget, QToolButton, QWidget


class PanelTabs(QTabWidget):
    """Tabs of panels, each in a scroll area; panels are addressed by themselves, not by page."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("panelTabs")
        self.setAccessibleName("Recovery test, donors, unfilled cells, pictures and gaps")
        self.setToolTip("Recovery test, donors of the selected cell, cells left empty, pictures, gap check")
        self._pages: dict[QWidget, QScrollArea] = {}
        # The tab bar's scroll arrows: Tab skips them (the arrow keys change tabs anyway).
        for arrow in self.tabBar().findChildren(QToolButton):
            arrow.setFocusPolicy(Qt.FocusPolicy.NoFocus)

    def add_panels(self, panels: Sequence[tuple[QWidget, str, str]]) -> None:
        """Add one tab per ``(panel, title, tip)``, in order."""
        for panel, title, tip in panels:
            page = QScrollArea(self)
            page.setObjectName(f"{panel.objectName()}Page")
            page.setAccessibleName(title.replace("&", ""))
            page.setWidgetResizable(True)
            page.setFrameShape(QScrollArea.Shape.NoFrame)
            page.setFocusPolicy(Qt.FocusPolicy.NoFocus)
            page.setWidget(panel)
            self._pages[panel] = page
            self.addTab(page, title)
            self.setTabToolTip(self.count() - 1, tip)

    def panels(self) -> list[QWidget]:
        """The panels, in tab order."""
        return list(self._pages)

    def show_panel(self, panel: QWidget) -> None:
        """Bring a panel's tab to the front."""
        self.setCurrentWidget(self._pages.get(panel, panel))

    def current_panel(self) -> QWidget | None:
        """The panel whose tab is in front."""
        page = self.currentWidget()
        return next((p for p, w in self._pages.items() if w is page), None)

    def fit_panel(self, panel: QWidget, splitter: QSplitter) -> None:
        """Widen this column of ``splitter`` (taking from the middle) when ``panel`` outgrew it."""
        page = self._pages.get(panel)
        if page is None:
            return
        missing = panel.minimumSizeHint().width() - page.viewport().width()
        sizes = splitter.sizes()
        if missing > 0 and sizes[1] - missing > 300:
            splitter.setSizes([sizes[0], sizes[1] - missing, sizes[2] + missing])
