"""Long sheets: the k-d tree search against the block search, side by side in one run.

Goals (README "Benchmarks"): 1,048,576 x 10 with 5% gaps (missing completely at random),
k=5: the whole fill in at most 2 minutes with peak memory under 3 GB, printed with its
ratio to the block search, which is timed on a 100,000-row slice of the same sheet and
extrapolated by the square law (it compares every target with every candidate; a full
run takes a quarter of an hour). Two long sheets: an invented monitoring station's log
(:mod:`benchmarks.station_log`, ten channels with few degrees of freedom, z-scores) and
ten independent normal columns (no structure at all: the hardest case for any exact
search). 200,000 x 30 with 5% gaps: no slower than before (the cost estimate keeps the
block search there: printed with the path it chose and the two searches timed on a slice).

Set ``KINFILL_BENCH_LONG_ROWS`` to fewer rows while iterating (default 1,048,576) and
``KINFILL_BENCH_LONG_CASES`` to ``station``, ``normal`` or both (the default).
"""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import time

import numpy as np
import pandas as pd
from scipy.spatial import cKDTree

from benchmarks.bench_engine import PLAN, _data, _peak_gb
from benchmarks.station_log import station_log
from imputer_app.engine import _patterns, _tree_search, impute, nearest_donors, prepare
from imputer_app.engine._block_jobs import extra_donors
from imputer_app.plan import FillPlan

ROWS = int(os.environ.get("KINFILL_BENCH_LONG_ROWS", 1_048_576))
CASES = os.environ.get("KINFILL_BENCH_LONG_CASES", "station,normal").split(",")
SLICE = 100_000
#: The station log's plan: its channels have different units, so z-scores (the default).
STATION_PLAN = FillPlan(k=PLAN.k, interval_level=None)


def _sheet(case: str, rows: int) -> tuple[pd.DataFrame, FillPlan]:
    """The long sheet of a case (its first ``rows`` rows) and its plan."""
    if case == "station":
        return station_log(ROWS).head(rows), STATION_PLAN
    return _data(ROWS, 10, 0.05)[1].head(rows), PLAN


def _cpu() -> float:
    """CPU seconds of this process so far (less sensitive than wall time to other work on the machine)."""
    use = resource.getrusage(resource.RUSAGE_SELF)
    return use.ru_utime + use.ru_stime


def _search_seconds(rows: int, case: str, path: str) -> tuple[float, str, float]:
    """Wall seconds of the neighbour search alone on the first ``rows`` rows, its path and CPU seconds."""
    if case == "wide":
        frame, plan = _data(200_000, 30, 0.05)[1].head(rows), PLAN
    else:
        frame, plan = _sheet(case, rows)
    table = prepare(frame, plan)
    start, cpu = time.perf_counter(), _cpu()
    found = nearest_donors(table, kmax=PLAN.k, path=path)
    return time.perf_counter() - start, next(iter(found.values())).path, _cpu() - cpu


def long_fill(case: str) -> None:
    """The whole fill of a long sheet (run in a fresh process: its peak memory alone)."""
    frame, plan = _sheet(case, ROWS)
    before = _peak_gb()
    start, cpu = time.perf_counter(), _cpu()
    result = impute(frame, plan)
    seconds, cpu = time.perf_counter() - start, _cpu() - cpu
    print(f"   long, {case}: {ROWS} x 10, 5% gaps, k={PLAN.k}: impute {seconds:.1f} s, {cpu:.1f} CPU s "
          f"(goal <= 120 s), {int(result.filled.to_numpy().sum())} cells filled", flush=True)  # fmt: skip
    print(f"      search used: {result.search}")
    print(f"      peak memory of the process {_peak_gb():.2f} GB "
          f"(data and imports alone {before:.2f} GB; goal < 3 GB)", flush=True)  # fmt: skip
    print(f"      seconds={seconds:.3f} cpu={cpu:.3f}")


def _wide_choice() -> str:
    """The path the cost estimate takes for 200,000 x 30 (no search run)."""
    _, frame = _data(200_000, 30, 0.05)
    table = prepare(frame, PLAN)
    lay = _patterns.layout(table.features, table.groups)
    if lay is None:
        return f"block ({len(table.similarity_columns)} similarity columns > {_patterns.MAX_COLUMNS})"
    want = frame.isna().to_numpy()
    return "tree" if _patterns.tree_pays(lay, want, np.ones(len(frame), bool)) else "block"


