"""The legend of the cell markers shown above the data table.

One rich-text label that wraps when the window is narrow: each marker is shown as it
appears in a cell (its symbol on its colour) followed by a few words.
"""

from __future__ import annotations

import html

from PySide6.QtCore import QEvent
from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from imputer_app.gui.markers import MARKERS, WEAK_SYMBOL, palette_is_dark


def legend_html(dark: bool) -> str:
    """The legend as HTML for a light or dark palette."""
    parts = []
    for marker in MARKERS.values():
        bg, fg = marker.colours(dark)
        chip = (
            f'<span style="background-color:{bg.name()}; color:{fg.name()};">'
            f"&nbsp;{html.escape(marker.symbol)}&nbsp;</span>"
        )
        parts.append(f"{chip}&nbsp;{_keep_together(marker.label)}")
    parts.append(f"<b>{WEAK_SYMBOL}</b>&nbsp;{_keep_together('after a fill symbol: weak support')}")
    return "&nbsp;&nbsp;&nbsp; ".join(parts)


def _keep_together(text: str) -> str:
    """Escape ``text`` and join its words with no-break spaces (wrap only between items)."""
    return "&nbsp;".join(html.escape(word) for word in text.split())


def legend_text() -> str:
    """The legend in plain words (for screen readers)."""
    words = [f"{m.symbol} means {m.label}" for m in MARKERS.values()]
    return "; ".join([*words, f"{WEAK_SYMBOL} after a fill symbol means weak support"])


class Legend(QWidget):
    """Marker symbols on their colours, each with a short label; wraps when narrow."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("legend")
        self.setAccessibleName("Legend of cell markers")
        self.setAccessibleDescription(legend_text())
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 2, 4, 2)
        self.label = QLabel(self)
        self.label.setObjectName("legendText")
        self.label.setAccessibleName("Legend of cell markers")
        self.label.setAccessibleDescription(legend_text())
        self.label.setWordWrap(True)
        self.label.setToolTip("\n".join(f"{m.symbol}  {m.description}" for m in MARKERS.values()))
        layout.addWidget(self.label)
        self._paint()

    def _paint(self) -> None:
        self.label.setText(legend_html(palette_is_dark(self.palette())))

    def event(self, event: QEvent) -> bool:
        """Repaint the chips when the system palette switches light/dark."""
        if event.type() in (QEvent.Type.PaletteChange, QEvent.Type.ApplicationPaletteChange):
            self._paint()
        return super().event(event)
