"""A csv export writes every cell that was not filled exactly as the input file had it."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet, write_result

# Carried text with leading spaces, "157" and "0,020" that a number round trip would
# rewrite, a missing marker left in a carried column, and gaps in two fill columns.
_ROWS = [
    "Probe;Ort;Blei;Nitrat;Sulfat;Notiz",
    "P1;  lead ;157;0,020;12,5;n.d.",
    "P2;Au;160;0,031;;ok",
    "P3;Au;149;;11,75;",
    "P4;See ;151;0,025;13,0; zwei  Leerzeichen",
    "P5;See;-3;0,0200;12,25;-",
    "P6;Bach;155,50;0,019;;=1+2",
]


@pytest.mark.parametrize("line_end", ["\n", "\r\n"])
def test_unfilled_cells_leave_byte_for_byte(tmp_path: Path, line_end: str) -> None:
    source = tmp_path / "in.csv"
    source.write_bytes(line_end.join([*_ROWS, ""]).encode("utf-8"))
    sheet = read_sheet(source)
    plan = FillPlan(k=2, similarity_columns=("Blei", "Nitrat", "Sulfat"), fill_columns=("Nitrat", "Sulfat"))
    result = impute(sheet, plan)
    filled = result.filled.to_numpy()
    assert filled.sum() == 3  # Nitrat of P3, Sulfat of P2 and P6
    target = tmp_path / "out.csv"
    write_result(target, sheet, result, plan)
    data = target.read_bytes()
    assert data.count(b"\r\n") == (len(_ROWS) if line_end == "\r\n" else 0)
    written = [line.split(";") for line in data.decode("utf-8").split(line_end)[:-1]]
    original = [line.split(";") for line in _ROWS]
    assert written[0] == original[0]
    for i, (out_row, in_row) in enumerate(zip(written[1:], original[1:], strict=True)):
        for j, (out_cell, in_cell) in enumerate(zip(out_row, in_row, strict=True)):
            if filled[i, j]:
                value = result.frame.iloc[i, j]
                places = result.decimals[result.frame.columns[j]]  # the most decimals the column shows
                assert out_cell == f"{value:.{places}f}".replace(".", ",")
                assert float(out_cell.replace(",", ".")) == pytest.approx(value, rel=1e-14)
            elif in_cell.startswith("="):
                assert out_cell == "'" + in_cell  # OWASP "CSV Injection": shown as text, not run
            else:
                assert out_cell == in_cell


@pytest.mark.parametrize("rounding, stored", [("as_computed", "6.731999999999999"), ("measured", "6.732")])
def test_filled_value_has_no_binary_noise(tmp_path: Path, rounding: str, stored: str) -> None:
    source = tmp_path / "noise.csv"
    # the mean of 6.71 and 6.754 is 6.732 in decimal, 6.731999999999999 in binary floats
    source.write_text("a,b\n1,6.71\n1.1,6.754\n1.05,\n5,9\n", encoding="utf-8")
    sheet = read_sheet(source)
    plan = FillPlan(k=2, similarity_columns=("a",), fill_columns=("b",), rounding=rounding)
    result = impute(sheet, plan)
    assert repr(float(result.frame["b"].iloc[2])) == stored
    target = tmp_path / "out.csv"
    write_result(target, sheet, result, plan)
    lines = target.read_text(encoding="utf-8").splitlines()
    assert lines == ["a,b", "1,6.71", "1.1,6.754", "1.05,6.732", "5,9"]
    assert np.isnan(sheet.frame["b"].iloc[2])
