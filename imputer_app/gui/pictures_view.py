"""The Pictures view: whether the filled values look like the measured ones.

After a preview or an applied fill, shows the distribution of measured and filled
values of a chosen fill column and a scatter of two chosen columns (filled points as
vermillion triangles, measured ones as blue circles). The scatter starts with the
column's scatter partner (:func:`imputer_app.sheets.scatter_partner`: the similarity
column most related to it). Clicking a point emits :attr:`PicturesView.point_chosen`
with its row label and column, so the window can select that cell.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import pandas as pd
from matplotlib.backends.backend_qtagg import FigureCanvasQTAgg
from matplotlib.figure import Figure
from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QShowEvent
from PySide6.QtWidgets import QComboBox, QFormLayout, QSizePolicy, QVBoxLayout, QWidget

from imputer_app.charts import ScatterPicture, plot_fill_distribution, plot_fill_scatter
from imputer_app.gui.widgets import buddy, compact, named, text_label

if TYPE_CHECKING:
    from matplotlib.backend_bases import PickEvent

    from imputer_app.engine import FillResult
    from imputer_app.gui.state import Session

IDLE_TEXT = "Preview a fill to see the filled values against the measured ones."
CANVAS_MIN_HEIGHT = 260


def filled_number_columns(result: FillResult) -> list[str]:
    """Number columns of ``result`` with at least one filled cell, in sheet order."""
    frame, filled = result.frame, result.filled
    return [
        str(c) for c in filled.columns if bool(filled[c].any()) and pd.api.types.is_numeric_dtype(frame[c])
    ]


def number_columns(result: FillResult) -> list[str]:
    """Every number column of ``result``, in sheet order."""
    return [str(c) for c in result.frame.columns if pd.api.types.is_numeric_dtype(result.frame[c])]


class PicturesView(QWidget):
    """Pictures of the shown fill (the preview, else the applied fill).

    Signals
    -------
    point_chosen(row_label, column)
        A point of the scatter was clicked: the cell of that row in the y column when
        the point was filled there, else in the x column when filled there, else y.
    """

    point_chosen = Signal(object, str)

    def __init__(self, parent: QWidget | None = None, *, session: Session) -> None:
        super().__init__(parent)
        self.setObjectName("picturesView")
        self.setAccessibleName("Pictures of the fill")
        self.session = session
        self.result: FillResult | None = None
        self.scatter: ScatterPicture | None = None
        self._stale = False  # the session's fill changed while the view was hidden
        self._build()
        session.subscribe(self._on_session)
        self.show_result(None)

    def _build(self) -> None:
        layout = QVBoxLayout(self)
        self.status = text_label(self, "picturesStatus", "Pictures status", IDLE_TEXT)
        layout.addWidget(self.status)
        form = QFormLayout()
        self.column_box = compact(
            named(QComboBox(self), "picturesColumn", "Fill column", "Fill column whose values are drawn")
        )
        self.x_box = compact(named(QComboBox(self), "picturesX", "Scatter x column", "Column across"))
        self.y_box = compact(named(QComboBox(self), "picturesY", "Scatter y column", "Column up"))
        form.addRow(buddy("Column", self.column_box, self), self.column_box)
        form.addRow(buddy("Scatter &x", self.x_box, self), self.x_box)
        form.addRow(buddy("Scatter y", self.y_box, self), self.y_box)
        layout.addLayout(form)
        self.distribution_canvas = self._canvas(
            "picturesDistribution",
            "Distribution of measured and filled values",
            "Measured values (blue) and filled values (vermillion, hatched) of the chosen column",
        )
        self.scatter_canvas = self._canvas(
            "picturesScatter",
            "Scatter of two columns",
            "Filled points are vermillion triangles; click one to select its cell in the table",
        )
        self.scatter_canvas.mpl_connect("pick_event", self._on_pick)
        layout.addWidget(self.distribution_canvas, 1)
        layout.addWidget(self.scatter_canvas, 1)
        self.column_box.currentTextChanged.connect(self._on_column)
        self.x_box.currentTextChanged.connect(lambda _t: self._draw_scatter())
        self.y_box.currentTextChanged.connect(lambda _t: self._draw_scatter())

    def _canvas(self, name: str, accessible: str, tip: str) -> FigureCanvasQTAgg:
        canvas = named(
            FigureCanvasQTAgg(Figure(figsize=(5, 3.4), layout="constrained")), name, accessible, tip
        )
        canvas.setMinimumHeight(CANVAS_MIN_HEIGHT)
        canvas.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Expanding)
        canvas.setFocusPolicy(Qt.FocusPolicy.ClickFocus)
        return canvas

    # ---------------------------------------------------------------- session
    def _on_session(self, event: str) -> None:
        if event in ("sheet", "preview", "applied"):
            if self.isVisible():
                self._show_current()
            else:  # drawn when the tab is opened: plotting a long sheet takes the window's time
                self._stale = True

    def _show_current(self) -> None:
        self._stale = False
        session = self.session
        self.show_result(session.preview if session.preview is not None else session.applied)

    def showEvent(self, event: QShowEvent) -> None:
        """Draw the pictures of the current fill if it changed while the view was hidden."""
        super().showEvent(event)
        if self._stale:
            self._show_current()

    def show_result(self, result: FillResult | None) -> None:
        """Show pictures of ``result`` (None: the idle text, no pictures)."""
        self.result = result
        columns = filled_number_columns(result) if result is not None else []
        numbers = number_columns(result) if result is not None else []
        self.status.setText(IDLE_TEXT if result is None else ("" if columns else "No number was filled."))
        self.status.setVisible(result is None or not columns)
        for box, items in ((self.column_box, columns), (self.x_box, numbers), (self.y_box, numbers)):
            box.blockSignals(True)
            box.clear()
            box.addItems(items)
            box.blockSignals(False)
        for box in (self.column_box, self.x_box, self.y_box):
            box.setEnabled(bool(columns))
        if columns:
            self._on_column(columns[0])
        else:
            self.scatter = None
            for canvas in (self.distribution_canvas, self.scatter_canvas):
                canvas.figure.clear()
                canvas.draw_idle()

    def _on_column(self, column: str) -> None:
        """Draw the column's distribution and set the scatter to it against its partner."""
        result: Any = self.result  # a FillResult has all that the pictures read
        if result is None or not column:
            return
        from imputer_app.sheets import scatter_partner

        plot_fill_distribution(result, column, figure=self.distribution_canvas.figure)
        self.distribution_canvas.draw_idle()
        partner = scatter_partner(result, column)
        for box, value in ((self.x_box, partner or column), (self.y_box, column)):
            box.blockSignals(True)
            box.setCurrentText(value)
            box.blockSignals(False)
        self._draw_scatter()

    def choose_scatter(self, x: str, y: str) -> None:
        """Show the scatter of ``y`` against ``x`` (as if chosen in the two lists)."""
        for box, value in ((self.x_box, x), (self.y_box, y)):
            box.blockSignals(True)
            box.setCurrentText(value)
            box.blockSignals(False)
        self._draw_scatter()

    def _draw_scatter(self) -> None:
        result: Any = self.result
        x, y = self.x_box.currentText(), self.y_box.currentText()
        if result is None or not x or not y:
            return
        self.scatter = plot_fill_scatter(result, x, y, figure=self.scatter_canvas.figure)
        self.scatter_canvas.draw_idle()

    # ---------------------------------------------------------------- clicks
    def _on_pick(self, event: PickEvent) -> None:
        picture, result = self.scatter, self.result
        indices: Any = getattr(event, "ind", None)
        if picture is None or result is None or indices is None or not len(indices):
            return
        rows = picture.point_rows(event.artist, [int(indices[0])])
        if not rows:
            return
        row = rows[0]
        x, y = self.x_box.currentText(), self.y_box.currentText()
        column = y
        if not bool(result.filled.at[row, y]) and bool(result.filled.at[row, x]):
            column = x
        self.point_chosen.emit(row, column)
