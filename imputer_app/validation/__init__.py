"""Recovery test: hide known cells, fill them for every k, and score each k.

Users choose k from evidence: :func:`recovery_test` hides a share of the known cells
of each fill column, fills them with the same engine and plan for every k, and
compares the errors with a plain column-mean fill. :func:`one_se_rule` picks the
largest k within one standard error of the best (ESL 2nd ed., sec. 7.10).

Suggested weights: :func:`suggest_weights` learns each similarity column's weight
from hidden known cells, judged on other hidden cells.

Gap check: :func:`gap_check` runs Little's test of missing completely at random and
tabulates how rows with gaps differ from the others and which gap patterns occur.
"""

from imputer_app.validation._advice import about_as_good, advice
from imputer_app.validation._gaps import GapCheck, MCARTest, gap_check
from imputer_app.validation._k_check import KCheck, check_k, fill_columns, known_counts
from imputer_app.validation._per_column_k import choice_record, k_by_column, plan_with_k
from imputer_app.validation._recovery import recovery_test
from imputer_app.validation._report import RecoveryReport
from imputer_app.validation._scoring import one_se_rule
from imputer_app.validation._weights import WeightSuggestion, suggest_weights

__all__ = [
    "GapCheck",
    "KCheck",
    "MCARTest",
    "RecoveryReport",
    "WeightSuggestion",
    "about_as_good",
    "advice",
    "check_k",
    "choice_record",
    "fill_columns",
    "gap_check",
    "k_by_column",
    "known_counts",
    "one_se_rule",
    "plan_with_k",
    "recovery_test",
    "suggest_weights",
]
