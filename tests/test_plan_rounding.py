"""The plan's rounding rule: measured precision by default, as computed on request.

Rounding a filled number to the most decimals among its column's observed values is
common practice in lab reporting (no source).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from imputer_app.cli.parser import build_parser
from imputer_app.cli.plan_options import build_plan
from imputer_app.errors import PlanError
from imputer_app.plan import CHOICES, FillPlan
from imputer_app.plan_rounding import (
    LEGACY_ROUNDING,
    MAX_DECIMALS,
    STAND_IN_SIGNIFICANT,
    column_decimals,
    float_decimals,
    outward,
    round_stand_ins,
    stand_in_decimals,
)
from imputer_app.words import CHOICE_WORDS, ROUNDING_NOT_GIVEN, SETTING_TIPS


@pytest.mark.parametrize(
    "values, expected",
    [
        ([6.42, 7.5, 7.0], 2),
        ([7.233749999999999], 5),  # binary noise of 7.23375 is not precision
        ([0.1 + 0.2], 1),  # 0.30000000000000004
        ([139.0, 140.0, -3.0], 0),
        ([0.0025, np.nan, np.inf], 4),
        ([1 / 3], 12),  # read to 12 significant digits
        ([1e-20], MAX_DECIMALS),
        ([np.nan], None),
        ([], None),
    ],
)
def test_float_decimals_reads_stored_numbers_without_noise(values, expected) -> None:
    assert float_decimals(np.array(values, dtype=float)) == expected


@pytest.mark.parametrize(
    "decimals, rounding, measured, expected",
    [
        ({}, "measured", 2, 2),
        ({}, "as_computed", 2, None),
        ({"pH": 1}, "measured", 2, 1),  # the column's own setting wins
        ({"pH": 3}, "as_computed", 2, 3),
        ({}, "measured", None, None),  # nothing measured: left as computed
        ({}, "measured", 40, MAX_DECIMALS),
    ],
)
def test_column_decimals_precedence(decimals, rounding, measured, expected) -> None:
    assert column_decimals(decimals, rounding, "pH", measured) == expected


@pytest.mark.parametrize(
    "lower, upper, places, expected",
    [
        (6.4149, 6.4201, 2, (6.41, 6.43)),  # outward: down and up
        (6.41, 6.43, 2, (6.41, 6.43)),  # already at 2 decimals: unchanged
        (6.41 * 100 / 100, 0.1 + 0.2, 1, (6.4, 0.3)),  # float noise is no extra decimal
        (-0.0041, 0.0041, 2, (-0.01, 0.01)),
        (131.2, 148.7, 0, (131.0, 149.0)),
        (6.4149, 6.4201, -1, (6.4149, 6.4201)),  # not rounded
        (math.nan, math.nan, 2, (math.nan, math.nan)),
    ],
)
def test_interval_bounds_round_outward(lower, upper, places, expected) -> None:
    low, high = outward(np.array([lower]), np.array([upper]), np.array([places]))
    assert np.allclose([low[0], high[0]], expected, rtol=0, atol=0, equal_nan=True)


def test_rounding_defaults_to_measured_and_is_a_choice_with_words() -> None:
    assert FillPlan().rounding == "measured"
    assert CHOICES["rounding"] == ("measured", "as_computed")
    assert set(CHOICE_WORDS["rounding"]) == set(CHOICES["rounding"]) and SETTING_TIPS["rounding"]


@pytest.mark.parametrize("bad", ["nearest", "", 2, None, True])
def test_a_bad_rounding_is_one_line(bad) -> None:
    with pytest.raises(PlanError) as info:
        FillPlan(rounding=bad)
    message = str(info.value)
    assert message.startswith("rounding must be one of measured, as_computed; got ") and "\n" not in message


def test_rounding_round_trips_through_the_commented_plan_file(tmp_path) -> None:
    path = tmp_path / "lab.plan.toml"
    FillPlan(rounding="as_computed", decimals={"pH": 2}).save(path)
    text = path.read_text(encoding="utf-8")
    note = "# filled numbers to each column's measured precision, or as computed; decimals wins; one of:"
    assert note in text
    assert 'rounding = "as_computed"' in text
    loaded = FillPlan.load(path)
    assert (loaded.rounding, dict(loaded.decimals)) == ("as_computed", {"pH": 2})


def test_a_plan_file_with_a_bad_rounding_names_its_line(tmp_path) -> None:
    path = tmp_path / "bad.plan.toml"
    path.write_text("format = 1\nk = 3\nrounding = 2\n", encoding="utf-8")
    with pytest.raises(PlanError, match=r"bad.plan.toml: rounding must be text; got 2 \(line 3\)"):
        FillPlan.load(path)
    path.write_text('format = 1\nrounding = "nearest"\n', encoding="utf-8")
    with pytest.raises(PlanError, match=r"bad\.plan\.toml: rounding must be one of measured, as_computed"):
        FillPlan.load(path)


@pytest.mark.parametrize(
    "given, expected",
    [([], "measured"), (["--rounding", "as_computed"], "as_computed")],
)
def test_the_command_line_option_lays_rounding_over_the_plan(given, expected) -> None:
    args = build_parser().parse_args(["fill", "in.csv", *given])
    assert build_plan(FillPlan(), rounding=args.rounding).rounding == expected


def test_the_command_line_refuses_an_unknown_rounding(capsys) -> None:
    with pytest.raises(SystemExit) as info:
        build_parser().parse_args(["fill", "in.csv", "--rounding", "nearest"])
    assert info.value.code == 2 and "invalid choice: 'nearest'" in capsys.readouterr().err


@pytest.mark.parametrize(
    "value, decimals, expected",
    [
        (0.0122215, 2, 0.012),  # 2 decimals would give 0.01: two significant digits kept
        (0.0122215, 3, 0.012),
        (0.0122215, 4, 0.0122),  # the column's decimals win when they give more
        (0.0042, 2, 0.0042),  # never 0.0
        (0.025, 2, 0.025),
        (0.5, 2, 0.5),
        (2.5, 0, 2.5),  # half a limit of 5 in a whole-number column
        (140.26, 0, 140.0),  # already two significant digits at 0 decimals
        (0.0, 2, 0.0),
        (math.nan, 2, math.nan),
        (1e-20, 2, 0.0),  # past MAX_DECIMALS: rounded at 15 decimals
    ],
)
def test_stand_ins_round_to_the_column_but_keep_two_significant_digits(value, decimals, expected) -> None:
    got = round_stand_ins(np.array([value]), decimals)
    assert np.allclose(got, [expected], rtol=0, atol=0, equal_nan=True)
    assert int(stand_in_decimals(np.array([value]), decimals)[0]) >= decimals


def test_stand_ins_are_left_as_computed_without_decimals() -> None:
    values = np.array([0.0122215, 2.5])
    assert round_stand_ins(values, None).tolist() == values.tolist()
    assert STAND_IN_SIGNIFICANT == 2


def test_a_plan_without_a_rounding_key_is_read_as_computed_and_says_so(tmp_path) -> None:
    # what a plan written before rounding existed holds: every other key, no rounding
    old = FillPlan(k=3).to_dict()
    del old["rounding"]
    plan = FillPlan.from_dict(old, source="old.plan.toml")
    assert plan.rounding == LEGACY_ROUNDING == "as_computed"
    assert plan.rounding_note == ROUNDING_NOT_GIVEN and "\n" not in plan.rounding_note
    assert plan == FillPlan(k=3, rounding="as_computed")  # the note is no setting
    path = tmp_path / "old.plan.toml"
    path.write_text("format = 1\nk = 3\n", encoding="utf-8")
    assert FillPlan.load(path).rounding_note == ROUNDING_NOT_GIVEN
    # saved again, the plan names its rounding and reads back without a note
    FillPlan.load(path).save(path)
    again = FillPlan.load(path)
    assert (again.rounding, again.rounding_note) == ("as_computed", "")


def test_a_new_plan_rounds_and_a_plan_naming_its_rounding_keeps_it() -> None:
    assert (FillPlan().rounding, FillPlan().rounding_note) == ("measured", "")
    assert FillPlan.from_dict(FillPlan().to_dict()).rounding == "measured"
    named = FillPlan.from_dict({"format": 1, "rounding": "as_computed"})
    assert (named.rounding, named.rounding_note) == ("as_computed", "")


def test_the_note_follows_the_plan_until_its_rounding_is_changed() -> None:
    old = FillPlan.from_dict({"format": 1, "k": 3})
    assert old.replace(k=4).rounding_note == ROUNDING_NOT_GIVEN  # other edits keep it
    assert old.replace(rounding="as_computed").rounding_note == ROUNDING_NOT_GIVEN  # the app re-sends it
    changed = old.replace(rounding="measured")
    assert (changed.rounding, changed.rounding_note) == ("measured", "")
    assert changed.replace(rounding="as_computed").rounding_note == ""  # chosen now, not inherited


def test_an_old_plan_refills_as_computed_and_the_fill_says_so_once() -> None:
    from imputer_app.engine import impute
    from tests.engine.helpers import random_frame

    frame = random_frame(30, 3, 0.1, seed=4).round(2)
    old = FillPlan.from_dict({"format": 1, "k": 3, "decimals": {}, "interval_level": "off"})
    result = impute(frame, old)
    assert list(result.warnings).count(ROUNDING_NOT_GIVEN) == 1
    assert result.plan.rounding_note == ROUNDING_NOT_GIVEN
    assert ROUNDING_NOT_GIVEN not in impute(frame, FillPlan(k=3, interval_level=None)).warnings
