"""Reading the plan back out of an export (``read_export_plan``, behind ``kinfill fill --plan-from``)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from imputer_app.errors import PlanError
from imputer_app.plan import CHOICES, FillPlan
from imputer_app.plan_checks import KINDS
from imputer_app.sheets import read_export_plan
from imputer_app.sheets._export_plan import plan_from_about_rows
from imputer_app.sheets._run_record import about_rows

# "About this fill" joins lists with "; " and tables as "name=value", so names used
# there avoid those separators (a documented limit of the readable form).
NAMES = st.text(alphabet="abcXYZ _()µ°/-.0123", min_size=1, max_size=10).filter(lambda n: n.strip() == n)


@st.composite
def plans(draw: st.DrawFn) -> FillPlan:
    pool = draw(st.lists(NAMES, min_size=2, max_size=6, unique=True))
    carried = tuple(draw(st.lists(st.sampled_from(pool), unique=True, max_size=2)))
    free = [n for n in pool if n not in carried]
    pick = st.lists(st.sampled_from(free), unique=True, min_size=1).map(tuple) if free else st.none()
    fill = draw(st.none() | pick)
    group_pool = [n for n in pool if n not in (fill or ())]
    bound = st.none() | st.floats(-1e6, 1e6, allow_nan=False)
    bounds = {}
    for name in draw(st.lists(st.sampled_from(pool), unique=True, max_size=2)):
        low, high = sorted([draw(bound) or 0.0, draw(bound) or 1.0])
        bounds[name] = (low, high)
    return FillPlan(
        k=draw(st.integers(1, 50)),
        similarity_columns=draw(st.none() | pick),
        fill_columns=fill,
        carried_columns=carried,
        weights=draw(st.dictionaries(st.sampled_from(pool), st.floats(0, 1000), max_size=3)),
        scaling=draw(st.sampled_from(CHOICES["scaling"])),
        censored=draw(st.sampled_from(CHOICES["censored"])),
        no_donor=draw(st.sampled_from(CHOICES["no_donor"])),
        group_column=draw(st.none() | st.sampled_from(group_pool)) if group_pool else None,
        bounds=bounds,
        decimals=draw(st.dictionaries(st.sampled_from(pool), st.integers(0, 6), max_size=2)),
        kinds=draw(st.dictionaries(st.sampled_from(pool), st.sampled_from(KINDS), max_size=2)),
    )


@settings(max_examples=80, deadline=None)
@given(plan=plans())
def test_about_sheet_rows_give_the_plan_back(plan: FillPlan) -> None:
    # The xlsx export's "About this fill" rows, as the writer makes them.
    rows = [(key, value) for key, value, _style in about_rows({"cautions": "c", "plan": plan.to_dict()})]
    assert FillPlan.from_dict(plan_from_about_rows(rows, "x.xlsx")) == plan


def test_run_json_gives_the_plan_back(tmp_path: Path) -> None:
    plan = FillPlan(k=4, weights={"Dissolved oxygen": 0.5}, bounds={"pH; lab": (0.0, 14.0)})
    record = tmp_path / "out.run.json"
    record.write_text(json.dumps({"plan": plan.to_dict(), "plan_resolved": {}}), encoding="utf-8")
    assert read_export_plan(record) == plan
    table = tmp_path / "out.csv"
    table.write_text("a\n1\n", encoding="utf-8")
    assert read_export_plan(table) == plan  # a csv export's record sits beside it


@pytest.mark.parametrize(
    ("name", "content", "words"),
    [
        ("plain.csv", "a;b\n1;2\n", "no run record beside it"),
        ("notes.json", '{"other": 1}', "holds no plan"),
        ("broken.json", "{", "cannot read the run record"),
        ("picture.png", "", "not a Kinfill export"),
    ],
)
def test_not_an_export(tmp_path: Path, name: str, content: str, words: str) -> None:
    path = tmp_path / name
    path.write_text(content, encoding="utf-8")
    with pytest.raises(PlanError, match=words):
        read_export_plan(path)


def test_xlsx_export_keeps_the_exact_plan_even_for_awkward_names(tmp_path: Path) -> None:
    # Names holding "; " or "=" cannot be parsed back from the readable rows, so the
    # "About this fill" sheet also carries the plan as JSON, which --plan-from prefers.
    import pandas as pd

    from imputer_app.engine import impute
    from imputer_app.sheets import write_result

    frame = pd.DataFrame({"a; b": [1.0, 2.0, None, 4.0], "x=y": [1.0, 2.0, 3.0, 4.0]})
    plan = FillPlan(k=2, weights={"a; b": 2.0, "x=y": 0.5}, bounds={"a; b": (0.0, None)})
    export = tmp_path / "awkward.xlsx"
    write_result(export, None, impute(frame, plan), plan)
    assert read_export_plan(export) == plan
