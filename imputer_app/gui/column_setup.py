"""The setup panel: what each column does, and how donors are found and combined.

Top: one row per sheet column (role, kind, weight, unit, % gaps, entries beyond a
limit). Below it, editors for the selected column(s) — several columns can be set at
once — and the fill settings (k, scaling, neighbour weighting, numeric rule, group
column, censored handling, cells without donors). The plan itself lives in the
:class:`~imputer_app.gui.state.Session`: every edit is written there, and the panel
redraws whenever the session's plan changes (whoever changed it).
"""

from __future__ import annotations

import itertools
from dataclasses import replace
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import QItemSelectionModel, Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDoubleSpinBox,
    QFormLayout,
    QGroupBox,
    QHeaderView,
    QLineEdit,
    QSpinBox,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from imputer_app.errors import KinfillError
from imputer_app.gui.setup_model import (
    GROUP_RULE,
    ROLES,
    ColumnChoice,
    ColumnListModel,
    choices_from_plan,
    detail_line,
    plan_from_choices,
)
from imputer_app.gui.sheet_facts import column_choices
from imputer_app.gui.state import Session
from imputer_app.gui.widgets import buddy, compact, named, row_height, text_label
from imputer_app.plan import FillPlan
from imputer_app.words import CHOICE_WORDS, SETTING_TIPS

if TYPE_CHECKING:
    from imputer_app.gui.sheet_facts import SheetFacts
    from imputer_app.sheets import Sheet

_MULTIPLE = "(several)"


