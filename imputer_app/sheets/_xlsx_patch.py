"""The workbook export: the lab's own .xlsx/.xlsm with the filled cells written in.

Loading and re-saving a workbook with a library drops what the library does not
understand (charts and images, with openpyxl). So the input package is copied part by
part and only these parts change:

- the data sheet: each filled cell gets its value and a style that is its column's
  style plus our fill mark, and a note with its evidence;
- every sheet: formula cells lose their stored result, and the workbook part asks for
  a full recalculation on opening (``calcPr fullCalcOnLoad``), so formulas that use
  filled cells show values computed from them; the calculation chain is removed;
- ``styles.xml``, the relationships, content types and ``docProps/app.xml`` gain
  entries for our styles, notes and sheets ("Fill log", "Not filled", "Recovery
  test", "About this fill", renamed when the workbook already has such a sheet).

Every other part is copied byte for byte. An .ods or .xls input is first copied into a
new .xlsx package (:mod:`imputer_app.sheets._workbook_copy`), which is then written into
the same way.
"""

from __future__ import annotations

import hashlib
import io
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any
from xml.etree import ElementTree

import numpy as np
import pandas as pd

from imputer_app.errors import ExportError
from imputer_app.sheets import _patch_cells as cells
from imputer_app.sheets import _patch_notes as notes
from imputer_app.sheets import _patch_parts as pkg
from imputer_app.sheets import _patch_styles as styles
from imputer_app.sheets._content import CENSORED, FILLED, ExportContent, cell_comments
from imputer_app.sheets._patch_sheets import build_donor, row_bodies, sheet_order, transplant
from imputer_app.sheets._sheetxml import column_letter, value_cell
from imputer_app.sheets._ticker import Ticker
from imputer_app.sheets._workbook import read_workbook
from imputer_app.sheets._write_xlsx import CENSORED_COLOUR, FILLED_COLOUR
from imputer_app.sheets._xlsx_package import SHEET_COMPRESSLEVEL, _write_spliced, sheet_parts

if TYPE_CHECKING:
    from imputer_app.sheets._model import Sheet

#: Workbook formats whose package this export can write into.
PACKAGE_FORMATS = ("xlsx", "xlsm")
_MACRO_MAIN = "application/vnd.ms-excel.sheet.macroEnabled.main+xml"
_PLAIN_MAIN = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"
_VBA_REL = "http://schemas.microsoft.com/office/2006/relationships/vbaProject"
_CALC_CHAIN = "xl/calcChain.xml"


@dataclass(frozen=True)
class Plan:
    """Where things go, worked out before anything is written (the run record needs it)."""

    data_part: str
    names: dict[str, str]
    drop_macros: bool
    to_xlsm: bool
    copy: bytes | None = None  # the .xlsx copy of an .ods/.xls input, written into instead of it


def plan_export(
    sheet: Sheet, target: Path, content: ExportContent, with_report: bool, package: bytes | None = None
) -> Plan:
    """Check that ``sheet``'s workbook can take the fill and choose our sheets' names.

    ``package`` is the workbook to write into when it is not the input file itself (the
    .xlsx copy of an .ods/.xls input).
    """
    source = sheet.source
    try:
        with zipfile.ZipFile(io.BytesIO(package) if package is not None else source.path) as zipped:
            parts = sheet_parts(zipped)
            workbook = zipped.read("xl/workbook.xml").decode("utf-8")
            has_macros = any(n.lower().endswith("vbaproject.bin") for n in zipped.namelist())
    except (OSError, KeyError, zipfile.BadZipFile, ElementTree.ParseError) as error:
        raise ExportError(
            f"{source.path.name} cannot be opened as a workbook any more ({error}); read it again, "
            "or export with the table layout"
        ) from None
    if source.sheet not in parts:
        raise ExportError(f"sheet '{source.sheet}' is no longer in {source.path.name}; read the file again")
    if not content.layout.aligned:
        raise ExportError(
            f"the rows of {source.path.name} cannot be matched to the fill; export with the table layout"
        )
    taken = pkg.sheet_names(workbook)
    roles = ["Fill log"] + (["Not filled"] if len(content.unfilled) else [])
    roles += (["Recovery test"] if with_report else []) + ["Pictures", "About this fill"]
    names: dict[str, str] = {}
    for role in roles:
        names[role] = pkg.free_name(role, taken)
        taken.append(names[role])
    drop = has_macros and target.suffix.lower() != ".xlsm"
    return Plan(parts[str(source.sheet)], names, drop, target.suffix.lower() == ".xlsm", package)


