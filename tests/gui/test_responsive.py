"""The window keeps answering while a sheet is read and filled (work runs off its thread).

:class:`~imputer_app.gui.stall_meter.StallMeter` records the largest gap between event-loop
turns. The full-size goal (1,000,000 rows, no gap over 100 ms) is printed by
``make bench`` (``benchmarks/bench_app.py``); here a mid-size sheet must stay under a
bound loose enough for a shared test machine yet far below a read or a fill done on
the window's thread (several seconds at this size).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from PySide6.QtWidgets import QMessageBox

from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.settings import AppSettings
from imputer_app.gui.stall_meter import StallMeter

pytestmark = pytest.mark.slow

#: Loose bound for a shared machine (the goal on a quiet one is 100 ms).
WORST_GAP_MS = 1500


def test_stall_meter_sees_a_blocked_loop(qtbot):
    import time

    meter = StallMeter()
    meter.start()
    qtbot.wait(50)
    time.sleep(0.3)  # the loop cannot turn
    qtbot.wait(30)
    assert 300 <= meter.stop() < 1000


def test_reading_and_previewing_a_long_sheet_leaves_the_window_free(qtbot, tmp_path, monkeypatch):
    rng = np.random.default_rng(0)
    values = rng.lognormal(1.0, 0.8, (40_000, 6)).round(3)
    values[rng.random(values.shape) < 0.05] = np.nan
    path = tmp_path / "long.csv"
    pd.DataFrame(values, columns=[f"m{j}" for j in range(6)]).to_csv(path, index=False)
    monkeypatch.setattr(QMessageBox, "warning", lambda *a, **k: QMessageBox.StandardButton.Yes)
    window = MainWindow(AppSettings())
    qtbot.addWidget(window)
    window.show()
    meter = StallMeter()
    meter.start()
    with qtbot.waitSignal(window.sheet_loaded, timeout=120_000):
        window.open_path(path)
    with qtbot.waitSignal(window.preview_ready, timeout=300_000):
        window.preview_fill()
    worst = meter.stop()
    assert window.session.preview is not None and int(window.session.preview.filled.to_numpy().sum()) > 10_000
    assert worst < WORST_GAP_MS, f"the window stood still for {worst} ms"
    window.session.mark_exported()
