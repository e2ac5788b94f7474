"""The data table: a Qt model over the sheet, its cell states and a fill layer.

The model converts every column to a numpy array once and formats a cell only when the
view asks for it, so a 200,000-row sheet scrolls smoothly. A fill layer (a preview or
the applied fill) is drawn over the sheet as read: its values replace the gaps, and
every marked cell shows a symbol and a colour (see :mod:`imputer_app.gui.markers`).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from PySide6.QtCore import QObject, Qt
from PySide6.QtGui import QFont

from imputer_app.gui.flat_model import FlatTableModel, Index
from imputer_app.gui.markers import (
    CENSORED,
    CODE_MARKERS,
    FILL_WEAK,
    FORMULA,
    MARKERS,
    MISSING,
    NO_FILL,
    OBSERVED,
    STATE_CODES,
    TEXT,
    WEAK_SYMBOL,
    palette_is_dark,
)
from imputer_app.plan_rounding import stand_in_decimals
from imputer_app.words import STATE_WORDS

if TYPE_CHECKING:
    from imputer_app.engine import FillResult
    from imputer_app.sheets import Sheet

_STATE_WORDS = {
    OBSERVED: "measured",
    MISSING: "gap",
    CENSORED: "beyond a limit",
    TEXT: "text in a number column",
    FORMULA: STATE_WORDS["formula_error"],
}
_MAX_DECIMALS = 6


class SheetTableModel(FlatTableModel):
    """Read-only table of a :class:`~imputer_app.sheets.Sheet` with an optional fill layer.

    The layer is a :class:`~imputer_app.engine.FillResult` shown either as a
    ``"preview"`` (proposed, not applied) or as ``"applied"`` (the working table).
    """

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._dark = palette_is_dark()
        self._clear()

    # ------------------------------------------------------------------ loading
    def _clear(self) -> None:
        self._names: list[str] = []
        self._units: list[str] = []
        self._kinds: list[str] = []
        self._labels: np.ndarray = np.empty(0, dtype=object)
        self._label_pos: dict[Any, int] | None = None
        self._base_values: list[np.ndarray] = []
        self._values: list[np.ndarray] = []
        self._decimals: list[int] = []
        self._fill_decimals: list[int] = []
        self._codes = np.zeros((0, 0), dtype=np.int8)
        self._fill = np.zeros((0, 0), dtype=np.int8)
        self._notes: dict[tuple[int, int], str] = {}
        self._layer: FillResult | None = None
        self._layer_kind = ""
        self._log_pos: dict[tuple[int, int], int] | None = None

    def set_sheet(self, sheet: Sheet | None) -> None:
        """Show ``sheet`` as read (no fill layer)."""
        self.beginResetModel()
        self._clear()
        if sheet is not None:
            self._load(sheet)
        self.endResetModel()

    def _load(self, sheet: Sheet) -> None:
        frame = sheet.frame
        self._names = [str(c) for c in frame.columns]
        info = {c.name: c for c in sheet.columns}
        self._kinds = [info[n].kind if n in info else _kind_of(frame[n]) for n in self._names]
        self._units = [(info[n].unit or "") if n in info else "" for n in self._names]
        self._labels = frame.index.to_numpy()
        self._base_values = [
            _column_array(frame[n], kind) for n, kind in zip(self._names, self._kinds, strict=True)
        ]
        self._values = list(self._base_values)
        self._decimals = [_decimals_of(v) if v.dtype.kind == "f" else 0 for v in self._base_values]
        self._fill_decimals = [d + 1 for d in self._decimals]
        self._codes = state_codes(sheet.states, self._names)
        self._fill = np.zeros(self._codes.shape, dtype=np.int8)
        self._notes = _note_texts(sheet, frame.index, self._names)

    def set_layer(self, result: FillResult | None, kind: str = "preview") -> None:
        """Draw ``result`` over the sheet as a ``"preview"`` or the ``"applied"`` fill."""
        if kind not in ("preview", "applied"):
            raise ValueError(f"layer kind must be 'preview' or 'applied'; got {kind!r}")
        self._layer = result
        self._layer_kind = kind if result is not None else ""
        self._log_pos = None
        if result is None or not self._names:
            self._values = list(self._base_values)
            self._fill = np.zeros(self._codes.shape, dtype=np.int8)
            self._fill_decimals = [d + 1 for d in self._decimals]
        else:
            frame = result.frame
            self._values = [_column_array(frame[n], k) for n, k in zip(self._names, self._kinds, strict=True)]
            self._fill = _fill_codes(result, self._names)
            # a rounded column shows its fills at the decimals they were rounded to; one
            # computed as is shows one decimal more than its measured values
            rounded = dict(getattr(result, "decimals", {}) or {})
            pairs = zip(self._names, self._decimals, strict=True)
            self._fill_decimals = [int(rounded[n]) if n in rounded else d + 1 for n, d in pairs]
        if self._names:
            last = self.index(self.rowCount() - 1, self.columnCount() - 1)
            self.dataChanged.emit(self.index(0, 0), last)
            self.headerDataChanged.emit(Qt.Orientation.Horizontal, 0, self.columnCount() - 1)

    def set_dark(self, dark: bool) -> None:
        """Switch the marker colours to the dark (or light) variant."""
        if dark != self._dark:
            self._dark = dark
            if self._names:
                self.dataChanged.emit(
                    self.index(0, 0), self.index(self.rowCount() - 1, self.columnCount() - 1)
                )

    # ------------------------------------------------------------------ queries
    @property
    def layer(self) -> FillResult | None:
        """The fill drawn over the sheet, if any."""
        return self._layer

    @property
    def layer_kind(self) -> str:
        """``"preview"``, ``"applied"`` or ``""``."""
        return self._layer_kind

    @property
    def codes(self) -> np.ndarray:
        """int8 array (n_rows, n_columns) of cell codes (see :mod:`markers`)."""
        return self._codes

    @property
    def fill_codes(self) -> np.ndarray:
        """int8 array (n_rows, n_columns): 0 not filled, 1 filled, 2 filled with weak support."""
        return self._fill

    def column_names(self) -> list[str]:
        """Column names in table order."""
        return list(self._names)

    def row_label(self, row: int) -> Any:
        """The sheet's row label (file row number) of table row ``row``."""
        value = self._labels[row]
        return value.item() if isinstance(value, np.generic) else value

    def find(self, label: Any, column: str) -> tuple[int, int] | None:
        """Return ``(row, column)`` positions of a row label and column name, or None."""
        if self._label_pos is None:
            self._label_pos = {self.row_label(i): i for i in range(len(self._labels))}
        row = self._label_pos.get(label)
        if row is None and isinstance(label, str) and label.strip().lstrip("-").isdigit():
            row = self._label_pos.get(int(label))
        if row is None or column not in self._names:
            return None
        return row, self._names.index(column)

    def is_filled(self, row: int, column: int) -> bool:
        """True when the layer wrote a value into this cell."""
        return bool(self._fill[row, column] != NO_FILL)

    def marker_key(self, row: int, column: int) -> str | None:
        """The key in :data:`MARKERS` of a cell's look (None for a plain measured cell)."""
        if self._fill[row, column] != NO_FILL:
            return self._fill_marker()
        return CODE_MARKERS.get(int(self._codes[row, column]))

    def _fill_marker(self) -> str:
        return "filled" if self._layer_kind == "applied" else "preview"

    # -------------------------------------------------------------- Qt interface
    def table_shape(self) -> tuple[int, int]:
        """Number of data rows and of columns."""
        return len(self._labels), len(self._names)

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        """Return the cell's text, colours, font, tooltip or accessible text."""
        if not index.isValid():
            return None
        row, col = index.row(), index.column()
        if role == Qt.ItemDataRole.DisplayRole:
            return self.display_text(row, col)
        if role in (Qt.ItemDataRole.BackgroundRole, Qt.ItemDataRole.ForegroundRole):
            key = self.marker_key(row, col)
            if key is None:
                return None
            bg, fg = MARKERS[key].colours(self._dark)
            return bg if role == Qt.ItemDataRole.BackgroundRole else fg
        if role == Qt.ItemDataRole.ToolTipRole:
            return self.describe(row, col)
        if role == Qt.ItemDataRole.AccessibleTextRole:
            return f"row {self.row_label(row)}, {self._names[col]}: {self.describe(row, col, short=True)}"
        if role == Qt.ItemDataRole.TextAlignmentRole:
            numeric = self._values[col].dtype.kind == "f"
            horizontal = Qt.AlignmentFlag.AlignRight if numeric else Qt.AlignmentFlag.AlignLeft
            return int(horizontal | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.FontRole and self._layer_kind == "preview" and self.is_filled(row, col):
            font = QFont()
            font.setItalic(True)
            return font
        return None

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ) -> Any:
        """Column names with units, and file row numbers."""
        if orientation == Qt.Orientation.Vertical:
            if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.AccessibleTextRole):
                return str(self.row_label(section))
            if role == Qt.ItemDataRole.ToolTipRole:
                return f"Row {self.row_label(section)} of the file"
            return None
        if section >= len(self._names):
            return None
        name, unit = self._names[section], self._units[section]
        if role == Qt.ItemDataRole.DisplayRole:
            return f"{name}\n{unit}" if unit else name
        if role in (Qt.ItemDataRole.ToolTipRole, Qt.ItemDataRole.AccessibleTextRole):
            return self._column_summary(section)
        return None

    # ------------------------------------------------------------------- words
    def display_text(self, row: int, col: int) -> str:
        """The text shown in a cell: a marker symbol, then the value or original text."""
        code = int(self._codes[row, col])
        fill = int(self._fill[row, col])
        value = self._format(row, col, fill != NO_FILL or code == CENSORED)
        if fill != NO_FILL:
            symbol = MARKERS[self._fill_marker()].symbol
            symbol += MARKERS["censored"].symbol if code == CENSORED else ""
            symbol += WEAK_SYMBOL if fill == FILL_WEAK else ""
            return f"{symbol} {value}"
        if code == OBSERVED:
            return value
        symbol = MARKERS[CODE_MARKERS[code]].symbol
        original = self._notes.get((row, col), "")
        if code == CENSORED and value:  # a substituted number (limit, limit/2, ...): shown exactly
            value = self._stand_in(row, col)
            return f"{symbol} {value} ({original})" if original else f"{symbol} {value}"
        return f"{symbol} {original}" if original else symbol

    def describe(self, row: int, col: int, short: bool = False) -> str:
        """Plain words about a cell, for tooltips (and, ``short``, screen readers)."""
        code = int(self._codes[row, col])
        original = self._notes.get((row, col))
        state = _STATE_WORDS[code] + (f" (the sheet says {original!r})" if original else "")
        fill = int(self._fill[row, col])
        if fill == NO_FILL:
            if code == OBSERVED:
                return (
                    self._format(row, col, False) if short else f"{self._format(row, col, False)} (measured)"
                )
            value = self._stand_in(row, col) if code == CENSORED else self._format(row, col, True)
            return f"{state}; stands for {value}" if value else state
        words = "proposed fill" if self._layer_kind == "preview" else "filled"
        text = f"{words} {self._format(row, col, True, full=True)}, was a {state}"
        if fill == FILL_WEAK:
            text += "; weak support (donors far away)"
        if short:
            return text
        entry = self._log_entry(row, col)
        if entry is not None:
            note = str(entry.get("note") or "")
            text += f"\nmethod {entry.get('method')}, k={entry.get('k')}" + (f"; {note}" if note else "")
        if self._layer_kind == "preview":
            text += "\nNot applied yet: Fill > Apply writes it into the working table."
        return f"{self._names[col]}, row {self.row_label(row)}: {text}"

    def _stand_in(self, row: int, col: int) -> str:
        """A censored entry's stand-in as the engine rounded it (0.012, not 0.01), or ""."""
        value = self._values[col][row]
        return "" if self._values[col].dtype.kind != "f" or math.isnan(value) else f"{float(value):.6g}"

    def _format(self, row: int, col: int, shown_value: bool, full: bool = False) -> str:
        values = self._values[col] if shown_value else self._base_values[col]
        value = values[row]
        if values.dtype.kind == "f":
            if math.isnan(value):
                return ""
            filled = shown_value and self._codes[row, col] != OBSERVED
            decimals = self._fill_decimals[col] if filled else self._decimals[col]
            if filled and self._codes[row, col] == CENSORED:  # below a limit: 2 significant digits kept
                decimals = int(stand_in_decimals(np.array([value]), decimals)[0])
            return _format_number(float(value), decimals, full)
        if value is None or (isinstance(value, float) and math.isnan(value)) or value is pd.NA:
            return ""
        return str(value)

    def _column_summary(self, col: int) -> str:
        codes = self._codes[:, col]
        n = max(len(codes), 1)
        gaps = int(np.count_nonzero((codes == MISSING) | (codes == TEXT)))
        censored = int(np.count_nonzero(codes == CENSORED))
        filled = int(np.count_nonzero(self._fill[:, col]))
        unit = f" [{self._units[col]}]" if self._units[col] else ""
        text = f"{self._names[col]}{unit}: {self._kinds[col]}; {gaps} gaps ({100 * gaps / n:.1f}%)"
        text += f", {censored} beyond a limit" if censored else ""
        if filled:
            text += f", {filled} {'proposed' if self._layer_kind == 'preview' else 'filled'}"
        return text

    def _log_entry(self, row: int, col: int) -> dict[str, Any] | None:
        layer = self._layer
        if layer is None or layer.log is None or len(layer.log) == 0:
            return None
        if self._log_pos is None:
            log = layer.log
            rows = _label_positions(pd.Index(self._labels), log["row"])
            cols = pd.Index(self._names).get_indexer(pd.Index(log["column"]))
            self._log_pos = {(int(r), int(c)): i for i, (r, c) in enumerate(zip(rows, cols, strict=True))}
        i = self._log_pos.get((row, col))
        return None if i is None else dict(layer.log.iloc[i])


