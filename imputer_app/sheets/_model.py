"""What a read spreadsheet is: values, per-cell states and column facts.

These dataclasses are the contract between ``sheets/`` and everything above it.
The engine reads a :class:`Sheet` by duck typing (``frame``, ``states`` and
``cell_notes``) and never imports this package.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

#: Every state a cell can be in, as used in ``Sheet.states``.
#: ``formula_error`` is a formula cell without a usable result: its cached result is an
#: error (``#DIV/0!``) or none was stored. NaN in the frame like a gap, but not a gap to
#: fill unless the user says so.
CELL_STATES = ("observed", "missing", "censored", "text_in_number", "formula_error")

#: Column kinds detected on reading (a plan may force ``number`` or ``category``).
COLUMN_KINDS = ("number", "category", "date", "identifier", "empty")

#: Columns of ``Sheet.cell_notes``.
NOTE_COLUMNS = ("row", "column", "state", "text", "side", "limit")


@dataclass(frozen=True)
class ColumnInfo:
    """Facts about one column of a sheet.

    Attributes
    ----------
    name : str
        Unique, readable column name (as used in ``Sheet.frame``).
    kind : {"number", "category", "date", "identifier", "empty"}
        Detected (or overridden) kind.
    unit : str or None
        Unit from a units row under the header, or from ``name [unit]``.
    notes : tuple of str
        Plain-words remarks from detection ("renamed from a blank header", ...).
    original_name : str
        The header text as found in the file.
    carry_reason : str or None
        Why the default plan must carry this column untouched, when the sheet knows
        (a computed column: most of its cells are formulas).
    group_like : bool
        A number column of a few distinct whole values (block, plot, replicate):
        offered as a category and as a group column.
    group_label : str
        The label merged over this column and its neighbours above the header
        ("Cations"); "" when none. It enters ``name`` only where names would repeat.
    decimals : int or None
        The column's measured precision: the most decimals its number cells show, read
        from the cell text (a delimited file) or the column's number format (a
        workbook), else from the stored numbers; None when it holds no number.
        Filled numbers are rounded to it by default.
    """

    name: str
    kind: str
    unit: str | None = None
    notes: tuple[str, ...] = ()
    original_name: str = ""
    carry_reason: str | None = None
    group_like: bool = False
    group_label: str = ""
    decimals: int | None = None


@dataclass(frozen=True)
class MarkerFound:
    """One marker text found in a sheet's cells.

    Attributes
    ----------
    text : str
        The text as written in the first cell found ("n.d.").
    meaning : {"missing", "below-limit"}
        A missing value (a gap), or an entry below the limit of detection (censored).
    count : int
        Cells holding it (compared trimmed and case-insensitively).
    """

    text: str
    meaning: str
    count: int


@dataclass(frozen=True)
class SourceInfo:
    """Where a sheet came from, enough to reproduce the read.

    Attributes
    ----------
    path : Path
        The file read (never written by Kinfill).
    sheet : str or None
        Worksheet name for workbooks, None for delimited text.
    header_row : int
        1-based row number of the header in the file.
    sha256 : str
        SHA-256 of the file's bytes at reading time.
    file_format : str
        ``xlsx``, ``xlsm``, ``xls``, ``ods``, ``csv``, ``tsv`` or ``txt``.
    delimiter, decimal, encoding : str or None
        Detected (or given) text-file settings; None for workbooks.
    units_row : int or None
        1-based row number of a units row, if one was found.
    line_end : str or None
        The line ending of a delimited file (LF, CR LF or CR).
    limit_row : int or None
        1-based row number of a row giving each column's limit of detection ("LOD"),
        taken out of the data.
    """

    path: Path
    sheet: str | None
    header_row: int
    sha256: str
    file_format: str
    delimiter: str | None = None
    decimal: str | None = None
    encoding: str | None = None
    units_row: int | None = None
    line_end: str | None = None
    limit_row: int | None = None


@dataclass
class Sheet:
    """A spreadsheet read into memory.

    Attributes
    ----------
    frame : DataFrame
        Numbers as float, categories as text (object), every gap and every censored or
        unreadable entry as NaN. The index is the data row's 1-based row number in the
        file, so a log's row label points at the row a user sees in their program.
    states : DataFrame
        Same shape as ``frame``; each cell one of :data:`CELL_STATES` (a categorical).
        A ``formula_error`` cell is NaN in ``frame`` but is not a gap.
    columns : list of ColumnInfo
        One per column of ``frame``, same order.
    source : SourceInfo
        Path, sheet name, header row and SHA-256 of the file.
    cell_notes : DataFrame
        One row per cell that was not a plain value: columns :data:`NOTE_COLUMNS`.
        ``row`` is the row label, ``column`` the column name, ``state`` its state,
        ``text`` the original text ("<0.05", "n.d."), ``side`` "<" or ">" for censored
        cells (else ""), ``limit`` the limit as float (NaN when unknown).
    problems : list of str
        Plain-words remarks for the user (renamed headers, text in number columns...).
    raw_text : ndarray of shape (n_rows, n_columns), or None
        Every cell as read, so an export can write carried and observed cells back
        unchanged: for a delimited file each cell's text exactly as in the file (spaces
        kept); for a workbook each text cell's text untrimmed and other cells as the
        parser gave them (numbers, dates). An object array holding the objects the
        parser made, except for a long delimited file split from its bytes: there a
        numpy ``StringDType`` array (about 16 bytes a cell, no Python object per cell)
        whose elements come out as ``str`` when indexed or iterated. None for a sheet
        not read from a file.
    markers : tuple of MarkerFound
        The marker texts found ("n.d.", "NA", "<LOD") with their meaning and count,
        most frequent first; ``read_sheet(..., markers={"n.d.": "missing"})`` changes
        a meaning.
    """

    frame: pd.DataFrame
    states: pd.DataFrame
    columns: list[ColumnInfo]
    source: SourceInfo
    cell_notes: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(columns=list(NOTE_COLUMNS)))
    problems: list[str] = field(default_factory=list)
    raw_text: np.ndarray | None = field(default=None, repr=False, compare=False)
    markers: tuple[MarkerFound, ...] = ()

    def column(self, name: str) -> ColumnInfo:
        """Return the :class:`ColumnInfo` called ``name``."""
        for info in self.columns:
            if info.name == name:
                return info
        raise KeyError(name)

    @property
    def kinds(self) -> dict[str, str]:
        """Column name to kind."""
        return {c.name: c.kind for c in self.columns}

    @property
    def units(self) -> dict[str, str | None]:
        """Column name to unit (None when the sheet gave none)."""
        return {c.name: c.unit for c in self.columns}
