"""The one home of Kinfill's words: choice labels, censored methods, log column lists.

Every layer (engine notes, exports, command line, app) imports its wording from here,
so that a setting or a method is described the same way wherever a user meets it.
This module imports nothing from the package; it sits at the bottom of the layers.

Examples
--------
>>> SUBSTITUTION_PHRASES["half_limit"]
'half the limit'
>>> CHOICE_WORDS["censored"]["limit"].label
'limit'
"""

from __future__ import annotations

from dataclasses import dataclass

#: Columns of ``FillResult.log``, in the order the engine builds them.
LOG_COLUMNS = (
    "row", "column", "value", "original_state", "method", "k", "donors",
    "distances", "donor_values", "spread", "support", "note", "lower", "upper", "original_text",
)  # fmt: skip

#: Columns of the fill log as exported (xlsx sheet "Fill log" and the csv fill log):
#: where and what first, then how the value was found.
EXPORT_LOG_COLUMNS = (
    "row", "column", "original_state", "method", "value", "lower", "upper", "k",
    "donors", "distances", "donor_values", "spread", "support", "note", "original_text", "sample_id",
)  # fmt: skip

#: Columns of ``FillResult.unfilled``: cells left empty and why.
UNFILLED_COLUMNS = ("row", "column", "reason")

#: What number a substituted below-limit entry stands for, as a phrase that completes
#: "replaced by ..." (Hornung & Reed 1990 for the limit divided by sqrt(2)).
SUBSTITUTION_PHRASES = {
    "limit": "the limit",
    "half_limit": "half the limit",
    "limit_sqrt2": "the limit divided by sqrt(2) (Hornung & Reed 1990)",
    "ros": "a value below its limit estimated by robust regression on order statistics (ROS)",
}

#: How a censored entry's stand-in is rounded (plan_rounding.round_stand_ins), completing
#: "Values standing for below-limit entries were ...".
STAND_IN_ROUNDING = (
    "rounded like the filled numbers of their column, but to no fewer than two significant "
    "digits and never above their limit"
)

#: One line said when a plan had no rounding setting and was read as Kinfill then filled.
ROUNDING_NOT_GIVEN = (
    "the plan has no rounding setting (it was written before Kinfill rounded filled numbers), "
    'so filled numbers are left as computed, as then; set rounding = "measured" to round them'
)

#: The cell states a sheet can give a cell, in plain words.
STATE_WORDS = {
    "observed": "measured",
    "missing": "empty in the sheet",
    "censored": "a below- or above-limit entry",
    "text_in_number": "text in a number column (unreadable as a number)",
    "formula_error": "a formula without a result in the sheet (an error such as #DIV/0!, or none stored)",
}


@dataclass(frozen=True)
class ChoiceWords:
    """How one allowed value of a choice setting is shown.

    Attributes
    ----------
    label : str
        A few words for a drop-down list or a summary line.
    explanation : str
        One sentence for a tooltip or ``--help``.
    """

    label: str
    explanation: str


#: Per choice setting of a plan (``plan.CHOICES``), the words for each allowed value.
CHOICE_WORDS: dict[str, dict[str, ChoiceWords]] = {
    "scaling": {
        "zscore": ChoiceWords("z-score", "Each number column to mean 0 and standard deviation 1."),
        "range": ChoiceWords("range 0–1", "Each number column to minimum 0 and maximum 1."),
        "robust": ChoiceWords("robust", "Each number column centred on its median and divided by its IQR."),
        "none": ChoiceWords("none", "Raw units: a column with large numbers dominates the distance."),
    },
    "neighbour_weighting": {
        "uniform": ChoiceWords("equal", "All k donors count the same."),
        "inverse_distance": ChoiceWords("nearer count more", "Donors are weighted by 1 / distance."),
    },
    "numeric_rule": {
        "mean": ChoiceWords("mean", "The mean of the donors' values."),
        "median": ChoiceWords("median", "The median of the donors' values (less swayed by one odd donor)."),
    },
    "censored": {
        "ros": ChoiceWords(
            "estimated (ROS)",
            "Each '<0.02' entry gets a value below its limit, estimated from the column's measured "
            "values by robust regression on order statistics (Helsel & Cohn 1988); a column with "
            "too few measured values uses limit / 2.",
        ),
        "half_limit": ChoiceWords("limit / 2", "A '<0.02' entry stands for 0.01."),
        "limit": ChoiceWords("limit", "A '<0.02' entry stands for 0.02."),
        "limit_sqrt2": ChoiceWords("limit / √2", "A '<0.02' entry stands for 0.0141 (Hornung & Reed 1990)."),
        "fill_capped": ChoiceWords(
            "kNN, capped", "Filled from donors like a gap, but never above its limit."
        ),
    },
    "no_donor": {
        "leave_empty": ChoiceWords("leave empty", "The cell stays empty and is listed under Unfilled."),
        "column_mean": ChoiceWords(
            "column mean", "The column's mean is written and flagged in the fill log."
        ),
    },
    "rounding": {
        "measured": ChoiceWords(
            "as measured",
            "Each filled number gets as many decimals as the column's measured values show "
            "(a 2-decimal pH gets 6.42); a column's own decimals setting wins.",
        ),
        "as_computed": ChoiceWords(
            "as computed", "Filled numbers are written unrounded, as the donors give them."
        ),
    },
}

#: Per choice setting, one sentence on what the setting decides.
SETTING_TIPS = {
    "scaling": "How number columns are put on one scale before distances are measured.",
    "neighbour_weighting": "Whether nearer donors count more when their numbers are combined.",
    "numeric_rule": "How the donors' numbers are combined (used when all donors count equally).",
    "censored": "What number a below-limit entry such as <0.02 stands for; it stays flagged either way.",
    "no_donor": "What happens to a cell for which no row can serve as donor.",
    "rounding": "How many decimals a filled number gets when its column has no decimals setting.",
}

__all__ = [
    "CHOICE_WORDS",
    "EXPORT_LOG_COLUMNS",
    "LOG_COLUMNS",
    "ROUNDING_NOT_GIVEN",
    "SETTING_TIPS",
    "STAND_IN_ROUNDING",
    "STATE_WORDS",
    "SUBSTITUTION_PHRASES",
    "UNFILLED_COLUMNS",
    "ChoiceWords",
]
