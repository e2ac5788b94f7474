"""No command may replace or delete its input file, even with --force.

README: "an existing output is replaced only with --force, and the output can never be
the input". These cases reach the input by other doors than ``fill --out``: the
score-k JSON and chart, the plan file, and the removal of stale side files of an
earlier csv export (a sheet named like such a side file).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from imputer_app import cli
from tests.cli.helpers import run

DEMO_CSV = Path(__file__).resolve().parents[2] / "sample_sheets" / "river_survey.csv"


@pytest.fixture
def source(tmp_path: Path) -> Path:
    target = tmp_path / "lab.csv"
    shutil.copyfile(DEMO_CSV, target)
    return target


@pytest.mark.parametrize(
    "extra",
    [
        pytest.param(
            ["score-k", "{src}", "--k-range", "1-2", "--repeats", "1", "--json", "{src}"], id="json"
        ),
        pytest.param(["plan", "{src}", "--out", "{src}"], id="plan"),
    ],
)
def test_force_never_writes_over_the_input(
    extra: list[str], source: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    before = source.read_bytes()
    argv = [a.replace("{src}", str(source)) for a in extra] + ["--force"]
    code, _, err = run(argv, capsys)
    assert code == 2 and "never overwrites its input" in err
    assert len(err.strip().splitlines()) == 1
    assert source.read_bytes() == before


def test_input_named_like_a_side_file_is_never_removed(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # A sheet called "x.not-filled.csv" is what an export to x.csv would leave as a side
    # file when cells stay empty; with no cell left empty the stale-file clean-up used
    # to delete it, although it is the very input of this run.
    source = tmp_path / "x.not-filled.csv"
    shutil.copyfile(DEMO_CSV, source)
    before = source.read_bytes()
    code, out, err = run(["fill", source, "--out", tmp_path / "x.csv", "--force"], capsys)
    assert code == 2 and "never overwrites its input" in err
    assert source.read_bytes() == before and "removed" not in out
    assert not (tmp_path / "x.csv").exists()


class _ClosedPipe:
    """Standard output whose reader has gone (as with `kinfill fill ... | head -1`)."""

    def write(self, text: str) -> int:
        raise BrokenPipeError(32, "Broken pipe")

    def flush(self) -> None:
        raise BrokenPipeError(32, "Broken pipe")


def test_a_closed_pipe_after_the_work_is_not_a_fault(tmp_path, monkeypatch, capsys):
    sheet = tmp_path / "river.xlsx"
    shutil.copy(Path(__file__).resolve().parents[2] / "sample_sheets" / "river_survey.xlsx", sheet)
    monkeypatch.setattr("sys.stdout", _ClosedPipe())
    assert cli.main(["fill", str(sheet)]) == cli.EXIT_OK
    assert (tmp_path / "river.filled.xlsx").exists()  # the export itself is complete
    assert "internal error" not in capsys.readouterr().err
