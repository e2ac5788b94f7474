"""The fill engine against scikit-learn's KNNImputer, timed side by side in one run.

Goals (README "Benchmarks"): 20,000 x 20 with 10% gaps, k=5, scaling none: at least 10x faster than
KNNImputer with values equal within 1e-9; 300 x 5,000 with 5% gaps: at least 5x faster;
200,000 x 30 with 5% gaps: finishes with peak memory under 2 GB.

Two Kinfill timings are printed: ``core`` is prepare + nearest_donors + combine (the
filled values only, what KNNImputer returns and what the recovery test runs) and
``impute`` is the whole public call, which also builds the fill log, the flags and the
filled DataFrame. Each timing is the best of a few runs; ratios are measured in the
same process on the same arrays, so they compare across machines.

Set ``KINFILL_BENCH_CASES`` to a comma-separated subset of ``long,wide,large`` to run
only those cases while iterating (default: all three).
"""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import time
from collections.abc import Callable
from typing import Any

import numpy as np
import pandas as pd
from sklearn.impute import KNNImputer

from imputer_app.engine import combine, impute, nearest_donors, prepare
from imputer_app.plan import FillPlan

PLAN = FillPlan(k=5, scaling="none", interval_level=None)  # KNNImputer gives no interval
CASES = ("long", "wide", "large")


def _data(n_rows: int, n_cols: int, gap: float, seed: int = 0) -> tuple[np.ndarray, pd.DataFrame]:
    rng = np.random.default_rng(seed)
    x = rng.normal(size=(n_rows, n_cols))
    x[rng.random(x.shape) < gap] = np.nan
    return x, pd.DataFrame(x, columns=[f"c{j}" for j in range(n_cols)])


def _best(func: Callable[[], Any], repeats: int) -> tuple[float, Any]:
    best, out = float("inf"), None
    for _ in range(repeats):
        start = time.perf_counter()
        out = func()
        best = min(best, time.perf_counter() - start)
    return best, out


def _core(frame: pd.DataFrame) -> dict[str, np.ndarray]:
    table = prepare(frame, PLAN)
    return combine(table, nearest_donors(table, kmax=PLAN.k), [PLAN.k])[PLAN.k]


def compare(name: str, n_rows: int, n_cols: int, gap: float, goal: float, repeats: int) -> None:
    """Time KNNImputer, Kinfill's core and impute on one array and print the ratios."""
    x, frame = _data(n_rows, n_cols, gap)
    t_ref, ref = _best(lambda: KNNImputer(n_neighbors=PLAN.k).fit_transform(x), repeats)
    t_core, _ = _best(lambda: _core(frame), repeats)
    t_full, result = _best(lambda: impute(frame, PLAN), repeats)
    got = result.frame.to_numpy()
    done = ~np.isnan(got)  # KNNImputer gives a column mean where Kinfill leaves a reasoned gap
    diff = float(np.max(np.abs(got[done] - ref[done]))) if done.any() else 0.0
    print(f"   {name}: {n_rows} x {n_cols}, {gap:.0%} gaps, k={PLAN.k}, scaling none")
    print(f"      KNNImputer           {t_ref:8.2f} s")
    print(f"      Kinfill core         {t_core:8.2f} s   {t_ref / t_core:6.1f}x faster   (goal {goal:g}x)")
    print(f"      Kinfill impute + log {t_full:8.2f} s   {t_ref / t_full:6.1f}x faster")
    print(f"      cells filled {int(result.filled.to_numpy().sum())}, left empty {len(result.unfilled)}, "
          f"max |difference| {diff:.1e} (goal <= 1e-9)", flush=True)  # fmt: skip


def _peak_gb() -> float:
    """Peak resident memory of this process in GB.

    Linux's VmHWM starts afresh in a new program; ``ru_maxrss`` (the fallback) keeps the
    parent's peak across fork and exec.
    """
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 2**20  # kB
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**20


def big() -> None:
    """200,000 x 30 with 5% gaps: time and peak memory (run in a fresh process)."""
    _, frame = _data(200_000, 30, 0.05)
    before = _peak_gb()
    start = time.perf_counter()
    result = impute(frame, PLAN)
    seconds = time.perf_counter() - start
    peak = _peak_gb()
    print(f"   large: 200000 x 30, 5% gaps, k={PLAN.k}: impute {seconds:.1f} s, "
          f"{int(result.filled.to_numpy().sum())} cells filled")  # fmt: skip
    print(f"      peak memory of the process {peak:.2f} GB "
          f"(data and imports alone {before:.2f} GB; goal < 2 GB)", flush=True)  # fmt: skip


def _wanted() -> tuple[str, ...]:
    """The cases named in ``KINFILL_BENCH_CASES`` (every case when it is unset or empty)."""
    named = [c.strip() for c in os.environ.get("KINFILL_BENCH_CASES", "").split(",") if c.strip()]
    unknown = sorted(set(named) - set(CASES))
    if unknown:
        known = ", ".join(CASES)
        raise SystemExit(f"KINFILL_BENCH_CASES: unknown case(s) {', '.join(unknown)}; known: {known}")
    return tuple(named) or CASES


def main() -> None:
    """Run every case (or those in ``KINFILL_BENCH_CASES``) and print timings and ratios."""
    wanted = _wanted()
    if "long" in wanted:
        compare("long", 20_000, 20, 0.10, goal=10, repeats=1)
    if "wide" in wanted:
        compare("wide", 300, 5_000, 0.05, goal=5, repeats=3)
    if "large" in wanted:
        # a fresh interpreter, so that the peak memory is this case's alone
        code = "from benchmarks.bench_engine import big; big()"
        subprocess.run([sys.executable, "-c", code], check=True)


if __name__ == "__main__":
    main()
