"""The sheets Kinfill adds to a lab's workbook, made apart and moved into its package.

xlsxwriter writes a small workbook holding only our sheets ("Fill log", "Not filled",
"Recovery test", "About this fill") with the same helpers as the table export. Its
worksheet parts (and their drawings and images) are then copied into the lab's
package under fresh part names: shared strings become inline strings, style indices
are renumbered into the lab's ``styles.xml`` (see :func:`_patch_styles.merge`), and
the long tables' rows are streamed in when the package is written.
"""

from __future__ import annotations

import io
import posixpath
import re
import zipfile
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from typing import Any

import xlsxwriter
from xlsxwriter.format import Format

from imputer_app.sheets import _write_xlsx as flat
from imputer_app.sheets._content import ExportContent
from imputer_app.sheets._patch_parts import relationships, relative, rels_name, resolve
from imputer_app.sheets._ticker import Ticker
from imputer_app.sheets._xlsx_package import sheet_parts

#: Our sheets, in the order they are added (a role names each).
ROLES = ("Fill log", "Not filled", "Recovery test", "Pictures", "About this fill")

_STYLE_REF = re.compile(r'(<(?:c|row)\b[^>]*?\ss=")(\d+)(")')
_COL_STYLE = re.compile(r'(<col\b[^>]*?\sstyle=")(\d+)(")')
_SHARED = re.compile(r'<c\b([^>]*?)\st="s"([^>]*)><v>(\d+)</v></c>')
_SI = re.compile(r"<si>(.*?)</si>", re.S)


@dataclass
class Donor:
    """Our sheets as a separate package, ready to move into the lab's."""

    package: bytes
    formats: dict[str, Format]
    names: dict[str, str]
    parts: dict[str, str] = field(default_factory=dict)


def build_donor(
    content: ExportContent,
    record: dict[str, Any],
    report: Any,
    chart: bytes | None,
    names: dict[str, str],
    ticker: Ticker,
) -> Donor:
    """Write our sheets (``names``: role -> final sheet name) into a small package.

    The "Pictures" role is dropped from the donor's names when no picture was drawn.
    """
    names = dict(names)
    buffer = io.BytesIO()
    book = xlsxwriter.Workbook(buffer, flat._OPTIONS)
    formats = flat._formats(book)
    log = book.add_worksheet(names["Fill log"])
    flat._table_skeleton(log, content.log_table)
    for j, name in enumerate(flat._STYLE_NAMES):  # see _write_xlsx: makes each row style exist
        log.write_blank(0, j, None, formats[name])
    if "Not filled" in names:
        flat._table_skeleton(book.add_worksheet(names["Not filled"]), content.unfilled)
    if "Recovery test" in names:
        flat._recovery_sheet(book.add_worksheet(names["Recovery test"]), report, record, chart, formats)
    if "Pictures" in names and not flat._add_pictures(book, content, record, ticker, names["Pictures"]):
        del names["Pictures"]
    flat._about_sheet(book.add_worksheet(names["About this fill"]), record, formats)
    book.close()
    package = buffer.getvalue()
    with zipfile.ZipFile(io.BytesIO(package)) as donor:
        parts = {name: part for name, part in sheet_parts(donor).items()}
    return Donor(package, formats, names, parts)


def row_bodies(
    content: ExportContent, donor: Donor, xf_map: list[int], ticker: Ticker
) -> dict[str, Iterator[str]]:
    """Return the streamed rows of the long sheets, styled with the lab workbook's indices."""
    styles = flat.Styles(
        **{name: f' s="{xf_map[donor.formats[name].xf_index]}"' for name in flat._STYLE_NAMES}
    )
    bodies = {donor.names["Fill log"]: flat._table_rows(content.log_table, styles, ticker)}
    if "Not filled" in donor.names:
        bodies[donor.names["Not filled"]] = flat._table_rows(content.unfilled, styles, ticker)
    return bodies


def _free(name: str, taken: set[str]) -> str:
    folder, base = posixpath.split(name)
    stem, ext = posixpath.splitext(base)
    stem = stem.rstrip("0123456789")
    number = 1
    while posixpath.join(folder, f"{stem}{number}{ext}") in taken:
        number += 1
    chosen = posixpath.join(folder, f"{stem}{number}{ext}")
    taken.add(chosen)
    return chosen


