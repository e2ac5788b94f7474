"""The error-against-k chart: its artists, saving, and staying free of Qt."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure

from imputer_app.charts import plot_error_vs_k, save_figure
from imputer_app.charts.error_vs_k import BASELINE_LABEL, OVERALL_LABEL
from imputer_app.errors import ExportError
from imputer_app.validation import RecoveryReport
from imputer_app.validation._report import build_report

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification, sec. 5.2)


def _report(kinds: dict[str, str], ks: tuple[int, ...] = (1, 2, 3, 4, 5, 6)) -> RecoveryReport:
    """A report from made-up scores: a U-shaped error curve with its bottom at k=3."""
    rows = []
    for repeat in range(3):
        for k in ks:
            for i, (column, kind) in enumerate(kinds.items()):
                value = 0.5 + 0.02 * (k - 3) ** 2 + 0.05 * i + 0.01 * repeat
                nrmse, err = (value, np.nan) if kind == "number" else (np.nan, value / 2)
                rows.append((k, column, repeat, value, value, nrmse, err, 12, 0))
    names = ["k", "column", "repeat", "rmse", "mae", "nrmse", "error_rate", "n_hidden", "n_unfilled"]
    scores = pd.DataFrame(rows, columns=names)
    base = scores[scores["k"] == ks[0]].drop(columns="k")
    base = base.assign(nrmse=base["nrmse"] * 0 + 1.0, error_rate=base["error_rate"] * 0 + 0.7)
    return build_report(scores, base, kinds, ks, {"seed": 0})


def _labels(fig: Figure) -> list[str]:
    ax = fig.axes[0]
    return [str(line.get_label()) for line in ax.get_lines()]


def test_figure_has_overall_columns_baseline_and_choices() -> None:
    report = _report({"nitrate": "number", "pH": "number", "site": "category"})
    fig = plot_error_vs_k(report)
    ax = fig.axes[0]
    labels = _labels(fig)
    # One line per number column; the category column is on a different scale.
    assert "nitrate" in labels and "pH" in labels and "site" not in labels
    assert BASELINE_LABEL in labels
    assert f"best k = {report.best_k}" in labels
    assert any(label.startswith(f"one-SE k = {report.best_k_1se}") for label in labels)
    # The overall line carries standard-error bars (an ErrorbarContainer with y errors).
    (bars,) = ax.containers
    assert bars.has_yerr and str(bars.get_label()).startswith(OVERALL_LABEL)
    np.testing.assert_allclose(bars.lines[0].get_ydata(), report.overall["score"])
    # The baseline is horizontal at the baseline's overall score.
    (base_line,) = (line for line in ax.get_lines() if line.get_label() == BASELINE_LABEL)
    np.testing.assert_allclose(np.asarray(base_line.get_ydata(), dtype=float), 1.0)
    # The best k marker sits on the overall curve at the best k.
    (best,) = (line for line in ax.get_lines() if line.get_gid() == "best_k")
    assert list(best.get_xdata()) == [report.best_k] == [3]
    assert best.get_ydata()[0] == pytest.approx(report.overall.loc[3, "score"])
    legend = ax.get_legend()
    assert legend is not None and len(legend.get_texts()) == len(ax.get_legend_handles_labels()[1])
    assert "k" in ax.get_xlabel() and "NRMSE" in ax.get_ylabel()


def test_columns_argument_limits_the_column_lines() -> None:
    report = _report({"nitrate": "number", "pH": "number"})
    labels = _labels(plot_error_vs_k(report, columns=["pH", "not-a-column"]))
    assert "pH" in labels and "nitrate" not in labels


def test_category_only_report_plots_error_rate() -> None:
    report = _report({"site": "category", "soil": "category"})
    fig = plot_error_vs_k(report)
    assert "error rate" in fig.axes[0].get_ylabel()
    assert {"site", "soil"} <= set(_labels(fig))


def test_existing_figure_is_reused_and_cleared() -> None:
    fig = Figure()
    fig.add_subplot().plot([0, 1], [0, 1], label="old")
    out = plot_error_vs_k(_report({"x": "number"}), figure=fig)
    assert out is fig and len(fig.axes) == 1 and "old" not in _labels(fig)


@pytest.mark.parametrize(("name", "magic"), [("chart.png", PNG_MAGIC), ("chart.svg", b"<?xml")])
def test_save_writes_png_and_svg(tmp_path: Path, name: str, magic: bytes) -> None:
    fig = plot_error_vs_k(_report({"x": "number", "y": "number"}))
    path = save_figure(fig, tmp_path / name)
    data = path.read_bytes()
    assert len(data) > 1000 and data.startswith(magic)
    if name.endswith(".svg"):
        assert b"<svg" in data[:2000]


def test_save_refuses_other_formats(tmp_path: Path) -> None:
    with pytest.raises(ExportError, match=r"\.png or \.svg"):
        save_figure(Figure(), tmp_path / "chart.pdf")


def test_charts_never_import_qt() -> None:
    code = (
        "import sys, imputer_app.charts, imputer_app.validation;"
        "bad = [m for m in sys.modules if m.startswith(('PySide6', 'shiboken6', 'PyQt'))];"
        "print(','.join(bad))"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert done.stdout.strip() == ""


def test_chart_public_names_import() -> None:
    # STYLE.md: a short sorted __all__ that imports.
    import imputer_app.charts as charts

    assert charts.__all__ == sorted(charts.__all__)
    assert all(callable(getattr(charts, name)) for name in charts.__all__)
