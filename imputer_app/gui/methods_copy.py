"""The "Copy methods text" action: the methods paragraph of the shown fill, to the clipboard."""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6.QtGui import QGuiApplication

if TYPE_CHECKING:
    from PySide6.QtWidgets import QStatusBar

    from imputer_app.gui.state import Session

NOTHING_TEXT = "No fill yet: preview or apply a fill, then copy its methods text."
COPIED_TEXT = "Methods text copied: paste it into your report."


def methods_text(session: Session) -> str | None:
    """The methods paragraph of the preview, else of the applied fill (None without a fill).

    Uses the session's recovery report, so the paragraph says how k was chosen.
    """
    result = session.preview if session.preview is not None else session.applied
    if result is None:
        return None
    from imputer_app.sheets import methods_paragraph

    return methods_paragraph(result, result.plan, session.report, session.sheet)


def copy_methods_text(session: Session, status: QStatusBar | None = None) -> str | None:
    """Put :func:`methods_text` on the clipboard and say so in ``status``; return the text."""
    text = methods_text(session)
    if text is not None:
        QGuiApplication.clipboard().setText(text)
    if status is not None:
        status.showMessage(COPIED_TEXT if text is not None else NOTHING_TEXT, 5000)
    return text
