"""Evidence costs: a fill with intervals, and suggested weights, against their yardsticks.

Ratios, each timed side by side in one run on the same sheet:

* ``impute`` with ``interval_level=0.9`` against the same fill with intervals off
  (goal <= 2: the calibration hides and fills a capped number of known cells), on the
  long sheet (20,000 x 20 correlated numbers with 10 % gaps, from
  :func:`benchmarks.bench_recovery.make_sheet`) and on a wide one (300 x 5,000 random
  numbers with 5 % gaps, as in :mod:`benchmarks.bench_engine`);
* ``suggest_weights`` against one recovery test with its default settings
  (ks = 1..30, 5 repeats; goal <= 20).

The weights search is timed on the first ``KINFILL_BENCH_WEIGHT_ROWS`` rows (default
5,000) of the 20,000 x 20 sheet, because on a shared two-core machine the full size
takes many minutes; set it to 20000 for the full size.
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable

import numpy as np
import pandas as pd

from benchmarks.bench_recovery import N_COLS, N_ROWS, make_sheet
from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.validation import recovery_test, suggest_weights

GOAL_INTERVALS = 2.0
GOAL_WEIGHTS = 20.0


def _best(work: Callable[[], object], runs: int) -> float:
    best = float("inf")
    for _ in range(runs):
        start = time.perf_counter()
        work()
        best = min(best, time.perf_counter() - start)
    return best


def _line(label: str, ratio: float, goal: float) -> None:
    verdict = "ok" if ratio <= goal else "SLOWER THAN GOAL"
    print(f"   ratio {label:<34} {ratio:5.2f}  (goal <= {goal:g})  {verdict}", flush=True)


def _wide_sheet(n_rows: int = 300, n_cols: int = 5_000, gap: float = 0.05) -> pd.DataFrame:
    rng = np.random.default_rng(0)
    x = rng.normal(size=(n_rows, n_cols))
    x[rng.random(x.shape) < gap] = np.nan
    return pd.DataFrame(x, columns=[f"c{j}" for j in range(n_cols)])


def _intervals(label: str, sheet: pd.DataFrame, runs: int) -> None:
    """Time the fill with and without intervals, interleaved, and print the ratio."""
    off, on = float("inf"), float("inf")
    for _ in range(runs):
        off = min(off, _best(lambda: impute(sheet, FillPlan(interval_level=None)), 1))
        on = min(on, _best(lambda: impute(sheet, FillPlan(interval_level=0.9)), 1))
    print(f"   {label}: intervals off {off:7.2f} s; intervals 0.9 {on:7.2f} s (best of {runs})", flush=True)
    _line(f"intervals / none, {label}", on / off, GOAL_INTERVALS)


def main() -> None:
    sheet = make_sheet()
    impute(sheet.iloc[:500], FillPlan())  # warm up imports and BLAS threads
    _intervals(f"{N_ROWS} x {N_COLS}, 10% gaps", sheet, 2)
    _intervals("300 x 5000, 5% gaps", _wide_sheet(), 3)
    rows = int(os.environ.get("KINFILL_BENCH_WEIGHT_ROWS", "5000"))
    part = sheet.iloc[:rows]
    plan = FillPlan(interval_level=None)
    start = time.perf_counter()
    recovery_test(part, plan)
    t_test = time.perf_counter() - start
    start = time.perf_counter()
    got = suggest_weights(part, plan)
    t_weights = time.perf_counter() - start
    print(
        f"   {rows} x {N_COLS}: recovery test {t_test:7.2f} s; suggest_weights {t_weights:7.2f} s "
        f"({got.settings['fills']} fills)",
        flush=True,
    )
    _line(f"suggest_weights / recovery test ({rows} rows)", t_weights / t_test, GOAL_WEIGHTS)


if __name__ == "__main__":
    main()
