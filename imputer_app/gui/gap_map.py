"""A picture of where the gaps are: every row by every similarity and fill column.

Only the columns the fill compares or fills are drawn (carried columns have gaps that
nobody fills). The map is built as one RGB numpy array and shown as a :class:`QImage`
scaled to the widget, so it costs the same for 300 or 300,000 rows. When rows
outnumber the pixel rows, each pixel row covers several sheet rows and is shaded by
density: its colour moves from "measured" towards the colours of the marked cells
(gap, text, beyond a limit, fill) in proportion to their share of the cells it
covers, with a floor so that a single gap among many rows stays visible. Columns
that outnumber the pixel columns are pooled the same way, so none drops out.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from PySide6.QtCore import QEvent, QPoint, QRect, QSize, Qt, Signal
from PySide6.QtGui import (
    QColor,
    QHelpEvent,
    QImage,
    QKeyEvent,
    QMouseEvent,
    QPainter,
    QPaintEvent,
    QPalette,
    QResizeEvent,
)
from PySide6.QtWidgets import QSizePolicy, QToolTip, QWidget

from imputer_app.gui.markers import CENSORED, MARKERS, MISSING, NO_FILL, TEXT, palette_is_dark

# Class (index) of each drawn kind of cell, and its marker key; 0 is measured.
_CLASSES = ((1, "filled"), (2, "preview"), (3, "censored"), (4, "text"), (5, "missing"))
_N_CLASSES = 6
#: Classes that are open gaps (not filled): unreadable text and empty cells.
GAP_CLASSES = (4, 5)
#: The least strength of a pixel that covers at least one marked cell (0-1).
SHADE_FLOOR = 0.3


def cell_classes(codes: np.ndarray, fill: np.ndarray, layer_kind: str) -> np.ndarray:
    """Return int8 classes (n_rows, n_columns): 0 measured, 1..5 see ``_CLASSES``.

    Filled cells show as filled (or preview), not as the gap they were.
    """
    out = np.zeros(codes.shape, dtype=np.int8)
    out[codes == CENSORED] = 3
    out[codes == TEXT] = 4
    out[codes == MISSING] = 5
    filled = fill != NO_FILL
    out[filled] = 2 if layer_kind == "preview" else 1
    return out


def bin_starts(n_rows: int, n_bins: int) -> np.ndarray:
    """First sheet row of each of ``min(n_rows, n_bins)`` bins that tile the rows in order."""
    if n_rows <= n_bins:
        return np.arange(n_rows, dtype=np.intp)
    return np.linspace(0, n_rows, n_bins + 1).astype(np.intp)[:-1]


def bin_counts(classes: np.ndarray, n_bins: int) -> tuple[np.ndarray, np.ndarray]:
    """Count the cells of each class in bins of consecutive rows.

    Parameters
    ----------
    classes : ndarray of shape (n_rows, n_columns)
        Classes from :func:`cell_classes`.
    n_bins : int
        Most bins (pixel rows); fewer rows give one bin per row.

    Returns
    -------
    counts : ndarray of shape (n_bins, n_columns, 6)
        Cells of each class in each bin and column.
    starts : ndarray of shape (n_bins,)
        The first sheet row of every bin.
    """
    n_rows, n_cols = classes.shape
    starts = bin_starts(n_rows, max(1, n_bins))
    counts = np.zeros((starts.size, n_cols, _N_CLASSES), dtype=np.int32)
    if n_rows == 0 or n_cols == 0:
        return counts, starts
    for value in range(_N_CLASSES):
        counts[:, :, value] = np.add.reduceat(
            (classes == value).view(np.uint8), starts, axis=0, dtype=np.int32
        )
    return counts, starts


@dataclass(frozen=True)
class MarkedCells:
    """The marked cells of a table (class 1..5, see :func:`cell_classes`); all others are measured.

    Kept as lists of positions, so that binning and picking columns cost in proportion to
    the marked cells, not to the rows of a long sheet.

    Attributes
    ----------
    n_rows : int
        Rows of the table.
    rows, columns : ndarray of intp
        Table positions of the marked cells, in row order.
    classes : ndarray of int8
        The class of each.
    """

    n_rows: int
    rows: np.ndarray
    columns: np.ndarray
    classes: np.ndarray

    def as_kind(self, layer_kind: str) -> MarkedCells:
        """The same cells with fills drawn as ``layer_kind`` ("applied": filled, else preview)."""
        fills, other = (2, 1) if layer_kind == "applied" else (1, 2)
        if not np.any(self.classes == fills):
            return self
        classes = np.where(self.classes == fills, other, self.classes).astype(np.int8)
        return MarkedCells(self.n_rows, self.rows, self.columns, classes)


def marked_cells(codes: np.ndarray, fill: np.ndarray, layer_kind: str) -> MarkedCells:
    """The marked cells of :func:`cell_classes` as position lists (O(rows); off the window's thread)."""
    classes = cell_classes(codes, fill, layer_kind)
    rows, columns = np.nonzero(classes)
    return MarkedCells(codes.shape[0], rows, columns, classes[rows, columns])


def bin_marked(marked: MarkedCells, columns: Sequence[int], n_bins: int) -> tuple[np.ndarray, np.ndarray]:
    """:func:`bin_counts` of the drawn ``columns`` (table positions), from the marked cells alone.

    Returns the same ``counts`` and ``starts``: the cells of each bin that are not marked
    are counted as measured.
    """
    n_rows, n_cols = marked.n_rows, len(columns)
    starts = bin_starts(n_rows, max(1, n_bins))
    counts = np.zeros((starts.size, n_cols, _N_CLASSES), dtype=np.int32)
    if n_rows == 0 or n_cols == 0:
        return counts, starts
    drawn = np.full(max(int(marked.columns.max(initial=-1)), max(columns)) + 1, -1, dtype=np.intp)
    drawn[np.asarray(columns, dtype=np.intp)] = np.arange(n_cols)
    where = drawn[marked.columns]
    keep = where >= 0
    bins = np.searchsorted(starts, marked.rows[keep], side="right") - 1
    keys = (bins * n_cols + where[keep]) * _N_CLASSES + marked.classes[keep]
    counts += np.bincount(keys, minlength=counts.size).reshape(counts.shape).astype(np.int32)
    sizes = np.diff(np.append(starts, n_rows))
    counts[:, :, 0] = sizes[:, None] - counts[:, :, 1:].sum(axis=2)
    return counts, starts


def shade(counts: np.ndarray) -> np.ndarray:
    """Strength (0-1) of each bin's marking: 0 all measured, else at least :data:`SHADE_FLOOR`.

    Parameters
    ----------
    counts : ndarray of shape (n_bins, n_columns, 6)
        From :func:`bin_counts`.

    Returns
    -------
    ndarray of shape (n_bins, n_columns)
        ``SHADE_FLOOR + (1 - SHADE_FLOOR) * share`` where ``share`` is the share of
        marked (not measured) cells among the bin's cells; 0 where that share is 0.
    """
    totals = counts.sum(axis=2)
    marked = totals - counts[:, :, 0]
    share = marked / np.maximum(totals, 1)
    return np.where(marked > 0, SHADE_FLOOR + (1.0 - SHADE_FLOOR) * share, 0.0)


def shaded_rgb(counts: np.ndarray, colours: np.ndarray) -> np.ndarray:
    """RGB image (n_bins, n_columns, 3) uint8: measured colour mixed with the marked cells' colours.

    The hue of a pixel is the average colour of its marked cells; its distance from the
    measured colour is :func:`shade`.
    """
    marked = counts[:, :, 1:].astype(float)
    n_marked = marked.sum(axis=2, keepdims=True)
    hue = (marked @ colours[1:].astype(float)) / np.maximum(n_marked, 1)
    strength = shade(counts)[:, :, None]
    rgb = colours[0].astype(float) * (1.0 - strength) + hue * strength
    return np.ascontiguousarray(np.clip(np.rint(rgb), 0, 255).astype(np.uint8))


class GapMap(QWidget):
    """Rows x (similarity and fill) columns map of cell states; clicking (or Enter) jumps to a cell.

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
        self.setToolTip(
            "Where the gaps of the similarity and fill columns are: one stripe per column, "
            "rows top to bottom; paler where few of the rows a pixel covers have gaps. "
            "Click to go there."
        )
        self.setMinimumSize(QSize(36, 120))
        self.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Expanding)
        self.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
        self.setMouseTracking(True)
        self._marked = MarkedCells(0, *(np.zeros(0, dtype=np.intp),) * 2, np.zeros(0, dtype=np.int8))
        self._counts = np.zeros((0, 0, _N_CLASSES), dtype=np.int32)
        self._starts = np.zeros(0, dtype=np.intp)
        self._rows = 0
        self._names: list[str] = []
        self._columns: list[int] = []  # table position of each drawn column
        self._image: QImage | None = None
        self._viewport = (0, 0)
        self._cursor = (0, 0)  # (row, drawn column)

    def sizeHint(self) -> QSize:
        """Narrow: about 6 pixels per column."""
        return QSize(max(48, 6 * max(len(self._names), 1)), 300)

    # ------------------------------------------------------------------- data
    def set_cells(
        self,
        codes: np.ndarray,
        fill: np.ndarray,
        layer_kind: str,
        names: list[str],
        columns: Sequence[int] | None = None,
        marked: MarkedCells | None = None,
    ) -> None:
        """Redraw from the table's cell codes and fill layer.

        Parameters
        ----------
        codes, fill : ndarray of shape (n_rows, n_columns)
            The table's cell codes and fill codes.
        layer_kind : {"preview", "applied", ""}
            How the fill layer is drawn ("" without one).
        names : list of str
            The table's column names.
        columns : sequence of int, optional
            Table positions of the columns to draw (the similarity and fill columns);
            all columns when omitted.
        marked : MarkedCells, optional
            The marked cells of every column, made beforehand (off the window's thread);
            without them they are found here, in time proportional to the rows.
        """
        self._rows = codes.shape[0]
        self._columns = list(range(len(names))) if columns is None else [int(c) for c in columns]
        self._names = [names[c] for c in self._columns]
        if marked is None or marked.n_rows != self._rows:
            marked = marked_cells(codes, fill, layer_kind)
        self._marked = marked.as_kind(layer_kind)
        self._cursor = (min(self._cursor[0], max(self._rows - 1, 0)), 0)
        self._rebin()
        drawn = np.isin(self._marked.columns, np.asarray(self._columns, dtype=np.intp))
        open_gaps = int(np.count_nonzero(drawn & (self._marked.classes >= min(GAP_CLASSES))))
        self.setAccessibleDescription(
            f"{self._rows:,} rows by {len(self._names)} columns; {open_gaps:,} gaps not filled"
            if self._rows
            else "no sheet"
        )
        self.updateGeometry()
        self.update()

    def set_viewport(self, first_row: int, last_row: int) -> None:
        """Mark the rows visible in the table."""
        self._viewport = (first_row, last_row)
        self.update()

    def _rebin(self) -> None:
        """Bin the rows to the plot's pixel rows and rebuild the image."""
        n_bins = max(1, self._plot_rect().height())
        self._counts, self._starts = bin_marked(self._marked, self._columns, n_bins)
        self._build_image()

    def _build_image(self) -> None:
        if self._counts.size == 0:
            self._image = None
            return
        dark = palette_is_dark(self.palette())
        colours = np.zeros((_N_CLASSES, 3), dtype=np.uint8)
        base = self.palette().color(QPalette.ColorRole.Base)
        measured = base.darker(112) if not dark else base.lighter(160)
        colours[0] = (measured.red(), measured.green(), measured.blue())
        for value, key in _CLASSES:
            pick = QColor(MARKERS[key].strong)
            colours[value] = (pick.red(), pick.green(), pick.blue())
        counts = self._counts
        width = max(1, self._plot_rect().width())
        if counts.shape[1] > width:  # more columns than pixels: a pixel column covers several
            counts = np.add.reduceat(counts, bin_starts(counts.shape[1], width), axis=1)
        rgb = shaded_rgb(counts, colours)
        h, w = rgb.shape[:2]
        image = QImage(rgb.data, w, h, 3 * w, QImage.Format.Format_RGB888)
        self._image = image.copy()  # own the pixels; rgb is freed after this call

    def resizeEvent(self, event: QResizeEvent) -> None:
        """Bin again when the number of pixel rows changes."""
        super().resizeEvent(event)
        rect = self._plot_rect()
        if self._rows and min(self._rows, max(1, rect.height())) != self._starts.size:
            self._rebin()
        elif self._image is not None and min(len(self._names), rect.width()) != self._image.width():
            self._build_image()

    # ---------------------------------------------------------------- drawing
    def _plot_rect(self) -> QRect:
        return self.rect().adjusted(2, 2, -2, -2)

    def paintEvent(self, event: QPaintEvent) -> None:
        """Draw the map, the table's visible rows and the keyboard cursor."""
        painter = QPainter(self)
        rect = self._plot_rect()
        if self._image is None:
            text = "no similarity or fill column" if self._rows else "no sheet"
            painter.drawText(rect, Qt.AlignmentFlag.AlignCenter | Qt.TextFlag.TextWordWrap, text)
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
    def _bin_and_column_at(self, point: QPoint) -> tuple[int, int] | None:
        rect = self._plot_rect()
        if not self._rows or not self._names or not self._starts.size or not rect.contains(point):
            return None
        col = min(len(self._names) - 1, int((point.x() - rect.left()) / rect.width() * len(self._names)))
        bin_ = min(len(self._starts) - 1, int((point.y() - rect.top()) / rect.height() * len(self._starts)))
        return bin_, col

    def position_at(self, point: QPoint) -> tuple[int, int] | None:
        """Table ``(row, column)`` under a widget point, or None outside the map."""
        found = self._bin_and_column_at(point)
        if found is None:
            return None
        bin_, col = found
        return int(self._starts[bin_]), self._columns[col]

    def describe_at(self, point: QPoint) -> str | None:
        """Plain words about the rows and column under a point (the tooltip), or None."""
        found = self._bin_and_column_at(point)
        if found is None:
            return None
        bin_, col = found
        first = int(self._starts[bin_])
        last = int(self._starts[bin_ + 1]) - 1 if bin_ + 1 < self._starts.size else self._rows - 1
        counts = self._counts[bin_, col]
        rows = f"table row {first + 1:,}" if first == last else f"table rows {first + 1:,}-{last + 1:,}"
        gaps = int(counts[list(GAP_CLASSES)].sum())
        parts = [f"{gaps:,} gap{'s' if gaps != 1 else ''} not filled"]
        if counts[1] or counts[2]:
            parts.append(f"{int(counts[1] + counts[2]):,} filled")
        if counts[3]:
            parts.append(f"{int(counts[3]):,} beyond a limit")
        return f"{self._names[col]}, {rows}: " + ", ".join(parts) + f" of {last - first + 1:,} cells"

    def mousePressEvent(self, event: QMouseEvent) -> None:
        """Jump to the cell under the click."""
        found = self._bin_and_column_at(event.position().toPoint())
        if found is not None and event.button() == Qt.MouseButton.LeftButton:
            self._cursor = (int(self._starts[found[0]]), found[1])
            self.cell_activated.emit(self._cursor[0], self._columns[found[1]])
            self.update()
        super().mousePressEvent(event)

    def keyPressEvent(self, event: QKeyEvent) -> None:
        """Arrows move a cursor over the map (Page keys by a tenth); Enter jumps there."""
        if not self._rows or not self._names:
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
            self.cell_activated.emit(row, self._columns[col])
        else:
            super().keyPressEvent(event)

    def event(self, event: QEvent) -> bool:
        """Tooltips count the cells under the pointer; palette changes redraw."""
        if event.type() == QEvent.Type.ToolTip and isinstance(event, QHelpEvent):
            text = self.describe_at(event.pos())
            if text is not None:
                QToolTip.showText(event.globalPos(), text, self)
                return True
        if event.type() in (QEvent.Type.PaletteChange, QEvent.Type.ApplicationPaletteChange):
            self._build_image()
            self.update()
        return super().event(event)

    # ------------------------------------------------------------------ tests
    def drawn_columns(self) -> list[str]:
        """Names of the columns drawn, left to right."""
        return list(self._names)

    def counts(self) -> np.ndarray:
        """Cells of each class per pixel row and drawn column, shape (n_bins, n_columns, 6)."""
        return self._counts

    def gap_share(self) -> np.ndarray:
        """Share of open gaps among the cells of each pixel row and drawn column."""
        totals = np.maximum(self._counts.sum(axis=2), 1)
        return self._counts[:, :, list(GAP_CLASSES)].sum(axis=2) / totals

    def shading(self) -> np.ndarray:
        """Strength (0-1) of each pixel's marking (see :func:`shade`)."""
        return shade(self._counts)

    def image(self) -> QImage | None:
        """The picture drawn before scaling: one pixel per bin and column (or group of columns)."""
        return self._image
