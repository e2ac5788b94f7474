"""Read, fill, test k and export with the real parts; check the export against references.

References: scikit-learn ``KNNImputer`` (with all weights 1, no scaling and numbers
only, Kinfill's fill equals it — README.md); the diabetes data (Efron et al. 2004) and
iris (Fisher 1936), both shipped inside scikit-learn; openpyxl and python-calamine as
two independent xlsx readers.
"""

from __future__ import annotations

import zipfile

import numpy as np
import openpyxl
import pandas as pd
import pytest
from sklearn.datasets import load_diabetes, load_iris
from sklearn.impute import KNNImputer

from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import fill_pictures, read_sheet, write_result
from tests.sheets.write_support import about, calamine_cells, openpyxl_cells, raw_fills

FILLED = "D2E7EF"


def with_holes(
    x: np.ndarray, names: list[str], seed: int, share: float = 0.1
) -> tuple[pd.DataFrame, np.ndarray]:
    x = x.copy()
    holes = np.random.default_rng(seed).random(x.shape) < share
    holes[holes.all(axis=1)] = False  # every row keeps a value to measure distance on
    x[holes] = np.nan
    return pd.DataFrame(x, columns=names), holes


def diabetes_with_holes(seed: int = 0) -> tuple[pd.DataFrame, np.ndarray]:
    # Continuous measurements only (bmi, bp, s1, s2, s3, s5): no tied distances, so
    # every donor set is unique and the fill cannot depend on how ties are broken.
    data = load_diabetes()
    keep = [2, 3, 4, 5, 6, 8]
    return with_holes(data.data[:, keep], [data.feature_names[j] for j in keep], seed)


def iris_with_holes(seed: int = 0) -> tuple[pd.DataFrame, np.ndarray]:
    names = ["sepal_length", "sepal_width", "petal_length", "petal_width"]
    return with_holes(load_iris().data, names, seed)


@pytest.mark.parametrize("suffix", [".xlsx", ".csv"])
def test_exported_fill_equals_scikit_learn_knnimputer(tmp_path, suffix) -> None:
    """scikit-learn KNNImputer(n_neighbors=5) is the reference for the exported numbers."""
    frame, holes = diabetes_with_holes()
    reference = KNNImputer(n_neighbors=5).fit_transform(frame.to_numpy())
    plan = FillPlan(k=5, scaling="none")
    result = impute(frame, plan)
    files = write_result(tmp_path / f"diabetes{suffix}", None, result, plan)
    n, m = frame.shape
    if suffix == ".xlsx":
        for cells in (openpyxl_cells(files[0], "Filled"), calamine_cells(files[0], "Filled")):
            got = np.array([[cells[(i + 2, j + 1)] for j in range(m)] for i in range(n)], dtype=float)
            np.testing.assert_allclose(got, reference, rtol=1e-12, atol=0)
        rows, cols = np.nonzero(holes)
        letters = "ABCDEF"
        assert raw_fills(files[0], "Filled") == {
            f"{letters[c]}{r + 2}": FILLED for r, c in zip(rows, cols, strict=True)
        }
    else:
        got = pd.read_csv(files[0]).to_numpy()
        np.testing.assert_allclose(got, reference, rtol=1e-12, atol=0)
        log = pd.read_csv(files[1])
        assert len(log) == holes.sum() and set(log["k"]) == {5}


def write_lab_workbook(path) -> None:
    """A lab sheet as people make them: title row, header, units row, markers, censored entries."""
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Survey"
    ws.append(["River survey 2024"])
    ws.append(["sample", "site", "nitrate", "lead", "pH"])
    ws.append(["", "", "mg/L", "µg/L", ""])
    rng = np.random.default_rng(1)
    for i in range(40):
        nitrate = round(float(rng.normal(3, 0.5)), 3)
        lead = round(float(rng.normal(2, 0.3)), 3)
        ph = round(float(rng.normal(7, 0.2)), 2)
        ws.append([f"S{i + 1:02d}", ["north", "south"][i % 2], nitrate, lead, ph])
    ws["C6"], ws["C9"], ws["D7"], ws["D12"], ws["E10"], ws["B11"] = "n.d.", None, "<0.5", "< 0.5", "NA", None
    book.save(path)


