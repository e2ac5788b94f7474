"""Find the header row, a units row under it, and readable unique column names.

Lab sheets often start with a title, a few metadata lines and blank rows; a units row
("mg/L", "µS/cm", "°C") may sit under the header, and group labels may be merged across
the columns they cover. The rules:

- the header is the first row (within the first :data:`ZONE_ROWS`) that has at least
  two filled cells (one in a one-column sheet), covers at least :data:`COVERAGE` of the
  columns used by the ten rows below it, and holds some text; a first such row without
  any text means the sheet has no header (columns are then named "column 1", ...),
  unless the row right above it holds at least two texts and no number: that row is
  a header with some blank names (each blank one is named after its position);
- the row right under the header is a units row when it holds no numbers and at least
  half of its filled cells look like units;
- a header cell covered by a merged range takes the range's text; a merged range in the
  row above the header across the width of the table is a title (left out of the
  names); one spanning a few columns is a group label ("Cations"), kept as a column
  fact and added to the names only where they would otherwise repeat ("Soil: Ca");
- otherwise a unit may come from the name: "nitrate [mg/L]" or "nitrate (mg/L)".
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from imputer_app.sheets._grid import Merge, cell_text, is_filled
from imputer_app.sheets._markers import CENSORED_PATTERN, Markers
from imputer_app.sheets._string_cells import as_objects

ZONE_ROWS = 60
LOOK_BELOW = 10
COVERAGE = 0.75

_PREFIX = r"(?:da|[yzafpnµμumcdhkMGTPE])?"
_BASE = (
    r"(?:mol|eq|Eq|g|L|l|m|s|min|h|d|Pa|bar|atm|N|J|W|V|A|Ω|ohm|Hz|K|°C|°F|°|degC|deg C|S|cfu|CFU|MPN|"
    r"NTU|FNU|FTU|ppmv|ppbv|ppm|ppb|ppt|%|‰|rpm|cal|Bq|Gy|Sv|lx|cd|IU|U|kat|ha|yr|t|Da|cells|OD|dB|"
    r"psu|PSU|mmHg|Torr|M)"
)
_TERM = rf"(?:\d+\s*)?{_PREFIX}{_BASE}(?:\^?[-+−]?[1-9]|[²³¹⁻⁴-⁹]+)?"
UNIT_PATTERN = re.compile(rf"{_TERM}(?:\s*[/·.*×]\s*{_TERM}|\s+{_TERM})*(?:\s+as\s+\S+)?")
#: Units-row entries that mean "no unit".
NO_UNIT = frozenset({"-", "--", "–", "—", "n/a", "na", "none", "unitless", "dimensionless", "1"})
_NUMBER_TEXT = re.compile(r"[-+−]?(?:\d[\d.,\s]*|[.,]\d+)(?:[eE][+-]?\d+)?")
_CENSORED = re.compile(CENSORED_PATTERN)
_BRACKET_UNIT = re.compile(r"^(?P<name>.*\S)\s*\[(?P<unit>[^\[\]]{1,24})\]$")
_PAREN_UNIT = re.compile(r"^(?P<name>.*\S)\s*\((?P<unit>[^()]{1,24})\)$")

_BLANK, _TEXT, _NUMBER, _OTHER, _MARKER = range(5)
_UNIT_SIGNS = re.compile(r"[^A-Za-zµμΩ°%‰/]")


def is_unit(text: str) -> bool:
    """True when ``text`` looks like a unit of measurement ("mg/L", "µS/cm", "°C", "%")."""
    text = text.strip()
    if len(text) > 2 and text[0] + text[-1] in ("()", "[]"):
        text = text[1:-1].strip()
    return 0 < len(text) <= 24 and UNIT_PATTERN.fullmatch(text) is not None


def unit_from_name(name: str) -> str | None:
    """The unit written into a header: "nitrate [mg/L]" or "nitrate (mg/L)" give "mg/L"."""
    match = _BRACKET_UNIT.match(name)
    if match and match.group("unit").strip():
        return match.group("unit").strip()
    match = _PAREN_UNIT.match(name)
    if match and is_unit(match.group("unit")):
        return match.group("unit").strip()
    return None


@dataclass(frozen=True)
class Layout:
    """Where header, units and data are (0-based grid rows) and the raw names/units.

    ``header`` is None for a sheet without a header row.
    """

    header: int | None
    units: int | None
    data_start: int
    names: tuple[str, ...]
    units_text: tuple[str | None, ...]
    groups: tuple[str, ...] = ()


def _zone_class(value: object, markers: Markers) -> int:
    if not is_filled(value):
        return _BLANK
    if isinstance(value, bool):
        return _OTHER
    if isinstance(value, int | float):
        return _NUMBER
    if not isinstance(value, str):
        return _OTHER
    text = value.strip()
    if text.lower() in markers.texts:
        return _MARKER  # filled, but not header-like text ("NA", yet also sodium's "Na")
    if _NUMBER_TEXT.fullmatch(text) or _CENSORED.match(text):
        return _NUMBER
    return _TEXT


def find_layout(
    grid: np.ndarray, merges: tuple[Merge, ...], markers: Markers, header_row: int | None = None
) -> Layout:
    """Locate header, units row and first data row (see the module docstring).

    ``header_row`` (1-based file row, 0 for "no header") overrides the header search;
    the units row is still looked for under it.
    """
    zone_end = min(grid.shape[0], ZONE_ROWS + (header_row or 0) + 2)
    zone = as_objects(grid[:zone_end])  # a long csv's StringDType grid: its first rows as str
    classes = np.frompyfunc(lambda v: _zone_class(v, markers), 1, 1)(zone).astype(np.int8)
    if header_row is not None:
        header = header_row - 1 if header_row > 0 else None
        first = header + 1 if header is not None else 0
    else:
        header, first = _find_header(classes)
    if header is None:
        return Layout(None, None, first, ("",) * grid.shape[1], (None,) * grid.shape[1])
    names, groups = _header_names(grid, header, merges)
    units = header + 1 if header + 1 < zone_end and _is_units_row(grid, classes, header + 1) else None
    if units is not None:
        units_text = tuple(_unit_cell(value) for value in grid[units])
    else:
        units_text = tuple(unit_from_name(name) for name in names)
    return Layout(header, units, (units if units is not None else header) + 1, names, units_text, groups)


def _find_header(classes: np.ndarray) -> tuple[int | None, int]:
    """Return (header row or None, first data row) from the zone's cell classes."""
    filled = classes != _BLANK
    used = int(filled.any(axis=0).sum())
    need = min(2, max(used, 1))
    for row in np.flatnonzero(filled.sum(axis=1) >= need).tolist():
        below = filled[row + 1 : row + 1 + LOOK_BELOW].any(axis=0)
        coverage = (filled[row] & below).sum() / below.sum() if below.any() else 1.0
        if coverage >= COVERAGE:
            return _partial_header(classes, row) or _header_or_data(classes, row)
    rows = np.flatnonzero(filled.any(axis=1)).tolist()
    return _header_or_data(classes, rows[0]) if rows else (None, classes.shape[0])


