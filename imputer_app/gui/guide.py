"""Help > Guide: the five steps, the recovery test, the cell symbols, weak support, the export."""

from __future__ import annotations

import html

from PySide6.QtWidgets import QDialog, QDialogButtonBox, QTextBrowser, QVBoxLayout, QWidget

from imputer_app.gui.markers import MARKERS, WEAK_SYMBOL

#: The five steps of a fill, as the guide lists them.
FIVE_STEPS = (
    "<b>Open</b> a sheet (File &gt; Open, a double-click, or drop it on the window). The bar above the "
    "table shows the worksheet, header row and markers Kinfill found; change them there.",
    "<b>Set up the columns</b> on the left: which columns find similar rows (similarity), which get "
    "their gaps filled (fill), which are copied unchanged (carried).",
    "<b>Run the recovery test</b> (Ctrl+T) and use the k it suggests.",
    "<b>Preview</b> the fill (F5): proposed values appear in the table, nothing is changed yet. Select "
    "one to see its donors. <b>Apply</b> it (Ctrl+Return); Undo takes it back.",
    "<b>Export</b> (Ctrl+E): a new file; the sheet you opened is never changed.",
)


def guide_html() -> str:
    """The guide as simple HTML."""
    steps = "".join(f"<li>{step}</li>" for step in FIVE_STEPS)
    symbols = "".join(
        f"<tr><td><b>{html.escape(marker.symbol)}</b></td><td>{html.escape(marker.label)}</td>"
        f"<td>{html.escape(marker.description)}</td></tr>"
        for marker in MARKERS.values()
    )
    return (
        f"<h3>Five steps</h3><ol>{steps}</ol>"
        "<h3>What the recovery test measures</h3>"
        "<p>It hides a share of the values you do know, fills them with each k, and compares the fills "
        "with the hidden truth. The error is the NRMSE: the root-mean-square error divided by the "
        "column's standard deviation, so 1.0 is as bad as guessing the column average and 0 is perfect. "
        "The column-average line is the bar a fill must beat. The one-SE k is the largest k whose error "
        "is within one standard error of the best: a smoother fill that does about as well.</p>"
        f"<h3>Cell symbols</h3><table cellpadding='3'>{symbols}</table>"
        f"<p>A <b>{WEAK_SYMBOL}</b> after a fill symbol means <b>weak support</b>: the nearest donors are "
        "far away compared with the rest of the sheet, so the value deserves a look. F4 and Shift+F4 "
        "go to the next and previous weak fill; the bar above the table can show only the rows with "
        "fills, or with weak fills.</p>"
        "<h3>Interval</h3><p>Each filled number comes with the spread of its donors' values (shown in "
        "the Donors panel and in the fill log): a wide spread means the donors disagree.</p>"
        "<h3>What the export writes</h3><ul>"
        "<li>an <b>xlsx</b>: sheet <i>Filled</i> (the cleaned table, filled cells marked), "
        "<i>Fill log</i> (one row per filled cell: donors, method, support), <i>About this fill</i> "
        "(the plan, the input's checksum, the cautions);</li>"
        "<li>a <b>csv</b>: the cleaned table, with the fill log and the run record in files beside "
        "it (<i>.fill-log.csv</i>, <i>.run.json</i>).</li></ul>"
        "<p>Filled values are estimates, not measurements.</p>"
    )


class GuideDialog(QDialog):
    """A short guide to Kinfill, inside the app."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("guideDialog")
        self.setWindowTitle("Kinfill guide")
        self.resize(720, 640)
        layout = QVBoxLayout(self)
        self.text = QTextBrowser(self)
        self.text.setObjectName("guideText")
        self.text.setAccessibleName("Guide")
        self.text.setHtml(guide_html())
        layout.addWidget(self.text)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close, self)
        buttons.rejected.connect(self.reject)
        layout.addWidget(buttons)
