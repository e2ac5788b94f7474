"""A picture of where the gaps are: every row (downsampled) by every column.

The map is built as one RGB numpy array and shown as a :class:`QImage` scaled to the
widget, so it costs the same for 300 or 300,000 rows. When several rows share one
pixel row, the most notable state among them wins (gap > text > beyond a limit > fill),
so a single gap is never hidden by downsampling.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QEvent, QPoint, QRect, QSize, Qt, Signal
from PySide6.QtGui import QColor, QHelpEvent, QImage, QKeyEvent, QMouseEvent, QPainter, QPaintEvent, QPalette
from PySide6.QtWidgets import QSizePolicy, QToolTip, QWidget

from imputer_app.gui.markers import CENSORED, MARKERS, MISSING, NO_FILL, TEXT, palette_is_dark

#: Most image rows drawn; more sheet rows are binned.
MAX_BINS = 1000
# Priority (higher wins in a bin) of each drawn class, and its marker key.
_CLASSES = ((1, "filled"), (2, "preview"), (3, "censored"), (4, "text"), (5, "missing"))


def cell_classes(codes: np.ndarray, fill: np.ndarray, layer_kind: str) -> np.ndarray:
    """Return int8 priority classes (n_rows, n_columns): 0 measured, 1..5 see ``_CLASSES``.

    Filled cells show as filled (or preview), not as the gap they were.
    """
    out = np.zeros(codes.shape, dtype=np.int8)
    out[codes == CENSORED] = 3
    out[codes == TEXT] = 4
    out[codes == MISSING] = 5
    filled = fill != NO_FILL
    out[filled] = 2 if layer_kind == "preview" else 1
    return out


def bin_rows(classes: np.ndarray, max_bins: int = MAX_BINS) -> tuple[np.ndarray, np.ndarray]:
    """Reduce rows to at most ``max_bins`` by taking the highest class in each bin.

    Returns
    -------
    binned : ndarray (n_bins, n_columns)
    starts : ndarray (n_bins,)
        The first sheet row of every bin.
    """
    n = classes.shape[0]
    if n <= max_bins:
        return classes, np.arange(n)
    starts = np.linspace(0, n, max_bins + 1).astype(np.intp)[:-1]
    return np.maximum.reduceat(classes, starts, axis=0), starts


class GapMap(QWidget):
    """Rows x columns map of cell states; clicking (or Enter) jumps to a cell.

    Signals
    -------
    cell_activated(row, column)
        Table positions of the first sheet row under the click and its column.
    """

    cell_activated = Signal(int, int)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("gapMap")
        self.setAccessibleName("Map of gaps")
        self.setToolTip("Where the gaps are: one stripe per column, rows top to bottom. Click to go there.")
        self.setMinimumSize(QSize(36, 120))
        self.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Expanding)
        self.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
        self.setMouseTracking(True)
        self._classes = np.zeros((0, 0), dtype=np.int8)
        self._starts = np.zeros(0, dtype=np.intp)
        self._rows = 0
        self._names: list[str] = []
        self._image: QImage | None = None
        self._viewport = (0, 0)
        self._cursor = (0, 0)

    def sizeHint(self) -> QSize:
        """Narrow: about 6 pixels per column."""
        return QSize(max(48, 6 * max(len(self._names), 1)), 300)

    # ------------------------------------------------------------------- data
    def set_cells(self, codes: np.ndarray, fill: np.ndarray, layer_kind: str, names: list[str]) -> None:
        """Redraw from the table's cell codes and fill layer."""
        self._rows = codes.shape[0]
        self._names = list(names)
        classes = cell_classes(codes, fill, layer_kind)
        self._classes, self._starts = bin_rows(classes)
        self._build_image()
        open_gaps = int(np.count_nonzero(classes >= 4))
        self.setAccessibleDescription(
            f"{self._rows} rows by {len(names)} columns; {open_gaps} gaps not filled"
            if self._rows
            else "no sheet"
        )
        self.updateGeometry()
        self.update()

    def set_viewport(self, first_row: int, last_row: int) -> None:
        """Mark the rows visible in the table."""
        self._viewport = (first_row, last_row)
        self.update()

    def _build_image(self) -> None:
        if self._classes.size == 0:
            self._image = None
            return
        dark = palette_is_dark(self.palette())
        colours = np.zeros((6, 3), dtype=np.uint8)
        base = self.palette().color(QPalette.ColorRole.Base)
        measured = base.darker(112) if not dark else base.lighter(160)
        colours[0] = (measured.red(), measured.green(), measured.blue())
        for value, key in _CLASSES:
            pick = QColor(MARKERS[key].strong)
            colours[value] = (pick.red(), pick.green(), pick.blue())
        rgb = np.ascontiguousarray(colours[self._classes])
        h, w = self._classes.shape
        image = QImage(rgb.data, w, h, 3 * w, QImage.Format.Format_RGB888)
        self._image = image.copy()  # own the pixels; rgb is freed after this call

    # ---------------------------------------------------------------- drawing
    def _plot_rect(self) -> QRect:
        return self.rect().adjusted(2, 2, -2, -2)

    def paintEvent(self, event: QPaintEvent) -> None:
        """Draw the map, the table's visible rows and the keyboard cursor."""
        painter = QPainter(self)
        rect = self._plot_rect()
        if self._image is None:
            painter.drawText(rect, Qt.AlignmentFlag.AlignCenter | Qt.TextFlag.TextWordWrap, "no sheet")
            return
        painter.drawImage(rect, self._image)
        pen_colour = self.palette().color(QPalette.ColorRole.Highlight)
        painter.setPen(pen_colour)
        first, last = self._viewport
        if self._rows and last >= first:
            y0 = rect.top() + int(first / self._rows * rect.height())
            y1 = rect.top() + int((last + 1) / self._rows * rect.height())
            painter.drawRect(QRect(rect.left(), y0, rect.width() - 1, max(2, y1 - y0)))
        if self.hasFocus() and self._names:
            row, col = self._cursor
            cw = rect.width() / len(self._names)
            y = rect.top() + int(row / max(self._rows, 1) * rect.height())
            painter.drawRect(QRect(rect.left() + int(col * cw), y - 2, max(3, int(cw)), 5))
        painter.end()

    # ---------------------------------------------------------------- picking
    def position_at(self, point: QPoint) -> tuple[int, int] | None:
        """Table ``(row, column)`` under a widget point, or None outside the map."""
        rect = self._plot_rect()
        if not self._rows or not self._names or not rect.contains(point):
            return None
        col = min(len(self._names) - 1, int((point.x() - rect.left()) / rect.width() * len(self._names)))
        bin_ = min(len(self._starts) - 1, int((point.y() - rect.top()) / rect.height() * len(self._starts)))
        return int(self._starts[bin_]), col

    def mousePressEvent(self, event: QMouseEvent) -> None:
        """Jump to the cell under the click."""
        pos = self.position_at(event.position().toPoint())
        if pos is not None and event.button() == Qt.MouseButton.LeftButton:
            self._cursor = pos
            self.cell_activated.emit(*pos)
            self.update()
        super().mousePressEvent(event)

    def keyPressEvent(self, event: QKeyEvent) -> None:
        """Arrows move a cursor over the map (Page keys by a tenth); Enter jumps there."""
        if not self._rows:
            return super().keyPressEvent(event)
        row, col = self._cursor
        step = max(1, self._rows // 100)
        key = int(event.key())
        moves: dict[int, tuple[int, int]] = {
            Qt.Key.Key_Up: (-step, 0),
            Qt.Key.Key_Down: (step, 0),
            Qt.Key.Key_PageUp: (-10 * step, 0),
            Qt.Key.Key_PageDown: (10 * step, 0),
            Qt.Key.Key_Left: (0, -1),
            Qt.Key.Key_Right: (0, 1),
        }
        if key in moves:
            dr, dc = moves[key]
            self._cursor = (
                min(max(row + dr, 0), self._rows - 1),
                min(max(col + dc, 0), len(self._names) - 1),
            )
            self.update()
        elif key in (Qt.Key.Key_Return, Qt.Key.Key_Enter, Qt.Key.Key_Space):
            self.cell_activated.emit(*self._cursor)
        else:
            super().keyPressEvent(event)

    def event(self, event: QEvent) -> bool:
        """Tooltips name the column and rows under the pointer; palette changes redraw."""
        if event.type() == QEvent.Type.ToolTip and isinstance(event, QHelpEvent):
            pos = self.position_at(event.pos())
            if pos is not None:
                row, col = pos
                QToolTip.showText(event.globalPos(), f"{self._names[col]}, near table row {row + 1}", self)
                return True
        if event.type() in (QEvent.Type.PaletteChange, QEvent.Type.ApplicationPaletteChange):
            self._build_image()
            self.update()
        return super().event(event)

    def classes(self) -> np.ndarray:
        """The binned classes drawn (for tests)."""
        return self._classes
