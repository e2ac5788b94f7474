"""The data table: a Qt model over the sheet, its cell states and a fill layer.

The model converts every column to a numpy array once and formats a cell only when the
view asks for it, so a 200,000-row sheet scrolls smoothly. A fill layer (a preview or
the applied fill) is drawn over the sheet as read: its values replace the gaps, and
every marked cell shows a symbol and a colour (see :mod:`imputer_app.gui.markers`).
"""

from __future__ import annotations

import functools
import math
import weakref
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from PySide6.QtCore import QObject, Qt
from PySide6.QtGui import QColor, QFont

from imputer_app.gui.flat_model import FlatTableModel, Index
from imputer_app.gui.gap_map import MarkedCells
from imputer_app.gui.markers import (
    CENSORED,
    CODE_MARKERS,
    FILL_WEAK,
    FORMULA,
    MARKERS,
    MISSING,
    NO_FILL,
    OBSERVED,
    TEXT,
    WEAK_SYMBOL,
    palette_is_dark,
)
from imputer_app.gui.table_arrays import MAX_DECIMALS, LayerArrays, SheetArrays, layer_arrays, sheet_arrays
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
_MAX_DECIMALS = MAX_DECIMALS
# Roles as plain numbers: compared for every painted cell.
_DISPLAY, _BACKGROUND, _FOREGROUND, _TOOLTIP, _ACCESSIBLE, _ALIGNMENT, _FONT = (
    int(r)
    for r in (
        Qt.ItemDataRole.DisplayRole,
        Qt.ItemDataRole.BackgroundRole,
        Qt.ItemDataRole.ForegroundRole,
        Qt.ItemDataRole.ToolTipRole,
        Qt.ItemDataRole.AccessibleTextRole,
        Qt.ItemDataRole.TextAlignmentRole,
        Qt.ItemDataRole.FontRole,
    )
)
_SERVED = frozenset((_DISPLAY, _BACKGROUND, _FOREGROUND, _TOOLTIP, _ACCESSIBLE, _ALIGNMENT, _FONT))
_ALIGN_NUMBER = int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
_ALIGN_TEXT = int(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter)


