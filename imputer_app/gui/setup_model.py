"""Qt-free column settings behind the setup panel, and the list model that shows them.

:class:`ColumnChoice` holds what the user chose for one column (role, kind, weight,
bounds, decimals); :func:`plan_from_choices` and :func:`choices_from_plan` convert
between those choices and a :class:`~imputer_app.plan.FillPlan`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import QObject, Qt

from imputer_app.gui.flat_model import FlatTableModel, Index
from imputer_app.plan import FillPlan

if TYPE_CHECKING:
    from imputer_app.sheets import Sheet


#: Column roles shown to the user, with their labels and meaning.
ROLES: dict[str, tuple[str, str]] = {
    "both": ("similarity + fill", "Defines which samples are similar, and its gaps are filled."),
    "similarity": ("similarity only", "Defines which samples are similar; its gaps stay empty."),
    "fill": ("fill only", "Its gaps are filled, but it does not count towards similarity."),
    "carried": ("carried", "Carried along untouched (sample IDs, dates, notes)."),
}
GROUP_ROLE = "group"
#: How the engine's default roles map to ours ("fill" there means similarity + fill).
_FROM_DEFAULT = {"similarity": "similarity", "fill": "both", "carried": "carried"}
HEADERS = ("Column", "Role", "Weight", "% gaps", "Limits", "Kind", "Unit")


@dataclass(frozen=True)
class ColumnChoice:
    """The user's settings for one column.

    Attributes
    ----------
    name, detected_kind, unit : str
        Facts from the sheet.
    gaps, censored, rows : int
        Counts of gap cells (missing or unreadable text), censored cells and rows.
    role : {"both", "similarity", "fill", "carried"}
    kind : {"number", "category"} or None
        A kind forced by the user (None keeps the detected kind).
    weight : float
        Distance weight, 0-10.
    lower, upper : float or None
        Bounds for filled numbers.
    decimals : int or None
        Rounding of filled numbers.
    reason : str
        Why the default plan carries the column ("computed by formulas ...", "free
        text ..."); "" for a column the default uses.
    group_like : bool
        A number column of a few whole values (block, plot): worth a category or group.
    """

    name: str
    detected_kind: str
    unit: str = ""
    gaps: int = 0
    censored: int = 0
    rows: int = 0
    role: str = "carried"
    kind: str | None = None
    weight: float = 1.0
    lower: float | None = None
    upper: float | None = None
    decimals: int | None = None
    reason: str = ""
    group_like: bool = False

    @property
    def shown_kind(self) -> str:
        """The kind in force (forced or detected)."""
        return self.kind or self.detected_kind

    @property
    def percent_gaps(self) -> float:
        """Share of rows with a gap, in percent."""
        return 100.0 * self.gaps / self.rows if self.rows else 0.0


def choices_for_sheet(sheet: Sheet, roles: Mapping[str, str]) -> list[ColumnChoice]:
    """One :class:`ColumnChoice` per sheet column with the engine's default ``roles`` and reasons."""
    from imputer_app.engine import default_role_reasons  # the engine loads on first use

    reasons = default_role_reasons(sheet)
    states = sheet.states
    info = {c.name: c for c in sheet.columns}
    out = []
    for name in map(str, sheet.frame.columns):
        column_states = states[name].astype(str) if name in states else None
        gaps = (
            int(column_states.isin(["missing", "text_in_number"]).sum()) if column_states is not None else 0
        )
        censored = int((column_states == "censored").sum()) if column_states is not None else 0
        col = info.get(name)
        out.append(
            ColumnChoice(
                name=name,
                detected_kind=col.kind if col else "number",
                unit=(col.unit or "") if col else "",
                gaps=gaps,
                censored=censored,
                rows=len(sheet.frame),
                role=_FROM_DEFAULT.get(roles.get(name, "carried"), "carried"),
                reason=reasons.get(name, ""),
                group_like=bool(getattr(col, "group_like", False)),
            )
        )
    return out


def plan_from_choices(choices: Sequence[ColumnChoice], base: FillPlan, group: str | None) -> FillPlan:
    """Build the plan the choices describe; ``base`` gives k and the general options.

    Raises
    ------
    PlanError
        When the choices do not make a valid plan.
    """
    cols = [c for c in choices if c.name != group]
    return base.replace(
        similarity_columns=tuple(c.name for c in cols if c.role in ("both", "similarity")),
        fill_columns=tuple(c.name for c in cols if c.role in ("both", "fill")),
        carried_columns=tuple(c.name for c in cols if c.role == "carried"),
        weights={c.name: c.weight for c in cols if c.weight != 1.0},
        group_column=group,
        bounds={c.name: (c.lower, c.upper) for c in cols if c.lower is not None or c.upper is not None},
        decimals={c.name: c.decimals for c in cols if c.decimals is not None},
        kinds={c.name: c.kind for c in choices if c.kind is not None},
    )


def choices_from_plan(
    choices: Sequence[ColumnChoice], plan: FillPlan, defaults: Mapping[str, str]
) -> list[ColumnChoice]:
    """Apply ``plan``'s column settings to ``choices`` (columns it leaves open use ``defaults``)."""
    similarity = set(plan.similarity_columns) if plan.similarity_columns is not None else None
    fill = set(plan.fill_columns) if plan.fill_columns is not None else None
    carried = set(plan.carried_columns)
    out = []
    for c in choices:
        default = _FROM_DEFAULT.get(defaults.get(c.name, "carried"), "carried")
        in_sim = (default in ("both", "similarity")) if similarity is None else c.name in similarity
        in_fill = (default in ("both", "fill")) if fill is None else c.name in fill
        if c.name in carried:
            in_sim = in_fill = False
        role = {(True, True): "both", (True, False): "similarity", (False, True): "fill"}.get(
            (in_sim, in_fill), "carried"
        )
        lower, upper = plan.bounds.get(c.name, (None, None))
        out.append(
            replace(
                c,
                role=role,
                kind=plan.kinds.get(c.name),
                weight=plan.weight(c.name),
                lower=lower,
                upper=upper,
                decimals=plan.decimals.get(c.name),
            )
        )
    return out


def role_in_plan(plan: FillPlan, name: str) -> str:
    """The role ``plan`` gives column ``name``: a key of :data:`ROLES`, or ``"group"``.

    The plan's column lists must be given (as the setup panel writes them).
    """
    if name == plan.group_column:
        return GROUP_ROLE
    in_sim, in_fill = name in (plan.similarity_columns or ()), name in (plan.fill_columns or ())
    return {(True, True): "both", (True, False): "similarity", (False, True): "fill"}.get(
        (in_sim, in_fill), "carried"
    )


def plan_with_role(plan: FillPlan, name: str, role: str, columns: Sequence[str]) -> FillPlan:
    """A copy of ``plan`` in which column ``name`` has ``role`` (a key of :data:`ROLES`).

    The column lists keep the sheet's order (``columns``); a group column given a role
    stops being the group column.

    Raises
    ------
    PlanError
        When the result is not a valid plan.

    Examples
    --------
    >>> p = FillPlan(similarity_columns=("a", "b"), fill_columns=("a", "b"))
    >>> q = plan_with_role(p, "a", "carried", ["a", "b"])
    >>> q.similarity_columns, q.fill_columns, q.carried_columns
    (('b',), ('b',), ('a',))
    """
    if role not in ROLES:
        raise ValueError(f"role must be one of {', '.join(ROLES)}; got {role!r}")
    sim = set(plan.similarity_columns or ()) - {name}
    fill = set(plan.fill_columns or ()) - {name}
    carried = set(plan.carried_columns) - {name}
    if role in ("both", "similarity"):
        sim.add(name)
    if role in ("both", "fill"):
        fill.add(name)
    if role == "carried":
        carried.add(name)

    def ordered(names: set[str]) -> tuple[str, ...]:
        return tuple(c for c in columns if c in names)

    return plan.replace(
        similarity_columns=ordered(sim),
        fill_columns=ordered(fill),
        carried_columns=ordered(carried),
        group_column=None if plan.group_column == name else plan.group_column,
    )


class ColumnListModel(FlatTableModel):
    """One row per sheet column: name, role, kind, weight, unit, % gaps, censored count."""

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._choices: list[ColumnChoice] = []
        self._group: str | None = None

    def set_choices(self, choices: Sequence[ColumnChoice], group: str | None) -> None:
        """Show new choices; keeps the row count when it is unchanged (selection survives)."""
        if len(choices) == len(self._choices) and [c.name for c in choices] == [
            c.name for c in self._choices
        ]:
            self._choices, self._group = list(choices), group
            if choices:
                self.dataChanged.emit(self.index(0, 0), self.index(len(choices) - 1, len(HEADERS) - 1))
            return
        self.beginResetModel()
        self._choices, self._group = list(choices), group
        self.endResetModel()

    def table_shape(self) -> tuple[int, int]:
        """One row per sheet column, one column per fact shown."""
        return len(self._choices), len(HEADERS)

    def role_label(self, choice: ColumnChoice) -> str:
        """Readable role of a column (the group column shows as such)."""
        return "group" if choice.name == self._group else ROLES[choice.role][0]

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        """Column facts as text; tooltips explain the role."""
        if not index.isValid():
            return None
        c = self._choices[index.row()]
        texts = (
            c.name,
            self.role_label(c),
            f"{c.weight:g}",
            f"{c.percent_gaps:.1f}",
            str(c.censored) if c.censored else "",
            c.shown_kind + ("*" if c.kind else ""),
            c.unit,
        )
        if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.AccessibleTextRole):
            text = texts[index.column()]
            if role == Qt.ItemDataRole.AccessibleTextRole:
                return f"{HEADERS[index.column()]}: {text or 'none'}"
            return text
        if role == Qt.ItemDataRole.ToolTipRole:
            role_tip = (
                "Donors are taken only from rows with the same value here."
                if c.name == self._group
                else (ROLES[c.role][1])
            )
            forced = " (set by you)" if c.kind else " (as read)"
            return (
                f"{c.name}: {self.role_label(c)}. {role_tip}\n"
                f"Kind {c.shown_kind}{forced}; weight {c.weight:g}; "
                f"{c.gaps} gaps of {c.rows} rows; {c.censored} entries beyond a limit."
                + (f"\nCarried by default: {c.reason}." if c.reason else "")
                + ("\nA few whole values: can serve as a category or a group column." if c.group_like else "")
            )
        if role == Qt.ItemDataRole.TextAlignmentRole and index.column() in (2, 3, 4):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        return None

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ) -> Any:
        """Header names."""
        if orientation == Qt.Orientation.Horizontal and role in (
            Qt.ItemDataRole.DisplayRole,
            Qt.ItemDataRole.AccessibleTextRole,
        ):
            return HEADERS[section]
        if orientation == Qt.Orientation.Horizontal and role == Qt.ItemDataRole.ToolTipRole:
            return {
                "% gaps": "Share of rows with an empty or unreadable cell",
                "Limits": "Entries beyond a limit of detection, such as <0.02",
                "Weight": "How much the column counts towards similarity (0 leaves it out)",
                "Kind": "* marks a kind you set",
            }.get(HEADERS[section])
        return None
