"""Kinfill: fill gaps in measurement sheets by k-nearest-neighbour imputation.

The package is layered (arrows point down only)::

    gui/         PySide6 windows over Qt-free state objects
    cli/         headless commands (``kinfill``)
    validation/  recovery test (hide known cells, fill, score every k)
    sheets/      read and write spreadsheets, cell states
    charts/      matplotlib figures shared by exports, CLI and GUI
    engine/      distances, neighbour search, aggregation (numpy core)
    plan.py      the settings of a fill
    work.py      progress and cancel, shared by every long step
    errors.py    the errors a user can act on
    words.py     the one home of shared wording and column lists
"""

__version__ = "0.1.0"

CAUTIONS = (
    "Filled values are estimates, not measurements. Never report a filled value as a "
    "measurement; do not use filled values for an individual patient's diagnosis or for "
    "a regulatory compliance result; follow your lab's QA procedures and local regulations."
)

__all__ = ["CAUTIONS", "__version__"]
