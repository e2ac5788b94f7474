"""The package's shape: layers import without Qt, entry points answer, exports resolve."""

from __future__ import annotations

import importlib
import os
import subprocess
import sys
from pathlib import Path

import pytest

import imputer_app

BIN = Path(sys.executable).parent
QT_FREE = [
    "imputer_app.engine",
    "imputer_app.validation",
    "imputer_app.sheets",
    "imputer_app.charts",
    "imputer_app.plan",
    "imputer_app.cli",
]


@pytest.mark.parametrize("module", QT_FREE)
def test_core_packages_import_without_qt(module):
    # A fresh interpreter, so that Qt loaded by other tests cannot hide an import.
    code = f"import sys, {module}; print('PySide6' in sys.modules or 'shiboken6' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


PUBLIC_PACKAGES = [
    "imputer_app",
    "imputer_app.charts",
    "imputer_app.cli",
    "imputer_app.engine",
    "imputer_app.sheets",
    "imputer_app.validation",
    "imputer_app.words",
]


@pytest.mark.parametrize("package", PUBLIC_PACKAGES)
def test_public_names_are_declared_sorted_and_resolve(package):
    module = importlib.import_module(package)
    assert hasattr(module, "__all__"), f"{package} must declare its public names in __all__"
    names = list(module.__all__)
    # The order ruff keeps __all__ in (RUF022): CONSTANTS, then Classes, then functions.
    assert names and names == sorted(
        names, key=lambda n: (0 if n.isupper() else 1 if n[0].isupper() else 2, n)
    )
    for name in names:
        assert getattr(module, name) is not None


# The public names of the packages below, each checked by what it does in the tests
# that follow; a new public name must be added to one of them.
CHECKED = {
    "imputer_app.sheets": {
        "CELL_STATES", "ColumnInfo", "MarkerFound", "RecoveryEvidence", "Sheet", "SourceInfo",
        "export_side_files", "list_sheets", "read_export_plan", "read_sheet", "same_file", "write_result",
        # checked in tests/sheets/test_methods_text.py and tests/sheets/test_pictures.py
        "fill_pictures", "methods_paragraph", "picture_files", "scatter_partner", "write_picture_files",
        # checked in tests/sheets/test_write_ods_xls.py
        "export_limits",
    },
    "imputer_app.charts": {
        "ErrorVsK", "ScatterPicture", "fill_distributions", "plot_coverage", "plot_error_vs_k",
        "plot_fill_distribution", "plot_fill_scatter", "save_figure",
    },
    "imputer_app.cli": {
        "EXIT_FAULT", "EXIT_OK", "EXIT_STOPPED", "EXIT_USAGE", "UsageError", "build_parser", "main",
    },
}  # fmt: skip


@pytest.mark.parametrize("package", sorted(CHECKED))
def test_every_public_name_has_a_behaviour_check(package):
    assert set(importlib.import_module(package).__all__) == CHECKED[package]


def test_a_fill_round_trips_through_the_public_names(tmp_path):
    # Five rows, one gap: with k = 2 the gap's nearest rows by "a" are those with
    # a = 3.0 and 2.0 (against 2.9), so the fill is the mean of their b: (30 + 20) / 2.

    from imputer_app.engine import impute
    from imputer_app.plan import FillPlan
    from imputer_app.sheets import (
        CELL_STATES,
        MarkerFound,
        Sheet,
        export_side_files,
        read_export_plan,
        read_sheet,
        same_file,
        write_result,
    )

    source = tmp_path / "tiny.csv"
    source.write_text("a,b\n1.0,10\n2.0,20\n3.0,30\n2.9,\n9.0,90\n", encoding="utf-8")
    sheet = read_sheet(source)
    assert isinstance(sheet, Sheet) and sheet.source.path.name == "tiny.csv"
    assert set(sheet.states["b"].astype(str)) <= set(CELL_STATES) and "missing" in set(sheet.states["b"])
    assert [c.name for c in sheet.columns] == ["a", "b"] and sheet.source.sha256
    plan = FillPlan(k=2, similarity_columns=("a",), fill_columns=("b",))
    result = impute(sheet, plan)
    assert result.frame["b"].iloc[3] == pytest.approx(25.0)
    out = tmp_path / "tiny.filled.csv"
    written = write_result(out, sheet, result, plan)
    assert written[0] == out and set(written[1:]) <= set(export_side_files(out))
    assert [p.name for p in export_side_files(out)] == [
        "tiny.filled.fill-log.csv", "tiny.filled.run.json", "tiny.filled.not-filled.csv",
    ]  # fmt: skip
    assert export_side_files(tmp_path / "tiny.filled.xlsx") == []
    assert read_sheet(out).frame["b"].tolist() == pytest.approx([10, 20, 30, 25, 90])
    assert read_export_plan(out) == plan
    marked = tmp_path / "marked.csv"
    marked.write_text("a,b\n1.0,n.d.\n2.0,20\n3.0,NA\n", encoding="utf-8")
    assert read_sheet(marked).markers == (
        MarkerFound("n.d.", "below-limit", 1),
        MarkerFound("NA", "missing", 1),
    )  # most frequent first, then by text
    assert same_file(tmp_path / "." / "tiny.csv", source) and not same_file(out, source)


