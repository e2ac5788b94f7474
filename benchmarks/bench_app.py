"""The window while a full sheet is read and filled: the longest event-loop stall.

Goal (README "Benchmarks"): the app opens a 1,000,000 x 10 sheet (5 % blank cells) and
previews its fill with no event-loop stall over 100 ms, printed beside the time the
read and the fill take (the work the window must keep off its thread).
``KINFILL_BENCH_APP_ROWS`` sets a smaller size for a quick look.
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


def _sheet(rows: int) -> Path:
    folder = Path(tempfile.gettempdir()) / "kinfill-bench"
    folder.mkdir(exist_ok=True)
    path = folder / f"app_{rows}x10_seed{SEED}.csv"
    if not path.exists():
        rng = np.random.default_rng(SEED)
        values = rng.lognormal(1.0, 0.8, (rows, 10)).round(3)
        values[rng.random(values.shape) < 0.05] = np.nan
        partial = path.with_suffix(".partial.csv")
        pd.DataFrame(values, columns=[f"m{j:02d}" for j in range(1, 11)]).to_csv(partial, index=False)
        partial.replace(path)
    return path


def main() -> None:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtWidgets import QApplication

    from imputer_app.gui.main_window import MainWindow
    from imputer_app.gui.settings import AppSettings
    from imputer_app.gui.stall_meter import StallMeter

    rows = int(os.environ.get("KINFILL_BENCH_APP_ROWS", "1000000"))
    path = _sheet(rows)
    app = QApplication.instance() or QApplication([])
    window = MainWindow(AppSettings())
    window.resize(1400, 900)
    window.show()
    meter = StallMeter()
    times: dict[str, float] = {}
    start = time.perf_counter()

    def opened() -> None:
        times["read"] = time.perf_counter() - start
        window.preview_fill()

    def previewed() -> None:
        times["fill"] = time.perf_counter() - start - times["read"]
        app.quit()

    window.sheet_loaded.connect(opened)
    window.preview_ready.connect(previewed)
    meter.start()
    window.open_path(path)
    app.exec()
    worst = meter.stop()
    window.session.mark_exported()
    window.close()
    fill = times.get("fill", float("nan"))
    verdict = "ok" if worst <= GOAL_MS else "MISSED"
    print(f"   {rows:,} x 10: read {times['read']:.1f} s, preview fill {fill:.1f} s")
    print(f"   longest event-loop stall: {worst} ms (goal <= {GOAL_MS} ms) -> {verdict}")


if __name__ == "__main__":
    main()
