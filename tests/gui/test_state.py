"""The Qt-free session: undo/redo of applied fills, dirty flag, stale previews.

No Qt here: the session is plain Python (checked in a fresh interpreter below).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path
from types import SimpleNamespace

import pandas as pd
import pytest

from imputer_app.files import same_file
from imputer_app.gui.state import Session, SessionError, default_export_path
from imputer_app.plan import FillPlan


def fake_sheet(path: str = "/data/river.xlsx") -> SimpleNamespace:
    frame = pd.DataFrame({"a": [1.0, None, 3.0], "b": [None, 2.0, 2.5]}, index=[2, 3, 4])
    return SimpleNamespace(frame=frame, source=SimpleNamespace(path=Path(path)))


def fake_result(value: float) -> SimpleNamespace:
    frame = pd.DataFrame({"a": [1.0, value, 3.0], "b": [value, 2.0, 2.5]}, index=[2, 3, 4])
    return SimpleNamespace(frame=frame)


@pytest.fixture
def session() -> Session:
    s = Session()
    s.load(fake_sheet())
    return s


def test_state_module_does_not_import_qt():
    code = "import sys, imputer_app.gui.state; sys.exit('PySide6' in sys.modules)"
    assert subprocess.run([sys.executable, "-c", code], check=False).returncode == 0


def test_fresh_session_has_nothing_to_do():
    s = Session()
    assert (s.has_sheet, s.can_undo, s.can_redo, s.can_apply, s.dirty) == (False, False, False, False, False)
    with pytest.raises(SessionError):
        _ = s.working
    with pytest.raises(SessionError):
        s.apply()


def test_preview_changes_nothing_until_applied(session):
    session.set_preview(fake_result(9.0))
    assert session.working is session.sheet.frame
    assert session.can_apply and not session.dirty


def test_apply_undo_redo_walk_the_history(session):
    first, second = fake_result(1.5), fake_result(2.5)
    session.set_preview(first)
    session.apply()
    assert session.working.loc[3, "a"] == 1.5 and session.dirty and session.preview is None
    session.set_preview(second)
    session.apply()
    assert session.working.loc[3, "a"] == 2.5
    session.undo()
    assert session.applied is first and session.working.loc[3, "a"] == 1.5
    session.undo()
    assert session.applied is None and session.working is session.sheet.frame and not session.dirty
    assert not session.can_undo and session.can_redo
    session.redo()
    session.redo()
    assert session.applied is second and not session.can_redo
    with pytest.raises(SessionError):
        session.redo()


def test_a_new_apply_drops_the_redo_branch(session):
    a, b, c = fake_result(1.0), fake_result(2.0), fake_result(3.0)
    for r in (a, b):
        session.set_preview(r)
        session.apply()
    session.undo()
    session.set_preview(c)
    session.apply()
    assert session.applied is c and not session.can_redo
    session.undo()
    assert session.applied is a


def test_export_clears_dirty_until_the_next_change(session):
    a, b = fake_result(1.0), fake_result(2.0)
    session.set_preview(a)
    session.apply()
    session.mark_exported()
    assert not session.dirty
    session.set_preview(b)
    session.apply()
    assert session.dirty
    session.undo()  # back to the exported fill
    assert not session.dirty


def test_changing_the_plan_drops_a_stale_preview_and_tells_listeners(session):
    events: list[str] = []
    session.subscribe(events.append)
    session.set_preview(fake_result(1.0))
    session.set_plan(session.plan.replace(k=3))
    assert session.preview is None and session.plan.k == 3
    assert events == ["preview", "preview", "plan"]
    session.set_plan(session.plan.replace(k=3))  # unchanged: no event
    assert events[-1] == "plan" and len(events) == 3


def test_loading_a_sheet_starts_from_the_defaults_not_the_last_sheet_s_settings(session):
    session.set_plan(FillPlan(k=7, scaling="range", weights={"a": 2.0}, carried_columns=("b",)))
    session.set_preview(fake_result(1.0))
    session.apply()
    session.load(fake_sheet("/data/other.csv"))
    assert session.plan == FillPlan()  # k = 7 was chosen for another sheet
    session.load(fake_sheet("/data/third.csv"), plan=FillPlan(k=4))
    assert session.plan == FillPlan(k=4)
    assert session.applied is None and not session.can_redo and not session.dirty
    assert session.path == Path("/data/third.csv")


@pytest.mark.parametrize(
    ("source", "expected"),
    [("/d/river.xlsx", "/d/river.filled.xlsx"), ("/d/lab data.csv", "/d/lab data.filled.xlsx")],
)
def test_default_export_name(source, expected):
    assert default_export_path(source) == Path(expected)


def test_same_file_sees_through_links(tmp_path):
    real = tmp_path / "a.xlsx"
    real.write_bytes(b"x")
    link = tmp_path / "b.xlsx"
    link.symlink_to(real)
    assert same_file(real, link) and same_file(real, tmp_path / "." / "a.xlsx")
    assert not same_file(real, tmp_path / "c.xlsx")
