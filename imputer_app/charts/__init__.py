"""Matplotlib figures shared by the export, the command line and the app."""

from imputer_app.charts.error_vs_k import ErrorVsK, plot_error_vs_k, save_figure

__all__ = ["ErrorVsK", "plot_error_vs_k", "save_figure"]