# ------------------------------------------------------------------- helpers
def state_codes(states: pd.DataFrame, names: list[str]) -> np.ndarray:
    """Return int8 cell codes of shape (n_rows, n_columns) from a sheet's states."""
    codes = np.zeros((len(states), len(names)), dtype=np.int8)
    for j, name in enumerate(names):
        cat = pd.Categorical(states[name]) if name in states else pd.Categorical([])
        if len(cat) == 0:
            continue
        lut = np.array(
            [STATE_CODES.get(str(c), OBSERVED) for c in cat.categories] + [OBSERVED], dtype=np.int8
        )
        codes[:, j] = lut[cat.codes]  # code -1 (NaN state) picks the trailing OBSERVED
    return codes


def _fill_codes(result: FillResult, names: list[str]) -> np.ndarray:
    filled = result.filled.reindex(columns=names, fill_value=False).to_numpy(dtype=bool)
    fill = filled.astype(np.int8)
    log = result.log
    if log is not None and len(log) and "support" in log:
        weak = log[log["support"] == "weak"]
        rows = _label_positions(result.filled.index, weak["row"])
        cols = pd.Index(names).get_indexer(pd.Index(weak["column"]))
        ok = (rows >= 0) & (cols >= 0)
        fill[rows[ok], cols[ok]] = np.where(filled[rows[ok], cols[ok]], FILL_WEAK, fill[rows[ok], cols[ok]])
    return fill


