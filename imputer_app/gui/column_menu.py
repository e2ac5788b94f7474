"""The data table's column-header menu: set a column's role without leaving the table.

Right-clicking a column header offers the four roles (similarity + fill, similarity
only, fill only, carried) with the column's current one checked. A choice goes to
:meth:`Session.set_plan` like every other edit of the plan, so the setup panel, the
gap map and the actions all follow from the session's ``"plan"`` event.
"""

from __future__ import annotations

from PySide6.QtGui import QAction, QActionGroup
from PySide6.QtWidgets import QMenu, QWidget

from imputer_app.errors import KinfillError
from imputer_app.gui.setup_model import GROUP_ROLE, ROLES, plan_with_role, role_in_plan
from imputer_app.gui.state import Session


def role_menu(parent: QWidget, session: Session, name: str, columns: list[str]) -> QMenu:
    """A menu that sets column ``name``'s role in ``session``'s plan.

    Parameters
    ----------
    parent : QWidget
        Owner of the menu.
    session : Session
        Holder of the plan; the choice is written there.
    name : str
        The column whose header was clicked.
    columns : list of str
        The sheet's columns in order (the plan's lists keep this order).
    """
    menu = QMenu(parent)
    menu.setObjectName("columnRoleMenu")
    menu.setAccessibleName(f"Role of {name}")
    title = menu.addAction(f"Role of {name}")
    title.setEnabled(False)
    current = role_in_plan(session.plan, name)
    group = QActionGroup(menu)
    group.setExclusive(True)
    for key, (label, tip) in ROLES.items():
        action = QAction(label, menu)
        action.setObjectName(f"roleAction_{key}")
        action.setToolTip(tip)
        action.setStatusTip(tip)
        action.setCheckable(True)
        action.setChecked(key == current)
        action.setData(key)
        action.setEnabled(session.has_sheet)
        action.triggered.connect(lambda _c=False, k=key: set_role(session, name, k, columns))
        group.addAction(action)
        menu.addAction(action)
    menu.setToolTipsVisible(True)
    if current == GROUP_ROLE:
        note = menu.addAction("(now the group column: a role here ends the grouping)")
        note.setEnabled(False)
    return menu


def set_role(session: Session, name: str, role: str, columns: list[str]) -> str | None:
    """Give column ``name`` ``role`` in the session's plan; return the problem, or None when done."""
    try:
        session.set_plan(plan_with_role(session.plan, name, role, columns))
    except KinfillError as exc:
        return str(exc)
    return None
