"""What the app remembers between runs (QSettings): window, splitters, recent files, folders.

Fill settings are not global: each file remembers the plan of its last fill, offered
(never imposed) when that file is opened again.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

from PySide6.QtCore import QByteArray, QSettings

from imputer_app.errors import KinfillError
from imputer_app.plan import FillPlan

MAX_RECENT = 8


class AppSettings:
    """Typed access to the app's QSettings (organisation and app name "Kinfill")."""

    def __init__(self, settings: QSettings | None = None) -> None:
        if settings is None:
            # The default format (native, or INI when tests ask for it) in the user's scope.
            settings = QSettings(QSettings.defaultFormat(), QSettings.Scope.UserScope, "Kinfill", "Kinfill")
        self.qt = settings

    # ------------------------------------------------------------------ recent
    def recent_files(self) -> list[Path]:
        """Recently opened sheets, newest first (only those that still exist)."""
        raw = self.qt.value("recent/files", [])
        names: list[str] = [raw] if isinstance(raw, str) else [str(n) for n in raw or []]  # type: ignore[attr-defined]
        return [Path(n) for n in names if n and Path(n).exists()][:MAX_RECENT]

    def add_recent(self, path: str | Path) -> list[Path]:
        """Put ``path`` first in the recent files and return the new list."""
        path = Path(path).resolve()
        files = [path] + [p for p in self.recent_files() if p.resolve() != path]
        self.qt.setValue("recent/files", [str(p) for p in files[:MAX_RECENT]])
        return files[:MAX_RECENT]

    def clear_recent(self) -> None:
        """Forget the recent files."""
        self.qt.remove("recent/files")

    # ------------------------------------------------------------ sheet plans
    # Settings belong to a sheet: k tested on one sheet must never slip into a fill of
    # another. Only the plan of the last fill of each file is kept, keyed by its path.
    @staticmethod
    def _plan_key(path: str | Path) -> str:
        digest = hashlib.sha256(str(Path(path).resolve()).encode("utf-8")).hexdigest()[:16]
        return f"sheetPlans/{digest}"

    def sheet_plan(self, path: str | Path) -> FillPlan | None:
        """The plan of the last fill of the file at ``path`` (None: none, or unreadable)."""
        text = self.qt.value(self._plan_key(path), "")
        if not text:
            return None
        try:
            return FillPlan.from_dict(json.loads(str(text)), source="the plan last used for this file")
        except (KinfillError, ValueError, TypeError):
            return None

    def set_sheet_plan(self, path: str | Path, plan: FillPlan) -> None:
        """Remember ``plan`` as the one last used to fill the file at ``path``."""
        self.qt.setValue(self._plan_key(path), json.dumps(plan.to_dict()))

    # ----------------------------------------------------------------- folders
    def last_folder(self) -> str:
        """The folder of the last file chosen in a file dialog."""
        return str(self.qt.value("files/folder", str(Path.home())))

    def set_last_folder(self, path: str | Path) -> None:
        """Remember the folder of ``path``."""
        path = Path(path)
        self.qt.setValue("files/folder", str(path if path.is_dir() else path.parent))

    # ------------------------------------------------------------------ layout
    def bytes_value(self, key: str) -> QByteArray | None:
        """A stored geometry or state (None when absent)."""
        value = self.qt.value(key)
        return value if isinstance(value, QByteArray) and not value.isEmpty() else None

    def set_bytes(self, key: str, value: QByteArray) -> None:
        """Store a geometry or state."""
        self.qt.setValue(key, value)

    def sync(self) -> None:
        """Write everything to disk now."""
        self.qt.sync()
