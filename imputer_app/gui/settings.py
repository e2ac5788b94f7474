"""What the app remembers between runs (QSettings): window, splitters, recent files, options."""

from __future__ import annotations

import json
from pathlib import Path

from PySide6.QtCore import QByteArray, QSettings

from imputer_app.errors import KinfillError
from imputer_app.gui.state import column_free
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

    # ----------------------------------------------------------------- options
    def last_options(self) -> FillPlan:
        """The general fill options used last (no column settings), or the defaults."""
        text = self.qt.value("fill/options", "")
        if not text:
            return FillPlan()
        try:
            return FillPlan.from_dict(json.loads(str(text)), source="saved options")
        except (KinfillError, ValueError, TypeError):
            return FillPlan()

    def save_options(self, plan: FillPlan) -> None:
        """Remember the general options of ``plan`` for the next sheet."""
        self.qt.setValue("fill/options", json.dumps(column_free(plan).to_dict()))

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
