"""Measure the donor panel's facts in a real window once a filled cell is selected.

Run as its own process under Xvfb: ``python tests/gui/_donor_fit.py SHEET WIDTH HEIGHT``.
Prints one line of JSON: for each fact, its text, its height and the height its wrapped
text needs at its width. Exit code 0 when the facts were printed.
"""

from __future__ import annotations

import sys

from imputer_app.gui.main_window import MainWindow
from tests.gui._panel_fit import in_real_window


def fact_heights(window: MainWindow) -> list[list[object]]:
    """Each fact's text, height, and the height its wrapped text needs at its width."""
    facts = window.donor_panel.facts
    values = [facts.itemAtPosition(i, 1).widget() for i in range(facts.rowCount())]
    return [[v.text(), v.height(), v.heightForWidth(v.width())] for v in values]


if __name__ == "__main__":
    sys.exit(in_real_window(sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), "preview", fact_heights))
