"""Saving a plan goes through the atomic writer: never through a link, never over the sheet."""

from __future__ import annotations

import errno
import os

import pytest

from imputer_app.errors import ExportError
from imputer_app.files import TEMP_SUFFIX
from imputer_app.plan import FillPlan
from tests.test_files import names_in, one_line, read_only

PLAN = FillPlan(k=4, weights={"nitrate": 2.0})


def test_a_link_at_the_old_fixed_temp_name_no_longer_overwrites_the_sheet(tmp_path) -> None:
    sheet = tmp_path / "in.csv"
    sheet.write_text("a,b\n1,2\n")
    (tmp_path / "in.plan.toml.tmp").symlink_to(sheet)
    written = PLAN.save(tmp_path / "in.plan.toml")
    assert sheet.read_text() == "a,b\n1,2\n"
    assert FillPlan.load(written) == PLAN
    assert (tmp_path / "in.plan.toml.tmp").is_symlink()
    assert not [n for n in names_in(tmp_path) if n.endswith(TEMP_SUFFIX)]


def test_a_link_at_the_target_is_replaced_itself(tmp_path) -> None:
    sheet = tmp_path / "in.csv"
    sheet.write_text("a,b\n1,2\n")
    target = tmp_path / "in.plan.toml"
    target.symlink_to(sheet)
    with pytest.raises(ExportError, match="it is the input file"):
        PLAN.save(target, source=sheet)
    other = tmp_path / "other.csv"
    other.write_text("not a plan")
    target.unlink()
    target.symlink_to(other)
    with pytest.raises(ExportError, match="a link of that name exists"):
        PLAN.save(target, force=False)
    PLAN.save(target)  # force is the default: callers ask before replacing
    assert not target.is_symlink() and other.read_text() == "not a plan"
    assert FillPlan.load(target) == PLAN


def test_the_sheet_itself_is_refused(tmp_path) -> None:
    sheet = tmp_path / "in.csv"
    sheet.write_text("a\n1\n")
    with pytest.raises(ExportError, match="it is the input file"):
        PLAN.save(sheet, source=sheet)
    assert sheet.read_text() == "a\n1\n"


def test_a_read_only_folder_is_one_line_naming_it(tmp_path, monkeypatch) -> None:
    old = FillPlan(k=2).save(tmp_path / "p.plan.toml")
    read_only(tmp_path, monkeypatch)
    with pytest.raises(ExportError, match="is not writable") as info:
        PLAN.save(old)
    assert str(tmp_path) in one_line(info.value)
    monkeypatch.undo()
    assert FillPlan.load(old).k == 2 and names_in(tmp_path) == ["p.plan.toml"]


@pytest.mark.parametrize("call", ["write", "fsync"])
def test_a_full_disk_keeps_the_old_plan(tmp_path, monkeypatch, call) -> None:
    old = FillPlan(k=2).save(tmp_path / "p.plan.toml")

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(os, call, full)
    with pytest.raises(ExportError, match="the disk is full") as info:
        PLAN.save(old)
    one_line(info.value)
    monkeypatch.undo()
    assert FillPlan.load(old).k == 2 and names_in(tmp_path) == ["p.plan.toml"]
