"""The app's preview after moving k, through the Qt-free session, against a fresh fill.

Goal (README "Benchmarks"): on 20,000 x 20 with 10 % gaps, the preview after moving k
is ready in at most 0.3 s. The session previews through its
:class:`~imputer_app.engine.NeighbourCache`; after the first preview, a move of k
re-combines the kept neighbour lists instead of searching. Both are timed side by side
with :func:`~imputer_app.engine.impute` on the same plan in the same run, with the
default interval (90 %, calibrated on hidden known cells) and without intervals, and
the values are checked equal.
"""

from __future__ import annotations

import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from imputer_app.engine import FillResult, impute
from imputer_app.gui.state import Session
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet

N_ROWS, N_COLS, GAPS = 20_000, 20, 0.10
GOAL_SECONDS = 0.3
#: The k values the control moves through after the first preview (k = 5).
MOVES = (6, 4, 7, 3, 8)


def _timed(func: Callable[[], Any]) -> tuple[float, Any]:
    start = time.perf_counter()
    out = func()
    return time.perf_counter() - start, out


def _sheet(folder: Path) -> Any:
    rng = np.random.default_rng(0)
    x = rng.normal(size=(N_ROWS, N_COLS))
    x[rng.random(x.shape) < GAPS] = np.nan
    path = folder / "preview.csv"
    pd.DataFrame(x, columns=[f"c{j}" for j in range(N_COLS)]).to_csv(path, index=False)
    return read_sheet(path)


def _same(a: FillResult, b: FillResult) -> bool:
    return bool(a.frame.equals(b.frame) and a.log.equals(b.log))


def compare(sheet: Any, interval: float | None) -> None:
    """Time the first preview, the previews after each move of k, and fresh fills of the same plans."""
    session = Session()
    session.load(sheet)
    session.set_plan(FillPlan(k=5, interval_level=interval))
    t_first, first = _timed(lambda: session.preview_job()(None, None))
    session.set_preview(first)
    t_plain, _ = _timed(lambda: impute(sheet, session.plan))
    moved, fresh, same = [], [], True
    for k in MOVES:
        session.set_plan(session.plan.replace(k=k))
        t_move, result = _timed(lambda: session.preview_job()(None, None))
        session.set_preview(result)
        t_fresh, reference = _timed(lambda: impute(sheet, session.plan))
        moved.append(t_move)
        fresh.append(t_fresh)
        same &= _same(result, reference)
    words = "no intervals" if interval is None else f"{interval:.0%} intervals"
    worst, typical = max(moved), float(np.median(moved))
    print(f"   {N_ROWS} x {N_COLS}, {GAPS:.0%} gaps, {words}")
    print(f"      first preview (search, keeps up to k=10) {t_first:6.2f} s   fresh fill {t_plain:6.2f} s")
    print(f"      preview after moving k: median {typical:6.3f} s, slowest {worst:6.3f} s   "
          f"(goal <= {GOAL_SECONDS} s: {'met' if worst <= GOAL_SECONDS else 'NOT met'})")  # fmt: skip
    print(f"      fresh fill of the same plans: median {float(np.median(fresh)):6.2f} s   "
          f"-> {float(np.median(fresh)) / typical:5.1f}x faster; same values and log: {same}",
          flush=True)  # fmt: skip


def main() -> None:
    with tempfile.TemporaryDirectory() as folder:
        sheet = _sheet(Path(folder))
    for interval in (None, FillPlan().interval_level):
        compare(sheet, interval)


if __name__ == "__main__":
    main()
