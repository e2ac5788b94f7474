"""The one atomic writer: all-or-nothing, never through a link, never over the input.

Tests run as root here, where a folder's permission bits do not stop writing; a
read-only folder is then also simulated by making ``os.open`` refuse our temporary
names, as the operating system would.
"""

from __future__ import annotations

import errno
import os
import subprocess
import sys
from pathlib import Path

import pytest

from imputer_app import files
from imputer_app.errors import Cancelled, ExportError
from imputer_app.files import (
    TEMP_SUFFIX,
    atomic_target,
    atomic_targets,
    check_target,
    remove_stale_temps,
    same_file,
    write_bytes_atomic,
    write_text_atomic,
)


def names_in(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def temps_in(folder: Path) -> list[str]:
    return [n for n in names_in(folder) if n.endswith(TEMP_SUFFIX)]


def one_line(error: BaseException) -> str:
    text = str(error)
    assert "\n" not in text and len(text) < 300
    return text


def read_only(folder: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Make ``folder`` refuse new files: by permissions, and as root by refusing ``os.open``."""
    folder.chmod(0o555)  # pytest restores permissions when it removes tmp_path
    if os.geteuid() == 0:  # root ignores the permission bits
        real_open = os.open

        def refuse(path, flags, mode=0o777, **kwargs):
            if Path(path).parent == folder and flags & os.O_CREAT:
                raise PermissionError(errno.EACCES, os.strerror(errno.EACCES), str(path))
            return real_open(path, flags, mode, **kwargs)

        monkeypatch.setattr(os, "open", refuse)


# ------------------------------------------------------------------ plain writes
def test_text_is_written_exactly_and_no_temp_is_left(tmp_path) -> None:
    target = write_text_atomic(tmp_path / "out.txt", "a\r\nb\nGröße\n")
    assert target == tmp_path / "out.txt"
    assert target.read_bytes() == "a\r\nb\nGröße\n".encode()
    assert names_in(tmp_path) == ["out.txt"]


def test_an_existing_file_needs_force(tmp_path) -> None:
    target = tmp_path / "out.txt"
    target.write_text("old")
    with pytest.raises(ExportError, match=r"out\.txt: it already exists in .*--force") as info:
        write_text_atomic(target, "new")
    one_line(info.value)
    assert target.read_text() == "old"
    write_text_atomic(target, "new", force=True)
    assert target.read_text() == "new" and names_in(tmp_path) == ["out.txt"]


@pytest.mark.parametrize(
    "name, words", [("sub", "a folder of that name exists"), ("missing/out.txt", "does not exist")]
)
def test_a_folder_or_a_missing_folder_is_refused(tmp_path, name, words) -> None:
    (tmp_path / "sub").mkdir()
    with pytest.raises(ExportError, match=words):
        write_text_atomic(tmp_path / name, "x", force=True)
    assert names_in(tmp_path) == ["sub"] and names_in(tmp_path / "sub") == []


# ------------------------------------------------------------------ links
def test_a_dangling_link_counts_as_an_existing_file(tmp_path) -> None:
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    link = tmp_path / "out.txt"
    link.symlink_to(elsewhere / "victim.txt")
    with pytest.raises(ExportError, match="a link of that name exists"):
        write_text_atomic(link, "new")
    assert link.is_symlink() and names_in(elsewhere) == []


@pytest.mark.parametrize("dangling", [False, True])
def test_force_replaces_the_link_itself_never_the_file_it_points_to(tmp_path, dangling) -> None:
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    victim = elsewhere / "victim.txt"
    if not dangling:
        victim.write_text("someone else's file")
    link = tmp_path / "out.txt"
    link.symlink_to(victim)
    write_text_atomic(link, "new", force=True)
    assert not link.is_symlink() and link.read_text() == "new"
    assert names_in(elsewhere) == ([] if dangling else ["victim.txt"])
    if not dangling:
        assert victim.read_text() == "someone else's file"


def test_a_link_at_the_would_be_temp_name_is_never_used(tmp_path, monkeypatch) -> None:
    victim = tmp_path / "in.csv"
    victim.write_text("the user's data")
    tokens = iter(["deadbeef", "0badf00d"])
    monkeypatch.setattr(files.secrets, "token_hex", lambda n: next(tokens))
    trap = tmp_path / f".out.txt.{os.getpid()}.deadbeef{TEMP_SUFFIX}"
    trap.symlink_to(victim)
    write_text_atomic(tmp_path / "out.txt", "new")
    assert victim.read_text() == "the user's data"
    assert trap.is_symlink() and (tmp_path / "out.txt").read_text() == "new"


@pytest.mark.parametrize("spelling", ["same", "dotted", "hard link", "link to it", "it is a link to us"])
def test_the_input_is_never_written_even_with_force(tmp_path, spelling) -> None:
    real = tmp_path / "data" / "in.csv"
    real.parent.mkdir()
    real.write_text("the user's data")
    source, target = real, real
    if spelling == "dotted":
        target = tmp_path / "data" / "." / "in.csv"
    elif spelling == "hard link":
        target = tmp_path / "hard.csv"
        os.link(real, target)
    elif spelling == "link to it":
        target = tmp_path / "link.csv"
        target.symlink_to(real)
    elif spelling == "it is a link to us":
        source = tmp_path / "opened.csv"
        source.symlink_to(real)
    assert same_file(target, source)
    with pytest.raises(ExportError, match="it is the input file") as info:
        write_text_atomic(target, "plan text", source=source, force=True)
    one_line(info.value)
    assert real.read_text() == "the user's data" and temps_in(tmp_path) == []


def test_same_file_tells_other_files_apart(tmp_path) -> None:
    a, b = tmp_path / "a", tmp_path / "b"
    a.write_text("x")
    b.write_text("x")
    assert not same_file(a, b) and not same_file(tmp_path / "absent", a)
    assert same_file(tmp_path / "absent", tmp_path / "absent")


# ------------------------------------------------------------------ failures
@pytest.mark.parametrize("call", ["write", "fsync"])
def test_a_full_disk_leaves_the_old_file_and_no_temp(tmp_path, monkeypatch, call) -> None:
    target = tmp_path / "out.json"
    target.write_text("old content")

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(os, call, full)
    with pytest.raises(ExportError, match=r"out\.json: the disk is full .*nothing was written") as info:
        write_bytes_atomic(target, b"{}" * 10_000, force=True)
    one_line(info.value)
    assert target.read_text() == "old content" and names_in(tmp_path) == ["out.json"]


def test_a_read_only_folder_is_one_line_naming_the_folder(tmp_path, monkeypatch) -> None:
    target = tmp_path / "out.txt"
    target.write_text("old")
    read_only(tmp_path, monkeypatch)
    with pytest.raises(ExportError, match="is not writable") as info:
        write_text_atomic(target, "new", force=True)
    assert str(tmp_path) in one_line(info.value)
    assert target.read_text() == "old" and names_in(tmp_path) == ["out.txt"]


def test_a_failing_cleanup_does_not_hide_the_first_error(tmp_path, monkeypatch) -> None:
    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    def unlink_refused(self, missing_ok=False):
        raise PermissionError(errno.EACCES, "Permission denied")

    monkeypatch.setattr(os, "write", full)
    monkeypatch.setattr(Path, "unlink", unlink_refused)
    with pytest.raises(ExportError, match="the disk is full"):
        write_text_atomic(tmp_path / "out.txt", "new")


@pytest.mark.parametrize("failure", [OSError(errno.EIO, "Input/output error"), Cancelled()])
def test_a_writer_failing_by_name_leaves_nothing(tmp_path, failure) -> None:
    target = tmp_path / "chart.png"
    expected = type(failure) if isinstance(failure, Cancelled) else ExportError
    with pytest.raises(expected), atomic_target(target) as temp:
        assert temp.parent == tmp_path and temp.name.startswith(".chart.png.")
        temp.write_bytes(b"half a picture")
        raise failure
    assert names_in(tmp_path) == []


def test_a_writer_by_name_is_renamed_into_place(tmp_path) -> None:
    with atomic_targets([tmp_path / "a.csv", tmp_path / "b.csv"]) as temps:
        for temp, text in zip(temps, ["a", "b"], strict=True):
            temp.write_text(text)
        assert temps_in(tmp_path) == sorted(t.name for t in temps)
    assert names_in(tmp_path) == ["a.csv", "b.csv"] and (tmp_path / "b.csv").read_text() == "b"


def test_check_target_returns_an_absolute_path(tmp_path, monkeypatch) -> None:
    monkeypatch.chdir(tmp_path)
    assert check_target("out.txt") == tmp_path / "out.txt"


# ------------------------------------------------------------------ stale temps
def finished_pid() -> int:
    done = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True)
    return int(done.stdout)


def test_stale_temps_of_ours_are_removed_and_nothing_else(tmp_path) -> None:
    old = files.STARTED - 3600
    gone = finished_pid()
    stale = [
        f".out.xlsx.{gone}.0123abcd{TEMP_SUFFIX}",  # killed run, its process gone
        f".out.xlsx.89abcdef{TEMP_SUFFIX}",  # naming of an earlier version, no pid
    ]
    kept = [
        f".out.xlsx.{os.getpid()}.00112233{TEMP_SUFFIX}",  # this process's own
        f".out.xlsx.{os.getppid()}.44556677{TEMP_SUFFIX}",  # a process still running
        f"notes{TEMP_SUFFIX}",  # not our pattern
        f".out.xlsx.{gone}.0123abcd.tmp",  # not our ending
        "data.csv",
    ]
    for name in stale + kept:
        (tmp_path / name).write_text("x")
        os.utime(tmp_path / name, (old, old))
    fresh = f".new.csv.{gone}.fedcba98{TEMP_SUFFIX}"  # written after we started
    (tmp_path / fresh).write_text("x")
    link = f".link.csv.{gone}.aaaabbbb{TEMP_SUFFIX}"
    (tmp_path / link).symlink_to(tmp_path / "data.csv")
    os.utime(tmp_path / link, (old, old), follow_symlinks=False)
    folder = f".dir.csv.{gone}.ccccdddd{TEMP_SUFFIX}"
    (tmp_path / folder).mkdir()
    os.utime(tmp_path / folder, (old, old))

    write_text_atomic(tmp_path / "out.csv", "new")
    assert names_in(tmp_path) == sorted([*kept, fresh, link, folder, "out.csv"])
    assert remove_stale_temps(tmp_path) == []
