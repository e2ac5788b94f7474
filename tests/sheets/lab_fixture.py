"""A lab workbook whose defaults must fill only measured columns (written by xlsxwriter).

Sheet "Results" (invented data): a title merged across row 1, header in row 2, units in
row 3, data from row 4: "Sample ID" (codes), "Sampled" (dates), "pH", "Ca", "Mg", "K",
"Base sum" (a formula = Ca + Mg + K, with its cached result), "Block" (1-4), "Notes"
(mostly empty, one repeated note). Sheet "Methods" holds text. Some cells of pH, Ca,
Mg and K are gaps; one pH cell is the marker "n.d.", one Mg cell holds ``#DIV/0!``.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import xlsxwriter

HEADER = ("Sample ID", "Sampled", "pH", "Ca", "Mg", "K", "Base sum", "Block", "Notes")
UNITS = ("", "", "", "mmol/L", "mmol/L", "mmol/L", "mmol/L", "", "")
N_ROWS = 40
FIRST_DATA_ROW = 4  # 1-based sheet row of the first sample
GAP_ROWS = {"pH": (5, 17), "Ca": (9,), "Mg": (12, 30), "K": (21,)}  # positions among the samples
ND_ROW, ERROR_ROW = 25, 33  # a "n.d." pH and a #DIV/0! Mg
NOTE_ROWS = (3, 11, 27)


def values() -> dict[str, np.ndarray]:
    """The measured columns (NaN for gaps), seeded."""
    rng = np.random.default_rng(12)
    out = {
        "pH": np.round(rng.normal(6.8, 0.3, N_ROWS), 2),
        "Ca": np.round(rng.normal(5.5, 0.5, N_ROWS), 2),
        "Mg": np.round(rng.normal(1.45, 0.12, N_ROWS), 3),
        "K": np.round(rng.normal(0.37, 0.04, N_ROWS), 3),
    }
    for name, rows in GAP_ROWS.items():
        out[name][list(rows)] = np.nan
    return out


def build(path: Path) -> Path:
    """Write the workbook to ``path`` and return it."""
    book = xlsxwriter.Workbook(str(path))
    sheet = book.add_worksheet("Results")
    bold = book.add_format({"bold": True})
    two, three = book.add_format({"num_format": "0.00"}), book.add_format({"num_format": "0.000"})
    day = book.add_format({"num_format": "yyyy-mm-dd"})
    sheet.merge_range(0, 0, 0, len(HEADER) - 1, "Soil extract panel (invented)", bold)
    sheet.write_row(1, 0, HEADER, bold)
    sheet.write_row(2, 0, UNITS)
    data = values()
    start = dt.date(2024, 3, 1)
    for i in range(N_ROWS):
        row = FIRST_DATA_ROW - 1 + i
        sheet.write_string(row, 0, f"S-{i + 1:03d}")
        sheet.write_datetime(row, 1, dt.datetime.combine(start + dt.timedelta(days=i // 4), dt.time()), day)
        for j, name in enumerate(("pH", "Ca", "Mg", "K"), start=2):
            value = data[name][i]
            if name == "pH" and i == ND_ROW:
                sheet.write_string(row, j, "n.d.")
            elif name == "Mg" and i == ERROR_ROW:
                sheet.write_formula(row, j, "=1/0", three, "#DIV/0!")
            elif np.isfinite(value):
                sheet.write_number(row, j, float(value), two if name in ("pH", "Ca") else three)
        parts = [data[name][i] for name in ("Ca", "Mg", "K")]
        total = float(np.nansum(parts))
        sheet.write_formula(row, 6, f"=D{row + 1}+E{row + 1}+F{row + 1}", three, round(total, 3))
        sheet.write_number(row, 7, i % 4 + 1)
        if i in NOTE_ROWS:
            sheet.write_string(row, 8, "re-run requested")
    methods = book.add_worksheet("Methods")
    methods.write_column(0, 0, ["Cations by ICP-OES (invented)", "pH in water 1:2.5"])
    book.close()
    return path
