"""Inputs that cost time or memory out of proportion are refused or capped first.

A huge k uses every donor (a row is never its own donor), an export given to
``--plan-from`` meets the same decompression-bomb guard as a sheet, a csv wider than an
xlsx sheet is refused before it is read, a plan naming thousands of absent columns
gets a short message at once, and text from the sheet cannot steer the terminal.
"""

from __future__ import annotations

import json
import time
import tracemalloc
import zipfile
from pathlib import Path

import numpy as np
import pytest

from imputer_app.cli.plan_options import check_plan_columns
from imputer_app.errors import PlanError, SheetError
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_export_plan
from tests.cli.helpers import run


@pytest.fixture
def small(tmp_path: Path) -> Path:
    """20 rows, three number columns, a few gaps (invented, seed 4)."""
    rng = np.random.default_rng(4)
    values = rng.normal(10, 2, size=(20, 3)).round(2)
    lines = ["a,b,c"]
    for i, row in enumerate(values):
        cells = [f"{v}" for v in row]
        if i % 6 == 1:
            cells[i % 3] = ""
        lines.append(",".join(cells))
    path = tmp_path / "small.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_a_huge_k_uses_every_donor_fast(
    small: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "o.csv"
    start = time.perf_counter()
    tracemalloc.start()
    try:
        code, stdout, err = run(["fill", small, "--k", "1000000", "--out", out], capsys)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert code == 0, err
    # the memory bound is the sharp check (an uncapped k took 11.8 GB); the time bound is
    # loose because tracing every allocation is slow on a loaded machine
    assert time.perf_counter() - start < 60 and peak < 200 * 1024**2
    # Said before the fill: at most 16 donors for any gap of this sheet (the largest
    # number of rows observed in a column that has a gap); the fill uses every one, and
    # the note, the summary and the run record name that one k.
    assert "note: k = 1000000 is more than the 16 donors any gap can have" in err
    assert "so k = 16 is in effect" in err
    assert "small.csv: 20 rows; k = 16" in stdout
    record = json.loads(out.with_name("o.run.json").read_text(encoding="utf-8"))
    assert record["plan"]["k"] == 16
    assert "k = 19" not in stdout + err


def test_a_huge_k_in_a_plan_file_is_capped_too(
    small: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    plan = FillPlan(k=1_000_000_000).save(tmp_path / "big.plan.toml")
    code, stdout, err = run(["fill", small, "--plan", plan, "--out", tmp_path / "o.csv"], capsys)
    assert code == 0, err
    assert "k = 1000000000 is more than the 16 donors any gap can have" in err and "k = 16" in stdout


def test_a_k_range_beyond_the_donors_is_capped(small: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, stdout, err = run(["score-k", small, "--k-range", "1-2,50-1000000", "--repeats", "1"], capsys)
    assert code == 0, err
    assert "k values above the 19 possible donors are tested as k = 19 (every donor)" in err
    ks = [int(line.split()[0]) for line in stdout.splitlines()[2:] if line.split()[0].isdigit()]
    assert max(ks) <= 19 and {1, 2} <= set(ks)


@pytest.mark.parametrize("k", ["0", "-1", "2.5", "many"])
def test_k_must_be_a_whole_number_of_at_least_one(
    k: str, small: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, _, err = run(["fill", small, "--k", k, "--out", tmp_path / "o.csv"], capsys)
    assert code == 2 and "--k: expected a whole number of at least 1" in err
    assert len(err.strip().splitlines()) == 1 and not (tmp_path / "o.csv").exists()


def bomb_export(path: Path, megabytes: int = 20) -> Path:
    """An xlsx-looking zip whose "About this fill" part inflates ~1000 times (spaces)."""
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("[Content_Types].xml", "<Types/>")
        archive.writestr("xl/worksheets/sheet2.xml", b" " * (megabytes * 1024**2))
    return path


def test_plan_from_refuses_a_decompression_bomb_without_inflating_it(
    small: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    bomb = bomb_export(tmp_path / "old.filled.xlsx")
    assert bomb.stat().st_size < 200_000

    def never(*args: object, **kwargs: object) -> None:
        raise AssertionError("the export was opened by a parser")

    monkeypatch.setattr("openpyxl.load_workbook", never)
    start = time.perf_counter()
    with pytest.raises(SheetError, match="possible decompression bomb"):
        read_export_plan(bomb)
    code, _, err = run(["fill", small, "--plan-from", bomb, "--out", tmp_path / "o.csv"], capsys)
    # a quadratic name check took minutes here; 10 s leaves room for a loaded machine
    assert time.perf_counter() - start < 10
    assert code == 2 and "old.filled.xlsx" in err and "decompression bomb" in err
    assert len(err.strip().splitlines()) == 1 and not (tmp_path / "o.csv").exists()


def test_plan_from_refuses_an_oversized_run_record(tmp_path: Path) -> None:
    record = tmp_path / "old.run.json"
    record.write_text('{"plan": {}, "notes": "' + "x" * 20_000_000 + '"}', encoding="utf-8")
    with pytest.raises(PlanError, match="larger than 16 MB; not a Kinfill run record"):
        read_export_plan(record)


def test_a_csv_too_wide_for_xlsx_is_refused_before_reading(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    wide = tmp_path / "wide.csv"
    names = ",".join(f"c{i}" for i in range(16_385))
    wide.write_text(names + "\n" + ",".join("1" for _ in range(16_385)) + "\n", encoding="utf-8")
    start = time.perf_counter()
    code, _, err = run(["fill", wide, "--out", tmp_path / "w.xlsx"], capsys)
    # a quadratic name check took minutes here; 10 s leaves room for a loaded machine
    assert time.perf_counter() - start < 10
    assert code == 2 and "wide.csv has 16,385 columns, more than an xlsx sheet holds (16,384)" in err
    assert len(err.strip().splitlines()) == 1 and not (tmp_path / "w.xlsx").exists()


def test_many_absent_plan_columns_give_a_short_line_fast() -> None:
    plan = FillPlan(similarity_columns=tuple(f"col {i}" for i in range(20_000)))
    present = [f"other {i}" for i in range(20_000)]
    start = time.perf_counter()
    with pytest.raises(PlanError) as caught:
        check_plan_columns(plan, "lab.csv", present)
    # a quadratic name check took minutes here; 10 s leaves room for a loaded machine
    assert time.perf_counter() - start < 10
    message = str(caught.value)
    assert len(message) < 1000 and "and 19,995 more" in message and "and 19,970 more" in message


def test_control_characters_from_the_sheet_are_escaped(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    sheet = tmp_path / "esc.csv"
    sheet.write_bytes(b"a,b\x1b[31m,c\n1,2,x\n2,,y\x1b[2J\n3,4,z\n4,5,x\n")
    code, stdout, err = run(["fill", sheet, "--out", tmp_path / "o.csv"], capsys)
    assert code == 0, err
    assert "\x1b" not in stdout + err and "b\\x1b[31m 1" in stdout
    code, stdout, err = run(
        ["fill", sheet, "--similarity", "\x1b[31mQ\x9b", "--out", tmp_path / "p.csv"], capsys
    )
    assert code == 2 and "\x1b" not in err and "\x9b" not in err
    assert "'\\x1b[31mQ\\x9b'" in err and "b\\x1b[31m" in err
