"""Qt-free column settings behind the setup panel, and the list model that shows them.

:class:`ColumnChoice` holds what the user chose for one column (role, kind, weight,
bounds, decimals); :func:`plan_from_choices` and :func:`choices_from_plan` convert
between those choices and a :class:`~imputer_app.plan.FillPlan`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
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
#: The facts shown side by side; weight, unit and limits are in the tooltip and the detail line.
HEADERS = ("Column", "Role", "Gaps", "Kind")
#: Short role labels for the narrow column list (the editors show the full ones).
SHORT_ROLES = {
    "both": "sim + fill",
    "similarity": "sim only",
    "fill": "fill only",
    "carried": "carried",
    GROUP_ROLE: "group",
}
#: Short kind labels for the column list.
SHORT_KINDS = {"number": "num", "category": "cat", "identifier": "ID", "date": "date", "empty": "empty"}
#: The group-by rule: how many different values a group column may have, how many rows
#: each value needs on average, and the share of rows that must have a value.
GROUP_MAX_VALUES, GROUP_MIN_ROWS_PER_VALUE, GROUP_MIN_FILLED = 50, 3, 0.5
GROUP_RULE = (
    f"Offered: columns of text or whole numbers with 2 to {GROUP_MAX_VALUES} different values, "
    f"each value in {GROUP_MIN_ROWS_PER_VALUE} rows or more on average, and a value in at least "
    f"{GROUP_MIN_FILLED:.0%} of the rows (so not sample IDs, dates, measurements or notes)."
)


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
    groupable : bool
        The column's values make groups of donors (see :data:`GROUP_RULE`).
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
    groupable: bool = False

    @property
    def shown_kind(self) -> str:
        """The kind in force (forced or detected)."""
        return self.kind or self.detected_kind

    @property
    def percent_gaps(self) -> float:
        """Share of rows with a gap, in percent."""
        return 100.0 * self.gaps / self.rows if self.rows else 0.0


def state_counts(column_states: pd.Series) -> dict[str, int]:
    """How many cells of a column are in each state (its ``Sheet.states`` column).

    A sheet's states are categorical: counted from their integer codes, which takes a
    few milliseconds at a million rows, where comparing a million texts would hold
    Python's lock (and stall the window) for a tenth of a second.
    """
    if isinstance(column_states.dtype, pd.CategoricalDtype):
        codes = column_states.cat.codes.to_numpy()
        categories = column_states.cat.categories
        counts = np.bincount(codes[codes >= 0], minlength=len(categories))
        return {str(state): int(count) for state, count in zip(categories, counts, strict=True)}
    texts = column_states.astype(str)
    return {str(state): int(count) for state, count in texts.value_counts().items()}


def choices_for_sheet(sheet: Sheet, roles: Mapping[str, str]) -> list[ColumnChoice]:
    """One :class:`ColumnChoice` per sheet column with the engine's default ``roles`` and reasons."""
    from imputer_app.engine import default_role_reasons  # the engine loads on first use

    reasons = default_role_reasons(sheet)
    states = sheet.states
    info = {c.name: c for c in sheet.columns}
    out = []
    for name in map(str, sheet.frame.columns):
        counts = state_counts(states[name]) if name in states else {}
        gaps = counts.get("missing", 0) + counts.get("text_in_number", 0)
        censored = counts.get("censored", 0)
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
                groupable=makes_groups(sheet.frame[name], col.kind if col else "number"),
            )
        )
    return out


def makes_groups(values: pd.Series, kind: str) -> bool:
    """True when a column can group donors: few values, each repeated (see :data:`GROUP_RULE`).

    Parameters
    ----------
    values : Series
        The column as read (gaps are NaN or None).
    kind : str
        Its kind as read; dates never group.

    Examples
    --------
    >>> makes_groups(pd.Series([1.0, 2.0, 1.0, 2.0, 1.0, 2.0]), "number")
    True
    >>> makes_groups(pd.Series(["S1", "S2", "S3", "S4"]), "identifier")
    False
    """
    if kind in ("date", "empty"):
        return False
    present = values.dropna()
    if len(present) < GROUP_MIN_FILLED * max(len(values), 1) or len(present) == 0:
        return False
    if pd.api.types.is_numeric_dtype(present):
        numbers = present.to_numpy(dtype=float)
        if not np.array_equal(numbers, np.round(numbers)):
            return False
    elif not (pd.api.types.is_string_dtype(present) or isinstance(present.dtype, pd.CategoricalDtype)):
        return False  # datetimes, timedeltas
    levels = present.astype(str).nunique()
    return bool(2 <= levels <= GROUP_MAX_VALUES and len(present) >= GROUP_MIN_ROWS_PER_VALUE * levels)


