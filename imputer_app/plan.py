"""The settings of a fill: a frozen, validated dataclass stored as TOML.

A :class:`FillPlan` says which columns define similar samples, which columns to fill,
how much each column counts and how donors' values are combined. It holds column
*names* only; which names exist is checked when the plan meets a sheet.

Plans are saved as human-readable ``*.plan.toml`` files with a ``format = 1`` key. A
saved plan names every choice; one read without ``rounding`` (a plan file or an export
written before Kinfill rounded filled numbers) is read as ``"as_computed"``, what that
version did, and its fill says so in one line; a plan made now rounds by default.

Examples
--------
>>> plan = FillPlan(k=3, weights={"nitrate": 2.0}, bounds={"nitrate": (0.0, None)})
>>> plan.k, plan.weight("nitrate"), plan.weight("pH")
(3, 2.0, 1.0)
"""

from __future__ import annotations

import dataclasses
import tomllib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import tomli_w

from imputer_app.errors import PlanError
from imputer_app.files import write_text_atomic
from imputer_app.plan_checks import (
    INTERVAL_OFF,
    Bound,
    check_bounds,
    check_decimals,
    check_k,
    check_k_by_column,
    check_kinds,
    check_level,
    check_markers,
    check_weights,
    column_names,
    column_names_or_none,
    finite_number,
)
from imputer_app.plan_rounding import DEFAULT_ROUNDING, LEGACY_ROUNDING, ROUNDINGS
from imputer_app.plan_text import (
    commented_toml,
    line_in_table,
    line_of,
    name_list,
    read_plan_text,
    shown_value,
)
from imputer_app.words import ROUNDING_NOT_GIVEN

PLAN_FORMAT = 1
PLAN_SUFFIX = ".plan.toml"

#: Allowed values of every choice setting, checked once on construction.
CHOICES: dict[str, tuple[str, ...]] = {
    "scaling": ("zscore", "range", "robust", "none"),
    "neighbour_weighting": ("uniform", "inverse_distance"),
    "numeric_rule": ("mean", "median"),
    # What number a below-limit entry ("<0.05") stands for: estimated by robust
    # regression on order statistics (Helsel & Cohn 1988), a share of its limit
    # (limit_sqrt2 follows Hornung & Reed 1990), or filled by kNN capped at its limit.
    "censored": ("ros", "limit", "half_limit", "limit_sqrt2", "fill_capped"),
    "no_donor": ("leave_empty", "column_mean"),
    # Filled numbers to their column's measured precision, or unrounded (plan_rounding).
    "rounding": ROUNDINGS,
}

#: Default level of the interval of every filled number.
DEFAULT_INTERVAL_LEVEL = 0.9
#: The k values a recovery test tries by default, in the app and on the command line alike.
DEFAULT_KS = tuple(range(1, 31))


