"""Colours and marker shapes for the pictures of a fill.

Colours are from the Okabe-Ito palette, chosen so that readers with the common forms
of colour blindness can tell them apart (Okabe & Ito 2008, "Color Universal Design";
hex values quoted from memory). Every group also gets its own marker shape, so the
pictures read in grey print as well.
"""

from __future__ import annotations

#: Okabe-Ito colours (quoted from memory).
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}

#: Measured values: blue circles.
MEASURED_COLOUR = OKABE_ITO["blue"]
MEASURED_MARKER = "o"
#: Filled values: vermillion triangles, drawn on top.
FILLED_COLOUR = OKABE_ITO["vermillion"]
FILLED_MARKER = "^"
#: Censored entries replaced by a number from their limit: black vertical ticks.
SUBSTITUTED_COLOUR = OKABE_ITO["black"]
SUBSTITUTED_MARKER = "|"
#: Reporting limits and reference lines.
LIMIT_COLOUR = OKABE_ITO["reddish_purple"]
REFERENCE_COLOUR = "#7f7f7f"

#: Labels of the groups (tests and the app find artists by them).
MEASURED_LABEL = "measured"
FILLED_LABEL = "filled"
SUBSTITUTED_LABEL = "below/above limit (number from the limit)"
LIMIT_LABEL = "reporting limit"

#: Font sizes that stay legible when a figure is shrunk to report width.
TITLE_SIZE = 12
LABEL_SIZE = 11
TICK_SIZE = 10
