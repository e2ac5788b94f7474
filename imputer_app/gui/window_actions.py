"""Menus, shortcuts and the toolbar of the main window.

The window hands over a table of slots (action key -> callable); nothing here knows
the window class.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import QSize, Qt
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import QMainWindow, QMenu, QStyle, QToolBar, QWidget

if TYPE_CHECKING:
    from imputer_app.gui.state import Session

_SP = QStyle.StandardPixmap

#: A slot of an action: called without arguments when the action is triggered.
Slot = Callable[[], object]


def _action(
    window: QWidget,
    key: str,
    text: str,
    tip: str,
    slot: Slot,
    shortcut: QKeySequence | QKeySequence.StandardKey | str | None = None,
    icon: QStyle.StandardPixmap | None = None,
) -> QAction:
    action = QAction(text, window)
    action.setObjectName("action" + "".join(part.title() for part in key.split("_")))
    action.setToolTip(tip)
    action.setStatusTip(tip)
    if shortcut is not None:
        action.setShortcut(QKeySequence(shortcut))
        action.setToolTip(f"{tip} ({action.shortcut().toString(QKeySequence.SequenceFormat.NativeText)})")
    if icon is not None:
        action.setIcon(window.style().standardIcon(icon))
    action.triggered.connect(lambda _checked=False: slot())
    return action


def build_actions(w: QWidget, slots: Mapping[str, Slot]) -> dict[str, QAction]:
    """Create every action of the window, keyed by a short name.

    Parameters
    ----------
    w : QWidget
        Parent of the actions (and source of the standard icons).
    slots : mapping of str to callable
        What each action does, by key: ``open``, ``open_options``, ``open_plan``,
        ``save_plan``, ``export``, ``quit``, ``undo``, ``redo``, ``recovery``, ``preview``,
        ``apply``, ``copy_methods``, ``next_gap``, ``next_weak``, ``previous_weak``,
        ``focus_setup``, ``focus_table``, ``focus_panels``,
        ``guide``, ``about``.
    """
    std = QKeySequence.StandardKey
    specs: list[tuple[str, str, str, Any, Any]] = [
        (
            "open",
            "&Open sheet…",
            "Open a sheet (xlsx, xls, ods, csv)",
            std.Open,
            _SP.SP_DialogOpenButton,
        ),
        (
            "open_options",
            "Open &with options…",
            "Open a sheet choosing worksheet, header row and markers",
            "Ctrl+Shift+O",
            None,
        ),
        ("open_plan", "Open &plan…", "Load saved fill settings (*.plan.toml)", "Ctrl+L", None),
        (
            "save_plan",
            "&Save plan…",
            "Save the fill settings as a *.plan.toml to reuse later",
            std.Save,
            _SP.SP_DialogSaveButton,
        ),
        (
            "export",
            "&Export filled sheet…",
            "Write the filled sheet and its fill log (never over the source)",
            "Ctrl+E",
            _SP.SP_DriveFDIcon,
        ),
        # Spelled out: the standard Quit key is empty on desktops without a platform theme.
        ("quit", "&Quit", "Close Kinfill", "Ctrl+Q", None),
        ("undo", "&Undo apply", "Take back the last applied fill", "Ctrl+Z", _SP.SP_ArrowBack),
        (
            "redo",
            "&Redo apply",
            "Apply again the fill taken back",
            "Ctrl+Shift+Z",
            _SP.SP_ArrowForward,
        ),
        (
            "recovery",
            "Run &recovery test",
            "Hide known values, fill them for every k and compare errors",
            "Ctrl+T",
            _SP.SP_MediaPlay,
        ),
        (
            "preview",
            "&Preview fill",
            "Compute the fill and show it over the data; nothing changes yet",
            "F5",
            _SP.SP_BrowserReload,
        ),
        (
            "apply",
            "&Apply preview",
            "Write the previewed values into the working table",
            "Ctrl+Return",
            _SP.SP_DialogApplyButton,
        ),
        (
            "copy_methods",
            "Copy &methods text",
            "Copy a methods paragraph of this fill, to paste into a report",
            None,
            None,
        ),
        ("next_gap", "&Next gap", "Go to the next gap or marked cell in the table", "F3", None),
        ("next_weak", "Next &weak fill", "Go to the next filled cell with weak support", "F4", None),
        (
            "previous_weak",
            "Pre&vious weak fill",
            "Go to the previous filled cell with weak support",
            "Shift+F4",
            None,
        ),
        (
            "focus_setup",
            "Go to &setup",
            "Move the keyboard focus to the column setup",
            "Alt+1",
            None,
        ),
        (
            "focus_table",
            "Go to &table",
            "Move the keyboard focus to the data table",
            "Alt+2",
            None,
        ),
        (
            "focus_panels",
            "Go to &panels",
            "Move the keyboard focus to the panels on the right",
            "Alt+3",
            None,
        ),
        ("guide", "&Guide", "The five steps, the recovery test, cell symbols and the export", "F1", None),
        ("about", "&About Kinfill", "Version, cautions and references", None, None),
    ]
    return {key: _action(w, key, text, tip, slots[key], sc, icon) for key, text, tip, sc, icon in specs}


def build_menus(
    w: QMainWindow, a: Mapping[str, QAction], recent_menu: QMenu, rows_menu: QMenu | None = None
) -> QToolBar:
    """Fill the menu bar of ``w`` and add the toolbar it returns.

    ``recent_menu`` goes under File; ``rows_menu`` (which rows the table shows), when
    given, under View.
    """
    bar = w.menuBar()
    bar.setObjectName("menuBar")
    file_menu = bar.addMenu("&File")
    file_menu.setObjectName("menuFile")
    file_menu.addActions([a["open"], a["open_options"]])
    file_menu.addMenu(recent_menu)
    recent_menu.setObjectName("menuRecent")
    file_menu.addSeparator()
    file_menu.addActions([a["open_plan"], a["save_plan"]])
    file_menu.addSeparator()
    file_menu.addAction(a["export"])
    file_menu.addSeparator()
    file_menu.addAction(a["quit"])
    edit_menu = bar.addMenu("&Edit")
    edit_menu.setObjectName("menuEdit")
    edit_menu.addActions([a["undo"], a["redo"], a["copy_methods"]])
    fill_menu = bar.addMenu("F&ill")
    fill_menu.setObjectName("menuFill")
    fill_menu.addActions([a["recovery"], a["preview"], a["apply"]])
    view_menu = bar.addMenu("&View")
    view_menu.setObjectName("menuView")
    view_menu.addActions([a["next_gap"], a["next_weak"], a["previous_weak"]])
    if rows_menu is not None:
        view_menu.addMenu(rows_menu)
    view_menu.addSeparator()
    view_menu.addActions([a["focus_setup"], a["focus_table"], a["focus_panels"]])
    help_menu = bar.addMenu("&Help")
    help_menu.setObjectName("menuHelp")
    help_menu.addActions([a["guide"], a["about"]])

    tools = QToolBar("Main steps", w)
    tools.setObjectName("mainToolBar")
    tools.setAccessibleName("Main steps")
    tools.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextBesideIcon)
    tools.setIconSize(QSize(18, 18))
    tools.setMovable(False)
    for key in ("open", "save_plan"):
        tools.addAction(a[key])
    tools.addSeparator()
    for key in ("recovery", "preview", "apply"):
        tools.addAction(a[key])
    tools.addSeparator()
    for key in ("undo", "redo", "export"):
        tools.addAction(a[key])
    short = {
        "open": "Open",
        "save_plan": "Save plan",
        "recovery": "Recovery test",
        "preview": "Preview",
        "apply": "Apply",
        "undo": "Undo",
        "redo": "Redo",
        "export": "Export",
    }
    for key, text in short.items():
        a[key].setIconText(text)
        button = tools.widgetForAction(a[key])
        if button is not None:
            button.setObjectName(f"toolButton{text.replace(' ', '')}")
            button.setAccessibleName(a[key].text().replace("&", "").rstrip("…"))
    w.addToolBar(Qt.ToolBarArea.TopToolBarArea, tools)
    return tools


def enabled_actions(session: Session, busy: bool) -> dict[str, bool]:
    """Which actions can be used now, given the session and whether a job is at work."""
    has = session.sheet is not None
    return {
        "open": not busy,
        "open_options": not busy,
        "recent": not busy,
        "open_plan": has and not busy,
        "save_plan": has,
        "export": session.applied is not None and not busy,
        "undo": session.can_undo and not busy,
        "redo": session.can_redo and not busy,
        "recovery": has,
        "preview": has and not busy and session.plan_problem is None,
        "apply": session.can_apply and not busy,
        "next_gap": has,
        "next_weak": session.preview is not None or session.applied is not None,
        "previous_weak": session.preview is not None or session.applied is not None,
        "copy_methods": session.preview is not None or session.applied is not None,
    }


def fill_recent_menu(
    menu: QMenu, files: Sequence[Path], open_path: Callable[[Path], object], clear: Slot
) -> None:
    """Rebuild File > Recent files: one entry per file (``open_path(file)``), then Clear list."""
    menu.clear()
    for number, path in enumerate(files, start=1):
        action = menu.addAction(f"&{number} {path.name}")
        action.setObjectName(f"actionRecent{number}")
        action.setToolTip(str(path))
        action.setStatusTip(str(path))
        action.triggered.connect(lambda _c=False, p=path: open_path(p))
    menu.setEnabled(bool(files))
    if files:
        menu.addSeparator()
        action = menu.addAction("&Clear list")
        action.setObjectName("actionClearRecent")
        action.triggered.connect(lambda _c=False: clear())
