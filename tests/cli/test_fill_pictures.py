"""``kinfill fill --pictures DIR`` writes the pictures of the fill as PNG and SVG and lists them."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from imputer_app.engine import impute
from imputer_app.plan import FillPlan
from imputer_app.sheets import fill_pictures, read_sheet
from tests.cli.helpers import run

DEMO = Path(__file__).resolve().parents[2] / "sample_sheets" / "river_survey.csv"


@pytest.fixture
def demo(tmp_path: Path) -> Path:
    target = tmp_path / DEMO.name
    shutil.copyfile(DEMO, target)
    return target


def test_pictures_are_written_and_listed(demo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    folder = demo.parent / "pictures"
    code, out, err = run(["fill", demo, "--out", demo.parent / "out.csv", "--pictures", folder], capsys)
    assert code == 0, err
    stems = [p.stem for p in fill_pictures(impute(read_sheet(DEMO), FillPlan()))]
    expected = sorted(f"{stem}.{fmt}" for stem in stems for fmt in ("png", "svg"))
    assert sorted(p.name for p in folder.iterdir()) == expected
    for name in expected:
        assert f"{folder / name}  (picture of the fill)" in out
    assert "Nitrate.scatter.png" in expected


def test_existing_pictures_need_force_and_nothing_is_written(
    demo: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    folder = demo.parent / "pictures"
    folder.mkdir()
    (folder / "Nitrate.scatter.svg").write_text("mine", encoding="utf-8")
    out_file = demo.parent / "out.csv"
    code, _out, err = run(["fill", demo, "--out", out_file, "--pictures", folder], capsys)
    assert code == 2 and "Nitrate.scatter.svg already exists" in err and "Traceback" not in err
    assert not out_file.exists() and [p.name for p in folder.iterdir()] == ["Nitrate.scatter.svg"]
    code, _, err = run(["fill", demo, "--out", out_file, "--pictures", folder, "--force"], capsys)
    assert code == 0, err
    assert (folder / "Nitrate.scatter.svg").read_text(encoding="utf-8").lstrip().startswith("<?xml")


def test_pictures_must_name_a_folder(demo: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run(["fill", demo, "--out", demo.parent / "out.csv", "--pictures", demo], capsys)
    assert code == 2 and "must name a folder" in err
