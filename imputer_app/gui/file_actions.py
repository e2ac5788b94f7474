"""The questions the window asks: which file, which options, replace or not, lose work or not.

Every dialog here goes through a static ``QFileDialog``/``QMessageBox`` call or a
small dialog class, so tests can replace them and never block on a modal window.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import QMimeData
from PySide6.QtWidgets import QDialog, QFileDialog, QMessageBox, QWidget

from imputer_app.files import same_file
from imputer_app.gui.markers import CENSORED, MISSING, TEXT
from imputer_app.gui.open_dialog import OpenDialog
from imputer_app.gui.state import default_export_path
from imputer_app.plan import PLAN_SUFFIX

if TYPE_CHECKING:
    from imputer_app.gui.state import Session
    from imputer_app.gui.table_model import SheetTableModel

#: File name endings Kinfill reads.
SHEET_SUFFIXES = (".xlsx", ".xlsm", ".xls", ".ods", ".csv", ".tsv", ".txt")
SHEET_FILTER = "Sheets (*.xlsx *.xlsm *.xls *.ods *.csv *.tsv *.txt);;All files (*)"
EXPORT_FILTER = "Excel workbook (*.xlsx);;CSV text (*.csv)"
PLAN_FILTER = f"Kinfill plan (*{PLAN_SUFFIX});;TOML (*.toml)"
TITLE = "Kinfill"


def _folder(parent: QWidget) -> str:
    settings = getattr(parent, "settings", None)
    return settings.last_folder() if settings is not None else str(Path.home())


def _remember(parent: QWidget, path: Path) -> None:
    settings = getattr(parent, "settings", None)
    if settings is not None:
        settings.set_last_folder(path)


def warn(parent: QWidget, message: str) -> None:
    """Show a one-line problem."""
    QMessageBox.warning(parent, TITLE, message)


def confirm_discard(parent: QWidget, dirty: bool, closing: bool = False) -> bool:
    """True when there is nothing to lose or the user agrees to lose the applied fill."""
    if not dirty:
        return True
    action = "Close Kinfill" if closing else "Open another sheet"
    text = f"The applied fill has not been exported. {action} and lose it?"
    return agree(parent, text, QMessageBox.StandardButton.Discard, QMessageBox.StandardButton.Cancel)


def agree(
    parent: QWidget, text: str, yes: QMessageBox.StandardButton, no: QMessageBox.StandardButton
) -> bool:
    """Ask ``text`` with two buttons; True when the user picks ``yes`` (``no`` is the safe default)."""
    return QMessageBox.question(parent, TITLE, text, yes | no, no) == yes


def ask_sheet_path(parent: QWidget) -> Path | None:
    """File > Open: choose a sheet."""
    name, _ = QFileDialog.getOpenFileName(parent, "Open a sheet", _folder(parent), SHEET_FILTER)
    if not name:
        return None
    _remember(parent, Path(name))
    return Path(name)


def options_dialog(parent: QWidget, path: Path, sheets: list[str] | None = None) -> dict[str, Any] | None:
    """Show the open dialog; returns read options (plus ``_sheet`` when already read) or None."""
    if sheets is None and path.suffix.lower() in (".xlsx", ".xlsm", ".xls", ".ods"):
        from imputer_app.sheets import list_sheets

        try:
            sheets = list_sheets(path)
        except Exception as exc:
            warn(parent, str(exc))
            return None
    dialog = OpenDialog(path, sheets, parent)
    if dialog.exec() != QDialog.DialogCode.Accepted:
        return None
    options: dict[str, Any] = dialog.options()
    sheet = dialog.sheet()
    if sheet is not None:
        options["_sheet"] = sheet
    return options


def ask_plan_path(parent: QWidget, save: bool) -> Path | None:
    """Choose a plan file to open or save (``.plan.toml`` is added when saving)."""
    folder = _folder(parent)
    if save:
        session = getattr(parent, "session", None)
        stem = session.path.stem if session is not None and session.path is not None else "fill"
        start = str(Path(folder) / f"{stem}{PLAN_SUFFIX}")
        name, _ = QFileDialog.getSaveFileName(parent, "Save plan", start, PLAN_FILTER)
    else:
        name, _ = QFileDialog.getOpenFileName(parent, "Open plan", folder, PLAN_FILTER)
    if not name:
        return None
    path = Path(name)
    if save and not path.name.endswith(".toml"):
        path = path.with_name(path.name + PLAN_SUFFIX)
    _remember(parent, path)
    return path


def ask_export_path(parent: QWidget, source: Path, path: str | Path | None = None) -> Path | None:
    """Where to export; refuses the source itself and asks before replacing a file."""
    if path is None:
        start = default_export_path(source)
        name, chosen = QFileDialog.getSaveFileName(
            parent,
            "Export the filled sheet",
            str(start),
            EXPORT_FILTER,
            "",
            QFileDialog.Option.DontConfirmOverwrite,
        )
        if not name:
            return None
        target = Path(name)
        if target.suffix.lower() not in (".xlsx", ".csv"):
            target = target.with_name(target.name + (".csv" if "csv" in (chosen or "").lower() else ".xlsx"))
    else:
        target = Path(path)
    if same_file(target, source):
        warn(parent, f"Kinfill never writes over the sheet it read ({source.name}); choose another name.")
        return None
    replace = f"{target.name} already exists in {target.parent}. Replace it?"
    if os.path.lexists(target) and not agree(
        parent, replace, QMessageBox.StandardButton.Yes, QMessageBox.StandardButton.No
    ):
        return None
    _remember(parent, target)
    return target


def dropped_path(mime: QMimeData) -> Path | None:
    """The first dropped local sheet or plan file, or None."""
    if not mime.hasUrls():
        return None
    for url in mime.urls():
        if url.isLocalFile():
            path = Path(url.toLocalFile())
            if path.suffix.lower() in SHEET_SUFFIXES or path.name.endswith(".toml"):
                return path
    return None


def summary_text(model: SheetTableModel, session: Session) -> str:
    """Status-bar summary: size, gaps, limits and what the fill layer holds."""
    codes = model.codes
    if codes.size == 0:
        return "No sheet open: File > Open, drop a file here, or pick a recent file."
    rows, cols = codes.shape
    gaps = model.code_count(MISSING, TEXT)
    censored = model.code_count(CENSORED)
    text = f"{rows:,} rows × {cols:,} columns · {gaps:,} gaps ({100 * gaps / codes.size:.1f}%)"
    text += f" · {censored:,} beyond a limit" if censored else ""
    filled = model.n_filled
    result = session.preview if session.preview is not None else session.applied
    if result is not None:
        left = len(result.unfilled) if result.unfilled is not None else 0
        weak = int(model.weak_cells.size)
        kind = "preview: {:,} proposed" if session.preview is not None else "applied: {:,} filled"
        text += f" · {kind.format(filled)}, {weak:,} weak, {left:,} left empty"
    return text
