"""Plan settings for per-column k and intervals: validation and the TOML round trip."""

from __future__ import annotations

from pathlib import Path

import pytest

from imputer_app.errors import PlanError
from imputer_app.plan import FillPlan


def test_k_by_column_and_interval_level_round_trip(tmp_path: Path) -> None:
    plan = FillPlan(k=4, k_by_column={"pH": 2, "nitrate": 9}, interval_level=0.8)
    path = plan.save(tmp_path / "a.plan.toml")
    text = path.read_text()
    assert "[k_by_column]" in text and "interval_level = 0.8" in text
    back = FillPlan.load(path)
    assert back == plan and back.k_for("pH") == 2 and back.k_for("other") == 4


def test_intervals_off_is_written_as_off(tmp_path: Path) -> None:
    path = FillPlan(interval_level=None).save(tmp_path / "b.plan.toml")
    assert 'interval_level = "off"' in path.read_text()
    assert FillPlan.load(path).interval_level is None
    assert FillPlan().interval_level == 0.9


@pytest.mark.parametrize(
    ("changes", "words"),
    [
        ({"k_by_column": {"pH": 0}}, "k for column 'pH' must be a whole number of at least 1"),
        ({"k_by_column": {"pH": 2.5}}, "k for column 'pH'"),
        ({"k_by_column": {"pH": True}}, "k for column 'pH'"),
        ({"interval_level": 1.0}, "interval_level must be a number from 0.5 to 0.99"),
        ({"interval_level": 0.2}, "interval_level must be"),
        ({"interval_level": "high"}, "interval_level must be"),
    ],
)
def test_bad_settings_are_refused_in_one_line(changes: dict[str, object], words: str) -> None:
    with pytest.raises(PlanError, match=words):
        FillPlan(**changes)  # type: ignore[arg-type]


def test_bad_k_in_a_file_names_its_line(tmp_path: Path) -> None:
    path = tmp_path / "c.plan.toml"
    path.write_text("format = 1\nk = 3\n\n[k_by_column]\npH = -1\n")
    with pytest.raises(PlanError, match=r"c.plan.toml: k for column 'pH'.*line 5"):
        FillPlan.load(path)


def test_k_by_column_names_are_checked_against_the_sheet() -> None:
    with pytest.raises(PlanError, match="'pH'"):
        FillPlan(k_by_column={"pH": 3}).check_columns(["nitrate"])