def test_read_fill_export_read_again(tmp_path) -> None:
    """The export reads back with the same row numbers, values and censored entries."""
    source = tmp_path / "survey.xlsx"
    write_lab_workbook(source)
    sheet = read_sheet(source)
    plan = FillPlan(k=3, carried_columns=("sample",), censored="half_limit")
    result = impute(sheet, plan)
    out = tmp_path / "survey.filled.xlsx"
    write_result(out, sheet, result, plan, layout="table")
    again = read_sheet(out, sheet="Filled")
    assert again.source.header_row == sheet.source.header_row and again.units == sheet.units
    pd.testing.assert_index_equal(again.frame.index, result.frame.index)  # same row numbers
    numbers = ["nitrate", "lead", "pH"]
    np.testing.assert_array_equal(again.frame[numbers].to_numpy(), result.frame[numbers].to_numpy())
    assert again.frame["site"].tolist() == result.frame["site"].tolist()
    assert calamine_cells(out, "Filled")[(7, 4)] == pytest.approx(0.25)  # "<0.5" as half the limit
    sections = about(out)
    assert sections["Input file"]["SHA-256"] == sheet.source.sha256
    assert sections["Counts"]["filled"] == int(result.filled.to_numpy().sum())


def test_recovery_test_sheet_with_the_real_chart(tmp_path) -> None:
    validation = pytest.importorskip("imputer_app.validation")
    frame, _ = iris_with_holes(seed=2)
    plan = FillPlan(k=3)
    report = validation.recovery_test(frame, plan, ks=(1, 3, 5), repeats=2, seed=0)
    result = impute(frame, plan.replace(k=report.best_k))
    out = tmp_path / "iris.xlsx"
    write_result(out, None, result, plan, report)
    table = report.to_frame().reset_index()
    cells = calamine_cells(out, "Recovery test")
    header = [cells[(1, j + 1)] for j in range(len(table.columns))]
    assert header == [str(c) for c in table.columns]
    for i, row in enumerate(table.itertuples(index=False), start=2):
        for j, value in enumerate(row, start=1):
            if (isinstance(value, float) and np.isnan(value)) or value == "":
                assert (i, j) not in cells
            elif isinstance(value, float):
                # xlsxwriter writes numbers to 16 significant digits ("%.16G").
                assert cells[(i, j)] == pytest.approx(value, rel=1e-15)
            else:
                assert cells[(i, j)] == value
    with zipfile.ZipFile(out) as package:
        images = [n for n in package.namelist() if n.startswith("xl/media/")]
        # The error-vs-k chart, and the Pictures sheet's pictures of the fill.
        assert len(images) == 1 + len(fill_pictures(result))
        assert all(package.read(name).startswith(b"\x89PNG") for name in images)
    recovery = about(out)["Recovery test"]
    assert recovery["chosen k (used for this fill)"] == report.best_k
    assert recovery["best k (lowest mean error)"] == report.best_k
    assert recovery["k by the one-standard-error rule"] == report.best_k_1se


def test_sheet_read_without_a_header_row_exports_names_above_the_data(tmp_path) -> None:
    # header_row=0 means "no header row": the export must still put the generated
    # names in row 1 and never try to write a row 0 (ECMA-376 rows start at 1).
    source = tmp_path / "bare.csv"
    source.write_text("1.0,2.0\n2.0,\n3.0,6.0\n4.0,8.0\n", encoding="utf-8")
    sheet = read_sheet(source, header_row=0)
    plan = FillPlan(k=2, scaling="none")
    result = impute(sheet, plan)
    target = tmp_path / "bare.filled.xlsx"
    write_result(target, sheet, result, plan)
    cells = openpyxl_cells(target, "Filled")
    assert cells[(1, 1)] == sheet.frame.columns[0]
    assert [cells[(r, 1)] for r in range(2, 6)] == [1.0, 2.0, 3.0, 4.0]
    # Row 2 of the file (value 2.0) gets the mean of its two nearest donors' second column.
    assert cells[(3, 2)] == pytest.approx((2.0 + 6.0) / 2)
    assert calamine_cells(target, "Filled")[(3, 2)] == pytest.approx(4.0)
