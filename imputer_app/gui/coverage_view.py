"""The recovery panel's coverage view: whether the fill's intervals hold as often as they claim.

When the latest preview or applied fill carries a coverage table (``result.coverage``:
columns ``column``, ``level``, ``observed``, ``n_cells``; rows named ``"(all)"`` for the
whole sheet), the sheet-wide rows are drawn by :func:`imputer_app.charts.plot_coverage`
(nominal level against the share of hidden known cells inside their interval) beside one
sentence naming the level asked for and the share observed. A fill without one shows a
short note instead.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import pandas as pd
from matplotlib.backends.backend_qtagg import FigureCanvasQTAgg
from matplotlib.figure import Figure
from PySide6.QtCore import Qt
from PySide6.QtGui import QShowEvent
from PySide6.QtWidgets import QSizePolicy, QVBoxLayout, QWidget

from imputer_app.charts import plot_coverage
from imputer_app.errors import KinfillError
from imputer_app.gui.chart_view import palette_style
from imputer_app.gui.state import Session
from imputer_app.gui.widgets import named, text_label

if TYPE_CHECKING:
    from imputer_app.engine import FillResult

#: The rows of a coverage table that describe the whole sheet.
ALL_ROWS = "(all)"
IDLE_TEXT = (
    "Interval coverage: preview a fill with intervals on to see how often hidden known values "
    "fell inside their interval."
)


def sheet_coverage(result: FillResult | None) -> pd.DataFrame | None:
    """The whole-sheet rows of ``result.coverage`` as ``level``, ``observed``, ``n``; None when absent.

    ``n`` is the number of hidden cells scored (``n_cells``), which the chart shows in
    its title.
    """
    table = getattr(result, "coverage", None)
    if not isinstance(table, pd.DataFrame) or not {"column", "level", "observed"} <= set(table.columns):
        return None
    rows = table[table["column"].astype(str) == ALL_ROWS]
    if rows.empty:
        return None
    out = rows[["level", "observed"]].astype(float).reset_index(drop=True)
    if "n_cells" in rows.columns:
        out["n"] = rows["n_cells"].to_numpy()
    out = out.dropna(subset=["level", "observed"])
    return None if out.empty else out


def coverage_sentence(rows: pd.DataFrame, level: Any) -> str:
    """One sentence: the level asked for and the share of hidden cells inside their interval."""
    try:
        asked = float(level)
    except (TypeError, ValueError):
        asked = math.nan
    pick = rows[(rows["level"] - asked).abs() < 1e-9] if math.isfinite(asked) else rows.iloc[:0]
    row = (pick if not pick.empty else rows.sort_values("level")).iloc[-1]
    cells = (
        f" of {int(row['n'])} hidden known cells" if "n" in rows.columns and pd.notna(row.get("n")) else ""
    )
    return (
        f"Level asked for: {row['level']:.0%}. Inside their interval: {row['observed']:.0%}{cells}. "
        "On the dashed diagonal the intervals hold as often as they claim; below it they are too narrow."
    )


class CoverageView(QWidget):
    """The level and the share inside in words, above a small chart of nominal against observed coverage."""

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("recoveryCoverageView")
        self.session = session
        self.rows: pd.DataFrame | None = None
        self._shown: FillResult | None = None  # the fill whose coverage is shown
        self._stale = False  # a chart to draw once the view is shown
        self.figure = Figure(figsize=(3.0, 3.0), layout="constrained")
        self.canvas = named(
            FigureCanvasQTAgg(self.figure),
            "recoveryCoverageChart",
            "Interval coverage chart",
            "Nominal coverage (the level asked for) against the share of hidden known cells "
            "that fell inside their interval",
        )
        self.canvas.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        self.canvas.setMinimumSize(150, 150)
        self.canvas.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Expanding)
        self.note = text_label(
            self, "recoveryCoverageNote", "Interval coverage", "How often the intervals held", selectable=True
        )
        # The level and the share in words first, then the chart: a side panel is narrow.
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.note)
        layout.addWidget(self.canvas, 1)
        session.subscribe(self._on_session)
        self.refresh()

    def _on_session(self, event: str) -> None:
        shown = self.session.preview if self.session.preview is not None else self.session.applied
        if event == "sheet" or (event in ("preview", "applied") and shown is not self._shown):
            self.refresh()  # (Apply says both that the preview went and that a fill was applied)

    def refresh(self) -> None:
        """Draw the coverage of the preview if there is one, else of the applied fill."""
        result = self.session.preview if self.session.preview is not None else self.session.applied
        self._shown = result
        self.rows = sheet_coverage(result)
        self.canvas.setVisible(self.rows is not None)
        if self.rows is None:
            self.note.setText(IDLE_TEXT)
            return
        plan = getattr(result, "plan", None)
        self.note.setText(coverage_sentence(self.rows, getattr(plan, "interval_level", None)))
        # drawn when the view is shown: a chart costs the window a few tenths of a second
        self._stale = not self.isVisible()
        if not self._stale:
            self._draw(self.rows)

    def showEvent(self, event: QShowEvent) -> None:
        """Draw the chart of the current fill if it changed while the view was hidden."""
        super().showEvent(event)
        if self._stale and self.rows is not None:
            self._stale = False
            self._draw(self.rows)

    def _draw(self, rows: pd.DataFrame) -> None:
        with palette_style(self.palette()):
            try:
                plot_coverage(rows, figure=self.figure)
            except KinfillError as exc:  # a malformed table: say so rather than draw nonsense
                self.canvas.setVisible(False)
                self.note.setText(f"Interval coverage cannot be drawn: {exc}")
                return
            for ax in self.figure.axes:  # a small chart: smaller words, no legend (the note says it)
                legend = ax.get_legend()
                if legend is not None:
                    legend.remove()
                ax.set_xlabel("level asked for", fontsize="small")
                ax.set_ylabel("observed", fontsize="small")
                # "Interval coverage (120 cells)" -> "Coverage (120 cells)": fits a small chart
                ax.set_title(ax.get_title().replace("Interval coverage", "Coverage"), fontsize="small")
                ax.tick_params(labelsize="x-small")
        self.canvas.draw_idle()
