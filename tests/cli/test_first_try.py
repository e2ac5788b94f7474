"""What a first try of the command line needs: a warning for a k larger than the donors."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from tests.cli.helpers import run

SAMPLES = Path(__file__).resolve().parents[2] / "sample_sheets"


@pytest.fixture
def demo(tmp_path: Path) -> Path:
    target = tmp_path / "river_survey.csv"
    shutil.copyfile(SAMPLES / "river_survey.csv", target)
    return target


def test_a_k_above_the_donors_is_noted_before_the_fill_with_the_k_in_effect(demo, capsys) -> None:
    code, _out, err = run(["fill", demo, "--k", 1000, "--progress", "lines"], capsys)
    assert code == 0, err
    note = next(line for line in err.splitlines() if "k = 1000" in line)
    assert note == (
        "note: k = 1000 is more than the 292 donors any gap can have; the fill averages all of them, "
        "so k = 292 is in effect (run the recovery test to choose k)."
    )
    # said before the fill started
    assert err.index(note) < err.index("filling")


def test_a_k_within_the_donors_gives_no_note(demo, capsys) -> None:
    code, _out, err = run(["fill", demo, "--k", 5], capsys)
    assert code == 0 and "donors any gap can have" not in err


def test_progress_lines_give_one_line_per_stage_and_every_tenth(demo, capsys) -> None:
    code, _out, err = run(["fill", demo, "--progress", "lines"], capsys)
    assert code == 0, err
    lines = err.splitlines()
    assert "\r" not in err
    for stage in ("reading", "filling", "writing"):
        assert f"{stage}..." in lines
    filling = [line for line in lines if line.startswith("filling: ")]
    percents = [int(line.split()[1].rstrip("%")) for line in filling]
    assert percents == sorted(set(percents)) and percents[-1] == 100 and len(percents) <= 10


@pytest.mark.parametrize("where", ["before", "after"])
def test_quiet_prints_neither_progress_nor_summary(demo, capsys, where) -> None:
    argv = ["--quiet", "fill", demo] if where == "before" else ["fill", demo, "--quiet"]
    code, out, err = run(argv, capsys)
    assert code == 0 and out == "" and err == ""
    assert demo.with_name("river_survey.filled.xlsx").is_file()


def test_progress_none_is_silent_and_bar_draws_even_in_a_pipe(demo, capsys) -> None:
    assert run(["fill", demo, "--progress", "none"], capsys)[2] == ""
    code, _out, err = run(["fill", demo, "--progress", "bar", "--force"], capsys)
    assert code == 0 and "\r" in err and "[#" in err


def test_the_fill_summary_lists_every_filled_column_with_its_count(tmp_path, capsys) -> None:
    import numpy as np
    import pandas as pd

    rng = np.random.default_rng(0)
    frame = pd.DataFrame(rng.normal(size=(40, 14)), columns=[f"m{i}" for i in range(14)])
    for i in range(14):
        frame.iloc[[i, i + 20][: i % 2 + 1], i] = np.nan  # 1 or 2 gaps per column, never a whole row
    path = tmp_path / "wide.csv"
    frame.to_csv(path, index=False)
    code, out, err = run(["fill", path], capsys)
    assert code == 0, err
    line = next(line for line in out.splitlines() if line.startswith("filled "))
    assert line.endswith(", ".join(f"m{i} {i % 2 + 1}" for i in range(14)))
    assert "more" not in line


def test_kinfill_plan_writes_a_comment_above_every_key_and_reads_back(demo, capsys) -> None:
    import tomllib

    from imputer_app.plan import CHOICES, FillPlan

    out = demo.with_name("river.plan.toml")
    code, _out, err = run(["plan", demo, "--out", out, "--k", 7, "--weight", "pH=2"], capsys)
    assert code == 0, err
    text = out.read_text(encoding="utf-8")
    data = tomllib.loads(text)  # still valid TOML
    lines = text.splitlines()
    for key in data:
        at = next(i for i, line in enumerate(lines) if line.startswith((f"{key} =", f"[{key}]")))
        assert lines[at - 1].startswith("# "), key
        if key in CHOICES:
            # a choice lists what it takes, after what it decides where the plan says ("rounding")
            assert lines[at - 1].endswith("one of: " + ", ".join(f'"{v}"' for v in CHOICES[key]))
    plan = FillPlan.load(out)
    assert plan.k == 7 and plan.weights == {"pH": 2.0}
    assert FillPlan.load(plan.save(out)) == plan  # the round trip
