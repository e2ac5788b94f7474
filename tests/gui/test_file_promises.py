"""The app's File menu keeps the file promises of the command line (README: "What Kinfill
promises about your files").

Save plan and Export go through the one atomic writer. Cases: a link at the target (it
is replaced, the file it points to is never written), a folder that is not writable
(mocked: the tests may run as root), a full disk (``ENOSPC`` from ``fsync``, mocked).
Each failure is one clear message in the window; the old target and the open sheet are
untouched and no temporary file is left. The screenshot and the icon copy of
``--register`` use the same writer.
"""

from __future__ import annotations

import errno
import os
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from PySide6.QtGui import QPixmap
from PySide6.QtWidgets import QFileDialog, QMessageBox

from imputer_app.files import TEMP_SUFFIX
from imputer_app.gui.launch import save_picture
from imputer_app.gui.main_window import MainWindow
from imputer_app.gui.settings import AppSettings


@pytest.fixture
def sheet_path(tmp_path: Path) -> Path:
    """A small invented sheet (24 rows, 3 number columns, some gaps; seed 2)."""
    rng = np.random.default_rng(2)
    values = rng.normal(20, 3, size=(24, 3)).round(2)
    lines = ["Station,Nitrate,Oxygen"]
    for i, row in enumerate(values):
        cells = [str(v) for v in row]
        if i % 5 == 2:
            cells[1 + i % 2] = ""
        lines.append(",".join(cells))
    path = tmp_path / "sheet" / "lab.csv"
    path.parent.mkdir()
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture
def messages(monkeypatch: pytest.MonkeyPatch) -> list[str]:
    """Texts of the warning boxes shown; a replace question is answered Yes."""
    shown: list[str] = []

    def warning(parent: Any, title: str, text: str, *args: Any) -> QMessageBox.StandardButton:
        shown.append(text)
        return QMessageBox.StandardButton.Ok

    monkeypatch.setattr(QMessageBox, "warning", warning)
    monkeypatch.setattr(QMessageBox, "question", lambda *a, **k: QMessageBox.StandardButton.Yes)
    return shown


@pytest.fixture
def window(qtbot: Any, sheet_path: Path, messages: list[str]) -> Any:
    w = MainWindow(AppSettings())
    qtbot.addWidget(w)
    w.show()
    with qtbot.waitSignal(w.sheet_loaded, timeout=30_000):
        w.open_path(sheet_path, options={})
    yield w
    w.session.mark_exported()  # nothing to ask on close
    w.close()


def applied(window: Any, qtbot: Any) -> Any:
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.actions_["preview"].trigger()
    window.actions_["apply"].trigger()
    assert window.session.applied is not None
    return window


def save_plan(window: Any, target: Path, monkeypatch: pytest.MonkeyPatch) -> Path | None:
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *a, **k: (str(target), ""))
    written: Path | None = window.save_plan()
    return written


def export(window: Any, qtbot: Any, target: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *a, **k: (str(target), ""))
    window.actions_["export"].trigger()
    qtbot.waitUntil(lambda: not window.runner.is_running(), timeout=30_000)
    qtbot.wait(50)  # the job's end is reported through the event loop


def temps(*folders: Path) -> list[Path]:
    return [p for folder in folders for p in folder.iterdir() if p.name.endswith(TEMP_SUFFIX)]


def read_only_folder(monkeypatch: pytest.MonkeyPatch, folder: Path) -> None:
    real_open = os.open

    def denied(path: Any, flags: int, *args: Any, **kwargs: Any) -> int:
        if flags & os.O_CREAT and Path(os.fspath(path)).parent == folder:
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES), os.fspath(path))
        return real_open(path, flags, *args, **kwargs)

    monkeypatch.setattr(os, "open", denied)


def disk_full(monkeypatch: pytest.MonkeyPatch) -> None:
    # A full disk often shows only when the data is flushed (delayed allocation).
    def fsync(fd: int) -> None:
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(os, "fsync", fsync)


# ------------------------------------------------------------------ Save plan
def test_save_plan_replaces_a_link_and_never_writes_through_it(
    window: Any, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, messages: list[str]
) -> None:
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    kept = elsewhere / "kept.toml"
    kept.write_text("someone else's file", encoding="utf-8")
    target = tmp_path / "lab.plan.toml"
    target.symlink_to(kept)
    assert save_plan(window, target, monkeypatch) == target
    assert not target.is_symlink() and target.read_text(encoding="utf-8").startswith("# Kinfill fill plan")
    assert kept.read_text(encoding="utf-8") == "someone else's file" and messages == []


