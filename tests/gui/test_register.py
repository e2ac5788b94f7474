"""``kinfill-gui --register`` through xdg-utils (faked here), for the current user only."""

from __future__ import annotations

import os
import stat

import pytest

from imputer_app.gui import launch
from imputer_app.gui.register import RegisterError, desktop_text, register, resources_dir

FAKE_TOOL = """#!/bin/sh
echo "${{0##*/}} $*" >> "{log}"
for arg in "$@"; do case "$arg" in *.desktop) /bin/cp "$arg" "{saved}";; esac; done
exit {code}
"""


def fake_tools(folder, log, saved, failing=()):
    folder.mkdir()
    for tool in ("xdg-mime", "xdg-icon-resource", "xdg-desktop-menu"):
        path = folder / tool
        code = 3 if tool in failing else 0
        script = FAKE_TOOL.format(log=log, saved=saved, code=code)
        if code:
            script = script.replace("exit 3", "echo 'no permission to write' >&2\nexit 3")
        path.write_text(script)
        path.chmod(path.stat().st_mode | stat.S_IEXEC)


@pytest.fixture
def home(tmp_path, monkeypatch):
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    (tmp_path / "home").mkdir()
    return tmp_path / "home"


def test_register_installs_types_icon_and_launcher(tmp_path, home, monkeypatch):
    log, saved = tmp_path / "calls.log", tmp_path / "saved.desktop"
    fake_tools(tmp_path / "bin", log, saved)
    monkeypatch.setenv("PATH", str(tmp_path / "bin"))
    done = register()
    calls = log.read_text().splitlines()
    assert [c.split()[0:2] for c in calls] == [
        ["xdg-mime", "install"],
        ["xdg-icon-resource", "install"],
        ["xdg-desktop-menu", "install"],
    ]
    assert all("--mode user" in c for c in calls)
    assert calls[0].endswith("kinfill-mime.xml") and calls[1].endswith("kinfill.png kinfill")
    launcher = saved.read_text()
    exec_line = next(line for line in launcher.splitlines() if line.startswith("Exec="))
    assert exec_line.endswith(" %f") and os.path.isabs(exec_line[5:].strip('"').split('"')[0].split()[0])
    assert "TryExec" not in launcher and "MimeType=" in launcher
    assert (home / ".local/share/icons/hicolor/scalable/apps/kinfill.svg").is_file()
    assert any("Open with" in line for line in done) and len(done) >= 4


def test_without_xdg_utils_it_fails_in_one_line(tmp_path, home, monkeypatch, capsys):
    monkeypatch.setenv("PATH", str(tmp_path))
    with pytest.raises(RegisterError, match="install the xdg-utils package"):
        register()
    assert launch.main(["--register"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "xdg-mime" in err


def test_a_failing_step_names_the_tool_and_its_reason(tmp_path, home, monkeypatch):
    fake_tools(
        tmp_path / "bin", tmp_path / "calls.log", tmp_path / "s.desktop", failing=("xdg-icon-resource",)
    )
    monkeypatch.setenv("PATH", str(tmp_path / "bin"))
    with pytest.raises(RegisterError, match="xdg-icon-resource failed: no permission to write"):
        register()


@pytest.mark.parametrize(
    ("command", "expected"),
    [
        ("/opt/kf/bin/kinfill-gui", "Exec=/opt/kf/bin/kinfill-gui %f"),
        (
            '"/my apps/python" -m imputer_app.gui.launch',
            'Exec="/my apps/python" -m imputer_app.gui.launch %f',
        ),
    ],
)
def test_desktop_text_points_exec_at_this_installation(command, expected):
    text = desktop_text((resources_dir() / "kinfill.desktop").read_text(), command)
    assert expected in text.splitlines() and "Exec=kinfill-gui %f" not in text
