"""Plan files: FillPlan -> TOML -> FillPlan is exact; bad files name the key and line."""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from imputer_app.errors import PlanError
from imputer_app.plan import CHOICES, FillPlan
from imputer_app.plan_checks import KINDS, MAX_WEIGHT

# Column names as labs write them: spaces, units, accents, quotes, dots and brackets.
NAMES = st.text(
    alphabet=st.characters(exclude_categories=["Cs"], exclude_characters="\x00"), min_size=1, max_size=12
)
FINITE = st.floats(allow_nan=False, allow_infinity=False, width=64)


@st.composite
def plans(draw: st.DrawFn) -> FillPlan:
    pool = draw(st.lists(NAMES, min_size=1, max_size=8, unique=True))
    carried = draw(st.lists(st.sampled_from(pool), unique=True, max_size=3))
    free = [n for n in pool if n not in carried]
    similarity = draw(st.none() | st.lists(st.sampled_from(free), unique=True).map(tuple)) if free else None
    fill = draw(st.none() | st.lists(st.sampled_from(free), unique=True).map(tuple)) if free else None
    group_pool = [n for n in pool if n not in (fill or ())]
    group = draw(st.none() | st.sampled_from(group_pool)) if group_pool else None
    bounds = {}
    for name in draw(st.lists(st.sampled_from(pool), unique=True, max_size=3)):
        low, high = draw(st.none() | FINITE), draw(st.none() | FINITE)
        if low is not None and high is not None and low > high:
            low, high = high, low
        bounds[name] = (low, high)
    return FillPlan(
        k=draw(st.integers(1, 10_000)),
        similarity_columns=similarity,
        fill_columns=fill,
        carried_columns=tuple(carried),
        weights=draw(st.dictionaries(st.sampled_from(pool), st.floats(0, MAX_WEIGHT), max_size=4)),
        scaling=draw(st.sampled_from(CHOICES["scaling"])),
        neighbour_weighting=draw(st.sampled_from(CHOICES["neighbour_weighting"])),
        numeric_rule=draw(st.sampled_from(CHOICES["numeric_rule"])),
        group_column=group,
        bounds=bounds,
        decimals=draw(st.dictionaries(st.sampled_from(pool), st.integers(0, 15), max_size=4)),
        censored=draw(st.sampled_from(CHOICES["censored"])),
        no_donor=draw(st.sampled_from(CHOICES["no_donor"])),
        kinds=draw(st.dictionaries(st.sampled_from(pool), st.sampled_from(KINDS), max_size=4)),
    )


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(plan=plans())
def test_toml_round_trip_is_exact(plan: FillPlan, tmp_path: Path) -> None:
    path = plan.save(tmp_path / "p.plan.toml")
    assert FillPlan.load(path) == plan
    assert tomllib.loads(path.read_text(encoding="utf-8"))["format"] == 1


@settings(max_examples=100, deadline=None)
@given(plan=plans())
def test_json_round_trip_is_exact(plan: FillPlan) -> None:
    # The run record of an export embeds the plan as JSON (`.run.json`).
    assert FillPlan.from_dict(json.loads(json.dumps(plan.to_dict()))) == plan


def test_saved_plan_is_readable_and_has_every_field(tmp_path: Path) -> None:
    plan = FillPlan(k=7, carried_columns=("Sample ID",), weights={"Nitrate": 2.0}, bounds={"pH": (0.0, 14.0)})
    text = plan.save(tmp_path / "river.plan.toml").read_text(encoding="utf-8")
    assert text.startswith("#")
    data = tomllib.loads(text)
    every = ["format", "k", "carried_columns", "scaling", "neighbour_weighting", "numeric_rule", "censored"]
    every += ["no_donor", "weights", "bounds", "decimals", "kinds"]
    for key in every:
        assert key in data, key
    assert data["bounds"]["pH"] == {"lower": 0.0, "upper": 14.0}


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "bad.plan.toml"
    path.write_text(text, encoding="utf-8")
    return path


@pytest.mark.parametrize(
    ("text", "key", "line"),
    [
        ("format = 1\nk = 5\ncolour = 'blue'\n", "'colour'", 3),
        ("format = 1\n\n\nk = 'five'\n", "k", 4),
        ("format = 1\nk = 2.5\n", "k", 2),
        ("format = 1\nk = 3\nscaling = 1\n", "scaling", 3),
        ("format = 1\ncarried_columns = 'Sample ID'\n", "carried_columns", 2),
        ("format = 1\nk = 3\n\n[weights]\npH = 'heavy'\n", "pH", 5),
        ("format = 1\nk = 3\n\n[decimals]\npH = 1.5\n", "pH", 5),
        ("format = 1\nk = 3\n\n[bounds.pH]\nlow = 0\n", "pH", 4),
        ("format = 1\nk = 3\n[kinds]\nStation = 'text'\n", "Station", 4),
        ("format = 1\nk = 3\nweights = 2\n", "weights", 3),
    ],
)
def test_bad_plan_names_key_and_line(tmp_path: Path, text: str, key: str, line: int) -> None:
    with pytest.raises(PlanError) as info:
        FillPlan.load(_write(tmp_path, text))
    message = str(info.value)
    assert "bad.plan.toml" in message and key in message and f"line {line}" in message
    assert "\n" not in message


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("format = 2\n", "format 2"),
        ("k = 0\n", "at least 1"),
        ("[weights]\npH = -1.0\n", "0 or more"),
        ("k = [\n", "not valid TOML"),
    ],
)
def test_bad_plan_values_are_explained(tmp_path: Path, text: str, words: str) -> None:
    with pytest.raises(PlanError, match=words):
        FillPlan.load(_write(tmp_path, text))


def test_missing_plan_file_is_a_plan_error(tmp_path: Path) -> None:
    with pytest.raises(PlanError, match="not found"):
        FillPlan.load(tmp_path / "absent.plan.toml")


def test_plan_for_other_columns_names_the_missing_ones() -> None:
    plan = FillPlan(similarity_columns=("pH", "Nitrate", "Iron"), carried_columns=("Lab code",))
    with pytest.raises(PlanError) as info:
        plan.check_columns(["Sample ID", "pH", "Nitrate"])
    message = str(info.value)
    assert "'Iron'" in message and "'Lab code'" in message and "'pH'" not in message
