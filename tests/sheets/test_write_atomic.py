"""Exports are all-or-nothing, never touch the input file, and stop cleanly on cancel.

Failures are simulated by monkeypatching the operating-system calls (the tests run
as root, where a read-only folder would still be writable).
"""

from __future__ import annotations

import errno
import os
import threading
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from imputer_app.errors import Cancelled, ExportError
from imputer_app.sheets import _atomic, _write_csv, _xlsx_package, write_result
from tests.sheets.write_support import LAB_PLAN, fake_result, lab_sheet

SUFFIXES = [".xlsx", ".csv"]


def small_result():
    frame = pd.DataFrame({"a": [1.0, np.nan, 3.0] * 4000, "b": ["x", "y", "z"] * 4000})
    return fake_result(frame, {(1, "a"): 2.0})


def files_in(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_a_failure_mid_write_leaves_nothing(tmp_path, monkeypatch, suffix) -> None:
    def disk_full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")

    if suffix == ".xlsx":
        real = _xlsx_package._write_spliced

        def half_then_full(out, part, xml, rows, size_hint):
            real(out, part, xml, iter([next(iter(rows))]), size_hint)  # some bytes reach the disk
            disk_full()

        monkeypatch.setattr(_xlsx_package, "_write_spliced", half_then_full)
    else:
        calls = []
        real_table = _write_csv._write_table

        def second_file_fails(path, table, dialect, ticker, *units):
            calls.append(path)
            real_table(path, table, dialect, ticker, *units)
            if len(calls) == 2:
                disk_full()

        monkeypatch.setattr(_write_csv, "_write_table", second_file_fails)
    result = small_result()
    with pytest.raises(ExportError, match="disk is full") as info:
        write_result(tmp_path / f"out{suffix}", None, result, result.plan)
    assert f"out{suffix}" in str(info.value) and "nothing was written" in str(info.value)
    assert files_in(tmp_path) == []


@pytest.mark.parametrize("suffix", SUFFIXES)
@pytest.mark.parametrize(
    "code, words",
    [(errno.EACCES, "is not writable"), (errno.EROFS, "is not writable"), (errno.ENOSPC, "disk is full")],
)
def test_a_folder_that_refuses_new_files(tmp_path, monkeypatch, suffix, code, words) -> None:
    real_open = os.open

    def refuse(path, flags, mode=0o777, **kwargs):
        if str(path).endswith(_atomic.TEMP_SUFFIX):
            raise (PermissionError if code == errno.EACCES else OSError)(code, os.strerror(code), str(path))
        return real_open(path, flags, mode, **kwargs)

    monkeypatch.setattr(os, "open", refuse)
    result = small_result()
    with pytest.raises(ExportError, match=words):
        write_result(tmp_path / f"out{suffix}", None, result, result.plan)
    assert files_in(tmp_path) == []


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_a_target_open_elsewhere_is_left_as_it_was(tmp_path, monkeypatch, suffix) -> None:
    target = tmp_path / f"out{suffix}"
    target.write_bytes(b"the previous export")

    def locked(src, dst):
        raise PermissionError(errno.EACCES, "Permission denied", str(dst))

    monkeypatch.setattr(os, "replace", locked)
    result = small_result()
    with pytest.raises(ExportError, match="open in another program"):
        write_result(target, None, result, result.plan)
    assert target.read_bytes() == b"the previous export"
    assert files_in(tmp_path) == [target.name]


def test_a_rename_failing_half_way_removes_the_new_files(tmp_path, monkeypatch) -> None:
    real_replace = os.replace
    done = []

    def second_fails(src, dst):
        if done:
            raise OSError(errno.EIO, "Input/output error", str(dst))
        done.append(dst)
        real_replace(src, dst)

    monkeypatch.setattr(os, "replace", second_fails)
    result = small_result()
    with pytest.raises(ExportError, match="Input/output error"):
        write_result(tmp_path / "out.csv", None, result, result.plan)
    assert files_in(tmp_path) == []


@pytest.mark.parametrize("suffix", SUFFIXES)
@pytest.mark.parametrize("spelling", ["same", "dotted", "hard link"])
def test_the_input_file_is_never_written(tmp_path, suffix, spelling) -> None:
    sheet = lab_sheet(tmp_path)
    source = tmp_path / f"lab{suffix}"
    source.write_bytes(b"the user's data")
    sheet.source = type(sheet.source)(**{**sheet.source.__dict__, "path": source})
    target = {
        "same": source,
        "dotted": tmp_path / "." / source.name,
        "hard link": tmp_path / f"link{suffix}",
    }[spelling]
    if spelling == "hard link":
        os.link(source, target)
    before = files_in(tmp_path)
    result = fake_result(sheet.frame)
    with pytest.raises(ExportError, match="it is the input file"):
        write_result(target, sheet, result, LAB_PLAN)
    assert source.read_bytes() == b"the user's data"
    assert files_in(tmp_path) == before


@pytest.mark.parametrize(
    "name, words",
    [
        ("out.xls", "unknown file ending .xls"),
        ("out", "unknown file ending (none)"),
        ("missing/out.xlsx", "does not exist"),
    ],
)
def test_bad_targets(tmp_path, name, words) -> None:
    result = small_result()
    with pytest.raises(ExportError, match=words.replace("(", r"\(").replace(")", r"\)")):
        write_result(tmp_path / name, None, result, result.plan)


@pytest.mark.parametrize("suffix", SUFFIXES)
@pytest.mark.parametrize("flag", ["event", "callable"])
def test_cancel_leaves_nothing_behind(tmp_path, suffix, flag) -> None:
    stop = threading.Event()
    calls: list[tuple[int, int]] = []

    def progress(done, total):
        calls.append((done, total))
        if len(calls) == 2:  # after the first chunk of rows
            stop.set()

    cancel = stop if flag == "event" else stop.is_set
    result = small_result()
    with pytest.raises(Cancelled):
        write_result(tmp_path / f"out{suffix}", None, result, result.plan, progress=progress, cancel=cancel)
    assert files_in(tmp_path) == []
    assert len(calls) == 2


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_progress_climbs_to_its_total(tmp_path, suffix) -> None:
    calls: list[tuple[int, int]] = []
    result = small_result()
    write_result(
        tmp_path / f"out{suffix}", None, result, result.plan, progress=lambda d, t: calls.append((d, t))
    )
    done = [d for d, _ in calls]
    assert len(calls) >= 4 and done == sorted(done)
    assert calls[-1][0] == calls[-1][1] and len({t for _, t in calls}) == 1


def test_a_result_from_another_sheet_is_refused(tmp_path) -> None:
    sheet = lab_sheet(tmp_path)
    other = fake_result(sheet.frame.iloc[:3])
    with pytest.raises(ExportError, match=r"does not belong to sheet lab\.xlsx"):
        write_result(tmp_path / "out.xlsx", sheet, other, LAB_PLAN)
    assert not (tmp_path / "out.xlsx").exists()


def test_an_export_too_large_for_xlsx_suggests_csv(tmp_path, monkeypatch) -> None:
    from imputer_app.sheets import _write_xlsx

    monkeypatch.setattr(_write_xlsx, "MAX_ROWS", 100)
    result = small_result()
    with pytest.raises(ExportError, match=r"export as \.csv instead"):
        write_result(tmp_path / "out.xlsx", None, result, result.plan)
    assert files_in(tmp_path) == []


@pytest.mark.parametrize("suffix", SUFFIXES)
@pytest.mark.parametrize("dangling", [False, True])
def test_a_link_at_the_target_is_replaced_never_written_through(tmp_path, suffix, dangling) -> None:
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    victim = elsewhere / f"victim{suffix}"
    if not dangling:
        victim.write_bytes(b"someone else's file")
    out = tmp_path / "out" / f"out{suffix}"
    out.parent.mkdir()
    out.symlink_to(victim)
    result = small_result()
    write_result(out, None, result, result.plan)
    assert not out.is_symlink() and out.stat().st_size > 1000
    assert files_in(elsewhere) == ([] if dangling else [victim.name])
    if not dangling:
        assert victim.read_bytes() == b"someone else's file"


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_a_link_to_the_input_is_refused(tmp_path, suffix) -> None:
    sheet = lab_sheet(tmp_path)
    source = tmp_path / f"lab{suffix}"
    source.write_bytes(b"the user's data")
    sheet.source = type(sheet.source)(**{**sheet.source.__dict__, "path": source})
    link = tmp_path / "out" / f"out{suffix}"
    link.parent.mkdir()
    link.symlink_to(source)
    with pytest.raises(ExportError, match="it is the input file"):
        write_result(link, sheet, fake_result(sheet.frame), LAB_PLAN)
    assert source.read_bytes() == b"the user's data" and link.is_symlink()


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_an_export_removes_what_a_killed_export_left(tmp_path, suffix) -> None:
    from imputer_app import files

    left = tmp_path / f".out{suffix}.89abcdef{_atomic.TEMP_SUFFIX}"  # no running process owns it
    left.write_bytes(b"5 MB of half an export")
    os.utime(left, (files.STARTED - 60, files.STARTED - 60))
    result = small_result()
    written = write_result(tmp_path / f"out{suffix}", None, result, result.plan)
    assert files_in(tmp_path) == sorted(p.name for p in written)
