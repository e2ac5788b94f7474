"""Each command end to end on the demo sheets (xlsx and the decimal-comma csv).

The command line must give exactly what the library calls give (the app makes the same
calls), and on plain numbers exactly what scikit-learn's ``KNNImputer`` gives.
"""

from __future__ import annotations

import io
import json
import os
import shutil
import signal
import sys
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest

from imputer_app.plan import FillPlan
from tests.cli.helpers import run

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_sheets"
MEASURES = ["pH", "Conductivity", "Nitrate", "Phosphate", "Dissolved oxygen", "Temperature", "Turbidity"]


@pytest.fixture(params=["river_survey.xlsx", "river_survey.csv"])
def demo(request: pytest.FixtureRequest, tmp_path: Path) -> Path:
    """A copy of a demo sheet in a fresh folder (outputs default to beside the input)."""
    target = tmp_path / "in" / request.param
    target.parent.mkdir()
    shutil.copyfile(SAMPLES / request.param, target)
    return target


@pytest.fixture
def demo_csv(tmp_path: Path) -> Path:
    """A copy of the decimal-comma csv, for checks that do not depend on the format."""
    target = tmp_path / "in" / "river_survey.csv"
    target.parent.mkdir()
    shutil.copyfile(SAMPLES / "river_survey.csv", target)
    return target


def library_fill(path: Path, plan: FillPlan) -> Any:
    from imputer_app.engine import impute
    from imputer_app.sheets import read_sheet

    sheet = read_sheet(path)
    return sheet, impute(sheet, plan)


def data_sheet(path: Path) -> pd.DataFrame:
    """The data of an export, read back by Kinfill's own reader."""
    from imputer_app.sheets import read_sheet

    return read_sheet(path).frame