def _partial_header(classes: np.ndarray, row: int) -> tuple[int, int] | None:
    """The row above a first row of numbers, when it holds names with some left blank."""
    if row == 0 or (classes[row] == _TEXT).any():
        return None
    above = classes[row - 1]
    if (above == _TEXT).sum() >= 2 and not np.isin(above, (_NUMBER, _OTHER)).any():
        return row - 1, row
    return None


def _header_or_data(classes: np.ndarray, row: int) -> tuple[int | None, int]:
    """A row with text is the header; a row of numbers only is the first data row."""
    return (row, row + 1) if (classes[row] == _TEXT).any() else (None, row)


def _header_names(
    grid: np.ndarray, header: int, merges: tuple[Merge, ...]
) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """The header's names and each column's group label ("" for none).

    A range merged in the row above the header across the whole width of the named
    columns is the sheet's title, not a group. A group label enters a name only where
    names would otherwise repeat ("Soil: Ca" and "Water: Ca"); elsewhere it stays a
    column fact.
    """
    names = [cell_text(value) if is_filled(value) else "" for value in grid[header]]
    groups = [""] * len(names)
    for (top, left), (bottom, right) in merges:
        if top < header <= bottom and not names[left]:
            # a label merged down into the header row ("Site" over header and units row)
            names[left] = cell_text(grid[top, left])
        if top <= header <= bottom and right > left:
            # a header label merged across columns: every covered column shares it
            for column in range(left + 1, min(right + 1, len(names))):
                names[column] = names[column] or names[left]
    named = [j for j, name in enumerate(names) if name]
    for (top, left), (bottom, right) in merges:
        if bottom != header - 1 or right <= left:
            continue
        if named and left <= named[0] and right >= named[-1] and len(named) > 1:
            continue  # a title across the table's width
        label = cell_text(grid[top, left])
        for column in range(left, min(right + 1, len(names))):
            groups[column] = label
    counts: dict[str, int] = {}
    for name in names:
        counts[name] = counts.get(name, 0) + 1
    full = tuple(
        f"{group}: {name}" if group and name and counts[name] > 1 else name or group
        for group, name in zip(groups, names, strict=True)
    )
    return full, tuple(groups)


