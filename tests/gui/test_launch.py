"""``kinfill-gui``: arguments, the icon, and a screenshot run as a separate (offscreen) process."""

from __future__ import annotations

import pytest

from imputer_app.gui import launch
from tests.gui._screenshot import launch_command, picture_facts, private_env, run


def test_screenshot_needs_a_file(capsys):
    assert launch.main(["--screenshot", "x.png"]) == 2
    assert "needs a FILE" in capsys.readouterr().err


def test_version(capsys):
    with pytest.raises(SystemExit) as stop:
        launch.main(["--version"])
    assert stop.value.code == 0 and "kinfill-gui 0." in capsys.readouterr().out


def test_icon_comes_from_resources(qapp):
    icon = launch.app_icon()
    assert not icon.isNull() and icon.pixmap(64, 64).width() == 64


@pytest.mark.slow
def test_opens_the_demo_sheet_and_saves_a_picture(tmp_path, samples_dir):
    png = tmp_path / "window.png"
    done = run(
        launch_command(samples_dir / "river_survey.xlsx", png),
        private_env(tmp_path / "home", QT_QPA_PLATFORM="offscreen"),
    )
    assert done.returncode == 0, done.stderr
    width, height, colours = picture_facts(png)
    assert (width, height) >= (900, 600) and colours > 20  # a window full of table, not a blank grab


@pytest.mark.slow
def test_a_missing_file_fails_the_screenshot_run(tmp_path):
    png = tmp_path / "window.png"
    done = run(
        launch_command(tmp_path / "nope.xlsx", png),
        private_env(tmp_path / "home", QT_QPA_PLATFORM="offscreen"),
    )
    assert done.returncode == launch.EXIT_READ_FAILED and not png.exists()