def test_save_plan_never_writes_over_the_open_sheet(
    window: Any, sheet_path: Path, monkeypatch: pytest.MonkeyPatch, messages: list[str]
) -> None:
    before = sheet_path.read_bytes()
    link = sheet_path.with_name("lab.plan.toml")
    link.symlink_to(sheet_path)
    assert save_plan(window, link, monkeypatch) is None
    assert len(messages) == 1 and "it is the input file" in messages[0]
    assert sheet_path.read_bytes() == before and link.is_symlink()


@pytest.mark.parametrize("fault", ["read-only folder", "disk full"])
def test_save_plan_failure_is_one_message_and_leaves_the_old_file(
    fault: str, window: Any, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, messages: list[str]
) -> None:
    folder = tmp_path / "plans"
    folder.mkdir()
    target = folder / "lab.plan.toml"
    target.write_text("the old plan", encoding="utf-8")
    if fault == "disk full":
        disk_full(monkeypatch)
    else:
        read_only_folder(monkeypatch, folder)
    assert save_plan(window, target, monkeypatch) is None
    words = "the disk is full" if fault == "disk full" else f"folder {folder} is not writable"
    assert len(messages) == 1 and words in messages[0] and "\n" not in messages[0]
    assert target.read_text(encoding="utf-8") == "the old plan" and temps(folder) == []


# ------------------------------------------------------------------ Export
def test_export_replaces_a_link_and_never_writes_through_it(
    window: Any, qtbot: Any, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, messages: list[str]
) -> None:
    applied(window, qtbot)
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    kept = elsewhere / "kept.xlsx"
    kept.write_bytes(b"someone else's file")
    target = tmp_path / "lab.filled.xlsx"
    target.symlink_to(kept)
    with qtbot.waitSignal(window.exported, timeout=30_000):
        export(window, qtbot, target, monkeypatch)
    assert not target.is_symlink() and target.read_bytes()[:2] == b"PK"
    assert kept.read_bytes() == b"someone else's file" and messages == []
    assert temps(tmp_path, elsewhere) == []


@pytest.mark.parametrize("fault", ["read-only folder", "disk full"])
def test_export_failure_is_one_message_and_leaves_the_old_file(
    fault: str,
    window: Any,
    qtbot: Any,
    sheet_path: Path,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    messages: list[str],
) -> None:
    applied(window, qtbot)
    folder = tmp_path / "exports"
    folder.mkdir()
    target = folder / "lab.filled.xlsx"
    target.write_bytes(b"the old export")
    before = sheet_path.read_bytes()
    if fault == "disk full":
        disk_full(monkeypatch)
    else:
        read_only_folder(monkeypatch, folder)
    export(window, qtbot, target, monkeypatch)
    words = "the disk is full" if fault == "disk full" else f"folder {folder} is not writable"
    assert len(messages) == 1 and words in messages[0] and "\n" not in messages[0]
    assert target.read_bytes() == b"the old export" and sheet_path.read_bytes() == before
    assert temps(folder) == [] and window.session.dirty


# ------------------------------------------------------------------ other writes
def test_the_screenshot_goes_through_the_atomic_writer(
    qtbot: Any, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    picture = QPixmap(8, 6)
    picture.fill()
    elsewhere = tmp_path / "kept.png"
    elsewhere.write_bytes(b"someone else's file")
    target = tmp_path / "shot.png"
    target.symlink_to(elsewhere)
    assert save_picture(picture, target)
    assert not target.is_symlink() and target.read_bytes()[:4] == b"\x89PNG"
    assert elsewhere.read_bytes() == b"someone else's file"
    disk_full(monkeypatch)
    assert not save_picture(picture, tmp_path / "full.png")
    assert "the disk is full" in capsys.readouterr().err
    assert not (tmp_path / "full.png").exists() and temps(tmp_path) == []


def test_register_copies_the_icon_through_the_atomic_writer(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from imputer_app.gui import register

    home = tmp_path / "home"
    monkeypatch.setattr(Path, "home", lambda: home)
    monkeypatch.setattr(register.shutil, "which", lambda name: f"/usr/bin/{name}")
    icons = home / ".local/share/icons/hicolor/scalable/apps"
    icons.mkdir(parents=True)
    elsewhere = tmp_path / "kept.svg"
    elsewhere.write_text("someone else's icon", encoding="utf-8")
    (icons / "kinfill.svg").symlink_to(elsewhere)
    calls: list[list[str]] = []
    register.register(run=lambda argv: calls.append(list(argv)))
    icon = icons / "kinfill.svg"
    assert not icon.is_symlink() and icon.read_text(encoding="utf-8").lstrip().startswith("<")
    assert elsewhere.read_text(encoding="utf-8") == "someone else's icon"
    assert calls and temps(icons) == []
