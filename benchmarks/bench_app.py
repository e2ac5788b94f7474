"""The window while a full sheet is read, scrolled and filled: the longest event-loop stall.

Goal (README "Benchmarks"): the app opens a 1,000,000 x 10 sheet (5 % blank cells),
scrolls it and previews and applies its fill with no event-loop stall over 100 ms. The
worst stall of each step is printed beside the time the read and the fill take (the work
the window must keep off its thread). ``KINFILL_BENCH_APP_ROWS`` sets a smaller size;
``KINFILL_BENCH_APP_BLANKS`` the share of blank cells (a small share, such as 0.0002,
keeps the fill of a million rows to minutes: the window's own work grows with the rows,
the fill's with the blanks too).
"""

from __future__ import annotations

import os
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

GOAL_MS = 100
SEED = 0


def _sheet(rows: int, blanks: float) -> Path:
    folder = Path(tempfile.gettempdir()) / "kinfill-bench"
    folder.mkdir(exist_ok=True)
    share = "" if blanks == 0.05 else f"_blank{blanks:g}"  # the 5 % sheet keeps its old name
    path = folder / f"app_{rows}x10_seed{SEED}{share}.csv"
    if not path.exists():
        rng = np.random.default_rng(SEED)
        values = rng.lognormal(1.0, 0.8, (rows, 10)).round(3)
        values[rng.random(values.shape) < blanks] = np.nan
        partial = path.with_suffix(".partial.csv")
        pd.DataFrame(values, columns=[f"m{j:02d}" for j in range(1, 11)]).to_csv(partial, index=False)
        partial.replace(path)
    return path


def main() -> None:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtCore import QTimer
    from PySide6.QtWidgets import QApplication

    from imputer_app.gui.main_window import MainWindow
    from imputer_app.gui.settings import AppSettings
    from imputer_app.gui.stall_meter import StallMeter

    rows = int(os.environ.get("KINFILL_BENCH_APP_ROWS", "1000000"))
    blanks = float(os.environ.get("KINFILL_BENCH_APP_BLANKS", "0.05"))
    path = _sheet(rows, blanks)
    app = QApplication.instance() or QApplication([])
    window = MainWindow(AppSettings())
    window.interactive = False  # a problem goes to the log, never to a message box nobody answers
    window.resize(1400, 900)
    window.show()
    meter = StallMeter()
    worst: dict[str, int] = {}
    times: dict[str, float] = {}
    clock = [time.perf_counter()]

    def step(name: str, then: object) -> None:
        # the worst stall of the step that just ended, then the next step after a few idle turns
        worst[name] = meter.stop()
        times[name] = time.perf_counter() - clock[0]
        meter.start()
        QTimer.singleShot(300, then)  # type: ignore[call-overload]

    def scroll() -> None:
        clock[0] = time.perf_counter()
        table = window.table
        table.scrollToBottom()
        for _ in range(5):
            app.processEvents()
            bar = table.verticalScrollBar()
            bar.setValue(bar.value() - bar.pageStep())
        app.processEvents()
        table.scrollToTop()
        app.processEvents()
        window.next_gap()
        app.processEvents()
        step("scroll", preview)

    def preview() -> None:
        clock[0] = time.perf_counter()
        window.preview_fill()

    def apply() -> None:
        clock[0] = time.perf_counter()
        window.apply_fill()
        app.processEvents()
        step("apply", app.quit)

    window.sheet_loaded.connect(lambda: step("open", scroll))
    window.preview_ready.connect(lambda: step("preview", apply))
    meter.start()
    window.open_path(path)
    app.exec()
    meter.stop()
    window.session.mark_exported()
    window.close()
    overall = max(worst.values(), default=0)
    verdict = "ok" if overall <= GOAL_MS else "MISSED"
    print(
        f"   {rows:,} x 10, {blanks:.2%} blank: read {times.get('open', float('nan')):.1f} s, "
        f"preview fill {times.get('preview', float('nan')):.1f} s"
    )
    for name in ("open", "scroll", "preview", "apply"):
        print(f"   longest stall while {name:8s}: {worst.get(name, -1)} ms")
    print(f"   longest event-loop stall: {overall} ms (goal <= {GOAL_MS} ms) -> {verdict}")


if __name__ == "__main__":
    main()
