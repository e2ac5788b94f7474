"""The app and ``kinfill fill --plan-from`` write the same cells, of the same types.

A column the plan makes a category ("block": 1, 2, 3) keeps its numbers as numbers in
both, so a filled block is the number 2 in the lab's workbook, like its neighbours,
whichever way the fill was run. The app's side runs the Qt-free code its window calls
(:class:`~imputer_app.gui.state.Session` and :func:`~imputer_app.gui.state.export_fill`).
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import openpyxl
import pytest
import xlsxwriter

from imputer_app.cli import main as kinfill
from imputer_app.engine import impute
from imputer_app.gui.state import Session, export_fill
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet

_HEADER = ["Sample", "pH", "Cond", "block"]
#: Invented; None is a gap.
_ROWS = [
    ("S01", 6.42, 1.25, 1),
    ("S02", 6.5, 1.31, 1),
    ("S03", None, 1.4, 2),
    ("S04", 7.11, 1.62, None),
    ("S05", 7.05, None, 2),
    ("S06", 6.48, 1.28, None),
    ("S07", 7.2, 1.7, 3),
    ("S08", 7.25, 1.74, 3),
    ("S09", 6.95, 1.55, 2),
    ("S10", None, 1.72, 3),
]
_PLAN = FillPlan(
    k=2,
    similarity_columns=("pH", "Cond", "block"),
    fill_columns=("pH", "block"),
    carried_columns=("Sample",),
    kinds={"block": "category"},
)


def _xlsx(path: Path) -> Path:
    book = xlsxwriter.Workbook(str(path))
    sheet = book.add_worksheet("Data")
    two = book.add_format({"num_format": "0.00"})
    sheet.write_row(0, 0, _HEADER)
    for i, row in enumerate(_ROWS, start=1):
        for j, value in enumerate(row):
            if value is not None:
                sheet.write(i, j, value, two if j == 1 else None)
    book.close()
    return path


def _csv(path: Path) -> Path:
    lines = [",".join(_HEADER)] + [",".join("" if v is None else str(v) for v in row) for row in _ROWS]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _app_export(source: Path, target: Path) -> None:
    """What the window does: read the sheet, fill it with the session's plan, apply, export."""
    session = Session()
    session.load(read_sheet(source), path=source, plan=_PLAN)
    assert session.sheet is not None
    session.set_preview(impute(session.sheet, session.plan))
    session.apply()
    assert session.applied is not None
    export_fill(target, session.sheet, session.applied, session.report)


def _cells(path: Path) -> dict[str, tuple[object, str]]:
    data = openpyxl.load_workbook(path)["Data"]
    return {cell.coordinate: (cell.value, cell.data_type) for row in data.iter_rows() for cell in row}


def _rows(path: Path) -> list[list[str]]:
    return list(csv.reader(io.StringIO(path.read_text(encoding="utf-8-sig"))))


@pytest.mark.parametrize("suffix", [".xlsx", ".csv"])
def test_app_and_command_line_write_the_same_cells(tmp_path, suffix) -> None:
    source = _xlsx(tmp_path / "lab.xlsx") if suffix == ".xlsx" else _csv(tmp_path / "lab.csv")
    app, cli = tmp_path / f"app{suffix}", tmp_path / f"cli{suffix}"
    _app_export(source, app)
    assert kinfill(["fill", str(source), "--plan-from", str(app), "--out", str(cli)]) == 0
    if suffix == ".xlsx":
        app_cells, cli_cells = _cells(app), _cells(cli)
        assert cli_cells == app_cells  # every value and its type (n = number, s = text)
        for ref in ("D5", "D7"):  # the filled blocks of S04 and S06: whole numbers, like D2..D11
            value, kind = app_cells[ref]
            assert kind == "n" and type(value) is int and value in (1, 2, 3)
        assert app_cells["B4"][0] == round(app_cells["B4"][0], 2)  # pH at its 2 measured decimals
    else:
        app_rows, cli_rows = _rows(app), _rows(cli)
        assert cli_rows == app_rows
        assert all(app_rows[i][3] in ("1", "2", "3") for i in (4, 6))  # filled blocks, written whole