def plan_from_choices(choices: Sequence[ColumnChoice], base: FillPlan, group: str | None) -> FillPlan:
    """Build the plan the choices describe; ``base`` gives k and the general options.

    Raises
    ------
    PlanError
        When the choices do not make a valid plan.
    """
    cols = [c for c in choices if c.name != group]
    numbers = [c for c in cols if c.shown_kind == "number"]
    return base.replace(
        similarity_columns=tuple(c.name for c in cols if c.role in ("both", "similarity")),
        fill_columns=tuple(c.name for c in cols if c.role in ("both", "fill")),
        carried_columns=tuple(c.name for c in cols if c.role == "carried"),
        weights={c.name: c.weight for c in cols if c.weight != 1.0},
        group_column=group,
        # bounds and decimals mean nothing for a category column (its editors are disabled)
        bounds={c.name: (c.lower, c.upper) for c in numbers if c.lower is not None or c.upper is not None},
        decimals={c.name: c.decimals for c in numbers if c.decimals is not None},
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


def short_role(choice: ColumnChoice, group: str | None) -> str:
    """The role as the column list shows it, with the weight when it is not 1.

    >>> short_role(ColumnChoice("pH", "number", role="both", weight=2.0), None)
    'sim + fill ×2'
    """
    if choice.name == group:
        return SHORT_ROLES[GROUP_ROLE]
    text = SHORT_ROLES[choice.role]
    weighs = choice.role in ("both", "similarity") and choice.weight != 1.0
    return f"{text} ×{choice.weight:g}" if weighs else text


def detail_line(choice: ColumnChoice, group: str | None) -> str:
    """Everything about one column in a line: the facts the narrow list leaves out.

    >>> detail_line(ColumnChoice("NO3", "number", "mg/L", gaps=3, censored=2, rows=60, role="fill"), None)
    'NO3 (mg/L): fill only · number · weight 1 · 3 gaps of 60 rows (5.0%) · 2 beyond a limit'
    """
    role = "group column" if choice.name == group else ROLES[choice.role][0]
    unit = f" ({choice.unit})" if choice.unit else ""
    kind = choice.shown_kind + (" (set by you)" if choice.kind else "")
    parts = [f"{choice.name}{unit}: {role}", kind, f"weight {choice.weight:g}"]
    parts.append(f"{choice.gaps:,} gaps of {choice.rows:,} rows ({choice.percent_gaps:.1f}%)")
    if choice.censored:
        parts.append(f"{choice.censored:,} beyond a limit")
    return " · ".join(parts)


class ColumnListModel(FlatTableModel):
    """One row per sheet column: name, role (with a weight other than 1), % gaps and kind.

    Unit, weight and entries beyond a limit are in each row's tooltip (and the setup
    panel's detail line), so that the four essentials fit a narrow panel side by side.
    """

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
        """Column facts as short text; tooltips and screen readers get them in full."""
        if not index.isValid():
            return None
        c = self._choices[index.row()]
        if role == Qt.ItemDataRole.DisplayRole:
            return (
                c.name,
                short_role(c, self._group),
                f"{c.percent_gaps:.1f}%",
                SHORT_KINDS.get(c.shown_kind, c.shown_kind) + ("*" if c.kind else ""),
            )[index.column()]
        if role == Qt.ItemDataRole.AccessibleTextRole:
            full = (c.name, self.role_label(c), f"{c.percent_gaps:.1f} percent", c.shown_kind)
            return f"{HEADERS[index.column()]}: {full[index.column()]}"
        if role == Qt.ItemDataRole.ToolTipRole:
            role_tip = (
                "Donors are taken only from rows with the same value here."
                if c.name == self._group
                else (ROLES[c.role][1])
            )
            return (
                f"{detail_line(c, self._group)}\n{role_tip}"
                + (f"\nCarried by default: {c.reason}." if c.reason else "")
                + ("\nA few whole values: can serve as a category or a group column." if c.group_like else "")
            )
        if role == Qt.ItemDataRole.TextAlignmentRole and index.column() == 2:
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
                "Column": "The sheet's column; its unit, weight and limits are in its tooltip",
                "Role": "sim = similarity (defines similar samples), fill = its gaps are filled; "
                "×2 = the column's weight when it is not 1",
                "Gaps": "Share of rows with an empty or unreadable cell",
                "Kind": "num = numbers, cat = categories, ID = identifiers; * marks a kind you set",
            }.get(HEADERS[section])
        return None
