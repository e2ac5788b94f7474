"""``kinfill gaps`` prints exactly what ``validation.gap_check`` computes, in words or as JSON."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet
from imputer_app.validation import gap_check
from tests.cli.helpers import run

SAMPLES = Path(__file__).resolve().parents[2] / "sample_sheets"


@pytest.fixture(scope="module", params=["river_survey.xlsx", "river_survey.csv"])
def demo(request: pytest.FixtureRequest) -> Path:
    return SAMPLES / request.param


def test_json_numbers_are_the_gap_check(demo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(["gaps", demo, "--json"], capsys)
    assert code == 0
    got = json.loads(out)
    check = gap_check(read_sheet(demo), FillPlan())
    assert got["mcar"]["statistic"] == pytest.approx(check.mcar.statistic, rel=1e-12)
    assert got["mcar"]["df"] == check.mcar.df
    assert got["mcar"]["p_value"] == pytest.approx(check.mcar.p_value, rel=1e-9)
    assert got["mcar"]["meaning"] == check.mcar.meaning
    assert got["headline"] == check.headline
    assert got["columns"] == list(check.columns)
    differences = pd.DataFrame(got["differences"])
    assert differences["gap_column"].tolist() == check.differences["gap_column"].tolist()
    assert differences["other_column"].tolist() == check.differences["other_column"].tolist()
    np.testing.assert_allclose(
        differences["difference"].astype(float), check.differences["difference"].astype(float), rtol=1e-12
    )
    patterns = pd.DataFrame(got["patterns"])
    assert patterns["count"].tolist() == check.patterns["count"].tolist()
    assert patterns["count"].sum() == check.mcar.n_rows_used
    # The demo sheet's Nitrate gaps come where Conductivity is high (sample_sheets/generate.py).
    assert got["mcar"]["p_value"] < 0.01
    assert (got["differences"][0]["gap_column"], got["differences"][0]["other_column"]) == (
        "Nitrate",
        "Conductivity",
    )


def test_text_states_statistic_df_p_and_meaning(capsys: pytest.CaptureFixture[str]) -> None:
    demo = SAMPLES / "river_survey.xlsx"
    code, out, _ = run(["gaps", demo], capsys)
    assert code == 0
    check = gap_check(read_sheet(demo), FillPlan())
    mcar = check.mcar
    assert f"statistic {mcar.statistic:.4g}, df {mcar.df}, p-value {mcar.p_value:.3g}" in out
    assert mcar.meaning in out and check.headline in out
    assert "does not prove the gaps random" in out
    top = check.differences.iloc[0]
    assert any(
        line.split()[:3] == [top["gap_column"], top["other_column"], f"{top['difference']:+.2f}"]
        for line in out.splitlines()
    )
    first = check.patterns.iloc[0]
    share = f"{100 * first['share']:.1f} %"
    assert any(line.rstrip().endswith(f"{int(first['count'])} {share}") for line in out.splitlines())


def test_plan_options_choose_the_columns(capsys: pytest.CaptureFixture[str]) -> None:
    demo = SAMPLES / "river_survey.xlsx"
    code, out, _ = run(
        ["gaps", demo, "--json", "--similarity", "pH,Conductivity", "--fill", "Nitrate"], capsys
    )
    assert code == 0
    got = json.loads(out)
    plan = FillPlan(similarity_columns=("pH", "Conductivity"), fill_columns=("Nitrate",))
    check = gap_check(read_sheet(demo), plan)
    assert got["columns"] == ["pH", "Conductivity", "Nitrate"] == list(check.columns)
    assert got["mcar"]["statistic"] == pytest.approx(check.mcar.statistic, rel=1e-12)


def test_no_gaps_gives_null_p_value(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    sheet = tmp_path / "full.csv"
    sheet.write_text("a,b\n1,2\n2,3\n3,5\n4,4\n", encoding="utf-8")
    code, out, _ = run(["gaps", sheet, "--json"], capsys)
    assert code == 0
    got = json.loads(out)
    assert got["mcar"]["p_value"] is None and got["mcar"]["df"] == 0
    assert got["patterns"][0]["count"] == 4
    code, out, _ = run(["gaps", sheet], capsys)
    assert code == 0 and "Nothing to test" in out


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["gaps", "missing.xlsx"], "file not found"),
        (["gaps", "{demo}", "--fill", "No such column"], "No such column"),
        (["gaps", "{demo}", "--sheet", "Nope"], "Nope"),
    ],
)
def test_bad_input_is_one_line_and_exit_2(
    argv: list[str], message: str, capsys: pytest.CaptureFixture[str]
) -> None:
    demo = str(SAMPLES / "river_survey.xlsx")
    code, out, err = run([a.replace("{demo}", demo) for a in argv], capsys)
    assert code == 2
    assert message in err and "Traceback" not in err and out == ""