class ColumnSetup(QWidget):
    """Per-column roles and the fill settings of ``session``'s plan.

    Edits go to :meth:`Session.set_plan`; ``plan_changed(FillPlan)`` passes on each
    ``"plan"`` event of the session (a new plan, whoever made it, or a change of
    :attr:`Session.plan_problem`) with the session's plan. Without a ``session`` the
    panel makes its own.
    """

    plan_changed = Signal(object)

    def __init__(self, parent: QWidget | None = None, session: Session | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("columnSetup")
        self.setAccessibleName("Column setup")
        self.session = session if session is not None else Session()
        self._choices: list[ColumnChoice] = []
        self._defaults: dict[str, str] = {}
        self._roles: dict[str, str] | None = None
        self._facts: SheetFacts | None = None  # made while the sheet was read
        self._group: str | None = None
        self._quiet = False
        self._writing = False  # True while this panel writes the plan (no redraw of its own edit)
        self._build()
        self._enable_editors()
        self.session.subscribe(self._on_session)

    # ------------------------------------------------------------------ layout
    def _build(self) -> None:
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        self.model = ColumnListModel(self)
        self.table = named(
            QTableView(self),
            "setupTable",
            "Columns of the sheet",
            "Select one or more columns to set them below.",
        )
        self.table.setModel(self.model)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.verticalHeader().hide()
        self.table.verticalHeader().setDefaultSectionSize(row_height(self))
        self.table.setTabKeyNavigation(False)
        # Name, role, gaps and kind side by side without a sideways scroll: the short
        # facts take what they need, the name the rest (elided, whole in its tooltip).
        header = self.table.horizontalHeader()
        header.setStretchLastSection(False)
        header.setMinimumSectionSize(24)
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        self.table.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.table.setTextElideMode(Qt.TextElideMode.ElideMiddle)
        self.table.selectionModel().selectionChanged.connect(self._show_selected)
        layout.addWidget(self.table, 3)
        self.detail = text_label(
            self,
            "columnDetail",
            "Selected column in full",
            "Unit, role, kind, weight, gaps and entries beyond a limit of the selected column",
            selectable=True,
        )
        layout.addWidget(self.detail)
        layout.addWidget(self._build_column_box())
        layout.addWidget(self._build_fill_box())
        self.message = text_label(
            self, "setupMessage", "Setup problem", "Why the settings cannot be used as they are."
        )
        layout.addWidget(self.message)
        chain = self.focus_chain()
        for first, second in itertools.pairwise(chain):
            QWidget.setTabOrder(first, second)

    # Every Alt+letter of the window has one owner: the menus (F, E, I, V, H), the tabs
    # (R, D, N) and the recovery panel (T, C, B, O, P, M, Y) keep theirs; fields left
    # without one are reached with Tab.
    def _build_column_box(self) -> QGroupBox:
        box = named(
            QGroupBox("Selected column", self),
            "columnBox",
            "Selected column settings",
            "Settings of the column(s) selected above.",
        )
        self.column_box = box
        form = QFormLayout(box)
        self.role_combo = _combo(box, "roleCombo", "Role", "What the selected column(s) do in the fill.")
        for key, (label, tip) in ROLES.items():
            self.role_combo.addItem(label, key)
            self.role_combo.setItemData(self.role_combo.count() - 1, tip, Qt.ItemDataRole.ToolTipRole)
        self.kind_combo = _combo(box, "kindCombo", "Kind", "Treat the column as numbers or as categories.")
        self.kind_combo.addItem("as read", None)
        self.kind_combo.addItem("number", "number")
        self.kind_combo.addItem("category", "category")
        self.weight_spin = named(
            QDoubleSpinBox(box),
            "weightSpin",
            "Weight",
            "How much the column counts towards similarity; 0 leaves it out.",
        )
        self.weight_spin.setRange(0.0, 10.0)
        self.weight_spin.setSingleStep(0.5)
        self.weight_spin.setDecimals(1)
        self.lower_edit = _bound_edit(
            box, "lowerEdit", "Lower bound", "Filled numbers never go below this (empty: no bound)."
        )
        self.upper_edit = _bound_edit(
            box, "upperEdit", "Upper bound", "Filled numbers never go above this (empty: no bound)."
        )
        self.decimals_spin = named(
            QSpinBox(box),
            "decimalsSpin",
            "Decimals",
            "Round filled numbers to this many decimals; 'by rounding' follows the Rounding setting.",
        )
        self.decimals_spin.setRange(-1, 15)
        self.decimals_spin.setSpecialValueText("by rounding")
        self.decimals_spin.setValue(-1)
        for label, widget in (
            ("Ro&le", self.role_combo),
            ("Kind", self.kind_combo),
            ("&Weight", self.weight_spin),
            ("Lower bound", self.lower_edit),
            ("&Upper bound", self.upper_edit),
            ("Decimals", self.decimals_spin),
        ):
            form.addRow(buddy(label, widget, box), widget)
        self.role_combo.activated.connect(lambda _i: self._edit_selected(role=self.role_combo.currentData()))
        self.kind_combo.activated.connect(lambda _i: self._edit_selected(kind=self.kind_combo.currentData()))
        self.weight_spin.valueChanged.connect(lambda v: self._edit_selected(weight=float(v)))
        self.lower_edit.editingFinished.connect(lambda: self._edit_bound("lower", self.lower_edit))
        self.upper_edit.editingFinished.connect(lambda: self._edit_bound("upper", self.upper_edit))
        self.decimals_spin.valueChanged.connect(
            lambda v: self._edit_selected(decimals=None if v < 0 else int(v))
        )
        return box

    def _build_fill_box(self) -> QGroupBox:
        box = named(
            QGroupBox("Fill settings", self),
            "fillBox",
            "Fill settings",
            "How donors are found and how their values are combined.",
        )
        form = QFormLayout(box)
        self.k_spin = named(
            QSpinBox(box),
            "kSpin",
            "k, donors per cell",
            "Number of nearest rows (donors) used for every filled cell.",
        )
        self.k_spin.setRange(1, 999)
        self.k_spin.valueChanged.connect(self._write)
        form.addRow(buddy("&k (donors per cell)", self.k_spin, box), self.k_spin)
        self.group_combo = _combo(
            box, "groupCombo", "Group column", f"Take donors only from rows of the same group. {GROUP_RULE}"
        )
        self.group_combo.activated.connect(self._on_group)
        form.addRow(buddy("&Group by", self.group_combo, box), self.group_combo)
        self.choice_combos: dict[str, QComboBox] = {}
        titles = {
            "scaling": "&Scaling",
            "neighbour_weighting": "Donor weighting",
            "numeric_rule": "Numbers from",
            "censored": "Below &a limit",
            "no_donor": "No donor found",
            "rounding": "Rounding",
        }
        for setting, labels in CHOICE_WORDS.items():
            combo = _combo(box, f"{setting}Combo", titles[setting].replace("&", ""), SETTING_TIPS[setting])
            for value, words in labels.items():
                combo.addItem(words.label, value)
                combo.setItemData(combo.count() - 1, words.explanation, Qt.ItemDataRole.ToolTipRole)
            combo.activated.connect(self._write)
            self.choice_combos[setting] = combo
            form.addRow(buddy(titles[setting], combo, box), combo)
        return box

    # ------------------------------------------------------------------ public
    def focus_chain(self) -> list[QWidget]:
        """The panel's controls in keyboard (Tab) order: column list, column editors, fill settings."""
        editors: list[QWidget] = [self.role_combo, self.kind_combo, self.weight_spin]
        editors += [self.lower_edit, self.upper_edit, self.decimals_spin, self.k_spin, self.group_combo]
        return [self.table, *editors, *self.choice_combos.values()]

    def set_sheet(
        self, sheet: Sheet, plan: FillPlan | None = None, roles: dict[str, str] | None = None
    ) -> None:
        """Load ``sheet`` into the session; the panel then shows its columns.

        Parameters
        ----------
        sheet : Sheet
            The sheet as read.
        plan : FillPlan, optional
            Settings to start with (column settings it leaves open keep the defaults).
        roles : dict, optional
            Default role per column; computed by ``engine.default_roles`` when omitted.
        """
        self._roles = roles
        self.session.load(sheet, plan=plan)

    def use_facts(self, facts: SheetFacts | None) -> None:
        """Take the column list of the sheet about to be loaded, made in the reading worker."""
        self._facts = facts

    def set_plan(self, plan: FillPlan) -> None:
        """Make ``plan`` the session's plan (its column settings are matched by name)."""
        self.session.set_plan(plan)  # the panel redraws and writes back the plan as resolved

    def set_k(self, k: int) -> None:
        """Set k in the session's plan (as "Use this k" of the recovery test does)."""
        self.session.set_k(k)

    def plan(self) -> FillPlan | None:
        """The session's plan, or None while no sheet is shown or the settings are not valid."""
        if not self._choices or self.session.plan_problem is not None:
            return None
        return self.session.plan

    def choices(self) -> list[ColumnChoice]:
        """The column settings shown (for tests)."""
        return list(self._choices)

    def select_columns(self, names: list[str]) -> None:
        """Select the setup rows of ``names`` (others are deselected)."""
        selection = self.table.selectionModel()
        selection.clearSelection()
        flags = QItemSelectionModel.SelectionFlag.Select | QItemSelectionModel.SelectionFlag.Rows
        for row, choice in enumerate(self._choices):
            if choice.name in names:
                selection.select(self.model.index(row, 0), flags)
                selection.setCurrentIndex(
                    self.model.index(row, 0), QItemSelectionModel.SelectionFlag.NoUpdate
                )

    # ----------------------------------------------------------------- session
    def _on_session(self, event: str) -> None:
        if event == "sheet" and self.session.sheet is not None:
            self._show_sheet(self.session.sheet)
        elif event == "plan":
            if not self._writing:
                self._show_plan(self.session.plan)
            self.plan_changed.emit(self.session.plan)

    def _show_sheet(self, sheet: Sheet) -> None:
        (roles, self._roles), (facts, self._facts) = (self._roles, None), (self._facts, None)
        roles, self._choices = column_choices(sheet, facts, roles)
        self._defaults = dict(roles)
        self._quiet = True
        try:
            self.k_spin.setMaximum(max(1, len(sheet.frame) - 1))
        finally:
            self._quiet = False
        self._show_plan(self.session.plan)
        if self._choices:
            first = next((c.name for c in self._choices if c.role in ("both", "fill")), self._choices[0].name)
            self.select_columns([first])

    def _show_plan(self, plan: FillPlan) -> None:
        """Draw ``plan`` (its column settings matched by name), then write back what it resolves to."""
        self._quiet = True
        try:
            names = [c.name for c in self._choices]
            self._group = plan.group_column if plan.group_column in names else None
            self._choices = choices_from_plan(self._choices, plan, self._defaults)
            self.k_spin.setValue(plan.k)
            for setting, combo in self.choice_combos.items():
                combo.setCurrentIndex(max(0, combo.findData(getattr(plan, setting))))
            self._fill_group_combo()
            self.model.set_choices(self._choices, self._group)
            self._show_selected()
        finally:
            self._quiet = False
        self._write()

    # ----------------------------------------------------------------- editing
    def _selected_rows(self) -> list[int]:
        return sorted({i.row() for i in self.table.selectionModel().selectedRows()})

    def _edit_selected(self, **changes: Any) -> None:
        if self._quiet:
            return
        rows = self._selected_rows()
        if not rows:
            return
        for row in rows:
            self._choices[row] = replace(self._choices[row], **changes)
        self.model.set_choices(self._choices, self._group)
        self._write()

    def _edit_bound(self, side: str, edit: QLineEdit) -> None:
        text = edit.text().strip().replace(",", ".")
        if text == _MULTIPLE:
            return
        try:
            value = float(text) if text else None
        except ValueError:
            self.message.setText(f"⚠ {side} bound must be a number or empty; got {edit.text()!r}")
            return
        self._edit_selected(**{side: value})

    def _on_group(self, _index: int) -> None:
        self._group = self.group_combo.currentData()
        self.model.set_choices(self._choices, self._group)
        self._show_selected()
        self._write()

    def _fill_group_combo(self) -> None:
        self.group_combo.clear()
        self.group_combo.addItem("(no groups)", None)
        for c in self._choices:
            if c.groupable or c.name == self._group:  # a plan's group column stays on offer
                self.group_combo.addItem(c.name, c.name)
        self.group_combo.setCurrentIndex(max(0, self.group_combo.findData(self._group)))

    def _show_selected(self, *_args: Any) -> None:
        rows = self._selected_rows()
        chosen = [self._choices[r] for r in rows]
        self._quiet = True
        try:
            names = ", ".join(c.name for c in chosen[:3]) + (" …" if len(chosen) > 3 else "")
            self.column_box.setTitle(f"Selected: {names}" if chosen else "Selected column (pick one above)")
            several = f"{len(chosen)} columns selected" if chosen else ""
            self.detail.setText(detail_line(chosen[0], self._group) if len(chosen) == 1 else several)
            self.role_combo.setCurrentIndex(_common_index(self.role_combo, [c.role for c in chosen]))
            self.kind_combo.setCurrentIndex(_common_index(self.kind_combo, [c.kind for c in chosen]))
            weights = {c.weight for c in chosen}
            self.weight_spin.setValue(weights.pop() if len(weights) == 1 else 1.0)
            for edit, side in ((self.lower_edit, "lower"), (self.upper_edit, "upper")):
                values = {getattr(c, side) for c in chosen}
                edit.setText(_MULTIPLE if len(values) > 1 else _bound_text(values.pop() if values else None))
            decimals = {c.decimals for c in chosen}
            value = decimals.pop() if len(decimals) == 1 else None
            self.decimals_spin.setValue(-1 if value is None else value)
        finally:
            self._quiet = False
        self._enable_editors()

    def _enable_editors(self) -> None:
        rows = self._selected_rows()
        grouped = any(self._choices[r].name == self._group for r in rows)
        for editor in (self.role_combo, self.kind_combo, self.weight_spin):
            editor.setEnabled(bool(rows) and not grouped)
        # bounds and decimals mean nothing for a category column
        numbers = bool(rows) and not grouped and all(self._choices[r].shown_kind == "number" for r in rows)
        for widget in (self.lower_edit, self.upper_edit, self.decimals_spin):
            widget.setEnabled(numbers)

    def _write(self, *_args: Any) -> None:
        """Write the plan the controls describe into the session (or the reason there is none)."""
        if self._quiet or not self._choices:
            return
        base = self.session.plan.replace(
            k=self.k_spin.value(), **{s: c.currentData() for s, c in self.choice_combos.items()}
        )
        self._writing = True
        try:
            try:
                plan = plan_from_choices(self._choices, base, self._group)
            except KinfillError as exc:
                self.message.setText(f"⚠ {exc}")
                self.session.set_plan_problem(str(exc))
                return
            self.message.setText(_summary(self._choices, self._group))
            self.session.set_plan(plan)
            self.session.set_plan_problem(None)
        finally:
            self._writing = False


# ------------------------------------------------------------------- helpers
def _combo(parent: QWidget, name: str, accessible: str, tip: str) -> QComboBox:
    # Long choice labels must not force the panel wide; the open list shows them whole.
    return compact(named(QComboBox(parent), name, accessible, tip))


def _bound_edit(parent: QWidget, name: str, accessible: str, tip: str) -> QLineEdit:
    edit = named(QLineEdit(parent), name, accessible, tip)
    edit.setPlaceholderText("no bound")
    edit.setClearButtonEnabled(True)
    return edit


def _bound_text(value: float | None) -> str:
    return "" if value is None else f"{value:g}"


def _common_index(combo: QComboBox, values: list[Any]) -> int:
    """Index of the value shared by all selected columns, or -1 (blank) when they differ."""
    if not values or len(set(values)) != 1:
        return -1
    return combo.findData(values[0])


def _summary(choices: list[ColumnChoice], group: str | None) -> str:
    sim = sum(c.role in ("both", "similarity") and c.name != group for c in choices)
    fill = [c for c in choices if c.role in ("both", "fill") and c.name != group]
    gaps = sum(c.gaps for c in fill)
    text = f"{sim} similarity columns, {len(fill)} fill columns ({gaps:,} gaps to fill)"
    return text + (f", donors from the same {group}" if group else "")
