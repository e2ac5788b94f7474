"""Package-level edits of an xlsx: relationships, content types, the workbook part.

Open Packaging Conventions (ECMA-376 Part 2): every part is listed in
``[Content_Types].xml`` and reached through a ``.rels`` part; the workbook part lists
its sheets (Part 1, sec. 18.2.19-20) and its calculation settings (``calcPr``,
sec. 18.2.2). All edits here are targeted text edits, so content this module does not
know about stays byte for byte.
"""

from __future__ import annotations

import posixpath
import re
from collections.abc import Iterable

from imputer_app.sheets._patch_styles import set_attr

REL_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
REL_TYPE = REL_NS + "/"
WORKSHEET_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"
COMMENTS_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.comments+xml"
DRAWING_TYPE = "application/vnd.openxmlformats-officedocument.drawing+xml"
VML_TYPE = "application/vnd.openxmlformats-officedocument.vmlDrawing"
_EMPTY_RELS = (
    '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
    '<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"></Relationships>'
)
_RELATIONSHIP = re.compile(r"<Relationship\b[^>]*?/>|<Relationship\b[^>]*>.*?</Relationship>", re.S)
# Children of <workbook> that come after calcPr in schema order (sec. 18.2.27).
_AFTER_CALC = (
    "<oleSize", "<customWorkbookViews", "<pivotCaches", "<smartTagPr", "<smartTagTypes",
    "<webPublishing", "<fileRecoveryPr", "<webPublishObjects", "<extLst", "</workbook>",
)  # fmt: skip
#: Longest sheet name a spreadsheet program accepts (Excel specifications, quoted from memory).
MAX_SHEET_NAME = 31


def rels_name(part: str) -> str:
    """Return the relationships part of ``part`` (``xl/_rels/workbook.xml.rels``)."""
    folder, name = posixpath.split(part)
    return posixpath.join(folder, "_rels", name + ".rels")


def resolve(part: str, target: str) -> str:
    """Return the part name a relationship ``target`` of ``part`` points at."""
    if target.startswith("/"):
        return target.lstrip("/")
    return posixpath.normpath(posixpath.join(posixpath.dirname(part), target))


def relative(part: str, target_part: str) -> str:
    """Return ``target_part`` as a relationship target seen from ``part``."""
    return posixpath.relpath(target_part, posixpath.dirname(part))


def relationships(rels: str) -> list[dict[str, str]]:
    """Return the relationships of a ``.rels`` part as dicts of their attributes."""
    found = []
    for element in _RELATIONSHIP.findall(rels):
        head = element[: element.index(">")]
        found.append(dict(re.findall(r'(\w+)="([^"]*)"', head)))
    return found


def add_relationship(rels: str | None, kind: str, target: str) -> tuple[str, str]:
    """Add a relationship of type ``kind`` (last path word, e.g. "comments"); return rels and id."""
    rels = rels or _EMPTY_RELS
    taken = {r.get("Id") for r in relationships(rels)}
    number = len(taken) + 1
    while f"rId{number}" in taken:
        number += 1
    rid = f"rId{number}"
    element = f'<Relationship Id="{rid}" Type="{REL_TYPE}{kind}" Target="{target}"/>'
    return rels.replace("</Relationships>", element + "</Relationships>"), rid


def drop_relationship(rels: str, kind: str) -> str:
    """Remove every relationship of type ``kind`` (last path word, or a whole type URI)."""
    uri = kind if "://" in kind else REL_TYPE + kind
    return _RELATIONSHIP.sub(lambda m: "" if f'Type="{uri}"' in m.group() else m.group(), rels)


def add_overrides(types: str, parts: Iterable[tuple[str, str]]) -> str:
    """Add ``<Override>`` entries (part, content type) to ``[Content_Types].xml``."""
    added = "".join(f'<Override PartName="/{part}" ContentType="{kind}"/>' for part, kind in parts)
    return types.replace("</Types>", added + "</Types>")


def add_default(types: str, extension: str, kind: str) -> str:
    """Add a ``<Default>`` entry for a file ending unless one is there."""
    if re.search(rf'<Default\b[^>]*Extension="{re.escape(extension)}"', types, re.I):
        return types
    return types.replace("</Types>", f'<Default Extension="{extension}" ContentType="{kind}"/></Types>')


def drop_override(types: str, part: str) -> str:
    """Remove the ``<Override>`` of ``part``."""
    return re.sub(rf'<Override\b[^>]*PartName="/{re.escape(part)}"[^>]*/>', "", types)


def prefix_of(xml: str, namespace: str) -> str | None:
    """Return the prefix a part declares for ``namespace`` (None when it declares none)."""
    found = re.search(rf'xmlns:(\w+)="{re.escape(namespace)}"', xml)
    return found.group(1) if found else None


