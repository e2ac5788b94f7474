"""What the command line says about censored cells and about k against the column average.

A censored entry ("<0.5", "< LOD") that Kinfill fills by kNN is not a gap: the summary
must count it apart, so that nobody reads "filled 5 cells" as five gaps filled. The
score-k table must say plainly when the column average does as well as every k, and
its JSON must carry the input's SHA-256 and the cautions (README.md, the cautions).
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from imputer_app import CAUTIONS
from imputer_app.cli.text import recovery_table
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet
from tests.cli.helpers import run

# b, by row number in the file (header on row 1): one "<0.5" (row 3), one gap (row 5)
# and one "< LOD" without a limit column (row 7).
SHEET = "id;a;b;c\nS1;1,5;1500;2,0\nS2;3;<0,5;4,0\nS3;4,5;1800;5,5\nS4;4,7;;5,6\nS5;2;1700;3\nS6;1;< LOD;2\n"


@pytest.fixture
def lab(tmp_path: Path) -> Path:
    path = tmp_path / "lab.csv"
    path.write_text(SHEET, encoding="utf-8")
    return path


@pytest.mark.parametrize(
    ("censored", "lines"),
    [
        pytest.param(
            "fill_capped",
            [
                "  of them censored entries filled by kNN, capped at their limit: 1 (flagged as censored)",
                "  of them censored entries with no limit written, filled by kNN and kept beyond the "
                "column's measured values: 1 (flagged as censored)",
            ],
            id="fill_capped",
        ),
        pytest.param(
            "half_limit",
            [
                "censored entries stood in by half the limit: 1 (flagged as censored)",
                "  of them censored entries with no limit written, filled by kNN and kept beyond the "
                "column's measured values: 1 (flagged as censored)",
            ],
            id="half_limit",
        ),
    ],
)
def test_censored_cells_filled_by_knn_are_counted_apart(
    censored: str, lines: list[str], lab: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    plan = FillPlan(censored=censored, k=2).save(tmp_path / "p.plan.toml")
    code, out, err = run(["fill", lab, "--plan", plan, "--out", tmp_path / "out.xlsx"], capsys)
    assert code == 0, err
    filled_by_knn = 1 + (2 if censored == "fill_capped" else 1)  # the gap plus censored cells
    assert f"filled {filled_by_knn} cells" in out
    for line in lines:
        assert line in out.splitlines()


def _report(scores: list[float], baseline: float) -> SimpleNamespace:
    ks = list(range(1, len(scores) + 1))
    overall = pd.DataFrame(
        {"score": scores, "se": [0.01] * len(ks), "category_error": math.nan, "category_se": math.nan},
        index=pd.Index(ks, name="k"),
    )
    return SimpleNamespace(
        overall=overall,
        baseline=pd.DataFrame({"score": [baseline]}, index=["overall"]),
        best_k=int(overall["score"].idxmin()),
        best_k_1se=int(overall["score"].idxmin()),
        best_k_by_column={},
        settings={"hide_fraction": 0.1, "repeats": 2, "seed": 0, "masking": "random"},
    )


@pytest.mark.parametrize(
    ("scores", "baseline", "warned"),
    [([0.9, 0.8, 0.85], 1.0, False), ([1.2, 1.1, 1.05], 1.0, True), ([1.0, 1.1], 1.0, True)],
)
def test_table_says_when_the_column_average_is_as_good(
    scores: list[float], baseline: float, warned: bool
) -> None:
    text = recovery_table(_report(scores, baseline))
    assert ("no k tested beats the column average" in text) is warned


def twins_sheet(path: Path, pairs: int = 12) -> Path:
    """Rows in pairs of near-identical twins; the pairs lie far apart from each other.

    A hidden cell's nearest row is its twin, so one donor (k = 1) recovers it almost
    exactly and every further donor comes from another pair and adds error: the best
    k is 1 (by construction, no outside source).
    """
    rng = np.random.default_rng(3)
    lines = ["id,a,b,c"]
    for pair in range(pairs):
        centre = 100.0 * pair + rng.normal(0, 1, size=3)
        for twin in range(2):
            a, b, c = centre + rng.normal(0, 0.01, size=3) + (0, 50.0 * (pair % 3), 0)
            lines.append(f"P{pair}-{twin},{a:.4f},{b:.4f},{c:.4f}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_score_k_json_names_the_input_and_carries_the_cautions(
    lab: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    js = tmp_path / "scores.json"
    code, _, err = run(["score-k", lab, "--k-range", "1-2", "--repeats", "1", "--json", js], capsys)
    assert code == 0, err
    data = json.loads(js.read_text(encoding="utf-8"))
    assert data["cautions"] == CAUTIONS
    assert data["input"]["file"] == "lab.csv"
    assert data["input"]["sha256"] == read_sheet(lab).source.sha256


def test_score_k_json_best_k_is_the_lowest_mean_error(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    sheet = twins_sheet(tmp_path / "twins.csv")
    js = tmp_path / "scores.json"
    argv = ["score-k", sheet, "--k-range", "1-6", "--repeats", "3", "--hide", "0.1", "--json", js]
    code, _, err = run(argv, capsys)
    assert code == 0, err
    data = json.loads(js.read_text(encoding="utf-8"))
    # Recompute from the raw per-fold scores: mean NRMSE over folds and repeats per column,
    # then over the number fill columns; the best k has the lowest mean (kinfill score-k --help).
    scores = pd.DataFrame(data["scores"])
    per_k = scores.groupby(["k", "column"])["nrmse"].mean().groupby("k").mean()
    assert sorted(per_k.index) == [1, 2, 3, 4, 5, 6]
    assert data["best_k"] == int(per_k.idxmin())
    assert data["best_k"] == 1  # the twin is the one right donor (see twins_sheet)
    # One donor recovers a hidden cell nearly exactly; any further donor is from another pair.
    # Every known cell is hidden once per repeat, so about one cell in ten has its twin's
    # cell hidden in the same fold and takes another pair's row even at k = 1 (0.051 here,
    # against 0.17 and more for k >= 2).
    assert per_k[1] < 0.1 < per_k.drop(1).min()
