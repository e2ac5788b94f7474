"""Export speed: ``write_result`` to xlsx against ``DataFrame.to_excel`` (README "Benchmarks": goal <= 0.6x).

A 100,000 x 20 table (18 number columns, 2 category columns) with 5 % of its cells
filled, each with a fill-log row of 5 donors, is exported with its log; the
reference writes the same table alone with pandas' default xlsx engine (openpyxl),
without its index. Both run once, one after the other, on the same machine.
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path
from types import SimpleNamespace
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from imputer_app.plan import FillPlan
from imputer_app.sheets import write_result

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.sheets import Sheet

N_ROWS, N_NUMBERS, N_CATEGORIES, FILLED_SHARE, K = 100_000, 18, 2, 0.05, 5
GOAL = 0.6


def synthetic_result(n_rows: int = N_ROWS, seed: int = 0) -> SimpleNamespace:
    """Return a FillResult-shaped object with a fill-log row per filled cell."""
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame(
        rng.normal(10.0, 3.0, size=(n_rows, N_NUMBERS)).round(4),
        columns=[f"analyte_{j}" for j in range(N_NUMBERS)],
    )
    for j in range(N_CATEGORIES):
        frame[f"site_{j}"] = rng.choice(["north", "south", "east", "west"], n_rows).astype(object)
    frame.index = pd.RangeIndex(2, n_rows + 2)
    filled = pd.DataFrame(rng.random(frame.shape) < FILLED_SHARE, index=frame.index, columns=frame.columns)
    rows, cols = np.nonzero(filled.to_numpy())
    donors = rng.integers(2, n_rows + 2, size=(len(rows), K))
    distances = np.sort(rng.random((len(rows), K)), axis=1)
    values = frame.to_numpy(dtype=object)[rows, cols]
    pairs = zip(donors.tolist(), cols.tolist(), strict=True)
    log = pd.DataFrame(
        {
            "row": frame.index.to_numpy()[rows],
            "column": frame.columns.to_numpy()[cols],
            "value": values,
            "original_state": "missing",
            "method": "knn",
            "k": K,
            "donors": list(map(tuple, donors.tolist())),
            "distances": list(map(tuple, distances.round(6).tolist())),
            "donor_values": [tuple(frame.iat[d - 2, c] for d in ds) for ds, c in pairs],
            "spread": rng.random(len(rows)),
            "support": np.where(distances[:, -1] > 0.95, "weak", "ok"),
            "note": "",
        }
    )
    return SimpleNamespace(
        frame=frame,
        filled=filled,
        censored=pd.DataFrame(False, index=frame.index, columns=frame.columns),
        log=log,
        unfilled=pd.DataFrame({"row": [], "column": [], "reason": []}),
        plan=FillPlan(k=K),
        warnings=(),
        k_weak_threshold=0.95,
    )


def time_against_to_excel(
    folder: Path, sheet: Sheet | None, result: FillResult, **options: Any
) -> tuple[float, int, float]:
    """Seconds of ``write_result`` (and the file's size) and of ``DataFrame.to_excel``, side by side."""
    start = time.perf_counter()
    write_result(folder / "ours.xlsx", sheet, result, result.plan, **options)
    ours = time.perf_counter() - start
    size = (folder / "ours.xlsx").stat().st_size
    start = time.perf_counter()
    result.frame.to_excel(folder / "reference.xlsx", index=False)
    return ours, size, time.perf_counter() - start


def main() -> None:
    result = synthetic_result()
    print(f"   table {result.frame.shape[0]:,} x {result.frame.shape[1]}, fill log {len(result.log):,} rows")
    with tempfile.TemporaryDirectory() as folder:
        ours, size, reference = time_against_to_excel(Path(folder), None, result)
    ratio = ours / reference
    print(f"   write_result (xlsx, with fill log): {ours:6.2f} s  ({size / 1e6:.1f} MB)")
    print(f"   DataFrame.to_excel (openpyxl):      {reference:6.2f} s")
    print(f"   ratio {ratio:.2f} (goal <= {GOAL}) -> {'ok' if ratio <= GOAL else 'TOO SLOW'}")


if __name__ == "__main__":
    main()