# --------------------------------------------------------------------- fill
def test_fill_writes_beside_the_input_and_summarises(demo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = run(["fill", demo], capsys)
    assert code == 0, err
    assert "\r" not in err and "[#" not in err  # no progress bar in a pipe
    target = demo.with_name(demo.stem + ".filled.xlsx")
    assert target.is_file()
    _, result = library_fill(demo, FillPlan())
    n_filled = int(result.filled.to_numpy().sum())
    n_weak = int((result.log["support"] == "weak").sum())
    assert n_filled > 0
    assert f"filled {n_filled} cells ({n_weak} with weak support)" in out
    # a workbook comes back whole and the summary names its data sheet; a csv gives a table
    holds = "  (your workbook, every sheet kept" if demo.suffix == ".xlsx" else "  (cleaned sheet"
    assert any(line.startswith(f"  {target}{holds}") for line in out.splitlines())
    # every filled cell of the export holds the library's value
    exported = data_sheet(target)
    for column in result.filled.columns[result.filled.any()]:
        mask = result.filled[column].to_numpy()
        np.testing.assert_allclose(
            exported[column].to_numpy(dtype=float)[mask], result.frame[column].to_numpy(dtype=float)[mask]
        )


def test_fill_csv_output_equals_the_library_export_byte_for_byte(
    demo: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # What the app does on export: read_sheet -> impute -> write_result with the same plan.
    from imputer_app.sheets import write_result

    plan = FillPlan(k=4, weights={"Station": 2.0}, carried_columns=("Sample ID",))
    plan_file = plan.save(tmp_path / "lab.plan.toml")
    cli_out = tmp_path / "cli" / "filled.csv"
    app_out = tmp_path / "app" / "filled.csv"
    cli_out.parent.mkdir()
    app_out.parent.mkdir()
    code, _, err = run(["fill", demo, "--plan", plan_file, "--out", cli_out], capsys)
    assert code == 0, err
    sheet, result = library_fill(demo, plan)
    write_result(app_out, sheet, result, plan)
    assert cli_out.read_bytes() == app_out.read_bytes()


def test_options_override_the_plan_file(
    demo_csv: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    plan_file = FillPlan(k=9, carried_columns=("Sample ID", "Turbidity")).save(tmp_path / "p.plan.toml")
    out = tmp_path / "o.csv"
    argv = ["fill", demo_csv, "--plan", plan_file, "--k", "3", "--fill", "Turbidity,Nitrate"]
    argv += ["--weight", "pH=0.5", "--scaling", "range", "--out", out]
    code, text, err = run(argv, capsys)
    assert code == 0, err
    expected = FillPlan(
        k=3, fill_columns=("Turbidity", "Nitrate"), carried_columns=("Sample ID",), weights={"pH": 0.5},
        scaling="range",
    )  # fmt: skip
    _, result = library_fill(demo_csv, expected)
    assert result.plan.k == 3 and "k = 3" in text
    filled = result.filled.sum()
    assert set(filled[filled > 0].index) == {"Turbidity", "Nitrate"}
    assert f"filled {int(filled.sum())} cells" in text


def test_unknown_column_is_named_with_a_guess(
    demo_csv: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "o.xlsx"
    code, _, err = run(["fill", demo_csv, "--similarity", "pH,nitrat,Iron", "--out", out], capsys)
    assert code == 2
    assert err.count("\n") == 1
    assert "'nitrat' (did you mean 'Nitrate'?)" in err and "'Iron'" in err
    assert not out.exists()


def test_plan_for_other_columns_says_which_are_missing(
    demo_csv: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    plan_file = FillPlan(similarity_columns=("pH", "Lead", "Zinc")).save(tmp_path / "metals.plan.toml")
    code, _, err = run(["fill", demo_csv, "--plan", plan_file, "--out", tmp_path / "o.xlsx"], capsys)
    assert code == 2 and "'Lead'" in err and "'Zinc'" in err and "'pH'" not in err


def test_force_replaces_an_existing_output(
    demo_csv: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "o.xlsx"
    out.write_bytes(b"old")
    code, _, err = run(["fill", demo_csv, "--out", out, "--force"], capsys)
    assert code == 0, err
    assert out.read_bytes()[:2] == b"PK"  # a real workbook now


def test_progress_bar_on_a_terminal(
    demo_csv: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    class Terminal(io.StringIO):
        def isatty(self) -> bool:
            return True

    terminal = Terminal()
    monkeypatch.setattr(sys, "stderr", terminal)
    code, out, _ = run(["fill", demo_csv, "--out", tmp_path / "o.csv"], capsys)
    assert code == 0
    drawn = terminal.getvalue()
    for stage in ("reading", "filling", "writing"):
        assert f"\r{stage}" in drawn
    assert "100%" in drawn and drawn.endswith("\r\033[K")
    assert "\r" not in out  # the summary on stdout stays clean


def test_force_removes_side_files_left_from_an_earlier_export(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    source = tmp_path / "groups.csv"
    # group x has no value of b at all, so with --group its b cells have no donor
    source.write_text("g,a,b\nx,1,\nx,2,\ny,1,5\ny,2,6\ny,3,7\n", encoding="utf-8")
    out = tmp_path / "groups.filled.csv"
    code, text, err = run(["fill", source, "--group", "g", "--k", "2", "--out", out], capsys)
    assert code == 0, err
    stale = tmp_path / "groups.filled.not-filled.csv"
    assert stale.is_file() and "left empty 2 cells:" in text
    code, text, err = run(["fill", source, "--k", "2", "--out", out], capsys)
    assert code == 2 and "add --force" in err
    code, text, err = run(["fill", source, "--k", "2", "--out", out, "--force"], capsys)
    assert code == 0, err
    assert not stale.exists() and f"removed {stale}" in text and "left empty: none" in text


# ------------------------------------------------------------------ score-k
@pytest.mark.slow
def test_score_k_prints_table_and_matches_the_library(
    demo: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from imputer_app.validation import recovery_test

    js, png = tmp_path / "scores.json", tmp_path / "error_vs_k.png"
    argv = ["score-k", demo, "--k-range", "1-5", "--repeats", "2", "--seed", "3", "--json", js, "--plot", png]
    code, out, err = run(argv, capsys)
    assert code == 0, err
    sheet, _ = library_fill(demo, FillPlan())
    # score-k hides as the library does by default ("auto": the sheet's own gap patterns
    # where it has enough of them, else at random)
    report = recovery_test(
        sheet, FillPlan(), ks=range(1, 6), hide_fraction=0.1, repeats=2, seed=3, masking="auto"
    )
    assert f"best k: {report.best_k}    one-SE k: {report.best_k_1se}" in out
    rows = [line.split() for line in out.splitlines() if line.strip()[:1].isdigit()]
    assert [int(r[0]) for r in rows] == [1, 2, 3, 4, 5]
    np.testing.assert_allclose([float(r[1]) for r in rows], report.overall["score"].to_numpy(), atol=5e-5)
    data = json.loads(js.read_text(encoding="utf-8"))
    assert data["best_k"] == report.best_k and data["ks"] == [1, 2, 3, 4, 5]
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_score_k_refuses_to_replace_outputs(
    demo_csv: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    js = tmp_path / "scores.json"
    js.write_text("{}", encoding="utf-8")
    code, _, err = run(["score-k", demo_csv, "--k-range", "1-3", "--repeats", "1", "--json", js], capsys)
    assert code == 2 and "add --force" in err and js.read_text(encoding="utf-8") == "{}"


# --------------------------------------------------------------------- plan
def test_plan_command_spells_out_the_default_and_reproduces_it(
    demo: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, err = run(["plan", demo], capsys)
    assert code == 0, err
    plan_path = demo.with_name(demo.stem + ".plan.toml")
    assert out.strip() == f"wrote {plan_path}"
    plan = FillPlan.load(plan_path)
    assert set(plan.similarity_columns or ()) >= set(MEASURES) | {"Station"}
    assert set(plan.fill_columns or ()) == set(MEASURES)  # every measure has gaps
    assert {"Sample ID", "Sample date"} <= set(plan.carried_columns)
    # the spelled-out plan gives exactly the default fill
    default, planned = tmp_path / "default.csv", tmp_path / "planned.csv"
    assert run(["fill", demo, "--out", default], capsys)[0] == 0
    assert run(["fill", demo, "--plan", plan_path, "--out", planned], capsys)[0] == 0
    assert default.read_bytes() == planned.read_bytes()


def test_plan_command_takes_column_options(
    demo_csv: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "river.plan.toml"
    code, _, err = run(["plan", demo_csv, "--k", "7", "--carry", "Station", "--out", out], capsys)
    assert code == 0, err
    plan = FillPlan.load(out)
    assert plan.k == 7 and "Station" in plan.carried_columns
    assert "Station" not in (plan.similarity_columns or ())


# ---------------------------------------------------------------- plan-from
@pytest.mark.parametrize("first_suffix", [".xlsx", ".csv"])
def test_plan_from_an_export_repeats_the_fill(
    demo_csv: Path, tmp_path: Path, first_suffix: str, capsys: pytest.CaptureFixture[str]
) -> None:
    first = tmp_path / f"first{first_suffix}"
    argv = ["fill", demo_csv, "--k", "3", "--weight", "Nitrate=2", "--carry", "Sample ID", "--out", first]
    assert run(argv, capsys)[0] == 0
    again, direct = tmp_path / "again.csv", tmp_path / "direct.csv"
    code, _, err = run(["fill", demo_csv, "--plan-from", first, "--out", again], capsys)
    assert code == 0, err
    assert run([*argv[:-1], direct], capsys)[0] == 0
    assert again.read_bytes() == direct.read_bytes()


def test_plan_from_a_file_without_a_record_exit_2(demo_csv: Path, capsys: pytest.CaptureFixture[str]) -> None:
    argv = [
        "fill",
        demo_csv,
        "--plan-from",
        SAMPLES / "river_survey.csv",
        "--out",
        demo_csv.with_suffix(".o.csv"),
    ]
    code, _, err = run(argv, capsys)
    assert code == 2 and err.count("\n") == 1 and "river_survey" in err


# ----------------------------------------------------------- Ctrl+C (real)
@pytest.mark.parametrize("stage", ["impute", "write_result"])
def test_ctrl_c_during_work_writes_nothing(
    stage: str,
    demo_csv: Path,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    # The first Ctrl+C only sets the cancel flag; the engine/writer must notice and stop.
    import imputer_app.engine
    import imputer_app.sheets

    module = imputer_app.engine if stage == "impute" else imputer_app.sheets
    real = getattr(module, stage)

    def interrupted(*args: Any, **kwargs: Any) -> Any:
        os.kill(os.getpid(), signal.SIGINT)
        return real(*args, **kwargs)

    monkeypatch.setattr(module, stage, interrupted)
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    code, stdout, err = run(["fill", demo_csv, "--out", out_dir / "o.csv"], capsys)
    assert code == 130, err
    assert "stopped; nothing written" in err and stdout == ""
    assert list(out_dir.iterdir()) == []


# ------------------------------------------------------ outside reference
@pytest.mark.slow
def test_plain_numbers_match_scikit_learn_knnimputer(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """With all weights 1, no scaling and numbers only, the fill equals scikit-learn's
    ``KNNImputer`` (scikit-learn, sklearn.impute.KNNImputer; see README.md).
    Data: the wine data set shipped with scikit-learn (UCI), 10 % of cells hidden."""
    from sklearn.datasets import load_wine
    from sklearn.impute import KNNImputer

    data = load_wine().data[:, :6]
    rng = np.random.default_rng(5)
    holes = data.copy()
    holes[rng.random(holes.shape) < 0.1] = np.nan
    names = [f"x{j}" for j in range(holes.shape[1])]
    source = tmp_path / "wine.csv"
    pd.DataFrame(holes, columns=names).to_csv(source, index=False, float_format="%.17g")
    out = tmp_path / "wine.filled.csv"
    # KNNImputer does not round: the fill is compared as computed
    argv = ["fill", source, "--k", "5", "--scaling", "none", "--rounding", "as_computed", "--out", out]
    code, _, err = run(argv, capsys)
    assert code == 0, err
    expected = KNNImputer(n_neighbors=5).fit_transform(holes)
    got = data_sheet(out)[names].to_numpy(dtype=float)
    np.testing.assert_allclose(got, expected, rtol=1e-9)
