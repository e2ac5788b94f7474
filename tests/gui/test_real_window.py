"""A real window under Xvfb: start the app as its own process, wait for it, take its picture, quit.

Skipped where ``xvfb-run`` is absent (``.ci/run`` installs it).
"""

from __future__ import annotations

import shutil

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
