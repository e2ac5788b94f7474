"""``kinfill-gui --register``: make sheets open in Kinfill by double-click (Linux, current user).

Installs, for the current user only and through the freedesktop ``xdg-utils`` tools:
the MIME-type registration of the spreadsheet types, the application icon and the
``.desktop`` launcher (whose ``Exec`` line points at this installation). Kinfill then
appears under "Open with" for xlsx, xlsm, xls, ods, csv and tsv files; it is not made
the default program for them (the report says how to do that).
"""

from __future__ import annotations

import shutil
import subprocess
import sys
import tempfile
from collections.abc import Callable, Sequence
from pathlib import Path

import imputer_app
from imputer_app.errors import KinfillError
from imputer_app.files import write_bytes_atomic, write_text_atomic

TOOLS = ("xdg-mime", "xdg-icon-resource", "xdg-desktop-menu")
DESKTOP_NAME = "kinfill.desktop"
ICON_NAME = "kinfill"

Runner = Callable[[Sequence[str]], None]


class RegisterError(KinfillError):
    """Registration cannot be done (tools absent, a step failed)."""


def resources_dir() -> Path:
    """The repository's ``resources/`` folder (icon, desktop file, MIME registration)."""
    return Path(imputer_app.__file__).resolve().parent.parent / "resources"


def launch_command() -> str:
    """The command a double-click runs: the ``kinfill-gui`` script next to Python, if any."""
    script = Path(sys.executable).with_name("kinfill-gui")
    if script.exists():
        return _quote(str(script))
    return f"{_quote(sys.executable)} -m imputer_app.gui.launch"


def _quote(text: str) -> str:
    """Quote an Exec argument as the desktop entry specification asks."""
    if not any(ch in text for ch in " \"'\\$`"):
        return text
    escaped = text.replace("\\", "\\\\").replace('"', '\\"').replace("$", "\\$").replace("`", "\\`")
    return f'"{escaped}"'


def desktop_text(template: str, command: str) -> str:
    """The launcher with ``Exec`` (and ``TryExec``) pointing at ``command``."""
    lines = []
    for line in template.splitlines():
        if line.startswith("Exec="):
            line = f"Exec={command} %f"
        elif line.startswith("TryExec="):
            continue  # TryExec cannot hold arguments; Exec is absolute anyway
        lines.append(line)
    return "\n".join(lines) + "\n"


def _run(args: Sequence[str]) -> None:
    done = subprocess.run(list(args), capture_output=True, text=True, check=False)
    if done.returncode != 0:
        why = (done.stderr or done.stdout).strip().splitlines()
        raise RegisterError(
            f"{Path(args[0]).name} failed: {why[0] if why else f'exit code {done.returncode}'}"
        )


def register(run: Runner = _run, resources: Path | None = None) -> list[str]:
    """Install launcher, icon and MIME types for the current user; return what was done.

    Parameters
    ----------
    run : callable, optional
        Runs one command (list of str); raises on failure. Replaced in tests.
    resources : Path, optional
        Folder holding ``kinfill.desktop``, ``kinfill-mime.xml``, ``kinfill.png`` and
        ``kinfill.svg`` (default: :func:`resources_dir`).

    Raises
    ------
    RegisterError
        When xdg-utils are absent, a resource file is missing, or a step fails.
    """
    missing = [tool for tool in TOOLS if shutil.which(tool) is None]
    if missing:
        raise RegisterError(
            f"{', '.join(missing)} not found: install the xdg-utils package, "
            "then run kinfill-gui --register again"
        )
    folder = resources or resources_dir()
    needed = {name: folder / name for name in (DESKTOP_NAME, "kinfill-mime.xml", "kinfill.png")}
    absent = [str(p) for p in needed.values() if not p.is_file()]
    if absent:
        raise RegisterError(f"resource file not found: {absent[0]}")
    done: list[str] = []
    run(["xdg-mime", "install", "--mode", "user", "--novendor", str(needed["kinfill-mime.xml"])])
    done.append("registered the spreadsheet file types (xlsx, xlsm, xls, ods, csv, tsv)")
    run(["xdg-icon-resource", "install", "--mode", "user", "--novendor", "--size", "256",
         str(needed["kinfill.png"]), ICON_NAME])  # fmt: skip
    done.append("installed the Kinfill icon (256 px)")
    svg = folder / "kinfill.svg"
    if svg.is_file():
        target = Path.home() / ".local/share/icons/hicolor/scalable/apps" / f"{ICON_NAME}.svg"
        target.parent.mkdir(parents=True, exist_ok=True)
        write_bytes_atomic(target, svg.read_bytes(), force=True)
        done.append(f"copied the scalable icon to {target}")
    with tempfile.TemporaryDirectory() as tmp:
        desktop = Path(tmp) / DESKTOP_NAME
        command = launch_command()
        write_text_atomic(desktop, desktop_text(needed[DESKTOP_NAME].read_text(encoding="utf-8"), command))
        run(["xdg-desktop-menu", "install", "--mode", "user", "--novendor", str(desktop)])
    done.append(f"installed the launcher {DESKTOP_NAME} (runs {command})")
    apps = Path.home() / ".local/share/applications"
    if shutil.which("update-desktop-database") and apps.is_dir():
        run(["update-desktop-database", str(apps)])
        done.append("refreshed the launcher database")
    done.append(
        "Kinfill now appears under 'Open with' for these files; to make it the default for, say, "
        f"csv files: xdg-mime default {DESKTOP_NAME} text/csv"
    )
    return done
