"""The window keeps answering while a long sheet is read, shown, filled and scrolled.

:class:`~imputer_app.gui.stall_meter.StallMeter` records the largest gap between event-loop
turns. Reading and filling run in a worker; what the window derives from a sheet or a
fill in proportion to its rows (column facts, default roles, the table's arrays, the gap
map's marks, the cell counts) is made there too, so that the window's own work on a
sheet grows with the rows it shows, not with the rows it has. The full-size goal
(1,000,000 rows, no gap over 100 ms) is printed by ``make bench``
(``benchmarks/bench_app.py``); here a 200,000-row sheet must stay under a bound with
room for a 2-core test machine, far below what showing it cost when that work ran on
the window's thread (about 2 s to open and 0.8 s per fill at this size). On a machine
busy with other work the bound becomes twice the worst stall of the same steps on a
2,000-row sheet, measured just before: load slows both alike, rows only the long one.

The sheet has few gaps, so that the fill itself is quick: the work the window must keep
off its thread grows with the rows, which are many. The window first shows a short
sheet: the first sheet of a window lays out every panel once (a tenth of a second at
any length of sheet), which is not what these tests measure.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from PySide6.QtWidgets import QAbstractItemView, QMessageBox

from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.settings import AppSettings
from imputer_app.gui.stall_meter import StallMeter

pytestmark = pytest.mark.slow

ROWS = 200_000
#: Bound on the worst stall for a shared machine (the goal on a quiet one is 100 ms).
WORST_GAP_MS = 250


def test_stall_meter_sees_a_blocked_loop(qtbot):
    import time

    meter = StallMeter()
    meter.start()
    qtbot.wait(50)
    time.sleep(0.3)  # the loop cannot turn
    qtbot.wait(30)
    assert 300 <= meter.stop() < 1000


@pytest.fixture(scope="module")
def long_csv(tmp_path_factory) -> tuple[str, int]:
    """A 200,000 x 6 csv with 600 blank cells (seeded); returns its path and the blanks."""
    rng = np.random.default_rng(0)
    values = rng.lognormal(1.0, 0.8, (ROWS, 6)).round(3)
    flat = rng.choice(values.size, size=600, replace=False)
    values.ravel()[flat] = np.nan
    path = tmp_path_factory.mktemp("long") / "long.csv"
    pd.DataFrame(values, columns=[f"m{j}" for j in range(6)]).to_csv(path, index=False)
    return str(path), int(np.isnan(values).sum())


@pytest.fixture
def window(qtbot, monkeypatch, tmp_path):
    monkeypatch.setattr(QMessageBox, "warning", lambda *a, **k: QMessageBox.StandardButton.Yes)
    window = MainWindow(AppSettings())
    qtbot.addWidget(window)
    window.resize(1200, 800)
    window.show()
    short = tmp_path / "short.csv"
    pd.DataFrame({"a": [1.0, 2.0, np.nan, 4.0], "b": [2.0, 1.0, 3.0, 5.0]}).to_csv(short, index=False)
    open_sheet(window, qtbot, str(short))  # every panel laid out once
    qtbot.wait(100)
    yield window
    window.session.mark_exported()


def open_sheet(window, qtbot, path: str) -> None:
    with qtbot.waitSignal(window.sheet_loaded, timeout=120_000):
        window.open_path(path)


def test_the_sheet_and_fill_arrays_are_made_off_the_window_thread(window, qtbot, tmp_path, monkeypatch):
    import threading

    from imputer_app.gui import sheet_facts, table_model

    made: list[tuple[str, bool]] = []  # (what, on the window's thread)

    def recorded(name, function):
        def call(*args):
            made.append((name, threading.current_thread() is threading.main_thread()))
            return function(*args)

        return call

    for module in (sheet_facts, table_model):
        for name in ("sheet_arrays", "layer_arrays"):
            monkeypatch.setattr(module, name, recorded(f"{module.__name__}.{name}", getattr(module, name)))
    rng = np.random.default_rng(1)
    values = rng.normal(10, 2, (300, 4)).round(2)
    values[rng.random(values.shape) < 0.05] = np.nan
    path = tmp_path / "short.csv"
    pd.DataFrame(values, columns=list("abcd")).to_csv(path, index=False)
    open_sheet(window, qtbot, str(path))
    with qtbot.waitSignal(window.preview_ready, timeout=60_000):
        window.preview_fill()
    window.apply_fill()
    window.undo()
    window.redo()
    worker = "imputer_app.gui.sheet_facts"
    assert made == [(f"{worker}.sheet_arrays", False), (f"{worker}.layer_arrays", False)]
    assert window.table_model.n_filled == int(np.isnan(values).sum())


def worst_stall_of_a_fill(window, qtbot, path: str) -> int:
    """The worst stall while ``path`` is opened, its fill previewed and then applied."""
    meter = StallMeter()
    meter.start()
    open_sheet(window, qtbot, path)
    qtbot.wait(200)  # the first paint of the sheet
    with qtbot.waitSignal(window.preview_ready, timeout=300_000):
        window.preview_fill()
    qtbot.wait(200)
    window.apply_fill()
    qtbot.wait(200)
    worst = meter.stop()
    assert window.session.applied is not None
    window.session.mark_exported()  # the next sheet opens without asking about this fill
    return worst


def test_opening_previewing_and_applying_a_long_sheet_leaves_the_window_free(
    window, qtbot, long_csv, tmp_path
):
    path, blanks = long_csv
    # The same steps on a 2,000-row sheet first: what the machine's own load costs them.
    # The long sheet must stay under the bound, or (on a machine busy with other work)
    # within twice the short sheet's worst: a stall that grew with the rows would not.
    short = tmp_path / "short_long.csv"
    pd.read_csv(path, nrows=2_000).to_csv(short, index=False)
    baseline = worst_stall_of_a_fill(window, qtbot, str(short))
    worst = worst_stall_of_a_fill(window, qtbot, path)
    applied = window.session.applied
    assert int(applied.filled.to_numpy().sum()) == blanks
    assert window.table_model.n_filled == blanks and window.table_model.rowCount() == ROWS
    # long counts are written with thousands separators
    summary = window.summary.text()
    assert summary.startswith("200,000 rows × 6 columns · 600 gaps (0.1%) · applied: 600 filled")
    bound = max(WORST_GAP_MS, 2 * baseline)
    assert worst < bound, f"the window stood still for {worst} ms (2,000 rows: {baseline} ms)"


def worst_stall_of_scrolling(window, qtbot, path: str) -> int:
    """Open ``path``, then the worst stall while scrolling to its last row, paging up and going to the top."""
    open_sheet(window, qtbot, path)
    qtbot.wait(200)
    table, rows = window.table, window.table_model.rowCount()
    meter = StallMeter()
    meter.start()
    table.scrollToBottom()
    qtbot.wait(50)
    last = window.data.rows.index(rows - 1, 2)
    table.setCurrentIndex(last)
    table.scrollTo(last, QAbstractItemView.ScrollHint.EnsureVisible)
    qtbot.wait(50)
    assert window.data.current_position() == (rows - 1, 2)
    assert table.rowAt(table.viewport().height() - 1) in (rows - 1, -1)  # the last row is in view
    for _ in range(5):  # page up, as the key does, then back to the top
        scroll = table.verticalScrollBar()
        scroll.setValue(scroll.value() - scroll.pageStep())
        qtbot.wait(30)
    table.scrollToTop()
    qtbot.wait(50)
    worst = meter.stop()
    assert table.rowAt(0) == 0
    return worst


def test_scrolling_to_the_end_of_a_long_sheet_and_back_is_smooth(window, qtbot, long_csv, tmp_path):
    path, _blanks = long_csv
    short = tmp_path / "short_long.csv"  # as above: the machine's own load, measured on 2,000 rows
    pd.read_csv(path, nrows=2_000).to_csv(short, index=False)
    baseline = worst_stall_of_scrolling(window, qtbot, str(short))
    worst = worst_stall_of_scrolling(window, qtbot, path)
    window.next_gap()  # a binary search over the gap positions, wherever the gap is
    qtbot.wait(30)
    row, column = window.data.current_position() or (-1, -1)
    assert np.isnan(window.session.sheet.frame.iloc[row, column])
    bound = max(WORST_GAP_MS, 2 * baseline)
    assert worst < bound, f"scrolling stood still for {worst} ms (2,000 rows: {baseline} ms)"
