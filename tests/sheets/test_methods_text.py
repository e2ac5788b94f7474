"""The methods paragraph states only facts of the run: every number in it is in the run record."""

from __future__ import annotations

import json
import re
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest

from imputer_app import CAUTIONS, __version__
from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import methods_paragraph, read_sheet, write_result
from imputer_app.sheets._methods_text import REFERENCES, REFERENCES_HEADING, number_text
from imputer_app.validation import recovery_test

DEMO = Path(__file__).resolve().parents[2] / "sample_sheets" / "river_survey.xlsx"

#: A number followed by dots and digits (a version such as 0.1.0 is one token).
NUMBER = re.compile(r"\d+(?:\.\d+)*")
#: In-text citations "(Dixon 1979)" and the method phrase "sqrt(2)" hold numbers that
#: are not facts of the run; they are checked against REFERENCES instead.
CITATION = re.compile(
    r"\((?:[A-Z][A-Za-z&. ]+) (?:19|20)\d\d\)|sqrt\(2\)|\(Hastie et al\. 2009, sec\. 7\.10\)"
)


def _record_numbers(value: Any) -> set[str]:
    """Every number of the run record as the paragraph would print it, and every number in its texts."""
    out: set[str] = set()
    if isinstance(value, dict):
        for item in value.values():
            out |= _record_numbers(item)
    elif isinstance(value, list):
        for item in value:
            out |= _record_numbers(item)
    elif isinstance(value, bool) or value is None:
        pass
    elif isinstance(value, int | float):
        out |= {str(value), number_text(value)}
        if 0 < value <= 1:  # a share (an interval level, a coverage) is printed as a percent
            out.add(number_text(100 * value))
    elif isinstance(value, str) and value != CAUTIONS:
        out |= set(NUMBER.findall(value))
    return out


def _result_numbers(result: Any) -> set[str]:
    """Per-column counts of filled cells and of log rows by method (the fill log itself)."""
    filled = result.filled.sum(axis=0)
    counts = {str(int(n)) for n in filled} | {str(int(filled.sum())), str(int((filled > 0).sum()))}
    log = result.log
    counts |= {str(int(n)) for n in log.groupby(["column", "method"]).size()}
    return counts


def _body(text: str) -> str:
    body, _, works = text.partition(REFERENCES_HEADING)
    assert works.strip(), "the paragraph ends with its references"
    return CITATION.sub("", body)


@pytest.fixture(scope="module")
def demo() -> Any:
    return read_sheet(DEMO)


@pytest.mark.parametrize(
    ("plan", "with_report"),
    [
        (FillPlan(), True),
        (FillPlan(k=3, censored="limit_sqrt2", weights={"pH": 2.0}), False),
        (FillPlan(k=7, scaling="range", numeric_rule="median", censored="limit"), True),
    ],
)
def test_every_number_in_the_paragraph_is_in_the_run_record(
    demo: Any, plan: FillPlan, with_report: bool, tmp_path: Path
) -> None:
    report = None
    if with_report:
        report = recovery_test(demo, plan, ks=(1, 3, 5, 7), repeats=2, hide_fraction=0.1, seed=1)
    result = impute(demo, plan)
    written = write_result(tmp_path / "out.csv", demo, result, plan, report)
    record = json.loads(next(p for p in written if p.name.endswith(".run.json")).read_text(encoding="utf-8"))
    text = record["methods_text"]
    assert text == methods_paragraph(result, plan, report, demo)
    facts = {k: v for k, v in record.items() if k != "methods_text"}
    allowed = _record_numbers(facts) | _result_numbers(result)
    found = NUMBER.findall(_body(text))
    assert found, "the paragraph states numbers"
    assert [n for n in found if n not in allowed] == []
    assert f"Kinfill {__version__}" in text
    assert CAUTIONS in text
    # the demo's numbers are rounded to each column's measured precision by default
    assert ("rounded to the precision measured in their column" in text) == (plan.rounding == "measured")


def test_counts_per_column_are_the_filled_cells(demo: Any) -> None:
    result = impute(demo, FillPlan())
    text = methods_paragraph(result, FillPlan(), None, demo)
    per_column = result.filled.sum(axis=0)
    for column, n in per_column[per_column > 0].items():
        assert f"{column} ({int(n)})" in text
    assert f"{int(per_column.sum())} cells in {int((per_column > 0).sum())} columns" in text
    assert "k = 5 was set by the user." in text


def test_references_follow_the_methods_used(demo: Any) -> None:
    plain = impute(demo, FillPlan(censored="half_limit"))
    text = methods_paragraph(plain, FillPlan(), None, demo)
    works = text.partition(REFERENCES_HEADING)[2]
    # Station is a category similarity column of the demo sheet: Gower's rule applies.
    assert all(REFERENCES[key] in works for key in ("dixon", "gower", "troyanskaya"))
    assert REFERENCES["hornung"] not in works and REFERENCES["esl"] not in works
    sqrt2 = FillPlan(censored="limit_sqrt2")
    assert REFERENCES["hornung"] in methods_paragraph(impute(demo, sqrt2), sqrt2, None, demo)


def test_one_se_rule_is_cited_only_when_it_chose_k(demo: Any) -> None:
    report = recovery_test(demo, FillPlan(), ks=(1, 3, 5, 7), repeats=2, seed=1)
    chosen = FillPlan(k=int(report.best_k_1se))
    text = methods_paragraph(impute(demo, chosen), chosen, report, demo)
    assert "one-standard-error rule (Hastie et al. 2009, sec. 7.10)" in text
    assert REFERENCES["esl"] in text
    other = next(k for k in (1, 3, 5, 7) if k not in (report.best_k, report.best_k_1se))
    manual = FillPlan(k=other)
    text = methods_paragraph(impute(demo, manual), manual, report, demo)
    assert REFERENCES["esl"] not in text and "set by the user after the test" in text


def test_no_categories_no_gower() -> None:
    rng = np.random.default_rng(3)
    frame = pd.DataFrame(rng.normal(size=(30, 3)), columns=["a", "b", "c"])
    frame.iloc[[1, 5, 9], 1] = np.nan
    result = impute(frame, FillPlan(k=2))
    text = methods_paragraph(result, FillPlan(k=2))
    assert "Gower" not in text and "b (3)" in text and "Entries below" not in text
