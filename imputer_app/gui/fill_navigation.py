"""Moving through the filled cells: next/previous weak fill, and the row filter's bar.

:func:`next_cell` (and :func:`next_position`, from the marked cells' positions) finds the
next (or previous) marked cell after the current one in
reading order (row by row, left to right), wrapping at the ends; the data view uses it
for "next gap" and "next/previous weak fill". :class:`RowBar` is the slim bar above the
table while a fill is shown: which rows to show (all, only rows with fills, only weak
fills), buttons for the previous and next weak fill, and how many there are.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import Signal
from PySide6.QtGui import QAction, QActionGroup
from PySide6.QtWidgets import QComboBox, QHBoxLayout, QLabel, QMenu, QSizePolicy, QToolButton, QWidget

from imputer_app.gui.row_filter import ROW_FILTERS
from imputer_app.gui.widgets import buddy, named


def next_cell(
    mask: np.ndarray, current: tuple[int, int] | None, backwards: bool = False
) -> tuple[int, int] | None:
    """The next marked cell after ``current`` in reading order (wrapping), or None.

    Parameters
    ----------
    mask : ndarray of bool, shape (n_rows, n_columns)
        True at the cells to visit.
    current : (row, column) or None
        Where the search starts (None: before the first cell, or after the last one
        when ``backwards``).
    backwards : bool, default=False
        Search towards the top instead.

    >>> m = np.array([[False, True], [True, False]])
    >>> next_cell(m, (0, 1)), next_cell(m, (0, 1), backwards=True)
    ((1, 0), (1, 0))
    """
    return next_position(np.flatnonzero(mask.ravel()), mask.shape, current, backwards)


def next_position(
    hits: np.ndarray, shape: tuple[int, int], current: tuple[int, int] | None, backwards: bool = False
) -> tuple[int, int] | None:
    """:func:`next_cell` from the marked cells' flat positions (``row * n_columns + column``, ascending).

    A binary search: the cost does not grow with the rows of the sheet.

    >>> next_position(np.array([1, 2]), (2, 2), (0, 1)), next_position(np.array([1, 2]), (2, 2), None, True)
    ((1, 0), (1, 0))
    """
    if hits.size == 0:
        return None
    n_cols = shape[1]
    here = (shape[0] * n_cols if backwards else -1) if current is None else current[0] * n_cols + current[1]
    if backwards:
        at = int(np.searchsorted(hits, here, side="left")) - 1  # the last hit before here
        flat = int(hits[at]) if at >= 0 else int(hits[-1])
    else:
        at = int(np.searchsorted(hits, here, side="right"))  # the first hit after here
        flat = int(hits[at]) if at < hits.size else int(hits[0])
    row, col = divmod(flat, n_cols)
    return row, col


def filter_actions(parent: QWidget) -> tuple[QMenu, dict[str, QAction]]:
    """A "Show rows" menu of checkable, exclusive filter actions (one per :data:`ROW_FILTERS`)."""
    menu = QMenu("Show &rows", parent)
    menu.setObjectName("menuShowRows")
    group = QActionGroup(menu)
    group.setExclusive(True)
    actions: dict[str, QAction] = {}
    for key, label in ROW_FILTERS.items():
        action = QAction(label, menu)
        action.setObjectName(f"actionRows{key.title()}")
        action.setCheckable(True)
        action.setChecked(key == "all")
        action.setData(key)
        group.addAction(action)
        menu.addAction(action)
        actions[key] = action
    return menu, actions


class RowBar(QWidget):
    """Above the table while a fill is shown: the row filter and the weak-fill buttons.

    Signals
    -------
    mode_chosen(str)
        A filter key of :data:`ROW_FILTERS` picked in the bar.
    step(bool)
        Go to the next weak fill (False) or the previous one (True).
    """

    mode_chosen = Signal(str)
    step = Signal(bool)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("rowBar")
        self.setAccessibleName("Rows shown and weak fills")
        # like the read bar: the table's column decides the window's minimum width
        self.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Fixed)
        layout = QHBoxLayout(self)
        layout.setContentsMargins(4, 0, 4, 0)
        self.combo = named(
            QComboBox(self),
            "rowFilterCombo",
            "Rows shown",
            "Show all rows, only rows where the fill wrote a value, or only rows with a weak fill",
        )
        for key, label in ROW_FILTERS.items():
            self.combo.addItem(label, key)
        self.combo.activated.connect(lambda _i: self.mode_chosen.emit(str(self.combo.currentData())))
        layout.addWidget(buddy("Rows:", self.combo, self))
        layout.addWidget(self.combo)
        self.previous_button = self._button(
            "previousWeakButton", "◀ Previous weak", "Previous weak fill (Shift+F4)"
        )
        self.next_button = self._button("nextWeakButton", "Next weak ▶", "Next weak fill (F4)")
        self.previous_button.clicked.connect(lambda: self.step.emit(True))
        self.next_button.clicked.connect(lambda: self.step.emit(False))
        layout.addWidget(self.previous_button)
        layout.addWidget(self.next_button)
        self.count = named(QLabel(self), "rowBarCount", "Rows and weak fills", "")
        layout.addWidget(self.count, 1)

    def _button(self, name: str, text: str, tip: str) -> QToolButton:
        button = named(QToolButton(self), name, tip.split(" (")[0], tip)
        button.setText(text)
        button.setAutoRaise(True)
        return button

    def show_counts(self, mode: str, shown: int, rows: int, weak: int, filled: int) -> None:
        """Say which rows are shown and how many of the ``filled`` cells are ``weak`` fills."""
        self.combo.setCurrentIndex(max(0, self.combo.findData(mode)))
        text = f"{weak:,} weak of {filled:,} fills"
        if mode != "all":
            text = f"{shown:,} of {rows:,} rows shown · " + text
        self.count.setText(text)
        self.count.setToolTip("Weak support: the donors are far away or disagree; check these first.")
        for button in (self.previous_button, self.next_button):
            button.setEnabled(weak > 0)

    def say(self, text: str) -> None:
        """Show a short remark (e.g. nothing to go to) in place of the counts."""
        self.count.setText(text)
