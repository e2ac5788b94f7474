"""Matplotlib figures shared by the export, the command line and the app."""

from imputer_app.charts.coverage import plot_coverage
from imputer_app.charts.error_vs_k import ErrorVsK, plot_error_vs_k, save_figure
from imputer_app.charts.fill_pictures import (
    ScatterPicture,
    fill_distributions,
    plot_fill_distribution,
    plot_fill_scatter,
)

__all__ = [
    "ErrorVsK",
    "ScatterPicture",
    "fill_distributions",
    "plot_coverage",
    "plot_error_vs_k",
    "plot_fill_distribution",
    "plot_fill_scatter",
    "save_figure",
]
