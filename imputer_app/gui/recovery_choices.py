"""The recovery panel's choices: "use this k" buttons, and the chart's controls.

:class:`ChoiceBar` holds the buttons that put the test's best k, its one-SE k or a
table row's k into the plan; :class:`ChartControls` the choice of column lines drawn
and the buttons that enlarge and save the chart. Both wrap onto more rows when narrow.
:func:`save_chart_dialog` asks for a file name and saves the chart.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtWidgets import QComboBox, QFileDialog, QHBoxLayout, QWidget

from imputer_app.gui.recovery_chart import MAX_CHART_COLUMNS, ErrorChart
from imputer_app.gui.widgets import Reflow, buddy, button, compact, named

if TYPE_CHECKING:
    from imputer_app.validation import RecoveryReport

CHART_FILTERS = "PNG image (*.png);;SVG drawing (*.svg)"


class ChoiceBar(Reflow):
    """The buttons that put a k of the test into the plan; the panel connects them."""

    def __init__(self, parent: QWidget) -> None:
        self.use_best_button = button(
            parent, "recoveryUseBest", "Use &best k", "Set k to the value with the lowest error"
        )
        self.use_one_se_button = button(
            parent,
            "recoveryUseOneSe",
            "Use &one-SE k",
            "Set k to the largest k whose error is within one standard error of the best "
            "(a smoother fill that does about as well)",
        )
        self.use_selected_button = button(
            parent,
            "recoveryUseSelected",
            "Use selected k",
            "Set k to the k of the selected row of the per-k table (or press Enter on the row)",
        )
        buttons = (self.use_best_button, self.use_one_se_button, self.use_selected_button)
        super().__init__([(None, b) for b in buttons], parent, max_columns=3, stretch=False)

    def focus_chain(self) -> list[QWidget]:
        """The bar's controls in tab order."""
        return [self.use_best_button, self.use_one_se_button, self.use_selected_button]


class ChartControls(Reflow):
    """Under the chart: which column lines it draws, and buttons to enlarge and save it."""

    def __init__(self, parent: QWidget) -> None:
        self.save_button = button(
            parent, "recoverySaveChart", "Save…", "Save the chart as a PNG image or an SVG drawing"
        )
        self.enlarge_button = button(
            parent,
            "recoveryEnlargeChart",
            "Enlarge…",
            "Open the chart in a window of its own that can be made as large as the screen",
        )
        self.chart_columns = compact(
            named(
                QComboBox(parent),
                "recoveryChartColumns",
                "Columns drawn in the chart",
                "Draw every fill column's own line, none, or one column beside the overall error",
            )
        )
        files = QWidget(parent)
        files_row = QHBoxLayout(files)
        files_row.setContentsMargins(0, 0, 0, 0)
        files_row.addWidget(self.enlarge_button)
        files_row.addWidget(self.save_button)
        label = buddy("Show:", self.chart_columns, parent)
        super().__init__([(label, self.chart_columns), (None, files)], parent, max_columns=2)

    def fill_chart_columns(self, report: RecoveryReport) -> None:
        """Offer "all columns", "overall only" and each column of the report's score kind."""
        kind = "number" if report.score_name == "score" else "category"
        columns = [c for c, k in report.kinds.items() if k == kind]
        self.chart_columns.blockSignals(True)
        self.chart_columns.clear()
        self.chart_columns.addItem("all columns", None)
        self.chart_columns.addItem("overall only", ())
        for column in columns:
            self.chart_columns.addItem(column, (column,))
        # Dozens of lines are a tangle on a small chart: start with the overall error then.
        self.chart_columns.setCurrentIndex(1 if len(columns) > MAX_CHART_COLUMNS else 0)
        self.chart_columns.blockSignals(False)

    def focus_chain(self) -> list[QWidget]:
        """The controls in tab order."""
        return [self.chart_columns, self.enlarge_button, self.save_button]


def chart_name(data: object) -> str:
    """Suggested chart file: beside the sheet, named after it (never the sheet itself)."""
    source = getattr(getattr(data, "source", None), "path", None)
    if source is None:
        return "error_vs_k.png"
    source = Path(source)
    return str(source.with_name(f"{source.stem}.error_vs_k.png"))


def save_chart_dialog(parent: QWidget, chart: ErrorChart, suggested: str) -> tuple[Path | None, str]:
    """Ask for a file name and save ``chart`` as PNG or SVG.

    Returns
    -------
    (Path or None, str)
        The path written (None when cancelled or failed) and the message to show
        (empty when cancelled).
    """
    name, chosen = QFileDialog.getSaveFileName(parent, "Save chart", suggested, CHART_FILTERS)
    if not name:
        return None, ""
    path = Path(name)
    if path.suffix.lower() not in (".png", ".svg"):
        path = path.with_suffix(".svg" if "svg" in (chosen or "").lower() else ".png")
    try:
        chart.save(path)
    except (OSError, ValueError) as exc:
        return None, f"Could not save the chart to {path}: {exc}"
    return path, f"Chart saved to {path}."