@dataclass(frozen=True)
class FillPlan:
    """Settings of one kNN fill.

    Parameters
    ----------
    k : int, default=5
        Number of donors per filled cell (>= 1). When fewer donors exist, all are used
        and the fill log says so.
    similarity_columns : tuple of str or None, default=None
        Columns that define "similar samples". ``None`` means every number or category
        column that is not carried (nor the group column).
    fill_columns : tuple of str or None, default=None
        Columns whose gaps are filled. ``None`` means every similarity column with gaps.
    carried_columns : tuple of str, default=()
        Columns carried along untouched (sample IDs, dates, free text).
    weights : mapping of str to float, default={}
        Per-column weight in the distance (>= 0, default 1); 0 drops a column from it.
    scaling : {"zscore", "range", "robust", "none"}, default="zscore"
        How numeric similarity columns are put on one scale before distances.
    neighbour_weighting : {"uniform", "inverse_distance"}, default="uniform"
        Whether nearer donors count more when combining numbers.
    numeric_rule : {"mean", "median"}, default="mean"
        How donors' numbers are combined (with uniform weighting).
    group_column : str or None, default=None
        When set, donors come only from rows of the same group.
    bounds : mapping of str to (lower, upper), default={}
        Limits applied to filled numbers, either side may be None.
    decimals : mapping of str to int, default={}
        Rounding of filled numbers per column; ``0`` keeps integers integers. Wins
        over ``rounding`` for the columns it names.
    censored : {"ros", "limit", "half_limit", "limit_sqrt2", "fill_capped"}, default="ros"
        What a below-limit entry stands for: a value below its limit estimated from the
        column's measured values by robust regression on order statistics (``ros``; a
        column with too few measured values uses half the limit), a share of its limit,
        or a kNN fill capped at its limit.
    no_donor : {"leave_empty", "column_mean"}, default="leave_empty"
        What to do with a cell that has no donor; always reported.
    kinds : mapping of str to {"number", "category"}, default={}
        Column kinds that override detection.
    k_by_column : mapping of str to int, default={}
        Donors per filled cell for the fill columns named; ``k`` for the others. One
        neighbour search for the largest k serves every column.
    interval_level : float or None, default=0.9
        Level of the interval given to every filled number (0.5-0.99), calibrated on
        hidden known cells of the sheet; ``None`` gives no intervals (TOML: ``"off"``).
    fill_formula_errors : bool, default=False
        Whether cells holding a formula's error result (``#DIV/0!``) are filled like
        gaps; by default they are left alone.
    markers : mapping of str to {"missing", "below-limit"}, default={}
        The meaning of marker texts found in cells (``{"n.d.": "below-limit"}``);
        markers not named keep their usual meaning (see README.md).
    limits : mapping of str to float, default={}
        Per column, the limit a below-limit marker stands under, when the sheet has
        no limit row or column.
    id_column : str or None, default=None
        The column naming samples in the fill log and cell notes; default the first
        carried identifier.
    rounding : {"measured", "as_computed"}, default="measured"
        Filled numbers of columns not in ``decimals`` are rounded to their column's
        measured precision (the most decimals among its observed values), or left as
        computed; interval bounds are rounded outward to the same decimals
        (:mod:`imputer_app.plan_rounding`). A plan read from a file or an export
        without this key was written before rounding existed and is read as
        ``"as_computed"``, what Kinfill did then (:attr:`rounding_note` says so).
    rounding_given : bool, default=True
        False for a plan read without a ``rounding`` key; not saved, not compared.
        Changing ``rounding`` through :meth:`replace` makes it True.
    """

    k: int = 5
    similarity_columns: tuple[str, ...] | None = None
    fill_columns: tuple[str, ...] | None = None
    carried_columns: tuple[str, ...] = ()
    weights: Mapping[str, float] = field(default_factory=dict)
    scaling: str = "zscore"
    neighbour_weighting: str = "uniform"
    numeric_rule: str = "mean"
    group_column: str | None = None
    bounds: Mapping[str, Bound] = field(default_factory=dict)
    decimals: Mapping[str, int] = field(default_factory=dict)
    censored: str = "ros"
    no_donor: str = "leave_empty"
    kinds: Mapping[str, str] = field(default_factory=dict)
    k_by_column: Mapping[str, int] = field(default_factory=dict)
    interval_level: float | None = DEFAULT_INTERVAL_LEVEL
    fill_formula_errors: bool = False
    markers: Mapping[str, str] = field(default_factory=dict)
    limits: Mapping[str, float] = field(default_factory=dict)
    id_column: str | None = None
    rounding: str = DEFAULT_ROUNDING
    rounding_given: bool = field(default=True, compare=False, repr=False)

    def __post_init__(self) -> None:
        _set = object.__setattr__
        _set(self, "k", check_k(self.k))
        _set(self, "similarity_columns", column_names_or_none("similarity_columns", self.similarity_columns))
        _set(self, "fill_columns", column_names_or_none("fill_columns", self.fill_columns))
        _set(self, "carried_columns", column_names("carried_columns", self.carried_columns))
        _set(self, "weights", check_weights(self.weights))
        for name, allowed in CHOICES.items():
            value = getattr(self, name)
            if value not in allowed:
                raise PlanError(f"{name} must be one of {', '.join(allowed)}; got {shown_value(value)}")
        if self.group_column is not None and not isinstance(self.group_column, str):
            raise PlanError(
                f"group_column must be a column name or empty; got {shown_value(self.group_column)}"
            )
        _set(self, "bounds", check_bounds(self.bounds))
        _set(self, "decimals", check_decimals(self.decimals))
        _set(self, "kinds", check_kinds(self.kinds))
        _set(self, "k_by_column", check_k_by_column(self.k_by_column))
        _set(self, "interval_level", check_level(self.interval_level))
        if not isinstance(self.fill_formula_errors, bool):
            raise PlanError(
                f"fill_formula_errors must be true or false; got {shown_value(self.fill_formula_errors)}"
            )
        _set(self, "markers", check_markers(self.markers))
        _set(self, "limits", {str(c): finite_number("limit", c, v) for c, v in dict(self.limits).items()})
        if self.id_column is not None and (not isinstance(self.id_column, str) or not self.id_column):
            raise PlanError(f"id_column must be a column name or empty; got {shown_value(self.id_column)}")
        self._check_roles()

    # ------------------------------------------------------------------ queries
    @property
    def rounding_note(self) -> str:
        """One line when the rounding was read as as_computed for want of a key, else ""."""
        return "" if self.rounding_given or self.rounding != LEGACY_ROUNDING else ROUNDING_NOT_GIVEN

    def weight(self, column: str) -> float:
        """Return the distance weight of ``column`` (1.0 unless set)."""
        return float(self.weights.get(column, 1.0))

    def k_for(self, column: str) -> int:
        """Return the k of ``column``: its entry in ``k_by_column``, else ``k``."""
        return int(self.k_by_column.get(column, self.k))

    def named_columns(self) -> list[str]:
        """Return every column name the plan mentions, in first-mention order."""
        groups = (
            self.similarity_columns or (),
            self.fill_columns or (),
            self.carried_columns,
            (self.group_column,) if self.group_column else (),
            self.weights,
            self.bounds,
            self.decimals,
            self.kinds,
            self.k_by_column,
            self.limits,
            (self.id_column,) if self.id_column else (),
        )
        return list(dict.fromkeys(name for group in groups for name in group))

    def check_columns(self, columns: Sequence[str]) -> None:
        """Raise :class:`PlanError` naming every plan column absent from ``columns``.

        Parameters
        ----------
        columns : sequence of str
            The sheet's column names.
        """
        present = set(columns)
        missing = [n for n in self.named_columns() if n not in present]
        if missing:
            raise PlanError(f"the plan names column(s) this sheet does not have: {name_list(missing)}")

    def replace(self, **changes: Any) -> FillPlan:
        """Return a copy with ``changes`` applied (validated again); a rounding changed is given."""
        if changes.get("rounding", self.rounding) != self.rounding:  # the app passes it with every edit
            changes.setdefault("rounding_given", True)
        return dataclasses.replace(self, **changes)

    def to_dict(self) -> dict[str, Any]:
        """Return the plan as plain TOML/JSON-ready data (``None`` fields left out)."""
        data: dict[str, Any] = {"format": PLAN_FORMAT, "k": self.k}
        for name in ("similarity_columns", "fill_columns"):
            value = getattr(self, name)
            if value is not None:
                data[name] = list(value)
        data["carried_columns"] = list(self.carried_columns)
        for name in CHOICES:
            data[name] = getattr(self, name)
        if self.group_column is not None:
            data["group_column"] = self.group_column
        data["weights"] = dict(self.weights)
        data["bounds"] = {
            col: {side: v for side, v in zip(("lower", "upper"), pair, strict=True) if v is not None}
            for col, pair in self.bounds.items()
        }
        data["decimals"] = dict(self.decimals)
        data["kinds"] = dict(self.kinds)
        data["k_by_column"] = dict(self.k_by_column)
        data["interval_level"] = INTERVAL_OFF if self.interval_level is None else self.interval_level
        data["fill_formula_errors"] = self.fill_formula_errors
        if self.id_column is not None:
            data["id_column"] = self.id_column
        data["markers"] = dict(self.markers)
        data["limits"] = dict(self.limits)
        return data

    @classmethod
    def from_dict(cls, data: Mapping[str, Any], *, source: str = "plan", text: str | None = None) -> FillPlan:
        """Build a plan from :meth:`to_dict` data, rejecting unknown keys and wrong types.

        Parameters
        ----------
        data : mapping
            Parsed TOML or JSON.
        source : str, default="plan"
            Name used in error messages (usually the file name).
        text : str or None
            The file's text, used to name the line of a bad key.
        """
        return _plan_from_dict(data, source=source, text=text)

    # --------------------------------------------------------------------- disk
    def save(self, path: str | Path, *, force: bool = True, source: str | Path | None = None) -> Path:
        """Write the plan as TOML through the atomic writer and return the path written.

        Parameters
        ----------
        path : str or Path
            The plan file to write.
        force : bool, default=True
            Whether an existing file (or link) of that name may be replaced; callers
            ask first (``--force``, the app's save dialog). A link is replaced itself,
            never written through.
        source : str or Path or None, default=None
            The sheet the plan is for; a ``path`` naming it is refused.

        Raises
        ------
        ExportError
            When the file cannot be written; the old file is then untouched and no
            temporary file is left.
        """
        text = "# Kinfill fill plan. Edit with care; `kinfill fill --plan` reads it.\n"
        text += commented_toml(self.to_dict(), CHOICES, tomli_w.dumps)
        write_text_atomic(path, text, source=source, force=force)
        return Path(path)

    @classmethod
    def load(cls, path: str | Path) -> FillPlan:
        """Read a plan written by :meth:`save` (or by hand).

        Refuses, with one line, a file over 1 MB
        (:data:`~imputer_app.plan_text.MAX_PLAN_BYTES`) and anything that is
        not an ordinary file (a folder, a device such as ``/dev/zero``, a pipe).
        """
        source = Path(path)
        text = read_plan_text(source)
        try:
            data = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise PlanError(f"{source.name} is not valid TOML: {exc}") from None
        return cls.from_dict(data, source=source.name, text=text)

    # ------------------------------------------------------------------ helpers
    def _check_roles(self) -> None:
        carried = set(self.carried_columns)
        for name in ("similarity_columns", "fill_columns"):
            both = carried.intersection(getattr(self, name) or ())
            if both:
                raise PlanError(f"column(s) {name_list(sorted(both))} cannot be both carried and in {name}")
        if self.group_column is not None and self.group_column in (self.fill_columns or ()):
            raise PlanError(f"the group column {shown_value(self.group_column)} cannot also be a fill column")