def test_a_workbook_lists_its_sheets_and_column_info(tmp_path):
    from openpyxl import Workbook

    from imputer_app.sheets import ColumnInfo, SourceInfo, list_sheets, read_sheet

    path = tmp_path / "two.xlsx"
    book = Workbook()
    book.active.title = "June"
    book.create_sheet("July").append(["x"])
    book["June"].append(["pH"])
    book["June"].append([7.1])
    book.save(path)
    assert list_sheets(path) == ["June", "July"]
    sheet = read_sheet(path)
    assert isinstance(sheet.source, SourceInfo) and sheet.source.sheet == "June"
    assert isinstance(sheet.columns[0], ColumnInfo) and sheet.columns[0].kind == "number"


def test_recovery_report_draws_and_saves_as_a_chart(tmp_path):
    import numpy as np
    import pandas as pd

    from imputer_app.charts import ErrorVsK, plot_error_vs_k, save_figure
    from imputer_app.plan import FillPlan
    from imputer_app.sheets import RecoveryEvidence
    from imputer_app.validation import RecoveryReport, recovery_test

    rng = np.random.default_rng(0)
    frame = pd.DataFrame(rng.normal(size=(30, 3)), columns=["a", "b", "c"])
    report = recovery_test(frame, FillPlan(), ks=[1, 2, 3], repeats=2, seed=1)
    assert isinstance(report, RecoveryReport) and report.ks == (1, 2, 3)
    evidence: RecoveryEvidence = report  # what the export reads, the report has
    chart: ErrorVsK = evidence
    figure = plot_error_vs_k(chart)
    assert len(figure.axes) == 1 and figure.axes[0].lines
    saved = save_figure(figure, tmp_path / "k.png")
    assert saved.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_fill_pictures_draw_a_small_fill():
    import numpy as np
    import pandas as pd

    from imputer_app.charts import (
        ScatterPicture,
        fill_distributions,
        plot_coverage,
        plot_fill_distribution,
        plot_fill_scatter,
    )
    from imputer_app.engine import impute
    from imputer_app.plan import FillPlan

    frame = pd.DataFrame({"a": [1.0, 2.0, 3.0, 4.0, np.nan], "b": [10.0, np.nan, 30.0, 40.0, 50.0]})
    result = impute(frame, FillPlan(k=2))
    assert set(fill_distributions(result)) == {"a", "b"}
    assert plot_fill_distribution(result, "a").axes
    picture = plot_fill_scatter(result, "a", "b")
    assert isinstance(picture, ScatterPicture)
    assert sorted(picture.filled_rows) == [1, 4]  # the two rows with a filled coordinate
    coverage = plot_coverage(pd.DataFrame({"level": [0.8, 0.9], "observed": [0.79, 0.91]}))
    assert coverage.axes[0].lines  # at least the diagonal


def test_command_line_names(capsys):
    from imputer_app.cli import (
        EXIT_FAULT,
        EXIT_OK,
        EXIT_STOPPED,
        EXIT_USAGE,
        UsageError,
        build_parser,
        main,
    )
    from imputer_app.errors import KinfillError

    assert (EXIT_OK, EXIT_FAULT, EXIT_USAGE, EXIT_STOPPED) == (0, 1, 2, 130)
    assert issubclass(UsageError, KinfillError)
    args = build_parser().parse_args(["fill", "x.csv", "--k", "3", "--scaling", "robust"])
    assert (args.command, args.k, args.scaling) == ("fill", 3, "robust")
    assert main(["fill", "x.csv", "--scaling", "cubic"]) == EXIT_USAGE
    assert main(["fill", "no-such-file.csv"]) == EXIT_USAGE
    assert "file not found" in capsys.readouterr().err


@pytest.mark.parametrize(
    "command", [[str(BIN / "kinfill"), "--version"], [sys.executable, "-m", "imputer_app", "--version"]]
)
def test_version_is_printed(command):
    if not Path(command[0]).exists():
        pytest.skip("package not installed into this interpreter's environment")
    env = {**os.environ, "PYTHONPATH": str(Path(imputer_app.__file__).parent.parent)}
    out = subprocess.run(command, capture_output=True, text=True, env=env, check=False)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == f"kinfill {imputer_app.__version__}"


def test_cautions_say_filled_values_are_estimates():
    text = imputer_app.CAUTIONS.lower()
    for phrase in (
        "estimates",
        "never report a filled value as a measurement",
        "diagnosis",
        "regulatory compliance",
        "qa procedures",
    ):
        assert phrase in text
