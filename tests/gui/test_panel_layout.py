"""The side panels shrink without clipping, so the data table keeps most of the window.

Checks: the reflowing label/field grid, the splitter that asks only for its minimum, the
first sharing of the window's width, the chart's short labels on a narrow panel, a tidy
donor table, and the window at 1400 x 900 (the data table gets at least 650 px).
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel, QLineEdit, QTableView, QWidget
from sklearn.datasets import load_wine

from imputer_app.gui.donor_panel import donor_rows
from imputer_app.gui.formatting import NOT_AVAILABLE, common_decimals, fixed_cell
from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.records_model import RAW_ROLE, RecordsModel
from imputer_app.gui.recovery_panel import MAX_CHART_COLUMNS, RecoveryPanel
from imputer_app.gui.settings import AppSettings
from imputer_app.gui.widgets import CompactSplitter, RecordTable, Reflow, buddy, named
from imputer_app.gui.window_layout import initial_split
from imputer_app.plan import FillPlan

# ------------------------------------------------------------------ reflow


def make_reflow(qtbot, n_pairs: int = 5, max_columns: int = 2) -> tuple[Reflow, list[QLineEdit]]:
    fields = [named(QLineEdit(), f"field{i}", f"Field {i}", "tip") for i in range(n_pairs)]
    for field in fields:
        field.setMinimumWidth(120)
    pairs = [(buddy(f"Setting number {i}:", field), field) for i, field in enumerate(fields)]
    flow = Reflow(pairs, max_columns=max_columns)
    qtbot.addWidget(flow)
    flow.show()
    return flow, fields


def grid_place(flow: Reflow, widget: QWidget) -> tuple[int, int]:
    row, column, _, _ = flow.layout().getItemPosition(flow.layout().indexOf(widget))
    return row, column


def test_reflow_puts_pairs_side_by_side_when_wide_and_stacks_them_when_narrow(qtbot):
    flow, fields = make_reflow(qtbot)
    flow.resize(flow.sizeHint().width() + 20, 200)
    qtbot.waitUntil(lambda: flow.columns == 2)
    # reading order, row by row: 0 | 1, 2 | 3, 4
    assert [grid_place(flow, f) for f in fields] == [(0, 1), (0, 3), (1, 1), (1, 3), (2, 1)]
    flow.resize(flow.minimumSizeHint().width(), 200)
    qtbot.waitUntil(lambda: flow.columns == 1)
    assert [grid_place(flow, f) for f in fields] == [(i, 1) for i in range(5)]
    # the label stays beside its own field
    labels = [w for w in flow.findChildren(QLabel)]
    assert all(grid_place(flow, label.buddy())[0] == grid_place(flow, label)[0] for label in labels)


def test_reflow_minimum_is_one_pair_wide(qtbot):
    flow, fields = make_reflow(qtbot, n_pairs=4, max_columns=4)
    one_pair = flow.minimumSizeHint().width()
    assert one_pair < flow.sizeHint().width() / 2
    assert one_pair >= fields[0].minimumWidth()


# ------------------------------------------------------------- small widgets


def test_record_table_enter_and_double_click_choose_the_current_row(qtbot):
    from imputer_app.gui.formatting import Cell

    host = QWidget()
    qtbot.addWidget(host)
    model = RecordsModel(["a"], parent=host)
    model.set_rows([[Cell("x", 1)], [Cell("y", 2)]])
    table = RecordTable(host, model, "t", "T", "tip")
    chosen: list[int] = []
    table.chosen.connect(lambda index: chosen.append(index.data(RAW_ROLE)))
    table.setCurrentIndex(model.index(1, 0))
    qtbot.keyClick(table, Qt.Key.Key_Return)
    table.doubleClicked.emit(model.index(0, 0))
    assert chosen == [2, 1]
    assert (table.objectName(), table.accessibleName(), table.toolTip()) == ("t", "T", "tip")
    assert table.editTriggers() == QTableView.EditTrigger.NoEditTriggers and not table.tabKeyNavigation()


def test_compact_splitter_asks_for_its_minimum_height(qtbot):
    splitter = CompactSplitter(Qt.Orientation.Vertical)
    qtbot.addWidget(splitter)
    for _ in range(2):
        child = QTableView()
        child.setMinimumHeight(60)
        splitter.addWidget(child)
    assert splitter.sizeHint().height() == splitter.minimumSizeHint().height() < 2 * 192


# ----------------------------------------------------------- sharing the width


@pytest.mark.parametrize(
    ("width", "setup_min", "panels_min", "expected"),
    [
        (1400, 262, 326, [280, 742, 378]),  # a fifth, the rest, about a quarter
        (1920, 262, 326, [300, 1102, 518]),  # the setup never wider than 300
        (1000, 280, 360, [280, 360, 360]),  # each side at least its minimum
        (900, 300, 400, [300, 300, 400]),  # the table keeps 300 px even then
    ],
)
def test_initial_split(width, setup_min, panels_min, expected):
    assert initial_split(width, setup_min, panels_min) == expected


def test_window_at_1400_by_900_gives_the_table_at_least_650_px(qtbot, samples_dir):
    window = MainWindow(AppSettings())
    qtbot.addWidget(window)
    window.resize(1400, 900)
    window.show()
    with qtbot.waitSignal(window.sheet_loaded, timeout=30_000):
        window.open_path(samples_dir / "river_survey.xlsx", {})
    qtbot.waitUntil(lambda: window.table.width() >= 650, timeout=3000)
    setup, _, panels = window.splitter.sizes()
    assert panels >= window.recovery_panel.minimumSizeHint().width()
    assert setup >= window.setup.minimumSizeHint().width()
    assert window.windowTitle() == "river_survey.xlsx[*] — Kinfill"


# ------------------------------------------------------------------- chart


def wine_with_gaps(columns: int) -> object:
    """The wine data shipped in scikit-learn (UCI), first ``columns`` columns, 5% cells removed."""
    frame = load_wine(as_frame=True).frame.iloc[:90, :columns].copy()
    frame.index = frame.index + 2
    rng = np.random.default_rng(3)
    return frame.mask(rng.random(frame.shape) < 0.05)


def report_on(qtbot, panel: RecoveryPanel, columns: int):
    panel.set_source(wine_with_gaps(columns), FillPlan())
    panel.k_to.setValue(4)
    panel.repeats.setValue(1)
    with qtbot.waitSignal(panel.report_ready, timeout=20_000) as ready:
        panel.run()
    qtbot.waitUntil(lambda: not panel.runner.is_running(), timeout=10_000)
    return ready.args[0]


@pytest.fixture
def recovery(qtbot):
    panel = RecoveryPanel()
    qtbot.addWidget(panel)
    yield panel
    assert panel.shutdown(10_000)


def legend_texts(panel: RecoveryPanel) -> list[str]:
    return [t.get_text() for legend in panel.figure.legends for t in legend.get_texts()]


def test_narrow_chart_keeps_short_labels(qtbot, recovery):
    recovery.resize(380, 800)
    recovery.show()
    report_on(qtbot, recovery, 4)
    axes = recovery.figure.axes[0]
    assert axes.get_ylabel() == "NRMSE"
    assert axes.get_title() == "Error against k (lower is better)"
    texts = legend_texts(recovery)
    assert texts and not any("(" in t for t in texts)
    assert "column mean" in texts and any(t.startswith("one-SE k = ") for t in texts)


def test_many_columns_start_with_the_overall_error(qtbot, recovery):
    recovery.resize(1000, 800)
    recovery.show()
    report = report_on(qtbot, recovery, MAX_CHART_COLUMNS + 3)
    assert len(report.kinds) > MAX_CHART_COLUMNS
    assert recovery.chart_columns.currentText() == "overall only"
    recovery.chart_columns.setCurrentIndex(0)  # all columns: drawn, but not named in the legend
    lines = [str(line.get_gid()) for line in recovery.figure.axes[0].lines]
    assert sum(g.startswith("column:") for g in lines) == len(report.kinds)
    assert not set(report.kinds) & set(legend_texts(recovery))
    assert recovery.figure.axes[0].get_ylabel() == "NRMSE on hidden cells"  # wide: the full name


# ------------------------------------------------------------- donor table


@pytest.mark.parametrize(
    ("values", "digits", "decimals"),
    [
        ([7.17, 7.1, 7.3], None, 2),
        ([0.2171, 0.694, 1.016], 4, 3),
        ([6.084, 114.2], 4, 1),
        ([3.0, 12.0], None, 0),
        ([0.0005, 0.00125], None, 5),
        (["ST-01", math.nan, None], None, 0),
        ([0.0, 0.0], 4, 0),
    ],
)
def test_common_decimals(values, digits, decimals):
    assert common_decimals(values, digits) == decimals


def test_donor_rows_line_up_and_keep_exact_values():
    donors = [
        SimpleNamespace(label=212, sample_id="VR-24-0210", distance=0.21714, value=7.17),
        SimpleNamespace(label=12, sample_id="VR-24-0010", distance=1.016, value=7.1),
        SimpleNamespace(label=40, sample_id="", distance=1.2, value=math.nan),
    ]
    rows = donor_rows(donors)
    assert [[c.text for c in row] for row in rows] == [
        ["212", "VR-24-0210", "0.217", "7.17"],
        ["12", "VR-24-0010", "1.016", "7.10"],
        ["40", "", "1.200", NOT_AVAILABLE],
    ]
    assert [row[2].value for row in rows] == [0.21714, 1.016, 1.2]  # exact, for sorting and tests
    assert fixed_cell("ST-03", 2).text == "ST-03"
