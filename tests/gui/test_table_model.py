"""The data table model: every marked cell has a symbol and a colour, and 200,000 rows stay quick."""

from __future__ import annotations

import time
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from PySide6.QtCore import Qt

from imputer_app.gui.markers import MARKERS, WEAK_SYMBOL
from imputer_app.gui.table_model import SheetTableModel
from imputer_app.sheets import ColumnInfo, Sheet, SourceInfo
from tests.gui._sheets import make_sheet

R = Qt.ItemDataRole


@pytest.fixture
def sheet() -> Sheet:
    frame = pd.DataFrame(
        {
            "site": ["A", "B", "A", "B"],
            "pH": [7.5, np.nan, 7.25, np.nan],
            "NO3": [1.25, 0.5, np.nan, 2.0],
        },
        index=pd.Index([2, 3, 4, 5], name="row"),
    )
    return make_sheet(
        frame,
        {
            (3, "pH"): ("missing", "n.d."),
            (4, "NO3"): ("censored", "<0.02"),
            (5, "pH"): ("text_in_number", "broken vial"),
        },
    )


def fake_result(sheet: Sheet, *, weak_row: int | None = None) -> SimpleNamespace:
    """What impute would return: pH rows 3 and 5 filled, NO3 row 4 set to half its limit."""
    frame = sheet.frame.copy()
    frame.loc[3, "pH"], frame.loc[5, "pH"], frame.loc[4, "NO3"] = 7.4, 7.3, 0.01
    filled = pd.DataFrame(False, index=frame.index, columns=frame.columns)
    filled.loc[[3, 5], "pH"] = True
    log = pd.DataFrame(
        {
            "row": [3, 5, 4],
            "column": ["pH", "pH", "NO3"],
            "value": [7.4, 7.3, 0.01],
            "original_state": ["missing", "text_in_number", "censored"],
            "method": ["knn", "knn", "half_limit"],
            "k": [2, 2, 0],
            "donors": [(2, 4), (2, 4), ()],
            "distances": [(0.1, 0.2), (0.3, 0.4), ()],
            "donor_values": [(7.5, 7.25), (7.5, 7.25), ()],
            "spread": [0.1, 0.1, np.nan],
            "support": ["weak" if r == weak_row else "ok" for r in (3, 5)] + [""],
            "note": ["", "", "half the limit"],
        }
    )
    return SimpleNamespace(
        frame=frame,
        filled=filled,
        log=log,
        warnings=(),
        unfilled=pd.DataFrame(columns=["row", "column", "reason"]),
    )


def cell(model: SheetTableModel, row_label: int, column: str, role=R.DisplayRole):
    r, c = model.find(row_label, column)
    return model.data(model.index(r, c), role)


def colours(model, row_label, column):
    return cell(model, row_label, column, R.BackgroundRole), cell(model, row_label, column, R.ForegroundRole)


@pytest.mark.parametrize(
    ("row", "column", "marker", "text"),
    [(3, "pH", "missing", "n.d."), (4, "NO3", "censored", "<0.02"), (5, "pH", "text", "broken vial")],
)
def test_each_state_has_its_symbol_and_its_colour(qapp, sheet, row, column, marker, text):
    model = SheetTableModel()
    model.set_sheet(sheet)
    model.set_dark(False)
    m = MARKERS[marker]
    assert cell(model, row, column) == f"{m.symbol} {text}"
    bg, fg = colours(model, row, column)
    assert (bg.name(), fg.name()) == m.light
    assert m.label in cell(model, row, column, R.ToolTipRole)
    assert cell(model, row, column, R.AccessibleTextRole).startswith(f"row {row}, {column}: ")


def test_measured_cells_are_plain(qapp, sheet):
    model = SheetTableModel()
    model.set_sheet(sheet)
    assert cell(model, 2, "pH") == "7.50"  # two decimals, as the column's measured values use
    assert cell(model, 2, "site") == "A"
    assert colours(model, 2, "pH") == (None, None)
    assert model.headerData(2, Qt.Orientation.Horizontal) == "NO3\nmg/L"
    assert model.headerData(1, Qt.Orientation.Vertical) == "3"  # the file row number


