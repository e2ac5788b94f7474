"""How special cells look: one symbol and one colour pair per kind of cell.

Every marked cell carries a symbol *and* a colour, so that nothing depends on colour
alone. Each colour pair (background, text) exists in a light and a dark variant; the
app picks the variant that matches the system palette, and sets the text colour with
the background so the pair stays readable on either.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtGui import QColor, QGuiApplication, QPalette

from imputer_app.words import STATE_WORDS

# Cell codes shared by the table model and the gap map (int8 arrays).
OBSERVED, MISSING, CENSORED, TEXT, FORMULA = 0, 1, 2, 3, 4
#: Sheet cell state names to codes.
STATE_CODES = {
    "observed": OBSERVED,
    "missing": MISSING,
    "censored": CENSORED,
    "text_in_number": TEXT,
    "formula_error": FORMULA,
}

# Fill layer codes (a second int8 array): not filled, filled, filled with weak support.
NO_FILL, FILL, FILL_WEAK = 0, 1, 2

#: Appended to the fill symbol when the donors are far away.
WEAK_SYMBOL = "?"


@dataclass(frozen=True)
class Marker:
    """The look of one kind of cell.

    Attributes
    ----------
    key : str
        ``missing``, ``censored``, ``text``, ``formula_error``, ``preview`` or ``filled``.
    symbol : str
        Shown before the cell's text.
    label : str
        Short legend text.
    description : str
        One sentence for tooltips and screen readers.
    light, dark : tuple of str
        ``(background, text)`` colours for light and dark palettes.
    strong : str
        A saturated colour for the small gap map, readable on light and dark.
    """

    key: str
    symbol: str
    label: str
    description: str
    light: tuple[str, str]
    dark: tuple[str, str]
    strong: str = "#808080"

    def colours(self, dark: bool) -> tuple[QColor, QColor]:
        """Return ``(background, text)`` for a light or dark palette."""
        bg, fg = self.dark if dark else self.light
        return QColor(bg), QColor(fg)


MARKERS: dict[str, Marker] = {
    m.key: m
    for m in (
        Marker(
            "missing",
            "∅",
            "gap",
            "Empty in the sheet, or a missing-value marker such as n.d.",
            ("#f9d5d3", "#5b1a15"),
            ("#6b2a27", "#ffe3e0"),
            "#d8433a",
        ),
        Marker(
            "censored",
            "▾",
            "beyond a limit",
            "A below- or above-limit entry such as <0.02; it stays flagged in every view and export.",
            ("#e1daf5", "#2e2160"),
            ("#43386e", "#ece6ff"),
            "#8a6fe0",
        ),
        Marker(
            "text",
            "⚠",
            "text in a number column",
            "Text that is not a number in a number column; treated as a gap.",
            ("#fbe3a6", "#4a3500"),
            ("#5e4a10", "#fff0c2"),
            "#e0a100",
        ),
        Marker(
            "formula_error",
            "✕",
            "formula error",
            STATE_WORDS["formula_error"][0].upper()
            + STATE_WORDS["formula_error"][1:]
            + "; not a gap, left alone unless the plan fills such cells.",
            ("#e4e4e4", "#3a3a3a"),
            ("#4a4a4a", "#eeeeee"),
            "#7a7a7a",
        ),
        Marker(
            "preview",
            "◇",
            "proposed fill (preview)",
            "A value the preview proposes; nothing is changed until you apply it.",
            ("#cfe6fb", "#0b3558"),
            ("#1d4a72", "#e0f0ff"),
            "#3d8fe0",
        ),
        Marker(
            "filled",
            "◆",
            "filled (applied)",
            "A value Kinfill wrote into the working table; an estimate, not a measurement.",
            ("#cdefd8", "#0f4424"),
            ("#1e5a36", "#ddf7e6"),
            "#2fa060",
        ),
    )
}

#: Marker key for each cell code (observed cells have none).
CODE_MARKERS = {MISSING: "missing", CENSORED: "censored", TEXT: "text", FORMULA: "formula_error"}


def palette_is_dark(palette: QPalette | None = None) -> bool:
    """True when the (application) palette has light text on a dark window."""
    if palette is None:
        palette = QGuiApplication.palette()
    window = palette.color(QPalette.ColorRole.Window)
    text = palette.color(QPalette.ColorRole.WindowText)
    return window.lightness() < text.lightness()