def _is_units_row(grid: np.ndarray, classes: np.ndarray, row: int) -> bool:
    """No numbers, mostly unit-like text, and a unit above at least one number column.

    With nothing below (a header and a units row only) a unit must be unmistakable
    ("mg/L", "°C", "ppm"), not a lone letter that an ID such as "S1" also matches.
    """
    cells = classes[row]
    if np.isin(cells, (_NUMBER, _OTHER)).any():
        return False
    below = classes[row + 1 : row + 1 + LOOK_BELOW]
    nothing_below = not (below != _BLANK).any()
    numbers_below = (below == _NUMBER).any(axis=0)
    texts = [
        (text, bool(numbers_below[column]))
        for column in np.flatnonzero(cells == _TEXT)
        if (text := str(grid[row, column]).strip()).lower() not in NO_UNIT
    ]
    units = [(text, above_numbers) for text, above_numbers in texts if is_unit(text)]
    if nothing_below:
        found = any(len(_UNIT_SIGNS.sub("", text)) >= 2 for text, _ in units)
    else:
        found = any(above_numbers for _, above_numbers in units)
    return found and len(units) >= 0.5 * len(texts)


def _unit_cell(value: object) -> str | None:
    text = cell_text(value) if is_filled(value) else ""
    if text.lower() in NO_UNIT or not text:
        return None
    return text[1:-1].strip() if len(text) > 2 and text[0] + text[-1] in ("()", "[]") else text


def unique_names(raw: list[str], positions: list[int]) -> tuple[list[str], list[tuple[str, ...]], list[str]]:
    """Make header names unique and non-blank.

    Parameters
    ----------
    raw : list of str
        Header texts, "" for a blank header cell.
    positions : list of int
        0-based file column of each name (a blank header becomes "column <position+1>").

    Returns
    -------
    names, notes, problems
        The unique names, per-column notes and plain-words problem lines.
    """
    taken = {name for name in raw if name}
    seen: dict[str, int] = {}
    names: list[str] = []
    notes: list[tuple[str, ...]] = []
    problems: list[str] = []
    for name, position in zip(raw, positions, strict=True):
        if not name:
            new = _free(f"column {position + 1}", taken)
            notes.append(("the header cell was blank; named after the column's position",))
            problems.append(f"column {position + 1} has no header; it is named '{new}'")
        elif name in seen:
            seen[name] += 1
            while f"{name} ({seen[name]})" in taken:
                seen[name] += 1
            new = f"{name} ({seen[name]})"
            notes.append((f"renamed from '{name}': that header appears more than once",))
            problems.append(f"header '{name}' appears more than once; column {position + 1} is named '{new}'")
        else:
            seen[name] = 1
            new = name
            notes.append(())
        taken.add(new)
        names.append(new)
    return names, notes, problems


def _free(name: str, taken: set[str]) -> str:
    candidate, number = name, 2
    while candidate in taken:
        candidate = f"{name} ({number})"
        number += 1
    return candidate