def _label_positions(index: pd.Index, labels: Any) -> np.ndarray:
    positions = index.get_indexer(pd.Index(list(labels)))
    return np.asarray(positions, dtype=np.intp)


def _note_texts(sheet: Sheet, index: pd.Index, names: list[str]) -> dict[tuple[int, int], str]:
    notes = getattr(sheet, "cell_notes", None)
    if notes is None or len(notes) == 0:
        return {}
    rows = _label_positions(index, notes["row"])
    cols = pd.Index(names).get_indexer(pd.Index(notes["column"]))
    texts = notes["text"].astype(object).to_numpy()
    return {
        (int(r), int(c)): str(t)
        for r, c, t in zip(rows, cols, texts, strict=True)
        if r >= 0 and c >= 0 and isinstance(t, str) and t
    }


def _kind_of(series: pd.Series) -> str:
    return "number" if pd.api.types.is_numeric_dtype(series) else "category"


def _column_array(series: pd.Series, kind: str) -> np.ndarray:
    """One column as a numpy array: float for numbers, formatted text for dates, objects else."""
    if pd.api.types.is_bool_dtype(series):
        return series.astype(object).to_numpy()
    if pd.api.types.is_numeric_dtype(series):
        return series.to_numpy(dtype=float, na_value=np.nan)
    if pd.api.types.is_datetime64_any_dtype(series):
        stamps = series.to_numpy(dtype="datetime64[ns]")
        midnight = bool(np.all(np.isnat(stamps) | (stamps == stamps.astype("datetime64[D]"))))
        text = np.datetime_as_string(stamps, unit="D" if midnight else "m")
        return np.where(np.isnat(stamps), "", text).astype(object)
    return series.astype(object).to_numpy()


def _decimals_of(values: np.ndarray) -> int:
    """Most decimals used by the column's measured numbers (checked on a sample, at most 6)."""
    sample = values[np.isfinite(values)][:2000]
    for d in range(_MAX_DECIMALS + 1):
        scaled = sample * 10.0**d
        if np.all(np.abs(scaled - np.round(scaled)) < 1e-6 * np.maximum(1.0, np.abs(scaled))):
            return d
    return _MAX_DECIMALS


def _format_number(value: float, decimals: int, full: bool = False) -> str:
    if full:
        return f"{value:.10g}"
    if abs(value) >= 1e9 or (value != 0 and abs(value) < 10.0 ** -(decimals + 1)):
        return f"{value:.4g}"
    return f"{value:.{min(decimals, _MAX_DECIMALS)}f}"
