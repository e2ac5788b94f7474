"""Every file a command writes goes through the one atomic writer (README: "What Kinfill
promises about your files").

Cases: a link at the output (dangling, or pointing into another folder), a full disk
(``ENOSPC``, mocked) and a folder that is not writable (mocked, since root may write
anywhere). In each the command says one line and exits 2, the old output and the input
are untouched, no link is written through and no temporary file is left.
"""

from __future__ import annotations

import errno
import os
import shutil
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

from imputer_app import files
from imputer_app.files import TEMP_SUFFIX
from tests.cli.helpers import run

SAMPLES = Path(__file__).resolve().parents[2] / "sample_sheets"


@pytest.fixture
def source(tmp_path: Path) -> Path:
    """A copy of the demo csv in its own folder."""
    target = tmp_path / "in" / "lab.csv"
    target.parent.mkdir()
    shutil.copyfile(SAMPLES / "river_survey.csv", target)
    return target


def score_k(option: str) -> Callable[[Path, Path], list[object]]:
    def argv(src: Path, out: Path) -> list[object]:
        return ["score-k", src, "--k-range", "1-2", "--repeats", "1", option, out]

    return argv


# command name -> (output file name, argv builder)
COMMANDS: dict[str, tuple[str, Callable[[Path, Path], list[object]]]] = {
    "fill": ("lab.filled.xlsx", lambda src, out: ["fill", src, "--out", out]),
    "json": ("scores.json", score_k("--json")),
    "plot": ("error_vs_k.png", score_k("--plot")),
    "plan": ("lab.plan.toml", lambda src, out: ["plan", src, "--out", out]),
}


def temps(*folders: Path) -> list[Path]:
    return [p for folder in folders for p in folder.iterdir() if p.name.endswith(TEMP_SUFFIX)]


def one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    return lines[0]


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_a_dangling_link_at_the_output_needs_force(
    command: str, source: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    name, argv = COMMANDS[command]
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    out = source.parent / name
    out.symlink_to(elsewhere / name)
    code, _, err = run(argv(source, out), capsys)
    assert code == 2 and "already exists; add --force" in one_line(err)
    assert out.is_symlink() and not (elsewhere / name).exists()
    assert temps(source.parent, elsewhere) == []


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_force_replaces_the_link_never_writes_through_it(
    command: str, source: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    name, argv = COMMANDS[command]
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    kept = elsewhere / name
    kept.write_bytes(b"someone else's file")
    out = source.parent / name
    out.symlink_to(kept)
    before = source.read_bytes()
    code, _, err = run([*argv(source, out), "--force"], capsys)
    assert code == 0, err
    assert not out.is_symlink() and out.stat().st_size > 0
    assert kept.read_bytes() == b"someone else's file"
    assert source.read_bytes() == before
    assert temps(source.parent, elsewhere) == []


def test_a_link_named_like_an_old_temp_file_cannot_reach_the_input(
    source: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # Earlier versions wrote a plan through "<plan>.tmp"; a link of that name pointing at
    # the input then had the plan written into the input sheet.
    trap = source.with_name("lab.plan.toml.tmp")
    trap.symlink_to(source)
    before = source.read_bytes()
    code, _, err = run(["plan", source], capsys)
    assert code == 0, err
    assert source.read_bytes() == before and trap.is_symlink()
    assert source.with_name("lab.plan.toml").read_text(encoding="utf-8").startswith("# Kinfill fill plan")


def disk_full(monkeypatch: pytest.MonkeyPatch) -> None:
    """Every write of the atomic writer, and matplotlib's, fails half-way with ENOSPC."""
    real_write = os.write

    def full(fd: int, data: Any) -> int:
        real_write(fd, bytes(data[:10]))
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(files, "_write_all", full)
    from matplotlib.figure import Figure

    def savefig(self: Figure, fname: Any, **kwargs: Any) -> None:
        Path(fname).write_bytes(b"\x89PNG half")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(fname))

    monkeypatch.setattr(Figure, "savefig", savefig)


def read_only_folder(monkeypatch: pytest.MonkeyPatch, folder: Path) -> None:
    """Creating a file in ``folder`` is denied, as in a folder without write permission
    (mocked: the tests may run as root, who may write anywhere)."""
    real_open = os.open

    def denied(path: Any, flags: int, *args: Any, **kwargs: Any) -> int:
        if flags & os.O_CREAT and Path(os.fspath(path)).parent == folder:
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES), os.fspath(path))
        return real_open(path, flags, *args, **kwargs)

    monkeypatch.setattr(os, "open", denied)


@pytest.mark.parametrize("command", ["json", "plot", "plan"])
def test_a_full_disk_leaves_the_old_output_as_it_was(
    command: str,
    source: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    name, argv = COMMANDS[command]
    out = source.parent / name
    out.write_bytes(b"the old output")
    before = source.read_bytes()
    disk_full(monkeypatch)
    code, _, err = run([*argv(source, out), "--force"], capsys)
    assert code == 2 and "the disk is full" in one_line(err) and "nothing was written" in err
    assert out.read_bytes() == b"the old output" and source.read_bytes() == before
    assert temps(source.parent) == []


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_a_folder_that_is_not_writable_is_one_line(
    command: str,
    source: Path,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    name, argv = COMMANDS[command]
    locked = tmp_path / "locked"
    locked.mkdir()
    read_only_folder(monkeypatch, locked)
    code, _, err = run(argv(source, locked / name), capsys)
    assert code == 2, err
    assert f"folder {locked} is not writable" in one_line(err)
    assert list(locked.iterdir()) == []
