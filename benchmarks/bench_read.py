"""Reading speed: ``read_sheet`` against pandas' own readers.

Goals (README "Benchmarks"): a 100,000 x 20 xlsx is read at least 4x faster than pandas with
openpyxl and in at most 2x the time python-calamine alone takes to hand over the same
sheet's values (the two timed in turns, pair by pair, wall clock and CPU); a 1,000,000 x 10
csv (5 % blank cells) in at most 5 s, printed beside ``pandas.read_csv`` (which reads
numbers only, with no cell states).

``KINFILL_BENCH_READ_CASES=csv`` (or ``xlsx``) runs one of the two.

The workbook (a sample ID column, a category column and 18 measurement
columns with 5 % blank cells and a few markers and censored entries) is written once
with xlsxwriter into the temp folder and reused by later runs.
"""

from __future__ import annotations

import os
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
import python_calamine
import xlsxwriter

from imputer_app.sheets._read import read_sheet

N_ROWS, N_COLUMNS = 100_000, 20
GOAL = 4.0
CALAMINE_GOAL = 2.0
CALAMINE_PAIRS = 5
SEED = 0
CSV_ROWS, CSV_COLUMNS = 1_000_000, 10
CSV_GOAL_SECONDS = 5.0


def bench_file() -> Path:
    """The benchmark workbook, generated on first use (a few seconds)."""
    folder = Path(tempfile.gettempdir()) / "kinfill-bench"
    folder.mkdir(exist_ok=True)
    path = folder / f"read_{N_ROWS}x{N_COLUMNS}_seed{SEED}.xlsx"
    if not path.exists():
        partial = path.with_suffix(".partial.xlsx")
        _write(partial)
        partial.replace(path)
    return path


def _write(path: Path) -> None:
    rng = np.random.default_rng(SEED)
    n_measures = N_COLUMNS - 2
    values = rng.lognormal(1.0, 0.8, (N_ROWS, n_measures)).round(3)
    blank = rng.random((N_ROWS, n_measures)) < 0.05
    special = rng.random((N_ROWS, n_measures)) < 0.002
    sites = np.array(["north", "south", "east", "west"])[rng.integers(0, 4, N_ROWS)]
    book = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    sheet = book.add_worksheet("Data")
    sheet.write_row(0, 0, ["sample", "site", *(f"m{j:02d}" for j in range(1, n_measures + 1))])
    for i in range(N_ROWS):
        sheet.write_string(i + 1, 0, f"S{i + 1:06d}")
        sheet.write_string(i + 1, 1, str(sites[i]))
        for j in range(n_measures):
            if special[i, j]:
                sheet.write_string(i + 1, j + 2, "<0.05" if (i + j) % 2 else "n.d.")
            elif not blank[i, j]:
                sheet.write_number(i + 1, j + 2, values[i, j])
    book.close()


def _best_of(repeats: int, work: object) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        work()  # type: ignore[operator]
        times.append(time.perf_counter() - start)
    return min(times)


def csv_file() -> Path:
    """The long csv (lognormal values to 3 decimals, 5 % blank), generated on first use."""
    folder = Path(tempfile.gettempdir()) / "kinfill-bench"
    folder.mkdir(exist_ok=True)
    path = folder / f"read_{CSV_ROWS}x{CSV_COLUMNS}_seed{SEED}.csv"
    if not path.exists():
        rng = np.random.default_rng(SEED)
        values = rng.lognormal(1.0, 0.8, (CSV_ROWS, CSV_COLUMNS)).round(3)
        values[rng.random(values.shape) < 0.05] = np.nan
        partial = path.with_suffix(".partial.csv")
        frame = pd.DataFrame(values, columns=[f"m{j:02d}" for j in range(1, CSV_COLUMNS + 1)])
        frame.to_csv(partial, index=False)
        partial.replace(path)
    return path


def main() -> None:
    cases = [c.strip() for c in os.environ.get("KINFILL_BENCH_READ_CASES", "xlsx,csv").split(",")]
    if "xlsx" in cases:
        _main_xlsx()
    if "csv" in cases:
        _main_csv()


def _main_csv() -> None:
    path = csv_file()
    start = time.process_time()
    ours = _best_of(2, lambda: read_sheet(path))
    cpu = (time.process_time() - start) / 2  # CPU seconds: steadier than wall time on a shared machine
    reference = _best_of(2, lambda: pd.read_csv(path))
    shape = f"{CSV_ROWS:,} x {CSV_COLUMNS}"
    print(f"   csv {shape}: read_sheet {ours:6.2f} s ({cpu:.2f} s CPU), pandas.read_csv {reference:6.2f} s")
    print(
        f"   ratio to pandas.read_csv: {ours / reference:.1f}x; "
        f"goal <= {CSV_GOAL_SECONDS:.0f} s -> {'ok' if ours <= CSV_GOAL_SECONDS else 'MISSED'}"
    )


def _main_xlsx() -> None:
    start = time.perf_counter()
    path = bench_file()
    size = path.stat().st_size / 1024**2
    print(f"   file: {path.name} ({size:.1f} MB, ready in {time.perf_counter() - start:.1f} s)")
    ours = _best_of(2, lambda: read_sheet(path))
    sheet = read_sheet(path)
    reference = _best_of(1, lambda: pd.read_excel(path, engine="openpyxl"))
    ratio = reference / ours
    rows, columns = sheet.frame.shape
    print(f"   read_sheet:                   {ours:6.2f} s  ({rows} x {columns})")
    print(f"   pandas.read_excel(openpyxl):  {reference:6.2f} s")
    print(f"   speed-up: {ratio:.1f}x (goal >= {GOAL:.0f}x) -> {'ok' if ratio >= GOAL else 'MISSED'}")
    _main_calamine(path)


def _calamine_values(path: Path) -> list[list[object]]:
    """What python-calamine alone does to hand over the sheet's values (the reference)."""
    book = python_calamine.CalamineWorkbook.from_path(str(path))
    try:
        return book.get_sheet_by_name("Data").to_python(skip_empty_area=False)
    finally:
        book.close()


def _timed(work: object) -> tuple[float, float]:
    wall, cpu = time.perf_counter(), time.process_time()
    work()  # type: ignore[operator]
    return time.perf_counter() - wall, time.process_time() - cpu


def _main_calamine(path: Path) -> None:
    """read_sheet against python-calamine alone, in turns, so both see the same load."""
    pairs = [
        (_timed(lambda: _calamine_values(path)), _timed(lambda: read_sheet(path)))
        for _ in range(CALAMINE_PAIRS)
    ]
    for label, k in (("wall", 0), ("CPU", 1)):
        reference = min(pair[0][k] for pair in pairs)
        ours = min(pair[1][k] for pair in pairs)
        each = sorted(pair[1][k] / pair[0][k] for pair in pairs)
        print(
            f"   vs python-calamine alone ({label}): read_sheet {ours:5.2f} s, calamine {reference:5.2f} s, "
            f"ratio of the best {ours / reference:.2f}x, pairs {each[0]:.2f}-{each[-1]:.2f}x "
            f"(median {each[len(each) // 2]:.2f}x); goal <= {CALAMINE_GOAL:.0f}x -> "
            f"{'ok' if ours / reference <= CALAMINE_GOAL else 'MISSED'}"
        )


if __name__ == "__main__":
    main()
