"""Menus, shortcuts and the toolbar of the main window."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from PySide6.QtCore import QSize, Qt
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import QStyle, QToolBar

if TYPE_CHECKING:
    from imputer_app.gui.main_window import MainWindow

_SP = QStyle.StandardPixmap


def _action(
    window: MainWindow,
    key: str,
    text: str,
    tip: str,
    slot: object,
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
    action.triggered.connect(lambda _checked=False: slot())  # type: ignore[operator]
    return action


def build_actions(w: MainWindow) -> dict[str, QAction]:
    """Create every action of the window (keyed by a short name)."""
    std = QKeySequence.StandardKey
    specs: list[tuple[str, str, str, Any, Any, Any]] = [
        (
            "open",
            "&Open sheet…",
            "Open a sheet (xlsx, xls, ods, csv)",
            w.open_dialog,
            std.Open,
            _SP.SP_DialogOpenButton,
        ),
        (
            "open_options",
            "Open &with options…",
            "Open a sheet choosing worksheet, header row and markers",
            lambda: w.open_dialog(with_options=True),
            "Ctrl+Shift+O",
            None,
        ),
        ("open_plan", "Open &plan…", "Load saved fill settings (*.plan.toml)", w.open_plan, "Ctrl+L", None),
        (
            "save_plan",
            "&Save plan…",
            "Save the fill settings as a *.plan.toml to reuse later",
            w.save_plan,
            std.Save,
            _SP.SP_DialogSaveButton,
        ),
        (
            "export",
            "&Export filled sheet…",
            "Write the filled sheet and its fill log (never over the source)",
            w.export,
            "Ctrl+E",
            _SP.SP_DriveFDIcon,
        ),
        ("quit", "&Quit", "Close Kinfill", w.close, std.Quit, None),
        ("undo", "&Undo apply", "Take back the last applied fill", w.undo, "Ctrl+Z", _SP.SP_ArrowBack),
        (
            "redo",
            "&Redo apply",
            "Apply again the fill taken back",
            w.redo,
            "Ctrl+Shift+Z",
            _SP.SP_ArrowForward,
        ),
        (
            "recovery",
            "Run &recovery test",
            "Hide known values, fill them for every k and compare errors",
            w.run_recovery_test,
            "Ctrl+T",
            _SP.SP_MediaPlay,
        ),
        (
            "preview",
            "&Preview fill",
            "Compute the fill and show it over the data; nothing changes yet",
            w.preview_fill,
            "F5",
            _SP.SP_BrowserReload,
        ),
        (
            "apply",
            "&Apply preview",
            "Write the previewed values into the working table",
            w.apply_fill,
            "Ctrl+Return",
            _SP.SP_DialogApplyButton,
        ),
        ("next_gap", "&Next gap", "Go to the next gap or marked cell in the table", w.next_gap, "F3", None),
        (
            "focus_setup",
            "Go to &setup",
            "Move the keyboard focus to the column setup",
            lambda: w.setup.table.setFocus(Qt.FocusReason.ShortcutFocusReason),
            "Alt+1",
            None,
        ),
        (
            "focus_table",
            "Go to &table",
            "Move the keyboard focus to the data table",
            lambda: w.table.setFocus(Qt.FocusReason.ShortcutFocusReason),
            "Alt+2",
            None,
        ),
        (
            "focus_panels",
            "Go to &panels",
            "Move the keyboard focus to the panels on the right",
            lambda: w.tabs.setFocus(Qt.FocusReason.ShortcutFocusReason),
            "Alt+3",
            None,
        ),
        ("about", "&About Kinfill", "Version, cautions and references", w.show_about, None, None),
    ]
    actions = {key: _action(w, key, text, tip, slot, sc, icon) for key, text, tip, slot, sc, icon in specs}
    return actions


def build_menus(w: MainWindow, a: dict[str, QAction]) -> None:
    """Fill the menu bar and the toolbar; sets ``w.recent_menu``."""
    bar = w.menuBar()
    bar.setObjectName("menuBar")
    file_menu = bar.addMenu("&File")
    file_menu.setObjectName("menuFile")
    file_menu.addActions([a["open"], a["open_options"]])
    file_menu.addMenu(w.recent_menu)
    w.recent_menu.setObjectName("menuRecent")
    file_menu.addSeparator()
    file_menu.addActions([a["open_plan"], a["save_plan"]])
    file_menu.addSeparator()
    file_menu.addAction(a["export"])
    file_menu.addSeparator()
    file_menu.addAction(a["quit"])
    edit_menu = bar.addMenu("&Edit")
    edit_menu.setObjectName("menuEdit")
    edit_menu.addActions([a["undo"], a["redo"]])
    fill_menu = bar.addMenu("F&ill")
    fill_menu.setObjectName("menuFill")
    fill_menu.addActions([a["recovery"], a["preview"], a["apply"]])
    view_menu = bar.addMenu("&View")
    view_menu.setObjectName("menuView")
    view_menu.addActions([a["next_gap"], a["focus_setup"], a["focus_table"], a["focus_panels"]])
    help_menu = bar.addMenu("&Help")
    help_menu.setObjectName("menuHelp")
    help_menu.addAction(a["about"])

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
    w.toolbar = tools
