"""Cell notes (comments) for a worksheet inside an existing package.

A note needs three things (ECMA-376 Part 1, sec. 18.7): an entry in the sheet's
comments part, a shape in its legacy VML drawing (which spreadsheet programs use to
show it) and a ``<legacyDrawing>`` element in the sheet. When the sheet already has
notes, ours are added to its parts; existing notes are never changed, and a cell that
already has a note keeps it alone.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass

from imputer_app.sheets._sheetxml import column_letter, escape_text

AUTHOR = "Kinfill"
_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
# Children of <worksheet> that come after legacyDrawing in schema order (sec. 18.3.1.99).
_AFTER_LEGACY = (
    "legacyDrawingHF", "drawingHF", "picture", "oleObjects",
    "controls", "webPublishItems", "tableParts", "extLst",
)  # fmt: skip
_VML_HEAD = (
    '<xml xmlns:v="urn:schemas-microsoft-com:vml" xmlns:o="urn:schemas-microsoft-com:office:office" '
    'xmlns:x="urn:schemas-microsoft-com:office:excel"><o:shapelayout v:ext="edit">'
    '<o:idmap v:ext="edit" data="{block}"/></o:shapelayout>'
    '<v:shapetype id="_x0000_t202" coordsize="21600,21600" o:spt="202" path="m,l,21600r21600,l21600,xe">'
    '<v:stroke joinstyle="miter"/><v:path gradientshapeok="t" o:connecttype="rect"/></v:shapetype>'
)
_SHAPE = (
    '<v:shape id="_x0000_s{id}" type="#_x0000_t202" style="position:absolute;margin-left:60pt;'
    'margin-top:2pt;width:230pt;height:{height}pt;z-index:{id};visibility:hidden" fillcolor="#ffffe1" '
    'o:insetmode="auto"><v:fill color2="#ffffe1"/><v:shadow on="t" color="black" obscured="t"/>'
    '<v:path o:connecttype="none"/><v:textbox style="mso-direction-alt:auto"><div style="text-align:left">'
    '</div></v:textbox><x:ClientData ObjectType="Note"><x:MoveWithCells/><x:SizeWithCells/>'
    "<x:Anchor>{c1}, 15, {r0}, 2, {c4}, 15, {r4}, 4</x:Anchor><x:AutoFill>False</x:AutoFill>"
    "<x:Row>{row}</x:Row><x:Column>{col}</x:Column></x:ClientData></v:shape>"
)


@dataclass
class NoteParts:
    """The comments and VML text of one sheet (new or existing), edited in memory."""

    comments: str
    vml: str
    comments_new: bool
    vml_new: bool


def new_parts(block: int) -> NoteParts:
    """Return empty comments and VML parts; ``block`` numbers the VML's shapes (1024 each)."""
    comments = (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        f'<comments xmlns="{_MAIN}"><authors></authors><commentList></commentList></comments>'
    )
    return NoteParts(comments, _VML_HEAD.format(block=block) + "</xml>", True, True)


def vml_block(vml_parts: list[str]) -> int:
    """Return a shape block number no VML part of the package uses yet."""
    used = [int(b) for part in vml_parts for b in re.findall(r'idmap\b[^>]*data="(\d+)', part)]
    return max(used, default=0) + 1


def existing_refs(comments: str) -> set[str]:
    """Return the cell references that already have a note."""
    return set(re.findall(r'<(?:\w+:)?comment\b[^>]*\sref="([A-Z]+\d+)"', comments))


def add_notes(parts: NoteParts, notes: Mapping[tuple[int, int], str]) -> tuple[NoteParts, int]:
    """Add a note per (row number, 0-based column) to ``parts``; return them and the count added."""
    taken = existing_refs(parts.comments)
    author = _author_id(parts)
    entries, shapes = [], []
    ids = [int(i) for i in re.findall(r"_x0000_s(\d+)", parts.vml)]
    block = re.search(r'idmap\b[^>]*data="(\d+)', parts.vml)
    next_id = max([*ids, 1024 * (int(block.group(1)) if block else 1)]) + 1
    for (row, col), text in sorted(notes.items()):
        ref = f"{column_letter(col)}{row}"
        if ref in taken:
            continue
        body = escape_text(text)
        entries.append(
            f'<comment ref="{ref}" authorId="{author}"><text><r>'
            f'<t xml:space="preserve">{body}</t></r></text></comment>'
        )
        lines = text.count("\n") + 1
        anchor = {"c1": col + 1, "r0": max(row - 2, 0), "c4": col + 5, "r4": row + 2 + lines // 2}
        shapes.append(_SHAPE.format(id=next_id, height=max(40, 13 * lines), row=row - 1, col=col, **anchor))
        next_id += 1
    comments = _insert_before_close(parts.comments, "commentList", "".join(entries))
    vml = parts.vml.replace("</xml>", "".join(shapes) + "</xml>") if "</xml>" in parts.vml else parts.vml
    return NoteParts(comments, vml, parts.comments_new, parts.vml_new), len(entries)


def _author_id(parts: NoteParts) -> int:
    authors = re.findall(r"<(?:\w+:)?author>(.*?)</(?:\w+:)?author>|<(?:\w+:)?author/>", parts.comments, re.S)
    if AUTHOR in authors:
        return authors.index(AUTHOR)
    parts.comments = _insert_before_close(parts.comments, "authors", f"<author>{AUTHOR}</author>")
    return len(authors)


def _insert_before_close(xml: str, name: str, added: str) -> str:
    found = re.search(rf"<(\w+:)?{name}\b[^>]*?(/?)>", xml)
    if found is None:
        raise ValueError(f"no <{name}> in the comments part")
    prefix = found.group(1) or ""
    if prefix:
        added = re.sub(r"<(/?)(\w)", rf"<\1{prefix}\2", added)
    if found.group(2):  # <name/>
        opened = found.group()[:-2] + ">" + added + f"</{prefix}{name}>"
        return xml[: found.start()] + opened + xml[found.end() :]
    close = xml.index(f"</{prefix}{name}>", found.end())
    return xml[:close] + added + xml[close:]


def add_legacy_drawing(sheet: str, rid_attribute: str) -> str:
    """Add ``<legacyDrawing>`` to a worksheet part in its schema place."""
    prefix = re.search(r"<(\w+:)?worksheet\b", sheet)
    tag = (prefix.group(1) or "") if prefix else ""
    places = [sheet.find(f"<{tag}{name}") for name in _AFTER_LEGACY]
    places = [p for p in places if p >= 0] or [sheet.rindex(f"</{tag}worksheet>")]
    at = min(places)
    return sheet[:at] + f"<{tag}legacyDrawing {rid_attribute}/>" + sheet[at:]