def rid_attribute(xml: str, rid: str) -> str:
    """Return an ``r:id`` attribute text usable in ``xml`` (declaring the prefix if needed)."""
    prefix = prefix_of(xml, REL_NS)
    if prefix is None:
        return f'xmlns:kr="{REL_NS}" kr:id="{rid}"'
    return f'{prefix}:id="{rid}"'


def sheet_names(workbook: str) -> list[str]:
    """Return the sheet names listed in a workbook part, in order (XML entities decoded)."""
    names = re.findall(r'<(?:\w+:)?sheet\b[^>]*?\sname="([^"]*)"', workbook)
    return [_unescape(n) for n in names]


def _unescape(text: str) -> str:
    return (
        text.replace("&quot;", '"').replace("&apos;", "'").replace("&lt;", "<").replace("&gt;", ">")
    ).replace("&amp;", "&")


def free_name(wanted: str, taken: Iterable[str]) -> str:
    """Return ``wanted``, or ``wanted (2)``, ``(3)``... so no name in ``taken`` repeats it.

    Names compare case-insensitively, as spreadsheet programs compare sheet names.
    """
    used = {t.casefold() for t in taken}
    name, number = wanted[:MAX_SHEET_NAME], 2
    while name.casefold() in used:
        suffix = f" ({number})"
        name = wanted[: MAX_SHEET_NAME - len(suffix)] + suffix
        number += 1
    return name


def add_sheets(workbook: str, sheets: Iterable[tuple[str, str]]) -> str:
    """Append ``<sheet>`` entries (name, relationship id) at the end of the sheet list."""
    ids = [int(i) for i in re.findall(r'<(?:\w+:)?sheet\b[^>]*?\ssheetId="(\d+)"', workbook)]
    next_id = max(ids, default=0) + 1
    prefix = re.search(r"<(\w+:)?sheets\b", workbook)
    tag = (prefix.group(1) or "") if prefix else ""
    added = ""
    for offset, (name, rid) in enumerate(sheets):
        escaped = name.replace("&", "&amp;").replace('"', "&quot;").replace("<", "&lt;").replace(">", "&gt;")
        added += f'<{tag}sheet name="{escaped}" sheetId="{next_id + offset}" {rid_attribute(workbook, rid)}/>'
    return workbook.replace(f"</{tag}sheets>", added + f"</{tag}sheets>", 1)


def full_calc_on_load(workbook: str) -> str:
    """Set ``fullCalcOnLoad="1"`` on the workbook's ``calcPr`` (adding one if absent)."""
    found = re.search(r"<(\w+:)?calcPr\b[^>]*?/?>", workbook)
    if found:
        patched = set_attr(found.group(), "fullCalcOnLoad", "1")
        return workbook[: found.start()] + patched + workbook[found.end() :]
    prefix = re.search(r"<(\w+:)?workbook\b", workbook)
    tag = (prefix.group(1) or "") if prefix else ""
    places = [workbook.find(m.replace("<", f"<{tag}", 1) if m != "</workbook>" else f"</{tag}workbook>")
              for m in _AFTER_CALC]  # fmt: skip
    at = min(p for p in places if p >= 0)
    return workbook[:at] + f'<{tag}calcPr fullCalcOnLoad="1"/>' + workbook[at:]


def add_app_titles(app: str, names: list[str]) -> str:
    """Add sheet names to ``docProps/app.xml`` (HeadingPairs count and TitlesOfParts).

    Returns ``app`` unchanged when its layout is not the usual one; the part only
    describes the workbook and programs do not rely on it.
    """
    pair = re.search(r"(Worksheets</vt:lpstr></vt:variant><vt:variant><vt:i4>)(\d+)(</vt:i4>)", app)
    titles = re.search(r'(<TitlesOfParts>\s*<vt:vector size=")(\d+)("[^>]*>)(.*?)(</vt:vector>)', app, re.S)
    if pair is None or titles is None:
        return app
    before = 0
    for heading in re.finditer(r"<vt:lpstr>([^<]*)</vt:lpstr></vt:variant><vt:variant><vt:i4>(\d+)", app):
        if heading.group(1) == "Worksheets":
            break
        before += int(heading.group(2))
    entries = re.findall(r"<vt:lpstr>.*?</vt:lpstr>|<vt:lpstr/>", titles.group(4), re.S)
    at = before + int(pair.group(2))
    added = [f"<vt:lpstr>{n.replace('&', '&amp;').replace('<', '&lt;')}</vt:lpstr>" for n in names]
    entries[at:at] = added
    body = titles.group(1) + str(len(entries)) + titles.group(3) + "".join(entries) + titles.group(5)
    app = app[: titles.start()] + body + app[titles.end() :]
    count = str(int(pair.group(2)) + len(names))
    return app[: pair.start()] + pair.group(1) + count + pair.group(3) + app[pair.end() :]