def _tree_floor(case: str) -> None:
    """Print what one exact k-d tree query per target row costs among the complete rows alone.

    Every target row must be compared with the complete rows (the largest candidate
    pattern), so this is a floor under any search that asks a tree per target row. The
    tree and the order of the queries are the engine's (rows stored in leaf order, target
    rows in the order of their own tree's leaves); it is timed on the rows missing the
    first column only and scaled to all target rows.
    """
    frame, plan = _sheet(case, ROWS)
    lay = _patterns.layout(prepare(frame, plan).features, None)
    assert lay is not None
    full = (1 << lay.x.shape[1]) - 1
    shared = np.arange(1, lay.x.shape[1])
    coords = lay.x[lay.pattern == full][:, shared]
    sample = lay.x[lay.pattern == full ^ 1][:, shared]
    if not len(sample) or not len(coords):
        print("      floor: no complete rows or no rows missing the first column only")
        return
    coords = coords[_tree_search._leaf_order(coords, _tree_search.ORDER_LEAF)]
    tree = cKDTree(coords, leafsize=_tree_search.LEAF, balanced_tree=False, compact_nodes=False)
    sample = sample[_tree_search._leaf_order(sample, _tree_search.TARGET_LEAF)]
    start = time.thread_time()
    tree.query(sample, k=PLAN.k + extra_donors(PLAN.k) + 1)  # the engine's list: kept donors and one more
    per_query = (time.thread_time() - start) / len(sample)
    targets, cores = int((lay.pattern != full).sum()), os.cpu_count() or 1
    print(f"      floor: one exact cKDTree query per target row among the {tree.n} complete rows "
          f"alone: {per_query * 1e3:.3f} ms a query ({len(sample)} rows missing the first column) "
          f"x {targets} target rows = {per_query * targets:.0f} CPU s, so at least "
          f"{per_query * targets / cores:.0f} s on {cores} cores before any other work")  # fmt: skip


def _long_case(case: str) -> None:
    """The long fill of one sheet in a fresh process, beside the block search on a slice."""
    rows = min(SLICE, ROWS)
    t_block, _, c_block = _search_seconds(rows, case, "block")
    scale = (ROWS / rows) ** 2
    print(f"   {case} slice {rows} x 10: block search {t_block:.1f} s, {c_block:.1f} CPU s", flush=True)
    _tree_floor(case)
    code = f"from benchmarks.bench_long_sheet import long_fill; long_fill({case!r})"
    out = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True).stdout
    print("\n".join(line for line in out.splitlines() if "seconds=" not in line), flush=True)
    tail = out.rsplit("seconds=", 1)[1].split()
    seconds, cpu = float(tail[0]), float(tail[1].removeprefix("cpu="))
    print(f"      block search extrapolated to {ROWS} rows: {t_block * scale:.0f} s, "
          f"{c_block * scale:.0f} CPU s (square law from the slice) -> whole fill "
          f"{t_block * scale / seconds:.1f}x faster ({c_block * scale / cpu:.1f}x in CPU time)")  # fmt: skip


def main() -> None:
    """Time the long fill, the block search on a slice, and print the ratios."""
    print(f"   load: {os.getloadavg()[0]:.1f} {os.getloadavg()[1]:.1f} {os.getloadavg()[2]:.1f} "
          f"(1, 5, 15 min) on {os.cpu_count()} cores", flush=True)  # fmt: skip
    for case in CASES:
        _long_case(case)
    print(f"   wide: 200000 x 30, 5% gaps: the cost estimate takes {_wide_choice()}")
    t_auto, used, _ = _search_seconds(20_000, "wide", "auto")
    t_old, _, _ = _search_seconds(20_000, "wide", "block")
    print(f"      20,000-row slice: auto ({used}) {t_auto:.1f} s, block {t_old:.1f} s "
          f"(ratio {t_old / t_auto:.2f}; goal >= 1 within the noise)", flush=True)  # fmt: skip


if __name__ == "__main__":
    main()
