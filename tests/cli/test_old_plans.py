"""A plan written before Kinfill rounded filled numbers refills as it filled then, and says so.

A plan file or an export's recorded plan without a ``rounding`` key is read as
``as_computed`` (README.md, "Rounding of filled numbers"); a plan made now rounds.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from imputer_app.words import ROUNDING_NOT_GIVEN
from tests.cli.helpers import run

#: pH with 2 decimals, conductivity whole; every fifth pH a gap. Invented.
_ROWS = [["Sample", "pH", "Cond"]] + [
    [f"S{i:02d}", "" if i % 5 == 2 else f"{6.8 + 0.037 * i + 0.011 * (i % 3):.2f}", str(120 + 7 * i + i % 4)]
    for i in range(30)
]


def _sheet(path: Path) -> Path:
    with path.open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(_ROWS)
    return path


def _filled_ph(path: Path) -> list[str]:
    with path.open(encoding="utf-8") as handle:
        rows = list(csv.reader(handle))
    return [rows[i + 1][1] for i in range(30) if i % 5 == 2]


def _old_export(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> Path:
    """An export whose run record's plan lacks the rounding key, as one written before it existed."""
    source = _sheet(tmp_path / "june.csv")
    out = tmp_path / "june.old.csv"
    code, _, _ = run(
        ["fill", source, "--out", out, "--k", "3", "--rounding", "as_computed", "--quiet"], capsys
    )
    assert code == 0
    record_path = tmp_path / "june.old.run.json"
    record = json.loads(record_path.read_text(encoding="utf-8"))
    del record["plan"]["rounding"]
    record_path.write_text(json.dumps(record), encoding="utf-8")
    return out


def test_plan_from_an_old_export_refills_as_computed_and_says_so(tmp_path, capsys) -> None:
    old = _old_export(tmp_path, capsys)
    again = tmp_path / "june.again.csv"
    code, _, err = run(["fill", tmp_path / "june.csv", "--plan-from", old, "--out", again], capsys)
    assert code == 0
    assert _filled_ph(again) == _filled_ph(old)  # the same numbers as the old fill
    assert any(len(v.split(".")[1]) > 2 for v in _filled_ph(again))  # not rounded to 2 decimals
    assert err.count(f"note: {ROUNDING_NOT_GIVEN}") == 1
    record = json.loads((tmp_path / "june.again.run.json").read_text(encoding="utf-8"))
    assert record["plan"]["rounding"] == "as_computed" and ROUNDING_NOT_GIVEN in record["warnings"]


def test_an_old_plan_file_refills_as_computed_and_a_new_fill_rounds(tmp_path, capsys) -> None:
    source = _sheet(tmp_path / "june.csv")
    plan = tmp_path / "old.plan.toml"
    plan.write_text("format = 1\nk = 3\n", encoding="utf-8")
    old = tmp_path / "june.a.csv"
    code, _, err = run(["fill", source, "--plan", plan, "--out", old], capsys)
    assert code == 0 and f"note: {ROUNDING_NOT_GIVEN}" in err
    new = tmp_path / "june.b.csv"
    code, _, err = run(["fill", source, "--out", new, "--k", "3"], capsys)
    assert code == 0 and ROUNDING_NOT_GIVEN not in err
    assert all(len(v.split(".")[1]) == 2 for v in _filled_ph(new))  # measured: 2 decimals
    assert [round(float(v), 2) for v in _filled_ph(old)] == [float(v) for v in _filled_ph(new)]
    # a rounding named on the command line is a choice made now: no note
    code, _, err = run(
        ["fill", source, "--plan", plan, "--rounding", "measured", "--out", tmp_path / "c.csv"], capsys
    )
    assert code == 0 and ROUNDING_NOT_GIVEN not in err
