"""Help > About: version, the cautions, and the outside references."""

from __future__ import annotations

import pytest
from PySide6.QtWidgets import QLabel, QTextBrowser

from imputer_app import CAUTIONS, __version__
from imputer_app.gui.about import AboutDialog


@pytest.fixture
def about(qtbot):
    dialog = AboutDialog()
    qtbot.addWidget(dialog)
    return dialog


def test_about_shows_version_and_cautions_first(about):
    assert __version__ in about.findChild(QLabel, "aboutTitle").text()
    assert CAUTIONS.split(".")[0] in about.findChild(QLabel, "aboutCautions").text()


@pytest.mark.parametrize(
    "reference",
    [
        "KNNImputer",
        "nan_euclidean_distances",
        "Dixon JK (1979)",
        "Gower JC (1971)",
        "Troyanskaya O et al. (2001)",
        "section 7.10",
        "Hornung RW, Reed LD (1990)",
        "iris (Fisher 1936)",
        "wine (UCI)",
        "diabetes (Efron",
    ],
)
def test_about_names_the_outside_references(about, reference):
    assert reference in about.findChild(QTextBrowser, "aboutText").toPlainText()