def file_columns(sheet: Sheet, data: bytes, xml: str, fmt: str | None = None) -> list[int]:
    """Return the 0-based file column of each column of ``sheet.frame``.

    The reader keeps a column when it has a header text or a value in a data row.
    The columns holding any value from the header row down (read from the sheet's
    XML) are those or more; when there are more (a note beside the table), the
    reader's rule is applied to the file's grid.
    """
    n_columns = sheet.frame.shape[1]
    first = sheet.source.header_row or int(sheet.frame.index[0])
    quick = cells.value_columns(xml, first)
    if len(quick) == n_columns:
        return quick
    grid = read_workbook(data, sheet.source.path, fmt or sheet.source.file_format, sheet.source.sheet).cells
    rows = sheet.frame.index.to_numpy(dtype=np.int64) - 1
    header = sheet.source.header_row - 1
    kept = []
    for col in range(grid.shape[1]):
        texts = [grid[header, col]] if 0 <= header < grid.shape[0] else []
        texts += list(grid[rows[rows < grid.shape[0]], col])
        if any(str(v).strip() for v in texts if v is not None):
            kept.append(col)
    if len(kept) != n_columns:
        raise ExportError(
            f"the columns of {sheet.source.path.name} cannot be matched to the fill "
            f"({len(kept)} in the file, {n_columns} read); export with the table layout"
        )
    return kept


def write_workbook(
    target: Path,
    sheet: Sheet,
    result: Any,
    content: ExportContent,
    record: dict[str, Any],
    plan: Plan,
    extras: tuple[Any, bytes | None, bool],
    ticker: Ticker,
) -> dict[str, int]:
    """Write the lab's workbook with the fill to ``target`` (a temporary file).

    ``extras`` is (recovery report or None, chart PNG or None, write cell notes).
    Returns counts for the summary: cells written, notes added.
    """
    report, chart, with_notes = extras
    data = plan.copy if plan.copy is not None else sheet.source.path.read_bytes()
    if plan.copy is None and hashlib.sha256(data).hexdigest() != sheet.source.sha256:
        raise ExportError(
            f"{sheet.source.path.name} changed since it was read; read it again before exporting"
        )
    ticker.step()
    out = zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED, compresslevel=SHEET_COMPRESSLEVEL)
    with out, zipfile.ZipFile(io.BytesIO(data)) as package:
        parts = {name: package.read(name) for name in package.namelist()}
        changed, counts = _patch(parts, sheet, result, content, plan, data, with_notes)
        ticker.step(len(content.frame))  # the data sheet's rows are done
        donor = build_donor(content, record, report, chart, plan.names, ticker)
        style_xml = (changed["xl/styles.xml"] or b"").decode("utf-8")
        style_xml, xf_map = styles.merge(style_xml, _donor_styles(donor.package))
        changed["xl/styles.xml"] = style_xml.encode("utf-8")
        added, kinds = transplant(donor, xf_map, set(parts) | set(changed))
        _register_sheets(changed, parts, donor, kinds, plan)
        for info in package.infolist():
            name = info.filename
            if name in changed and changed[name] is None:
                continue
            out.writestr(info, changed.get(name, parts[name]) or b"", compresslevel=SHEET_COMPRESSLEVEL)
        for name, value in changed.items():
            if value is not None and name not in parts:
                out.writestr(name, value)
        bodies = row_bodies(content, donor, xf_map, ticker)
        by_part = dict(sheet_order(donor))
        for name, value in added.items():
            body = next((bodies[s] for s, p in by_part.items() if p == name and s in bodies), None)
            if body is None:
                out.writestr(name, value)
            else:
                _write_spliced(out, name, value.decode("utf-8"), body, 48 * content.log_table.size)
        ticker.step()  # a cancel asked for while the last rows were written still counts
    return counts


def _donor_styles(package: bytes) -> str:
    with zipfile.ZipFile(io.BytesIO(package)) as donor:
        return donor.read("xl/styles.xml").decode("utf-8")


