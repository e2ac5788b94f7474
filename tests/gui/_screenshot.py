"""Run ``kinfill-gui FILE --screenshot PNG`` as a separate process and judge the picture."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def launch_command(sheet: Path, png: Path) -> list[str]:
    return [sys.executable, "-m", "imputer_app.gui.launch", str(sheet), "--screenshot", str(png)]


def private_env(home: Path, **extra: str) -> dict[str, str]:
    """The environment with a throw-away home, so the app's settings never touch the user's."""
    env = dict(os.environ)
    env.update(HOME=str(home), XDG_CONFIG_HOME=str(home / ".config"), PYTHONPATH=str(ROOT), **extra)
    return env


def run(command: list[str], env: dict[str, str], timeout: float = 90) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        command, env=env, cwd=ROOT, capture_output=True, text=True, timeout=timeout, check=False
    )


def picture_facts(png: Path) -> tuple[int, int, int]:
    """Width, height and number of distinct colours in a 64 x 64 thumbnail of the PNG."""
    from PySide6.QtGui import QImage

    image = QImage(str(png))
    small = image.scaled(64, 64)
    colours = {small.pixel(x, y) for x in range(64) for y in range(64)}
    return image.width(), image.height(), len(colours)
