"""The window while a full sheet is read, scrolled and filled: the longest event-loop stall.

Goal (README "Benchmarks"): the app opens a 1,000,000 x 10 sheet (5 % blank cells),
scrolls it, starts a preview and cancels it, and previews and applies its fill with no
event-loop stall over 100 ms. The worst stall of each step is printed beside the time the
read and the fill take (the work the window must keep off its thread). A 2,000-row sheet
is opened, filled and applied first: the first sheet of a window lays out every panel and
loads the fill's modules once, at any length; its stall is printed apart.
``KINFILL_BENCH_APP_ROWS`` sets a smaller size; ``KINFILL_BENCH_APP_BLANKS`` the share of
blank cells (a small share, such as 0.0002, keeps the fill of a million rows to minutes:
the window's own work grows with the rows, the fill's with the blanks too).
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


#: Steps measured on the long sheet, in order.
STEPS = ("open", "scroll", "cancel", "preview", "apply")
#: Seconds a preview runs before the cancel step presses Cancel.
CANCEL_AFTER_S = 2.0


def main() -> None:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtCore import QTimer
    from PySide6.QtWidgets import QApplication

    from imputer_app.gui.launch import freeze_startup_objects
    from imputer_app.gui.main_window import MainWindow
    from imputer_app.gui.settings import AppSettings
    from imputer_app.gui.stall_meter import StallMeter

    rows = int(os.environ.get("KINFILL_BENCH_APP_ROWS", "1000000"))
    blanks = float(os.environ.get("KINFILL_BENCH_APP_BLANKS", "0.05"))
    path = _sheet(rows, blanks)
    short = _sheet(2_000, blanks)
    app = QApplication.instance() or QApplication([])
    window = MainWindow(AppSettings())
    window.interactive = False  # a problem goes to the log, never to a message box nobody answers
    window.resize(1400, 900)
    freeze_startup_objects()  # as kinfill-gui does once its window is made
    window.show()
    meter = StallMeter()
    worst: dict[str, int] = {}
    times: dict[str, float] = {}
    clock = [time.perf_counter()]
    cancelled = [False]

    def step(name: str, then: object) -> None:
        # the worst stall of the step that just ended, then the next step after a few idle turns
        worst[name] = meter.stop()
        times[name] = time.perf_counter() - clock[0]
        meter.start()
        QTimer.singleShot(300, then)  # type: ignore[call-overload]

    def warm_up() -> None:
        # a first sheet lays out every panel and loads the fill's modules once, at any
        # length of sheet: a 2,000-row sheet first, so the long sheet's steps measure rows
        with_short = [True]

        def opened() -> None:
            if with_short[0]:
                window.preview_fill()

        def previewed() -> None:
            if with_short[0]:
                window.apply_fill()
                window.session.mark_exported()
                with_short[0] = False
                step("warm-up", open_long)

        window.sheet_loaded.connect(opened)
        window.preview_ready.connect(previewed)
        clock[0] = time.perf_counter()
        window.open_path(short)

    def open_long() -> None:
        window.sheet_loaded.connect(lambda: step("open", scroll))
        window.preview_ready.connect(lambda: step("preview", apply))
        window.jobs.runner.cancelled.connect(lambda: step("cancel", preview))
        clock[0] = time.perf_counter()
        window.open_path(path)

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
        step("scroll", cancel)

    def cancel() -> None:
        # a preview started and stopped half-way: the window keeps answering, nothing changes
        clock[0] = time.perf_counter()
        cancelled[0] = True
        window.preview_fill()
        QTimer.singleShot(int(CANCEL_AFTER_S * 1000), window.jobs.busy.cancel_button.click)

    def preview() -> None:
        clock[0] = time.perf_counter()
        window.preview_fill()

    def apply() -> None:
        clock[0] = time.perf_counter()
        window.apply_fill()
        app.processEvents()
        step("apply", app.quit)

    meter.start()
    warm_up()
    app.exec()
    meter.stop()
    window.session.mark_exported()
    window.close()
    overall = max((worst.get(name, 0) for name in STEPS), default=0)
    verdict = "ok" if overall <= GOAL_MS and len(worst) == len(STEPS) + 1 else "MISSED"
    print(
        f"   {rows:,} x 10, {blanks:.2%} blank: read {times.get('open', float('nan')):.1f} s, "
        f"preview fill {times.get('preview', float('nan')):.1f} s"
    )
    print(f"   first sheet of the window (2,000 rows; one-time layout): {worst.get('warm-up', -1)} ms")
    for name in STEPS:
        print(f"   longest stall while {name:8s}: {worst.get(name, -1)} ms")
    print(f"   longest event-loop stall: {overall} ms (goal <= {GOAL_MS} ms) -> {verdict}")


if __name__ == "__main__":
    main()
