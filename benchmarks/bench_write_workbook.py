"""Workbook export speed: filled cells written into a 100,000-row workbook against ``to_excel``.

A workbook of 100,000 rows x 20 columns (a title row, a header, 18 number columns and
2 category columns, 5 % of the number cells blank) is written by xlsxwriter and read
by Kinfill; the fill (every blank cell, each with a fill-log row of 5 donors) is then
exported with ``layout="workbook"``: the workbook's own parts copied, the filled cells
and their notes written in, the log sheets added. The reference writes the same table
alone with ``DataFrame.to_excel`` (openpyxl), without its index. Both run once, one
after the other, on the same machine; the flat export's goal (<= 0.6x) is printed for
comparison.
"""

from __future__ import annotations

import tempfile
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import xlsxwriter

from benchmarks.bench_write import time_against_to_excel
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet

N_ROWS, N_NUMBERS, N_CATEGORIES, GAP_SHARE, K = 100_000, 18, 2, 0.05, 5
GOAL = 0.6
FIRST_ROW = 3  # 1-based file row of the first sample (title in row 1, header in row 2)


def build_workbook(path: Path, seed: int = 0) -> tuple[pd.DataFrame, np.ndarray]:
    """Write the workbook; return the full table (file rows as index) and the gap mask."""
    rng = np.random.default_rng(seed)
    numbers = rng.normal(10.0, 3.0, size=(N_ROWS, N_NUMBERS)).round(4)
    frame = pd.DataFrame(numbers, columns=[f"analyte_{j}" for j in range(N_NUMBERS)])
    for j in range(N_CATEGORIES):
        frame[f"site_{j}"] = rng.choice(["north", "south", "east", "west"], N_ROWS).astype(object)
    frame.index = pd.RangeIndex(FIRST_ROW, N_ROWS + FIRST_ROW, name="row")
    gaps = np.zeros(frame.shape, dtype=bool)
    gaps[:, :N_NUMBERS] = rng.random((N_ROWS, N_NUMBERS)) < GAP_SHARE
    book = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    sheet = book.add_worksheet("Results")
    sheet.write(0, 0, "Benchmark panel (invented)")
    sheet.write_row(1, 0, list(frame.columns))
    shown = frame.astype(object).to_numpy()
    shown[gaps] = None
    for i, row in enumerate(shown.tolist()):
        sheet.write_row(FIRST_ROW - 1 + i, 0, [v if v is not None else "" for v in row])
    book.close()
    return frame, gaps


def fill_of(
    sheet_frame: pd.DataFrame, full: pd.DataFrame, gaps: np.ndarray, seed: int = 1
) -> SimpleNamespace:
    """A FillResult-shaped object that fills every gap with its true value, logged with 5 donors."""
    rng = np.random.default_rng(seed)
    rows, cols = np.nonzero(gaps)
    frame = sheet_frame.copy()
    block = frame.iloc[:, :N_NUMBERS].to_numpy(dtype=float, copy=True)
    block[rows, cols] = full.iloc[:, :N_NUMBERS].to_numpy()[rows, cols]
    frame.iloc[:, :N_NUMBERS] = block
    donors = rng.integers(FIRST_ROW, N_ROWS + FIRST_ROW, size=(len(rows), K))
    distances = np.sort(rng.random((len(rows), K)), axis=1)
    log = pd.DataFrame(
        {
            "row": frame.index.to_numpy()[rows],
            "column": frame.columns.to_numpy()[cols],
            "value": block[rows, cols],
            "original_state": "missing",
            "method": "knn",
            "k": K,
            "donors": list(map(tuple, donors.tolist())),
            "distances": list(map(tuple, distances.round(6).tolist())),
            "donor_values": list(map(tuple, rng.normal(10.0, 3.0, (len(rows), K)).round(4).tolist())),
            "spread": rng.random(len(rows)),
            "support": np.where(distances[:, -1] > 0.95, "weak", "ok"),
            "note": "",
            "original_text": "",
        }
    )
    return SimpleNamespace(
        frame=frame,
        filled=pd.DataFrame(gaps, index=frame.index, columns=frame.columns),
        censored=pd.DataFrame(False, index=frame.index, columns=frame.columns),
        log=log,
        unfilled=pd.DataFrame({"row": [], "column": [], "reason": []}),
        plan=FillPlan(k=K),
        warnings=(),
        k_weak_threshold=0.95,
    )


def main() -> None:
    with tempfile.TemporaryDirectory() as folder:
        source = Path(folder) / "lab.xlsx"
        full, gaps = build_workbook(source)
        sheet = read_sheet(source)
        result = fill_of(sheet.frame, full, gaps)
        print(f"   workbook {N_ROWS:,} x {full.shape[1]}, filled cells and fill-log rows {len(result.log):,}")
        ours, size, reference = time_against_to_excel(Path(folder), sheet, result, layout="workbook")
    ratio = ours / reference
    print(f"   write_result (workbook layout, with fill log): {ours:6.2f} s  ({size / 1e6:.1f} MB)")
    print(f"   DataFrame.to_excel (openpyxl):                 {reference:6.2f} s")
    print(f"   ratio {ratio:.2f} (the flat export's goal is <= {GOAL})")


if __name__ == "__main__":
    main()