def content_type(types: str, part: str) -> str:
    """Return a part's content type from a ``[Content_Types].xml`` text."""
    override = re.search(rf'<Override\b[^>]*PartName="/{re.escape(part)}"[^>]*ContentType="([^"]*)"', types)
    if override:
        return override.group(1)
    ext = posixpath.splitext(part)[1].lstrip(".")
    pattern = rf'<Default\b[^>]*Extension="{re.escape(ext)}"[^>]*ContentType="([^"]*)"'
    default = re.search(pattern, types, re.I)
    return default.group(1) if default else "application/octet-stream"


def transplant(
    donor: Donor, xf_map: list[int], taken: set[str]
) -> tuple[dict[str, bytes], list[tuple[str, str]]]:
    """Copy our worksheets and what they use under part names not in ``taken``.

    Returns new part name -> bytes (worksheet parts as UTF-8 XML text) and the
    (part, content type) of each new part; the worksheet parts come first, in
    :data:`ROLES` order, and ``donor.parts`` is updated to their new names.
    """
    out: dict[str, bytes] = {}
    kinds: list[tuple[str, str]] = []
    with zipfile.ZipFile(io.BytesIO(donor.package)) as package:
        types = package.read("[Content_Types].xml").decode("utf-8")
        names = set(package.namelist())
        strings = _shared_strings(package)
        for role in ROLES:
            if role not in donor.names:
                continue
            old = donor.parts[donor.names[role]]
            new = _free("xl/worksheets/sheet1.xml", taken)
            xml = _restyle(package.read(old).decode("utf-8"), xf_map, strings)
            out[new] = xml.encode("utf-8")
            kinds.append((new, content_type(types, old)))
            _copy_related(package, names, types, old, new, taken, out, kinds)
            donor.parts[donor.names[role]] = new
    return out, kinds


def _copy_related(
    package: zipfile.ZipFile,
    names: set[str],
    types: str,
    old: str,
    new: str,
    taken: set[str],
    out: dict[str, bytes],
    kinds: list[tuple[str, str]],
) -> None:
    """Copy the parts ``old`` points at (drawings, images), recursively, renaming them."""
    rels_part = rels_name(old)
    if rels_part not in names:
        return
    rels = package.read(rels_part).decode("utf-8")
    for rel in relationships(rels):
        if rel.get("TargetMode") == "External":
            continue
        target = resolve(old, rel["Target"])
        moved = _free(target, taken)
        out[moved] = package.read(target)
        kinds.append((moved, content_type(types, target)))
        _copy_related(package, names, types, target, moved, taken, out, kinds)
        rels = rels.replace(f'Target="{rel["Target"]}"', f'Target="{relative(new, moved)}"')
    new_rels = rels_name(new)
    taken.add(new_rels)
    out[new_rels] = rels.encode("utf-8")


def _shared_strings(package: zipfile.ZipFile) -> list[str]:
    if "xl/sharedStrings.xml" not in package.namelist():
        return []
    return _SI.findall(package.read("xl/sharedStrings.xml").decode("utf-8"))


def _restyle(xml: str, xf_map: list[int], strings: list[str]) -> str:
    xml = xml.replace(' tabSelected="1"', "")
    xml = _STYLE_REF.sub(lambda m: m.group(1) + str(xf_map[int(m.group(2))]) + m.group(3), xml)
    xml = _COL_STYLE.sub(lambda m: m.group(1) + str(xf_map[int(m.group(2))]) + m.group(3), xml)
    return _SHARED.sub(
        lambda m: f'<c{m.group(1)}{m.group(2)} t="inlineStr"><is>{strings[int(m.group(3))]}</is></c>', xml
    )


def sheet_order(donor: Donor) -> Iterable[tuple[str, str]]:
    """Return (sheet name, part) of our sheets in the order they are added."""
    return [(donor.names[r], donor.parts[donor.names[r]]) for r in ROLES if r in donor.names]