class SheetTableModel(FlatTableModel):
    """Read-only table of a :class:`~imputer_app.sheets.Sheet` with an optional fill layer.

    The layer is a :class:`~imputer_app.engine.FillResult` shown either as a
    ``"preview"`` (proposed, not applied) or as ``"applied"`` (the working table).
    """

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._dark = palette_is_dark()
        self._colours: dict[tuple[str, bool], tuple[QColor, QColor]] = {}
        #: Layer arrays made in the fill's worker, by fill (identity; dropped with the fill).
        self._prepared: list[tuple[weakref.ref[FillResult], LayerArrays]] = []
        self._clear()

    # ------------------------------------------------------------------ loading
    def _clear(self) -> None:
        self._names: list[str] = []
        self._units: list[str] = []
        self._kinds: list[str] = []
        self._labels: np.ndarray = np.empty(0, dtype=object)
        self._label_index: pd.Index | None = None
        self._base_values: list[np.ndarray] = []
        self._values: list[np.ndarray] = []
        self._decimals: list[int] = []
        self._fill_decimals: list[int] = []
        self._codes = np.zeros((0, 0), dtype=np.int8)
        self._fill = np.zeros((0, 0), dtype=np.int8)
        self._notes: dict[tuple[int, int], str] = {}
        self._layer: FillResult | None = None
        self._layer_kind = ""
        self._layer_arrays: LayerArrays | None = None
        self._arrays: SheetArrays | None = None
        self._marked: MarkedCells | None = None

    def set_sheet(self, sheet: Sheet | None, arrays: SheetArrays | None = None) -> None:
        """Show ``sheet`` as read (no fill layer).

        ``arrays`` are the sheet's :func:`~imputer_app.gui.table_arrays.sheet_arrays`
        made beforehand (off the window's thread); without them they are made here.
        """
        self.beginResetModel()
        self._clear()
        if sheet is not None:
            self._load(arrays if arrays is not None else sheet_arrays(sheet))
        self.endResetModel()

    def _load(self, arrays: SheetArrays) -> None:
        self._arrays = arrays
        self._names = list(arrays.names)
        self._kinds = list(arrays.kinds)
        self._units = list(arrays.units)
        self._labels = arrays.labels
        self._base_values = list(arrays.values)
        self._values = list(self._base_values)
        self._decimals = list(arrays.decimals)
        self._fill_decimals = [d + 1 for d in self._decimals]
        self._codes = arrays.codes
        self._fill = np.zeros(self._codes.shape, dtype=np.int8)
        self._notes = arrays.notes
        self._marked = arrays.marked

    def keep_layer(self, result: FillResult, arrays: LayerArrays) -> None:
        """Keep the :func:`~imputer_app.gui.table_arrays.layer_arrays` of ``result`` for :meth:`set_layer`.

        They are kept while ``result`` lives (a preview, an applied fill, one to redo).
        """
        try:
            ref = weakref.ref(result)
        except TypeError:  # a stand-in result without weak references: nothing kept
            return
        alive = [(r, a) for r, a in self._prepared if r() is not None and r() is not result]
        self._prepared = [*alive, (ref, arrays)]

    def _kept(self, result: FillResult) -> LayerArrays | None:
        return next((a for r, a in self._prepared if r() is result), None)

    def set_layer(self, result: FillResult | None, kind: str = "preview") -> None:
        """Draw ``result`` over the sheet as a ``"preview"`` or the ``"applied"`` fill."""
        if kind not in ("preview", "applied"):
            raise ValueError(f"layer kind must be 'preview' or 'applied'; got {kind!r}")
        self._layer = result
        self._layer_kind = kind if result is not None else ""
        self._layer_arrays = None
        if result is None or self._arrays is None:
            self._values = list(self._base_values)
            self._fill = np.zeros(self._codes.shape, dtype=np.int8)
            self._fill_decimals = [d + 1 for d in self._decimals]
            self._marked = self._arrays.marked if self._arrays is not None else None
        else:
            arrays = self._kept(result)
            if arrays is None:  # not made in the fill's worker: made now
                arrays = layer_arrays(result, self._arrays)
                self.keep_layer(result, arrays)
            self._layer_arrays = arrays
            self._values = list(arrays.values)
            self._fill = arrays.fill
            self._marked = arrays.marked.as_kind(kind)
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
    def arrays(self) -> SheetArrays | None:
        """The sheet's arrays (None without a sheet): what a fill's worker needs for its layer."""
        return self._arrays

    @property
    def gap_cells(self) -> np.ndarray:
        """Flat positions (``row * n_columns + column``, ascending) of gaps, unreadable and censored cells."""
        return self._arrays.gap_cells if self._arrays is not None else np.zeros(0, dtype=np.intp)

    @property
    def weak_cells(self) -> np.ndarray:
        """Flat positions (ascending) of the cells the layer filled with weak support."""
        arrays = self._layer_arrays
        return arrays.weak_cells if arrays is not None else np.zeros(0, dtype=np.intp)

    @property
    def n_filled(self) -> int:
        """Cells the layer filled."""
        return self._layer_arrays.n_filled if self._layer_arrays is not None else 0

    def code_count(self, *codes: int) -> int:
        """Cells with any of these cell ``codes`` (counted once per sheet, off the window's thread)."""
        if self._arrays is None:
            return 0
        counts = self._arrays.code_counts
        return int(sum(counts[c] for c in codes if c < counts.size))

    @property
    def marked(self) -> MarkedCells | None:
        """The cells the gap map marks, with the fill layer (None without a sheet)."""
        return self._marked

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
        if column not in self._names:
            return None
        row = self._row_of(label)
        if row is None and isinstance(label, str) and label.strip().lstrip("-").isdigit():
            row = self._row_of(int(label))
        return None if row is None else (row, self._names.index(column))

    def _row_of(self, label: Any) -> int | None:
        if self._label_index is None:  # built once per sheet, in C (a dict of a million labels is not)
            self._label_index = pd.Index(self._labels)
        try:
            found = self._label_index.get_indexer(pd.Index([label]))
        except (TypeError, ValueError, pd.errors.InvalidIndexError):  # labels repeated: the last one
            same = np.flatnonzero(self._labels == label)
            return int(same[-1]) if same.size else None
        return int(found[0]) if found[0] >= 0 else None

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
        return self.cell_data(index.row(), index.column(), role)

    def cell_data(self, row: int, col: int, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        """:meth:`data` of a cell by position (the row filter calls it without making an index).

        Painting asks seven roles of every visible cell: the roles are compared as plain
        numbers and the colours and the italic font made once, to keep each call short.
        """
        if role not in _SERVED:
            return None
        if role == _DISPLAY:
            return self.display_text(row, col)
        if role in (_BACKGROUND, _FOREGROUND):
            key = self.marker_key(row, col)
            if key is None:
                return None
            colours = self._colours.get((key, self._dark))
            if colours is None:
                colours = self._colours[(key, self._dark)] = MARKERS[key].colours(self._dark)
            return colours[0] if role == _BACKGROUND else colours[1]
        if role == _TOOLTIP:
            return self.describe(row, col)
        if role == _ACCESSIBLE:
            return f"row {self.row_label(row)}, {self._names[col]}: {self.describe(row, col, short=True)}"
        if role == _ALIGNMENT:
            return _ALIGN_NUMBER if self._values[col].dtype.kind == "f" else _ALIGN_TEXT
        if self._layer_kind == "preview" and self.is_filled(row, col):  # the font
            return _italic()
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
        text = f"{self._names[col]}{unit}: {self._kinds[col]}; {gaps:,} gaps ({100 * gaps / n:.1f}%)"
        text += f", {censored:,} beyond a limit" if censored else ""
        if filled:
            text += f", {filled:,} {'proposed' if self._layer_kind == 'preview' else 'filled'}"
        return text

    def _log_entry(self, row: int, col: int) -> dict[str, Any] | None:
        layer, arrays = self._layer, self._layer_arrays
        if layer is None or arrays is None or layer.log is None or len(layer.log) == 0:
            return None
        found = np.flatnonzero(arrays.log_cells == row * len(self._names) + col)  # one pass, no dict
        return dict(layer.log.iloc[int(found[0])]) if found.size else None


# ------------------------------------------------------------------- helpers
@functools.cache
def _italic() -> QFont:
    font = QFont()
    font.setItalic(True)
    return font


def _format_number(value: float, decimals: int, full: bool = False) -> str:
    if full:
        return f"{value:.10g}"
    if abs(value) >= 1e9 or (value != 0 and abs(value) < 10.0 ** -(decimals + 1)):
        return f"{value:.4g}"
    return f"{value:.{min(decimals, _MAX_DECIMALS)}f}"