@pytest.mark.parametrize(("kind", "marker"), [("preview", "preview"), ("applied", "filled")])
def test_fill_layer_shows_values_with_symbol_and_colour(qapp, sheet, kind, marker):
    model = SheetTableModel()
    model.set_sheet(sheet)
    model.set_dark(False)
    model.set_layer(fake_result(sheet, weak_row=5), kind)
    m = MARKERS[marker]
    assert cell(model, 3, "pH") == f"{m.symbol} 7.400"  # one decimal more than measured: an estimate
    assert cell(model, 5, "pH") == f"{m.symbol}{WEAK_SYMBOL} 7.300"
    assert (colours(model, 3, "pH")[0].name(), colours(model, 3, "pH")[1].name()) == m.light
    assert model.is_filled(*model.find(3, "pH")) and not model.is_filled(*model.find(2, "pH"))
    assert "weak support" in cell(model, 5, "pH", R.AccessibleTextRole)
    italic = cell(model, 3, "pH", R.FontRole)
    assert (italic is not None and italic.italic()) == (kind == "preview")
    # a censored entry keeps its own marker and shows the number it stands for
    assert cell(model, 4, "NO3") == f"{MARKERS['censored'].symbol} 0.01 (<0.02)"
    assert "method knn, k=2" in cell(model, 3, "pH", R.ToolTipRole)


def test_dark_palette_switches_every_marker_colour(qapp, sheet):
    model = SheetTableModel()
    model.set_sheet(sheet)
    model.set_dark(True)
    bg, fg = colours(model, 3, "pH")
    assert (bg.name(), fg.name()) == MARKERS["missing"].dark


def _luminance(hex_colour: str) -> float:
    channels = [int(hex_colour[i : i + 2], 16) / 255 for i in (1, 3, 5)]
    linear = [c / 12.92 if c <= 0.03928 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]


@pytest.mark.parametrize("key", list(MARKERS))
@pytest.mark.parametrize("variant", ["light", "dark"])
def test_marker_colours_are_readable(key, variant):
    # Contrast ratio (L1 + 0.05) / (L2 + 0.05) >= 4.5 for normal text: W3C WCAG 2.1, criterion 1.4.3.
    bg, fg = getattr(MARKERS[key], variant)
    hi, lo = sorted((_luminance(bg), _luminance(fg)), reverse=True)
    assert (hi + 0.05) / (lo + 0.05) >= 4.5


def test_markers_never_rely_on_colour_alone():
    symbols = [m.symbol for m in MARKERS.values()]
    assert all(symbols) and len(set(symbols)) == len(symbols) and WEAK_SYMBOL not in symbols
    assert len({m.light[0] for m in MARKERS.values()}) == len(MARKERS)


def test_two_hundred_thousand_rows_load_and_answer_quickly(qapp):
    rng = np.random.default_rng(0)
    n, names = 200_000, [f"c{j}" for j in range(10)]
    values = rng.normal(size=(n, 10)).round(3)
    gaps = rng.random((n, 10)) < 0.1
    values[gaps] = np.nan
    frame = pd.DataFrame(values, columns=names, index=pd.RangeIndex(2, n + 2, name="row"))
    states = pd.DataFrame(
        {
            c: pd.Categorical.from_codes(g.astype(int), ["observed", "missing"])
            for c, g in zip(names, gaps.T, strict=True)
        },
        index=frame.index,
    )
    sheet = Sheet(
        frame,
        states,
        [ColumnInfo(c, "number") for c in names],
        SourceInfo(Path("big.csv"), None, 1, "0" * 64, "csv"),
    )
    model = SheetTableModel()
    start = time.perf_counter()
    model.set_sheet(sheet)
    built = time.perf_counter() - start
    assert model.rowCount() == n and model.columnCount() == 10
    rows, cols = rng.integers(0, n, 2000), rng.integers(0, 10, 2000)
    start = time.perf_counter()
    for r, c in zip(rows, cols, strict=True):
        index = model.index(int(r), int(c))
        for role in (R.DisplayRole, R.BackgroundRole, R.ForegroundRole, R.ToolTipRole):
            model.data(index, role)
    answered = time.perf_counter() - start
    assert built < 1.0 and answered < 1.0, (built, answered)
    r, c = np.argwhere(gaps)[0]
    assert model.data(model.index(int(r), int(c))) == MARKERS["missing"].symbol


def test_rounded_fills_show_their_own_decimals(samples_dir: Path) -> None:
    # the demo's pH is measured to 2 decimals: a fill rounded to its measured precision
    # shows 2 (7.23, not 7.230); computed as is, it shows one decimal more than measured
    from imputer_app.engine import impute
    from imputer_app.plan import FillPlan
    from imputer_app.sheets import read_sheet

    demo = read_sheet(samples_dir / "river_survey.xlsx")
    model = SheetTableModel()
    model.set_sheet(demo)
    column = model.column_names().index("pH")
    for rounding, decimals in (("measured", 2), ("as_computed", 3)):
        result = impute(demo, FillPlan(rounding=rounding))
        model.set_layer(result, "preview")
        row = int(np.flatnonzero(model.fill_codes[:, column] > 0)[0])
        shown = model.data(model.index(row, column)).split()[-1]
        assert len(shown.split(".")[1]) == decimals, shown
        assert float(shown) == pytest.approx(result.frame["pH"].iloc[row], abs=0.5 * 10.0**-decimals)