def _patch(
    parts: dict[str, bytes],
    sheet: Sheet,
    result: Any,
    content: ExportContent,
    plan: Plan,
    data: bytes,
    with_notes: bool,
) -> tuple[dict[str, bytes | None], dict[str, int]]:
    """Return the changed parts (None: removed): data sheet, styles, formulas, notes."""
    changed: dict[str, bytes | None] = {}
    xml = parts[plan.data_part].decode("utf-8")
    if "<worksheet" not in xml or "<sheetData" not in xml:  # prefixed SpreadsheetML: not edited as text
        raise ExportError(
            f"sheet '{sheet.source.sheet}' of {sheet.source.path.name} is written in a form Kinfill cannot "
            "edit in place; export with the table layout"
        )
    columns = file_columns(sheet, data, xml, "xlsx" if plan.copy is not None else None)
    rows = content.layout.data_rows
    # Filled cells, and censored entries the plan replaced by a value (half the limit...).
    written = (content.marks != 0) & content.frame.notna().to_numpy()
    where_i, where_j = np.nonzero(written)
    at = {(int(rows[i]), columns[j]): (int(i), int(j)) for i, j in zip(where_i, where_j, strict=True)}
    by_row: dict[int, dict[int, str]] = {}
    for row, col in at:
        by_row.setdefault(row, {})[col] = ""
    column_style = cells.column_styles(xml, set(rows.tolist()), [columns[j] for j in set(where_j.tolist())])
    own, occupied = cells.cell_styles(xml, by_row)
    clash = sorted(set(at) & occupied)
    if clash:  # the rows or columns do not line up with the file: never overwrite a value
        row, col = clash[0]
        raise ExportError(
            f"cell {column_letter(col)}{row} of sheet '{sheet.source.sheet}' holds a value, but the fill "
            "would write there; read the file again, or export with the table layout"
        )
    bases = {key: column_style.get(key[1], own.get(key, 0)) for key in at}
    style_xml = parts["xl/styles.xml"].decode("utf-8")
    # a stand-in with more decimals than its column's (0.012 under "0.00") shows in General
    wide = _wide_stand_ins(content)
    kinds = {key: _WIDE if ij in wide else int(content.marks[ij]) for key, ij in at.items()}
    marked: dict[int, dict[int, int]] = {}
    for mark, colour in ((FILLED, FILLED_COLOUR), (CENSORED, CENSORED_COLOUR), (_WIDE, CENSORED_COLOUR)):
        used = sorted({bases[key] for key, kind in kinds.items() if kind == mark})
        style_xml, marked[mark] = styles.add_marked(style_xml, used, colour, general=mark == _WIDE)
    changed["xl/styles.xml"] = style_xml.encode("utf-8")
    frame = content.frame
    for (row, col), (i, j) in at.items():
        value = frame.iat[i, j]
        value = value.item() if isinstance(value, np.generic) else value
        ref = f"{column_letter(col)}{row}"
        style = marked[kinds[(row, col)]][bases[(row, col)]]
        by_row[row][col] = value_cell(ref, value, f' s="{style}"') or f'<c r="{ref}"/>'
    xml = cells.set_cells(xml, by_row)
    counts = {"cells": len(at), "notes": 0}
    if with_notes:
        texts = cell_comments(content)
        wanted = {key: texts[pos] for key, pos in at.items() if pos in texts}
        xml, counts["notes"] = _add_notes(parts, changed, plan.data_part, xml, wanted)
    changed[plan.data_part] = xml.encode("utf-8")
    _recalculate(parts, changed)
    return changed, counts


#: Style group of censored stand-ins that need more decimals than their column has.
_WIDE = -1


def _wide_stand_ins(content: ExportContent) -> set[tuple[int, int]]:
    """(row, column) positions of censored stand-ins with more decimals than their column's.

    A stand-in keeps two significant digits below its column's decimals
    (:func:`~imputer_app.plan_rounding.round_stand_ins`); the column's number format
    would hide them (0.012 under ``0.00`` reads 0.01).
    """
    out: set[tuple[int, int]] = set()
    for j, places in enumerate(content.decimals or []):
        rows = np.flatnonzero(content.marks[:, j] == CENSORED)
        if places is None or not rows.size:
            continue
        values = pd.to_numeric(content.frame.iloc[rows, j], errors="coerce").to_numpy(dtype=np.float64)
        with np.errstate(invalid="ignore"):
            wide = np.isfinite(values) & (np.abs(np.round(values, places) - values) > 1e-12 * np.abs(values))
        out.update((int(i), j) for i in rows[wide].tolist())
    return out


