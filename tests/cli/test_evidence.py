"""kinfill fill --k best | best-per-column, suggest-weights, and the numbers they record."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pandas as pd
import pytest

from imputer_app.plan import FillPlan
from tests.cli.helpers import run

SAMPLES = Path(__file__).resolve().parents[2] / "sample_sheets"


@pytest.fixture
def demo_csv(tmp_path: Path) -> Path:
    """A copy of the decimal-comma demo csv in a fresh folder."""
    target = tmp_path / "in" / "river_survey.csv"
    target.parent.mkdir()
    shutil.copyfile(SAMPLES / "river_survey.csv", target)
    return target


@pytest.mark.parametrize("choice", ["best", "best-per-column"])
def test_fill_with_k_chosen_by_the_recovery_test_records_the_test(
    demo_csv: Path, tmp_path: Path, choice: str, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out.csv"
    code, stdout, err = run(["fill", demo_csv, "--k", choice, "--out", out], capsys)
    assert code == 0, err
    record = json.loads(out.with_name("out.run.json").read_text())
    test = record["recovery_test"]
    assert test is not None and test["settings"]["repeats"] == 5
    if choice == "best":
        assert record["plan"]["k"] == test["best_k"] and record["plan"]["k_by_column"] == {}
        assert f"k = {test['best_k']}, the best single k" in stdout
    else:
        assert record["plan"]["k_by_column"] == test["k_by_column_1se"]
        assert "k per column" in stdout
    assert record["intervals"]["level"] == 0.9
    assert "intervals: 90%" in stdout
    # the intervals were calibrated on the recovery test's hidden cells, and say so
    assert record["intervals"]["source"] == "hidden by the recovery test"
    n = record["intervals"]["n_hidden"]
    assert n == sum(c["n_hidden"] for c in record["intervals"]["columns"].values()) > 0
    assert "hidden known cells of the recovery test" in stdout
    log = pd.read_csv(out.with_name("out.fill-log.csv"), sep=None, engine="python")
    assert (
        log.loc[log["method"] == "knn", "note"].str.contains("hidden known cells of the recovery test").all()
    )


def test_fill_log_export_has_the_interval_of_every_filled_number(
    demo_csv: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out.csv"
    assert run(["fill", demo_csv, "--out", out], capsys)[0] == 0
    log = pd.read_csv(out.with_name("out.fill-log.csv"), sep=None, engine="python")
    filled = log[log["method"] == "knn"]
    assert {"lower", "upper"} <= set(log.columns)
    assert filled["lower"].notna().all() and filled["upper"].notna().all()


def test_bad_k_word_is_a_usage_error(demo_csv: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run(["fill", demo_csv, "--k", "bestest"], capsys)
    assert code == 2 and "best or best-per-column" in err


def test_suggest_weights_writes_a_plan_that_re_runs_to_the_same_bytes(
    demo_csv: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    plan_path = tmp_path / "w.plan.toml"
    code, stdout, err = run(
        ["suggest-weights", demo_csv, "--out", plan_path, "--json", tmp_path / "w.json"], capsys
    )
    assert code == 0, err
    assert "overall recovery score on hidden cells the search never used" in stdout
    suggested = FillPlan.load(plan_path)
    record = json.loads((tmp_path / "w.json").read_text())
    assert record["weights"] == {**{c: 1.0 for c in record["weights"]}, **suggested.weights}
    # a plan holding per-column k and suggested weights re-runs headless to the same bytes
    both = suggested.replace(k_by_column={"pH": 3, "Nitrate": 7})
    both_path = both.save(tmp_path / "both.plan.toml")
    first, second = tmp_path / "first.csv", tmp_path / "second.csv"
    assert run(["fill", demo_csv, "--plan", both_path, "--out", first], capsys)[0] == 0
    assert run(["fill", demo_csv, "--plan", both_path, "--out", second], capsys)[0] == 0
    assert first.read_bytes() == second.read_bytes()
    names = ("fill-log",)
    for name in names:
        assert (
            first.with_name(f"first.{name}.csv").read_bytes()
            == second.with_name(f"second.{name}.csv").read_bytes()
        )


def test_score_k_json_has_per_column_k_and_the_calibration(
    demo_csv: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "s.json"
    code, _, err = run(["score-k", demo_csv, "--k-range", "1-8", "--repeats", "2", "--json", out], capsys)
    assert code == 0, err
    record = json.loads(out.read_text())
    assert set(record["k_by_column_1se"]) == set(record["kinds"])
    intervals = record["intervals"]
    assert intervals["level"] == 0.9
    assert all(c["n_hidden"] > 0 for c in intervals["columns"].values())
