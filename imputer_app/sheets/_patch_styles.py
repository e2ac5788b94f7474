"""Add cell styles to a workbook's ``styles.xml`` without touching the styles it has.

Styles are appended only: every existing ``<xf>``, font, fill, border and number
format keeps its index, so no cell of the workbook changes its look. Element names
follow ECMA-376 Part 1, sec. 18.8 (``numFmts``, ``fonts``, ``fills``, ``borders``,
``cellXfs``); custom number formats are numbered from 164 (sec. 18.8.30).
"""

from __future__ import annotations

import re
from collections.abc import Sequence

_FIRST_CUSTOM_FORMAT = 164
_CONTAINERS = {"numFmts": "numFmt", "fonts": "font", "fills": "fill", "borders": "border", "cellXfs": "xf"}
# Children of <styleSheet> in schema order; a missing container goes before the first later one.
_ORDER = ("numFmts", "fonts", "fills", "borders", "cellStyleXfs", "cellXfs", "cellStyles", "dxfs")


def _child_pattern(tag: str) -> re.Pattern[str]:
    return re.compile(rf"<{tag}\b[^>]*?/>|<{tag}\b[^>]*>.*?</{tag}>", re.S)


_CHILD = {tag: _child_pattern(tag) for tag in _CONTAINERS.values()}


def _container(xml: str, name: str) -> tuple[int, int, int, int] | None:
    """Return (start, inner start, inner end, end) of a container, or None when absent."""
    found = re.search(rf"<{name}\b[^>]*?(/?)>", xml)
    if found is None:
        return None
    if found.group(1):
        return found.start(), found.end(), found.end(), found.end()
    close = xml.index(f"</{name}>", found.end())
    return found.start(), found.end(), close, close + len(f"</{name}>")


def children(xml: str, name: str) -> list[str]:
    """Return the child elements of container ``name`` (e.g. all ``<xf>`` of ``cellXfs``)."""
    span = _container(xml, name)
    if span is None:
        return []
    return _CHILD[_CONTAINERS[name]].findall(xml, span[1], span[2])


def set_attr(element: str, name: str, value: str) -> str:
    """Return ``element`` with attribute ``name`` of its start tag set to ``value``."""
    close = element.index(">")
    head = element[: close + 1]
    pattern = re.compile(rf'(\s{re.escape(name)}=")[^"]*(")')
    if pattern.search(head):
        head = pattern.sub(lambda m: m.group(1) + value + m.group(2), head, count=1)
    else:
        cut = close - 1 if head.endswith("/>") else close
        head = head[:cut] + f' {name}="{value}"' + head[cut:]
    return head + element[close + 1 :]


def get_attr(element: str, name: str, default: str = "") -> str:
    """Return attribute ``name`` of ``element``'s start tag (``default`` when absent)."""
    head = element[: element.index(">") + 1]
    found = re.search(rf'\s{re.escape(name)}="([^"]*)"', head)
    return found.group(1) if found else default


def append(xml: str, name: str, items: Sequence[str]) -> tuple[str, int]:
    """Append ``items`` to container ``name``; return the new xml and the first new index."""
    span = _container(xml, name)
    if span is None:
        later = [xml.find(f"<{n}") for n in _ORDER[_ORDER.index(name) + 1 :]]
        at = min([p for p in later if p >= 0] or [xml.index("</styleSheet>")])
        xml = xml[:at] + f'<{name} count="0"></{name}>' + xml[at:]
        span = _container(xml, name)
        assert span is not None
    start, inner, close, end = span
    first = len(children(xml, name))
    head = set_attr(xml[start:inner], "count", str(first + len(items)))
    if inner == end:  # <name count="0"/>
        body = head[:-2] + ">" + "".join(items) + f"</{name}>"
    else:
        body = head + xml[inner:close] + "".join(items) + f"</{name}>"
    return xml[:start] + body + xml[end:], first


def solid_fill(colour: str) -> str:
    """Return a ``<fill>`` element of a solid pattern in ``colour`` ("#RRGGBB")."""
    rgb = "FF" + colour.lstrip("#").upper()
    pattern = f'<patternFill patternType="solid"><fgColor rgb="{rgb}"/><bgColor indexed="64"/></patternFill>'
    return f"<fill>{pattern}</fill>"


def add_marked(
    xml: str, bases: Sequence[int], colour: str, *, general: bool = False
) -> tuple[str, dict[int, int]]:
    """Add one style per base style: the same number format, font and border, with a fill.

    Parameters
    ----------
    xml : str
        ``styles.xml``.
    bases : sequence of int
        Indices into ``cellXfs`` (0 is the default style).
    colour : str
        The mark's fill colour.
    general : bool, default=False
        Use the General number format instead of the base's (a censored entry's
        stand-in may need more decimals than its column's format shows: 0.012 under
        ``0.00`` would read 0.01).

    Returns
    -------
    tuple of (str, dict of int to int)
        The new ``styles.xml`` and base index -> marked index.
    """
    if not bases:
        return xml, {}
    xfs = children(xml, "cellXfs")
    xml, fill = append(xml, "fills", [solid_fill(colour)])
    clones = []
    for base in bases:
        xf = xfs[base] if 0 <= base < len(xfs) else '<xf numFmtId="0" fontId="0" fillId="0" borderId="0"/>'
        xf = set_attr(set_attr(xf, "fillId", str(fill)), "applyFill", "1")
        clones.append(set_attr(xf, "numFmtId", "0") if general else xf)
    xml, first = append(xml, "cellXfs", clones)
    return xml, {base: first + k for k, base in enumerate(bases)}


def merge(xml: str, donor: str) -> tuple[str, list[int]]:
    """Append every cell style of another workbook's ``styles.xml`` (``donor``).

    Returns the new ``styles.xml`` and, per donor ``cellXfs`` index, its index here.
    Custom number formats get fresh ids; fonts, fills and borders are appended whole.
    """
    taken = [int(get_attr(f, "numFmtId", "0")) for f in children(xml, "numFmts")]
    next_id = max([*taken, _FIRST_CUSTOM_FORMAT - 1]) + 1
    formats: dict[str, str] = {}
    new_formats = []
    for element in children(donor, "numFmts"):
        old = get_attr(element, "numFmtId")
        formats[old] = str(next_id)
        new_formats.append(set_attr(element, "numFmtId", str(next_id)))
        next_id += 1
    if new_formats:
        xml, _ = append(xml, "numFmts", new_formats)
    offsets = {}
    for name, key in (("fonts", "fontId"), ("fills", "fillId"), ("borders", "borderId")):
        xml, offsets[key] = append(xml, name, children(donor, name))
    xfs = []
    for xf in children(donor, "cellXfs"):
        for key, offset in offsets.items():
            xf = set_attr(xf, key, str(int(get_attr(xf, key, "0")) + offset))
        number = get_attr(xf, "numFmtId", "0")
        xf = set_attr(set_attr(xf, "numFmtId", formats.get(number, number)), "xfId", "0")
        xfs.append(xf)
    xml, first = append(xml, "cellXfs", xfs)
    return xml, [first + k for k in range(len(xfs))]
