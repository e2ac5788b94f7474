"""A lab workbook made by LibreOffice as .ods or .xls from an xlsxwriter workbook (never by Kinfill).

Two sheets, a title merged across the table, a header, number formats of two and three
decimals, dates, a formula column with its stored results, two gaps and an ``NA`` marker.
Tests skip when LibreOffice (``soffice``) is not installed; CI installs it.
"""

from __future__ import annotations

import datetime as dt
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
import xlsxwriter

#: Skips a test module when LibreOffice is missing.
needs_soffice = pytest.mark.skipif(
    shutil.which("soffice") is None, reason="LibreOffice (soffice) is not installed"
)

TITLE = "Soil panel, spring round (invented)"
HEADERS = ("Sample ID", "Date", "pH", "Ca", "Mg", "Base sum")
N = 14
FIRST = 3  # 1-based row of the first sample
GAPS = {"pH": (3,), "Ca": (5, 9)}  # sample positions left blank
MARKED = {"pH": 7}  # sample position written "NA"
METHODS = ("Methods (invented)", "pH in water 1:2.5; cations by ICP-OES.")


def values_of() -> dict[str, np.ndarray]:
    """The invented measurements (fixed seed), rounded as the sheet shows them."""
    rng = np.random.default_rng(12)
    return {
        "pH": np.round(rng.uniform(5.5, 7.5, N), 2),
        "Ca": np.round(rng.uniform(2.0, 6.0, N), 3),
        "Mg": np.round(rng.uniform(0.5, 2.0, N), 3),
    }


def build_source(path: Path) -> Path:
    """The lab's workbook, written by xlsxwriter with the formula results stored."""
    values = values_of()
    book = xlsxwriter.Workbook(str(path))
    sheet = book.add_worksheet("Results")
    bold = book.add_format({"bold": True})
    formats = {"pH": book.add_format({"num_format": "0.00"}), "Ca": book.add_format({"num_format": "0.000"})}
    formats["Mg"] = formats["Base sum"] = formats["Ca"]
    date = book.add_format({"num_format": "yyyy-mm-dd"})
    sheet.merge_range(0, 0, 0, len(HEADERS) - 1, TITLE, bold)
    sheet.write_row(1, 0, HEADERS, bold)
    for i in range(N):
        r = FIRST - 1 + i
        sheet.write_string(r, 0, f"S-{i + 1:03d}")
        sheet.write_datetime(r, 1, dt.datetime(2025, 4, 1) + dt.timedelta(days=i), date)
        for j, name in enumerate(("pH", "Ca", "Mg"), start=2):
            if i in GAPS.get(name, ()):
                continue
            if MARKED.get(name) == i:
                sheet.write_string(r, j, "NA")
            else:
                sheet.write_number(r, j, float(values[name][i]), formats[name])
        parts = [values[n][i] for n in ("Ca", "Mg") if i not in GAPS.get(n, ())]
        stored = round(float(sum(parts)), 3)  # what a spreadsheet program stores (SUM skips blanks)
        sheet.write_formula(r, 5, f"=SUM(D{r + 1}:E{r + 1})", formats["Base sum"], stored)
    methods = book.add_worksheet("Methods")
    for row, line in enumerate(METHODS):
        methods.write_string(row * 2, 0, line)
    book.close()
    return path


def convert(source: Path, fmt: str, folder: Path) -> Path:
    """Convert ``source`` to ``fmt`` ("ods" or "xls") with LibreOffice into ``folder``."""
    profile = (folder / "profile").as_uri()  # its own profile: other LibreOffice runs may be open
    subprocess.run(
        ["soffice", "--headless", "--norestore", f"-env:UserInstallation={profile}",
         "--convert-to", fmt, "--outdir", str(folder / fmt), str(source)],
        check=True, capture_output=True, timeout=180,
    )  # fmt: skip
    made = folder / fmt / f"{source.stem}.{fmt}"
    assert made.exists(), f"LibreOffice did not write {made.name}"
    return made
