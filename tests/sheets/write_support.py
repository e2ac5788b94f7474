"""Shared pieces of the export tests: a small lab sheet, fake results, three xlsx readers.

The readers are independent of Kinfill's writer: openpyxl and python-calamine (two
separate xlsx implementations), plus a few lines of ElementTree over the package
parts for fills and comments (ECMA-376 Part 1: styles sec. 18.8, comments 18.7).
"""

from __future__ import annotations

import hashlib
import posixpath
import zipfile
from pathlib import Path
from types import SimpleNamespace
from typing import Any
from xml.etree import ElementTree

import numpy as np
import openpyxl
import pandas as pd
from python_calamine import CalamineWorkbook

from imputer_app.plan import FillPlan
from imputer_app.sheets._model import CELL_STATES, NOTE_COLUMNS, ColumnInfo, Sheet, SourceInfo

LOG_FIELDS = (
    "row", "column", "value", "original_state", "method", "k",
    "donors", "distances", "donor_values", "spread", "support", "note",
)  # fmt: skip

MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
REL = "{http://schemas.openxmlformats.org/package/2006/relationships}Relationship"
RID = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}id"


# ------------------------------------------------------------------ inputs
def lab_sheet(folder: Path) -> Sheet:
    """A sheet as a reader would give it: title row 1, header row 2, units row 3.

    Data rows 4-9. nitrate: gaps at 5 and 8 ("n.d."), a word at 9; lead: "<0.5" at 6
    and "< 0.5" at 9; pH: ">9" at 7; site: a gap at 7. A note column carries texts a
    spreadsheet program could take for formulas.
    """
    source = folder / "lab.xlsx"
    source.write_bytes(b"pretend workbook bytes")
    index = pd.Index([4, 5, 6, 7, 8, 9])
    frame = pd.DataFrame(
        {
            "sample": ["S1", "S2", "S3", "S4", "S5", "S6"],
            "site": ["north", "south", "north", np.nan, "south", "north"],
            "nitrate": [1.0, np.nan, 2.0, 2.5, np.nan, np.nan],
            "lead": [0.8, 1.2, np.nan, 0.9, 1.1, np.nan],
            "pH": [7.1, 7.3, 6.9, np.nan, 7.0, 7.2],
            "note": ["=1+1", "+cmd", "-x", "@SUM(A1)", "plain", np.nan],
        },
        index=index,
    )
    frame[["sample", "site", "note"]] = frame[["sample", "site", "note"]].astype(object)
    states = pd.DataFrame("observed", index=index, columns=frame.columns)
    notes = [
        (5, "nitrate", "missing", "", "", np.nan),
        (8, "nitrate", "missing", "n.d.", "", np.nan),
        (9, "nitrate", "text_in_number", "see lab book", "", np.nan),
        (6, "lead", "censored", "<0.5", "<", 0.5),
        (9, "lead", "censored", "< 0.5", "<", 0.5),
        (7, "pH", "censored", ">9", ">", 9.0),
        (7, "site", "missing", "", "", np.nan),
        (9, "note", "missing", "", "", np.nan),
    ]
    for row, column, state, *_ in notes:
        states.loc[row, column] = state
    states = states.astype(pd.CategoricalDtype(list(CELL_STATES)))
    columns = [
        ColumnInfo("sample", "identifier"),
        ColumnInfo("site", "category"),
        ColumnInfo("nitrate", "number", "mg/L"),
        ColumnInfo("lead", "number", "µg/L"),
        ColumnInfo("pH", "number"),
        ColumnInfo("note", "category"),
    ]
    digest = hashlib.sha256(source.read_bytes()).hexdigest()
    info = SourceInfo(source, "Data", header_row=2, sha256=digest, file_format="xlsx", units_row=3)
    cell_notes = pd.DataFrame([n for n in notes if n[2] != "missing" or n[3]], columns=list(NOTE_COLUMNS))
    return Sheet(
        frame, states, columns, info, cell_notes, problems=["a word in number column nitrate, row 9"]
    )


LAB_PLAN = FillPlan(k=2, carried_columns=("sample", "note"))


def empty_log() -> pd.DataFrame:
    return pd.DataFrame({name: pd.Series([], dtype=object) for name in LOG_FIELDS})