# ------------------------------------------------------------------ from TOML
_SCALAR_KEYS: dict[str, tuple[type, ...]] = {
    "format": (int,),
    "k": (int,),
    "scaling": (str,),
    "neighbour_weighting": (str,),
    "numeric_rule": (str,),
    "censored": (str,),
    "no_donor": (str,),
    "rounding": (str,),
    "group_column": (str,),
    "id_column": (str,),
}
_LIST_KEYS = ("similarity_columns", "fill_columns", "carried_columns")
_TABLE_KEYS = ("weights", "bounds", "decimals", "kinds", "k_by_column", "markers", "limits")


def _check_table_entries(data: Mapping[str, Any], *, source: str, text: str | None) -> None:
    """Validate each weights/decimals/kinds/bounds entry alone, to name its line."""
    checks: dict[str, Callable[[dict[str, Any]], object]] = {
        "weights": check_weights,
        "decimals": check_decimals,
        "kinds": check_kinds,
        "k_by_column": check_k_by_column,
    }
    for table, check in checks.items():
        for column, value in dict(data.get(table, {})).items():
            try:
                check({column: value})
            except PlanError as exc:
                raise PlanError(f"{source}: {exc}{line_in_table(text, table, column)}") from None


def _plan_from_dict(data: Mapping[str, Any], *, source: str, text: str | None) -> FillPlan:
    known = set(_SCALAR_KEYS) | set(_LIST_KEYS) | set(_TABLE_KEYS) | {"interval_level", "fill_formula_errors"}
    for key in data:
        if key not in known:
            raise PlanError(f"{source}: unknown key {shown_value(key)}{line_of(text, key)}")
    fmt = data.get("format", PLAN_FORMAT)
    if fmt != PLAN_FORMAT:
        raise PlanError(
            f"{source}: plan format {shown_value(fmt)} is not supported (this Kinfill reads {PLAN_FORMAT})"
        )
    kwargs: dict[str, Any] = {}
    for key, types in _SCALAR_KEYS.items():
        if key in data:
            value = data[key]
            if isinstance(value, bool) or not isinstance(value, types):
                want = {"str": "text", "int": "a whole number"}[types[0].__name__]
                where = line_of(text, key)
                raise PlanError(f"{source}: {key} must be {want}; got {shown_value(value)}{where}")
            if key != "format":
                kwargs[key] = value
    for key in _LIST_KEYS:
        if key in data:
            value = data[key]
            if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
                where = line_of(text, key)
                raise PlanError(f"{source}: {key} must be a list of column names{where}")
            kwargs[key] = tuple(value)
    for key in _TABLE_KEYS:
        if key in data and not isinstance(data[key], Mapping):
            raise PlanError(f"{source}: {key} must be a table of column = value{line_of(text, key)}")
    _check_table_entries(data, source=source, text=text)
    kwargs["weights"] = dict(data.get("weights", {}))
    kwargs["decimals"] = dict(data.get("decimals", {}))
    kwargs["kinds"] = dict(data.get("kinds", {}))
    kwargs["k_by_column"] = dict(data.get("k_by_column", {}))
    if "interval_level" in data:
        level = data["interval_level"]
        if level != INTERVAL_OFF and (isinstance(level, bool) or not isinstance(level, int | float)):
            where = line_of(text, "interval_level")
            shown = shown_value(level)
            raise PlanError(
                f"{source}: interval_level must be a number or {INTERVAL_OFF!r}; got {shown}{where}"
            )
        kwargs["interval_level"] = level
    kwargs["markers"] = dict(data.get("markers", {}))
    kwargs["limits"] = dict(data.get("limits", {}))
    if "rounding" not in data:  # written before rounding existed: read as that version filled
        kwargs["rounding"], kwargs["rounding_given"] = LEGACY_ROUNDING, False
    if "fill_formula_errors" in data:
        if not isinstance(data["fill_formula_errors"], bool):
            where = line_of(text, "fill_formula_errors")
            raise PlanError(f"{source}: fill_formula_errors must be true or false{where}")
        kwargs["fill_formula_errors"] = data["fill_formula_errors"]
    bounds: dict[str, Bound] = {}
    for column, sides in dict(data.get("bounds", {})).items():
        if not isinstance(sides, Mapping) or set(sides) - {"lower", "upper"}:
            where = line_in_table(text, "bounds", column)
            raise PlanError(f"{source}: bounds.{column} must be a table with lower and/or upper{where}")
        bounds[column] = (sides.get("lower"), sides.get("upper"))
        try:
            check_bounds({column: bounds[column]})
        except PlanError as exc:
            raise PlanError(f"{source}: {exc}{line_in_table(text, 'bounds', column)}") from None
    kwargs["bounds"] = bounds
    try:
        return FillPlan(**kwargs)
    except PlanError as exc:
        raise PlanError(f"{source}: {exc}") from None
