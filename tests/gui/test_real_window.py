"""A real window under Xvfb: start the app as its own process, wait for it, take its picture, quit.

Skipped where ``xvfb-run`` is absent (``.ci/run`` installs it).
"""

from __future__ import annotations

import shutil
import sys
from pathlib import Path

import pytest

from tests.gui._screenshot import launch_command, picture_facts, private_env, run

pytestmark = [
    pytest.mark.xvfb,
    pytest.mark.slow,
    pytest.mark.skipif(shutil.which("xvfb-run") is None, reason="xvfb-run is not installed"),
]


def test_real_window_opens_the_demo_and_quits_cleanly(tmp_path, samples_dir):
    png = tmp_path / "real_window.png"
    env = private_env(tmp_path / "home")
    env.pop("QT_QPA_PLATFORM", None)  # the real xcb platform this time
    command = [
        "xvfb-run",
        "-a",
        "-s",
        "-screen 0 1400x900x24",
        *launch_command(samples_dir / "river_survey.xlsx", png),
    ]
    done = run(command, env, timeout=120)
    assert done.returncode == 0, done.stderr[-2000:]
    width, height, colours = picture_facts(png)
    assert width >= 1000 and height >= 600 and colours > 20


def test_the_whole_job_on_the_demo_in_a_real_window(tmp_path, samples_dir):
    """kinfill-gui FILE, recovery test, preview, apply, export, Ctrl+Q: the export is there, exit 0."""
    from imputer_app.sheets import read_sheet

    env = private_env(tmp_path / "home")
    env.pop("QT_QPA_PLATFORM", None)
    target = tmp_path / "river_survey.filled.xlsx"
    driver = Path(__file__).with_name("_whole_job.py")
    command = [
        "xvfb-run",
        "-a",
        "-s",
        "-screen 0 1400x900x24",
        sys.executable,
        str(driver),
        str(samples_dir / "river_survey.xlsx"),
        str(target),
    ]
    done = run(command, env, timeout=150)
    assert done.returncode == 0, done.stderr[-2000:]
    back = read_sheet(target)
    source = read_sheet(samples_dir / "river_survey.xlsx")
    assert back.frame.shape == source.frame.shape
    assert int(back.frame.isna().sum().sum()) < int(source.frame.isna().sum().sum())
