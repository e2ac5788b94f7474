"""The questions asked around a fill: export a preview, leave an unexported fill, a k too large.

Each is one ``QMessageBox`` built here and answered with a short word, so tests replace
:func:`choose` and never block on a modal window.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Protocol

from PySide6.QtWidgets import QMessageBox, QStatusBar, QWidget

if TYPE_CHECKING:
    from imputer_app.gui.state import Session
    from imputer_app.sheets import Sheet

TITLE = "Kinfill"

#: Answers of :func:`ask_export_preview`.
APPLY_AND_EXPORT, EXPORT_APPLIED, CANCEL = "apply", "applied", "cancel"
#: Answers of :func:`ask_unexported`.
EXPORT, DISCARD = "export", "discard"

_Role = QMessageBox.ButtonRole


def choose(parent: QWidget, text: str, buttons: Sequence[tuple[str, str, QMessageBox.ButtonRole]]) -> str:
    """Ask ``text`` with one button per ``(answer, label, role)``; the answer of the one pressed.

    The last button is the default and Escape's answer (always the safe one).
    """
    box = QMessageBox(QMessageBox.Icon.Question, TITLE, text, QMessageBox.StandardButton.NoButton, parent)
    made = {box.addButton(label, role): answer for answer, label, role in buttons}
    last = list(made)[-1]
    box.setDefaultButton(last)
    box.setEscapeButton(last)
    box.exec()
    clicked = box.clickedButton()
    return next((answer for button, answer in made.items() if button is clicked), buttons[-1][0])


def ask_export_preview(parent: QWidget, preview_k: int, applied_k: int | None) -> str:
    """Export while a preview is shown: apply it first, export the applied fill, or cancel."""
    buttons: list[tuple[str, str, QMessageBox.ButtonRole]] = [
        (APPLY_AND_EXPORT, f"Apply preview (k = {preview_k}) and export", _Role.AcceptRole)
    ]
    if applied_k is None:
        text = f"The table shows a preview at k = {preview_k}; nothing is applied yet."
    else:
        text = (
            f"The table shows a preview at k = {preview_k}, but the applied fill (what Export writes) "
            f"was made with k = {applied_k}."
        )
        buttons.append((EXPORT_APPLIED, f"Export the applied fill (k = {applied_k})", _Role.AcceptRole))
    buttons.append((CANCEL, "Cancel", _Role.RejectRole))
    return choose(parent, text, buttons)


def ask_unexported(parent: QWidget, closing: bool) -> str:
    """An applied fill was not exported: export it, discard it, or cancel."""
    action = "Close Kinfill" if closing else "Open another sheet"
    text = f"The applied fill has not been exported. Export it before you {action.lower()}?"
    return choose(
        parent,
        text,
        [
            (EXPORT, "Export…", _Role.AcceptRole),
            (DISCARD, f"Discard and {action.split()[0].lower()}", _Role.DestructiveRole),
            (CANCEL, "Cancel", _Role.RejectRole),
        ],
    )


def ask_large_k(parent: QWidget, message: str, used: int) -> bool:
    """K exceeds the donors available: set k to ``used`` and preview (True), or cancel."""
    answer = choose(
        parent,
        message,
        [("use", f"Use k = {used} and preview", _Role.AcceptRole), (CANCEL, "Cancel", _Role.RejectRole)],
    )
    return answer == "use"


# ------------------------------------------------------------- the window's guards
class _Window(Protocol):
    session: Session
    interactive: bool
    _after_export: Callable[[], object] | None

    def export(self, path: str | Path | None = None) -> bool: ...

    def statusBar(self) -> QStatusBar: ...


def may_leave(window: _Window, then: Callable[[], object], closing: bool = False) -> bool:
    """True when nothing unexported would be lost, or the user agrees to discard it.

    When the user picks Export, the export starts and ``then`` runs once it is written
    (False is returned: leaving waits for the export).
    """
    if not window.session.dirty:
        return True
    answer = ask_unexported(window, closing) if window.interactive else DISCARD  # type: ignore[arg-type]
    if answer == EXPORT:
        window._after_export = then
        if not window.export():
            window._after_export = None  # no export started (its file dialog was cancelled)
        return False
    return answer == DISCARD


def settle_preview(window: _Window) -> bool:
    """Before an export: decide what happens to a preview on screen (True: go on exporting)."""
    session = window.session
    if session.preview is None:
        return True
    applied_k = session.applied.plan.k if session.applied is not None else None
    answer = ask_export_preview(window, session.preview.plan.k, applied_k)  # type: ignore[arg-type]
    if answer == APPLY_AND_EXPORT:
        session.apply()
    return answer != CANCEL


def k_fits(window: _Window, sheet: Sheet) -> bool:
    """Before a fill: warn when k exceeds the donors available (True: go on with the session's k)."""
    from imputer_app.validation import check_k

    check = check_k(sheet, window.session.plan)
    if not check.too_large:
        return True
    if window.interactive and not ask_large_k(window, check.message(), check.used):  # type: ignore[arg-type]
        return False
    window.session.set_k(check.used)
    window.statusBar().showMessage(
        f"k = {check.asked} was more than the donors available; k = {check.used} is used."
    )
    return True
