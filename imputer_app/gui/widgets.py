"""Small control factories shared by the panels: named controls, buddies, record tables, reflow.

Every control of the window needs an object name (tests and styling), an accessible
name (screen readers) and a tooltip; the helpers here give all three in one call so
that no panel forgets one. :class:`RecordTable` is the read-only "pick a row" table of
the side panels, and :class:`Reflow` lays label/field pairs out in as many columns as
the width allows, so that the side panels shrink without clipping.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TypeVar

from PySide6.QtCore import QAbstractItemModel, QModelIndex, QSize, Qt, Signal
from PySide6.QtGui import QKeyEvent, QResizeEvent
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QGridLayout,
    QLabel,
    QPushButton,
    QSplitter,
    QTableView,
    QWidget,
)

W = TypeVar("W", bound=QWidget)

#: A label (or None for a field that spans the label's place too) and its field.
Pair = tuple[QLabel | None, QWidget]


def named(widget: W, name: str, accessible: str, tip: str) -> W:
    """Give ``widget`` its object name, accessible name and tooltip; return it."""
    widget.setObjectName(name)
    widget.setAccessibleName(accessible)
    widget.setToolTip(tip)
    return widget


def buddy(text: str, field: QWidget, parent: QWidget | None = None) -> QLabel:
    """A label for ``field``; Alt + its underlined letter (``&`` in ``text``) moves to the field."""
    label = QLabel(text, parent)
    label.setBuddy(field)
    label.setObjectName(f"{field.objectName()}Label")
    label.setAccessibleName(text.replace("&", ""))
    return label


def text_label(parent: QWidget, name: str, accessible: str, tip: str, *, selectable: bool = False) -> QLabel:
    """A word-wrapping label for messages; ``selectable`` lets the mouse copy its text."""
    label = named(QLabel(parent), name, accessible, tip)
    label.setWordWrap(True)
    if selectable:
        label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
    return label


def button(parent: QWidget, name: str, text: str, tip: str) -> QPushButton:
    """A push button that Enter (as well as Space) presses while it has the focus."""
    push = named(QPushButton(text, parent), name, text.replace("&", "").replace("…", ""), tip)
    push.setAutoDefault(True)  # Enter activates a focused button outside dialogs too
    return push


def compact(combo: QComboBox, letters: int = 8) -> QComboBox:
    """Let a combo box be narrower than its longest choice (the open list still shows it whole)."""
    combo.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
    combo.setMinimumContentsLength(letters)
    return combo


def row_height(widget: QWidget) -> int:
    """A table row height that fits one line of the widget's font with a little air."""
    return widget.fontMetrics().height() + 8


class RecordTable(QTableView):
    """A read-only table of records, one row chosen at a time.

    Enter, Return or a double-click on a row emits :attr:`chosen` with the current index,
    so every panel's "show this" or "use this" works the same by mouse and by keyboard.
    """

    chosen = Signal(QModelIndex)

    def __init__(
        self, parent: QWidget, model: QAbstractItemModel, name: str, accessible: str, tip: str
    ) -> None:
        super().__init__(parent)
        named(self, name, accessible, tip)
        self.setModel(model)
        self.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.setTabKeyNavigation(False)  # Tab leaves the table; arrows move inside it
        self.verticalHeader().setVisible(False)
        self.verticalHeader().setDefaultSectionSize(row_height(self))
        self.doubleClicked.connect(self.chosen)

    def keyPressEvent(self, event: QKeyEvent) -> None:
        """Enter or Return on a row emits :attr:`chosen`; other keys as usual."""
        if event.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter) and self.currentIndex().isValid():
            self.chosen.emit(self.currentIndex())
            return
        super().keyPressEvent(event)


class CompactSplitter(QSplitter):
    """A splitter that asks for no more height than its minimum, and takes what it is given.

    A scroll area around a panel makes the panel as tall as the panel's preferred height;
    a chart and a table in a splitter would prefer a lot, and the panel would scroll
    although everything fits. Asking only for the minimum lets the panel fit the view.
    """

    def sizeHint(self) -> QSize:
        """The usual width, the minimum height."""
        return QSize(super().sizeHint().width(), self.minimumSizeHint().height())


class Reflow(QWidget):
    """Label/field pairs side by side in as many columns as the width allows.

    Wide, the pairs fill rows of ``max_columns`` pairs; when the widget gets narrower
    than that needs (by the controls' size hints), they fall back to fewer columns, down
    to one pair per row. The minimum width is the one-column width, so a panel built
    from reflows shrinks far without clipping a label.

    Parameters
    ----------
    pairs : sequence of (QLabel or None, QWidget)
        In reading order; a pair without a label gives its field the label's place too.
    parent : QWidget, optional
    max_columns : int, default=2
        The most pairs side by side.
    stretch : bool, default=True
        Let the last column of fields take the spare width; False keeps every control
        at its natural width (a row of buttons) and leaves the spare width empty.
    """

    def __init__(
        self,
        pairs: Sequence[Pair],
        parent: QWidget | None = None,
        *,
        max_columns: int = 2,
        stretch: bool = True,
    ) -> None:
        super().__init__(parent)
        self._pairs = list(pairs)
        self._max = max(1, max_columns)
        self._stretch = stretch
        self._grid = QGridLayout(self)
        self._grid.setContentsMargins(0, 0, 0, 0)
        self._columns = 0
        self._arrange(self._max)

    @property
    def columns(self) -> int:
        """How many pairs stand side by side now."""
        return self._columns

    def _spacing(self) -> int:
        return max(self._grid.horizontalSpacing(), 6)

    def _needed(self, columns: int, *, minimum: bool = False) -> int:
        """Width that ``columns`` pairs side by side need (size hints, or minimum hints)."""

        def width(widget: QWidget | None) -> int:
            if widget is None:
                return 0
            hint = widget.minimumSizeHint() if minimum else widget.sizeHint()
            return max(hint.width(), widget.minimumWidth())

        total = 0
        for column in range(columns):
            chunk = self._pairs[column::columns]
            labels = max((width(label) for label, _ in chunk), default=0)
            fields = max((width(field) for _, field in chunk), default=0)
            total += labels + fields + (self._spacing() if labels else 0)
        return total + self._spacing() * (columns - 1)

    def _fitting(self, width: int) -> int:
        for columns in range(self._max, 1, -1):
            if self._needed(columns) <= width:
                return columns
        return 1

    def _arrange(self, columns: int) -> None:
        if columns == self._columns:
            return
        while self._grid.count():
            self._grid.takeAt(0)
        for column in range(self._grid.columnCount()):
            self._grid.setColumnStretch(column, 0)
        for i, (label, field) in enumerate(self._pairs):
            row, column = divmod(i, columns)
            if label is None:
                self._grid.addWidget(field, row, 2 * column, 1, 2)
            else:
                self._grid.addWidget(label, row, 2 * column)
                self._grid.addWidget(field, row, 2 * column + 1)
        self._grid.setColumnStretch(2 * columns - (1 if self._stretch else 0), 1)
        self._columns = columns
        self.updateGeometry()

    def resizeEvent(self, event: QResizeEvent) -> None:
        """Re-arrange the pairs for the new width."""
        self._arrange(self._fitting(event.size().width()))
        super().resizeEvent(event)

    def minimumSizeHint(self) -> QSize:
        """One pair per row: the widest pair's minimum width; the height as arranged now."""
        return QSize(self._needed(1, minimum=True), self._grid.minimumSize().height())

    def sizeHint(self) -> QSize:
        """All ``max_columns`` side by side, when there is room."""
        return QSize(self._needed(self._max), self._grid.sizeHint().height())