def _add_notes(
    parts: dict[str, bytes],
    changed: dict[str, bytes | None],
    part: str,
    xml: str,
    wanted: dict[tuple[int, int], str],
) -> tuple[str, int]:
    if not wanted:
        return xml, 0
    rels_part = pkg.rels_name(part)
    rels = parts[rels_part].decode("utf-8") if rels_part in parts else None
    found = {r.get("Type", "").rsplit("/", 1)[-1]: r for r in pkg.relationships(rels or "")}
    vml_parts = [parts[n].decode("utf-8", "replace") for n in parts if n.endswith(".vml")]
    fresh = notes.new_parts(notes.vml_block(vml_parts))
    comments_part = pkg.resolve(part, found["comments"]["Target"]) if "comments" in found else None
    vml_part = pkg.resolve(part, found["vmlDrawing"]["Target"]) if "vmlDrawing" in found else None
    current = notes.NoteParts(
        parts[comments_part].decode("utf-8") if comments_part else fresh.comments,
        parts[vml_part].decode("utf-8") if vml_part else fresh.vml,
        comments_part is None,
        vml_part is None,
    )
    done, count = notes.add_notes(current, wanted)
    types = parts["[Content_Types].xml"].decode("utf-8")
    if comments_part is None:
        comments_part = _free_name(parts, "xl/comments{}.xml")
        rels, _ = pkg.add_relationship(rels, "comments", pkg.relative(part, comments_part))
        types = pkg.add_overrides(types, [(comments_part, pkg.COMMENTS_TYPE)])
    if vml_part is None:
        vml_part = _free_name(parts, "xl/drawings/vmlDrawing{}.vml")
        rels, rid = pkg.add_relationship(rels, "vmlDrawing", pkg.relative(part, vml_part))
        types = pkg.add_default(types, "vml", pkg.VML_TYPE)
        xml = notes.add_legacy_drawing(xml, pkg.rid_attribute(xml, rid))
    changed[comments_part] = done.comments.encode("utf-8")
    changed[vml_part] = done.vml.encode("utf-8")
    changed[rels_part] = (rels or "").encode("utf-8")
    changed["[Content_Types].xml"] = types.encode("utf-8")
    return xml, count


def _free_name(parts: dict[str, bytes], pattern: str) -> str:
    number = 1
    while pattern.format(number) in parts:
        number += 1
    return pattern.format(number)


def _text(parts: dict[str, bytes], changed: dict[str, bytes | None], name: str) -> str:
    value = changed.get(name, parts.get(name))
    return (value or b"").decode("utf-8")


def _recalculate(parts: dict[str, bytes], changed: dict[str, bytes | None]) -> None:
    """Drop stored formula results everywhere, the calculation chain, and ask for recalculation."""
    for name in sheet_parts_of(parts):
        xml = _text(parts, changed, name)
        patched = cells.drop_formula_results(xml)
        if patched != xml:
            changed[name] = patched.encode("utf-8")
    workbook = pkg.full_calc_on_load(_text(parts, changed, "xl/workbook.xml"))
    changed["xl/workbook.xml"] = workbook.encode("utf-8")
    if _CALC_CHAIN in parts:
        changed[_CALC_CHAIN] = None
        rels = "xl/_rels/workbook.xml.rels"
        changed[rels] = pkg.drop_relationship(_text(parts, changed, rels), "calcChain").encode("utf-8")
        types = "[Content_Types].xml"
        changed[types] = pkg.drop_override(_text(parts, changed, types), _CALC_CHAIN).encode("utf-8")


def sheet_parts_of(parts: dict[str, bytes]) -> list[str]:
    """Return the worksheet part names of a package held as a dict."""
    rels = parts["xl/_rels/workbook.xml.rels"].decode("utf-8")
    return [
        pkg.resolve("xl/workbook.xml", r["Target"])
        for r in pkg.relationships(rels)
        if r.get("Type", "").endswith("/worksheet")
    ]


def _register_sheets(
    changed: dict[str, bytes | None],
    parts: dict[str, bytes],
    donor: Any,
    kinds: list[tuple[str, str]],
    plan: Plan,
) -> None:
    """List our sheets in the workbook part, its relationships, content types and app.xml."""
    rels_part = "xl/_rels/workbook.xml.rels"
    rels = _text(parts, changed, rels_part)
    entries = []
    for name, part in sheet_order(donor):
        rels, rid = pkg.add_relationship(rels, "worksheet", pkg.relative("xl/workbook.xml", part))
        entries.append((name, rid))
    workbook = pkg.add_sheets(_text(parts, changed, "xl/workbook.xml"), entries)
    types = pkg.add_overrides(_text(parts, changed, "[Content_Types].xml"), kinds)
    if plan.drop_macros:
        rels = pkg.drop_relationship(rels, _VBA_REL)
        types = types.replace(_MACRO_MAIN, _PLAIN_MAIN)
        for name in parts:  # the macro project, its signatures and their relationships
            if "vbaproject" in name.lower():
                changed[name] = None
                types = pkg.drop_override(types, name)
    elif plan.to_xlsm:  # a .xlsm file must say it may hold macros, or programs refuse it
        types = types.replace(_PLAIN_MAIN, _MACRO_MAIN)
    changed[rels_part] = rels.encode("utf-8")
    changed["xl/workbook.xml"] = workbook.encode("utf-8")
    changed["[Content_Types].xml"] = types.encode("utf-8")
    if "docProps/app.xml" in parts:
        app = pkg.add_app_titles(_text(parts, changed, "docProps/app.xml"), [n for n, _ in entries])
        changed["docProps/app.xml"] = app.encode("utf-8")
