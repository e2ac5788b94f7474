"""Kinfill: fill gaps in measurement sheets by k-nearest-neighbour imputation.

The package is layered (arrows point down only)::

    gui/         PySide6 windows over Qt-free state objects
    cli.py       headless commands
    validation/  recovery test (hide known cells, fill, score every k)
    sheets/      read and write spreadsheets, cell states
    charts/      matplotlib figures shared by exports, CLI and GUI
    engine/      distances, neighbour search, aggregation (numpy core)
    plan.py      the settings of a fill
"""

__version__ = "0.1.0"

CAUTIONS = (
    "Filled values are estimates, not measurements. Never report a filled value as a "
    "measurement; do not use filled values for an individual patient's diagnosis or for "
    "a regulatory compliance result; follow your lab's QA procedures and local regulations."
)

__all__ = ["CAUTIONS", "__version__"]
