"""Help > About: version, the cautions (first and prominent), outside references."""

from __future__ import annotations

import html

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QDialog, QDialogButtonBox, QFrame, QLabel, QTextBrowser, QVBoxLayout, QWidget

from imputer_app import CAUTIONS, __version__

#: Outside work Kinfill relies on or checks itself against.
REFERENCES: tuple[str, ...] = (
    "Dixon JK (1979). Pattern recognition with partly missing data. IEEE Transactions on Systems, "
    "Man, and Cybernetics 9(10):617-621. The missing-aware distance.",
    "Gower JC (1971). A general coefficient of similarity and some of its properties. Biometrics "
    "27(4):857-871. Matching rule for category columns.",
    "Troyanskaya O et al. (2001). Missing value estimation methods for DNA microarrays. "
    "Bioinformatics 17(6):520-525. kNN fill and scoring by hiding known values.",
    "Hastie T, Tibshirani R, Friedman J (2009). The Elements of Statistical Learning, 2nd ed., "
    "section 7.10. The one-standard-error rule for choosing k.",
    "Hornung RW, Reed LD (1990). Estimation of average concentration in the presence of "
    "nondetectable values. Applied Occupational and Environmental Hygiene 5(1):46-51. limit/√2.",
    "scikit-learn: KNNImputer and nan_euclidean_distances, used as the reference implementation "
    "in Kinfill's tests.",
    "Data sets shipped with scikit-learn and used in tests: iris (Fisher 1936), wine (UCI), "
    "diabetes (Efron et al. 2004).",
)


def about_html() -> str:
    """The About text as simple HTML (cautions first)."""
    refs = "".join(f"<li>{html.escape(r)}</li>" for r in REFERENCES)
    return (
        f"<p>Kinfill fills gaps in measurement sheets from the most similar rows (k nearest "
        f"neighbours), helps choose k from evidence, and writes a fill log for every filled cell.</p>"
        f"<h3>Outside references</h3><ul>{refs}</ul>"
        f"<p>Built with PySide6 (Qt), numpy, pandas, scikit-learn, matplotlib, openpyxl, "
        f"python-calamine and xlsxwriter.</p>"
    )


class AboutDialog(QDialog):
    """Version, cautions and references."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("aboutDialog")
        self.setAccessibleName("About Kinfill")
        self.setWindowTitle("About Kinfill")
        self.resize(620, 520)
        layout = QVBoxLayout(self)
        title = QLabel(f"<h2>Kinfill {html.escape(__version__)}</h2>", self)
        title.setObjectName("aboutTitle")
        title.setAccessibleName(f"Kinfill version {__version__}")
        layout.addWidget(title)
        caution = QLabel(f"<b>Caution.</b> {html.escape(CAUTIONS)}", self)
        caution.setObjectName("aboutCautions")
        caution.setAccessibleName("Cautions")
        caution.setWordWrap(True)
        caution.setFrameShape(QFrame.Shape.Box)
        caution.setMargin(8)
        caution.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        layout.addWidget(caution)
        body = QTextBrowser(self)
        body.setObjectName("aboutText")
        body.setAccessibleName("About text and references")
        body.setOpenExternalLinks(False)
        body.setHtml(about_html())
        layout.addWidget(body, 1)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close, self)
        buttons.setObjectName("aboutButtons")
        buttons.setAccessibleName("Close")
        buttons.rejected.connect(self.reject)
        buttons.accepted.connect(self.accept)
        layout.addWidget(buttons)