def fake_result(frame: pd.DataFrame, filled: dict[tuple[Any, str], Any] | None = None, **extra: Any) -> Any:
    """A FillResult-shaped object: ``filled`` maps (row label, column) -> value (k=1 donor)."""
    filled = filled or {}
    out = frame.copy()
    mask = pd.DataFrame(False, index=frame.index, columns=frame.columns)
    rows = []
    for (row, column), value in filled.items():
        out.loc[row, column] = value
        mask.loc[row, column] = True
        donor = frame.index[0]
        rows.append((row, column, value, "missing", "knn", 1, (donor,), (0.5,), (value,), np.nan, "ok", ""))
    log = pd.DataFrame(rows, columns=list(LOG_FIELDS)) if rows else empty_log()
    fields = {
        "frame": out,
        "filled": mask,
        "censored": pd.DataFrame(False, index=frame.index, columns=frame.columns),
        "log": log,
        "unfilled": pd.DataFrame({"row": [], "column": [], "reason": []}),
        "plan": FillPlan(k=1),
        "warnings": (),
        "k_weak_threshold": 1.0,
    }
    fields.update(extra)
    return SimpleNamespace(**fields)


# ------------------------------------------------------------------ readers
def openpyxl_cells(path: Path, sheet: str) -> dict[tuple[int, int], Any]:
    """Non-empty cell values by 1-based (row, column), read by openpyxl."""
    ws = openpyxl.load_workbook(path)[sheet]
    return {(c.row, c.column): c.value for row in ws.iter_rows() for c in row if c.value is not None}


def calamine_cells(path: Path, sheet: str) -> dict[tuple[int, int], Any]:
    """Non-empty cell values by 1-based (row, column), read by python-calamine."""
    data = CalamineWorkbook.from_path(str(path)).get_sheet_by_name(sheet)
    top, left = data.start or (0, 0)
    return {
        (top + i + 1, left + j + 1): v
        for i, row in enumerate(data.to_python())
        for j, v in enumerate(row)
        if v != ""
    }


def _part(package: zipfile.ZipFile, sheet: str) -> str:
    book = ElementTree.fromstring(package.read("xl/workbook.xml"))
    rels = ElementTree.fromstring(package.read("xl/_rels/workbook.xml.rels"))
    target = {r.get("Id"): r.get("Target") for r in rels.iter(REL)}
    rid = next(s.get(RID) for s in book.iter(f"{MAIN}sheet") if s.get("name") == sheet)
    return posixpath.normpath(posixpath.join("xl", str(target[rid])))


def raw_fills(path: Path, sheet: str) -> dict[str, str]:
    """Cell reference -> fill colour (``RRGGBB``) of every cell with a solid fill."""
    with zipfile.ZipFile(path) as package:
        styles = ElementTree.fromstring(package.read("xl/styles.xml"))
        xml = ElementTree.fromstring(package.read(_part(package, sheet)))
    fills = [f.find(f"{MAIN}patternFill") for f in styles.iter(f"{MAIN}fill")]
    colours = []
    for fill in fills:
        fg = fill.find(f"{MAIN}fgColor") if fill is not None else None
        colours.append(
            fg.get("rgb", "")[-6:] if fg is not None and fill.get("patternType") == "solid" else ""
        )
    xfs = styles.find(f"{MAIN}cellXfs")
    assert xfs is not None
    fill_of = [colours[int(xf.get("fillId", "0"))] for xf in xfs.iter(f"{MAIN}xf")]
    out = {}
    for cell in xml.iter(f"{MAIN}c"):
        colour = fill_of[int(cell.get("s", "0"))]
        if colour:
            out[str(cell.get("r"))] = colour
    return out


def raw_comments(path: Path, sheet: str) -> dict[str, str]:
    """Cell reference -> comment text, read from the sheet's comments part."""
    with zipfile.ZipFile(path) as package:
        part = _part(package, sheet)
        rels_name = posixpath.join(posixpath.dirname(part), "_rels", posixpath.basename(part) + ".rels")
        if rels_name not in package.namelist():
            return {}
        rels = ElementTree.fromstring(package.read(rels_name))
        targets = [
            r.get("Target", "") for r in rels.iter(REL) if str(r.get("Type", "")).endswith("/comments")
        ]
        if not targets:
            return {}
        xml = ElementTree.fromstring(
            package.read(posixpath.normpath(posixpath.join(posixpath.dirname(part), targets[0])))
        )
    return {
        str(c.get("ref")): "".join(t.text or "" for t in c.iter(f"{MAIN}t"))
        for c in xml.iter(f"{MAIN}comment")
    }


def about(path: Path) -> dict[str, dict[str, Any]]:
    """Sheet "About this fill" as section title -> key -> value (bold titles start sections)."""
    ws = openpyxl.load_workbook(path)["About this fill"]
    sections: dict[str, dict[str, Any]] = {"": {}}
    current = ""
    for key, value in ws.iter_rows(max_col=2):
        if key.value and value.value is None and key.font.b:
            current = key.value
            sections[current] = {}
        elif key.value:
            sections[current][key.value] = value.value
    return sections


def sheet_xml(path: Path, sheet: str) -> str:
    """The worksheet part's XML text."""
    with zipfile.ZipFile(path) as package:
        return package.read(_part(package, sheet)).decode("utf-8")
