"""Write values into one worksheet's XML in place, leaving every other byte as it was.

The worksheet is never parsed into a tree: a tree round trip would rename namespace
prefixes and drop declarations that ``mc:Ignorable`` needs. Instead the ``<row>``
elements of ``<sheetData>`` (ECMA-376 Part 1, sec. 18.3.1.73) are found with a
regular expression and only the rows that receive a cell are rebuilt; inside them a
``<c>`` element (sec. 18.3.1.4) is replaced or inserted in column order.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Iterable, Mapping
from functools import lru_cache

_ROW = re.compile(r"<row\b[^>]*?/>|<row\b[^>]*>.*?</row>", re.S)
# A row whose start tag carries its number: the number comes with the match, no second search.
_NUMBERED_ROW = re.compile(r'<row\b[^>]*?\sr="(\d+)"[^>]*?(?:/>|(?<!/)>.*?</row>)', re.S)
_VALUE_LETTERS = re.compile(r'<c r="([A-Z]+)\d+"[^>]*><(?:v|is)>')
# A stored result right after a formula (a <v> follows </f> or a shared formula's <f .../>);
# each pattern starts with literal text, which the regex engine finds quickly.
_AFTER_FORMULA = re.compile(r"</f>(?:<v>[^<]*</v>|<v/>)")
_AFTER_SHARED = re.compile(r"/>(?:<v>[^<]*</v>|<v/>)")
_FORMULA_TYPE = re.compile(r'<c\b([^>]*?)\st="(?:str|b|e|n)"([^>]*>)(?=<f\b)')
_CELL = re.compile(r"<c\b[^>]*?/>|<c\b[^>]*>.*?</c>", re.S)
_LETTERED_CELL = re.compile(r'<c r="([A-Z]+)\d+"[^>]*?(?:/>|(?<!/)>.*?</c>)', re.S)
_ROW_NUMBER = re.compile(r'\sr="(\d+)"')
_CELL_REF = re.compile(r'\sr="([A-Z]+)(\d+)"')
_STYLE = re.compile(r'\ss="(\d+)"')
_KIND = re.compile(r'\st="(\w+)"')
_SPANS = re.compile(r'\sspans="[^"]*"')


@lru_cache(maxsize=4096)
def letters_index(letters: str) -> int:
    """Return the 0-based column index of spreadsheet letters (A -> 0, AA -> 26)."""
    index = 0
    for char in letters:
        index = index * 26 + ord(char) - 64
    return index - 1


def sheet_data_span(xml: str) -> tuple[int, int]:
    """Return the start and end offsets of the inside of ``<sheetData>`` (equal when empty)."""
    start = xml.index("<sheetData")
    close = xml.index(">", start)
    if xml[close - 1] == "/":
        return close + 1, close + 1
    return close + 1, xml.index("</sheetData>", close)


def _start_tag(element: str) -> str:
    return element[: element.index(">") + 1]


def _row_number(element: str, previous: int) -> int:
    found = _ROW_NUMBER.search(_start_tag(element))
    return int(found.group(1)) if found else previous + 1


def locate_rows(xml: str, start: int, end: int) -> tuple[list[int], list[int], list[int]]:
    """Return number, start and end offset of every ``<row>`` between ``start`` and ``end``."""
    numbers, starts, ends = [], [], []
    total = xml.count("<row", start, end)
    for match in _NUMBERED_ROW.finditer(xml, start, end):
        numbers.append(int(match.group(1)))
        starts.append(match.start())
        ends.append(match.end())
    if len(numbers) == total:
        return numbers, starts, ends
    numbers, starts, ends = [], [], []  # some rows lack their number: count them in order
    number = 0
    for match in _ROW.finditer(xml, start, end):
        number = _row_number(match.group(), number)
        numbers.append(number)
        starts.append(match.start())
        ends.append(match.end())
    return numbers, starts, ends


def _find_rows(xml: str, start: int, end: int, rows: Iterable[int]) -> dict[int, tuple[int, int]] | None:
    """Find rows by plain text search when every row starts ``<row r="N"`` (Excel, xlsxwriter).

    Returns None when that does not hold or a wanted row is absent (then rows are located
    by :func:`locate_rows`).
    """
    if xml.count('<row r="', start, end) != xml.count("<row", start, end):
        return None
    found: dict[int, tuple[int, int]] = {}
    cursor = start
    for number in sorted(rows):
        at = xml.find(f'<row r="{number}"', cursor, end)
        if at < 0:
            return None
        close = xml.index(">", at)
        stop = close + 1 if xml[close - 1] == "/" else xml.index("</row>", close) + len("</row>")
        found[number] = (at, stop)
        cursor = stop
    return found


def _touched(xml: str, rows: Iterable[int]) -> dict[int, tuple[int, int]]:
    """Return row number -> (start, end) of the ``<row>`` elements among ``rows`` that exist."""
    start, end = sheet_data_span(xml)
    wanted = set(rows)
    quick = _find_rows(xml, start, end, wanted)
    if quick is not None:
        return quick
    numbers, starts, ends = locate_rows(xml, start, end)
    return {n: (a, b) for n, a, b in zip(numbers, starts, ends, strict=True) if n in wanted}


def set_cells(xml: str, cells: Mapping[int, Mapping[int, str]]) -> str:
    """Return the worksheet ``xml`` with some cells replaced or added.

    Parameters
    ----------
    xml : str
        A worksheet part.
    cells : mapping of int to mapping of int to str
        Row number (1-based) -> 0-based column index -> a complete ``<c>`` element.

    Returns
    -------
    str
        The worksheet with those cells written; rows and cells stay in order, every
        other byte is unchanged (touched rows lose their optional ``spans`` hint).
    """
    if not cells:
        return xml
    start, end = sheet_data_span(xml)
    if start == end and xml[start - 2] == "/":  # <sheetData/>: open it
        head = xml[: start - 2] + ">"
        return head + _merge_rows("", cells) + "</sheetData>" + xml[start:]
    return xml[:start] + _merge_rows(xml[start:end], cells) + xml[end:]


def _merge_rows(body: str, cells: Mapping[int, Mapping[int, str]]) -> str:
    quick = _find_rows(body, 0, len(body), cells)
    if quick is not None:  # every row exists: patch them in place
        return _patch_found(body, quick, cells)
    numbers, starts, ends = locate_rows(body, 0, len(body))
    where = {n: k for k, n in enumerate(numbers)}
    pieces: list[str] = []
    position, k = 0, 0
    for number in sorted(cells):
        if number in where:
            at = where[number]
            pieces.append(
                body[position : starts[at]] + _patched_row(body[starts[at] : ends[at]], cells[number])
            )
            position = ends[at]
            continue
        while k < len(numbers) and numbers[k] < number:  # a new row goes before the next higher one
            k += 1
        at_offset = max(starts[k] if k < len(numbers) else len(body), position)
        pieces.append(body[position:at_offset] + _new_row(number, cells[number]))
        position = at_offset
    pieces.append(body[position:])
    return "".join(pieces)


def _patch_found(body: str, found: dict[int, tuple[int, int]], cells: Mapping[int, Mapping[int, str]]) -> str:
    pieces: list[str] = []
    position = 0
    for number in sorted(found):
        a, b = found[number]
        pieces.append(body[position:a] + _patched_row(body[a:b], cells[number]))
        position = b
    pieces.append(body[position:])
    return "".join(pieces)


def _new_row(number: int, cells: Mapping[int, str]) -> str:
    return f'<row r="{number}">' + "".join(cells[c] for c in sorted(cells)) + "</row>"


def _row_cells(row: str, start: int, end: int) -> list[tuple[int, int, int]]:
    """Return (column index, start, end) of every ``<c>`` between ``start`` and ``end``."""
    found = []
    if row.count('<c r="', start, end) == row.count("<c", start, end):  # every cell names its place
        for match in _LETTERED_CELL.finditer(row, start, end):
            found.append((letters_index(match.group(1)), match.start(), match.end()))
        return found
    column = -1
    for match in _CELL.finditer(row, start, end):
        ref = _CELL_REF.search(_start_tag(match.group()))
        column = letters_index(ref.group(1)) if ref else column + 1
        found.append((column, match.start(), match.end()))
    return found


def _patched_row(row: str, new: Mapping[int, str]) -> str:
    head = _SPANS.sub("", _start_tag(row))
    if row.endswith("/>"):
        return head[:-2] + ">" + "".join(new[c] for c in sorted(new)) + "</row>"
    inner = row[len(_start_tag(row)) : -len("</row>")]
    pieces: list[str] = []
    pending = sorted(new)
    position, k = 0, 0
    for column, a, b in _row_cells(inner, 0, len(inner)):
        while k < len(pending) and pending[k] < column:
            pieces.append(inner[position:a] + new[pending[k]])
            position = a
            k += 1
        if k < len(pending) and pending[k] == column:
            pieces.append(inner[position:a] + new[column])
            position = b
            k += 1
        if k == len(pending):
            break
    pieces.append(inner[position:])
    pieces.extend(new[c] for c in pending[k:])
    return head + "".join(pieces) + "</row>"


def cell_styles(
    xml: str, cells: Mapping[int, Iterable[int]]
) -> tuple[dict[tuple[int, int], int], set[tuple[int, int]]]:
    """Look at some cells: their style index (``s``) and which hold a number or formula.

    ``cells`` maps row number -> column indices. Returns (row, column index) -> style
    of each styled one, and the set of those holding a number, boolean, date or
    formula (a gap never does; text may be a marker such as "n.d.").
    """
    styles: dict[tuple[int, int], int] = {}
    occupied: set[tuple[int, int]] = set()
    for number, (a, b) in _touched(xml, cells).items():
        wanted = set(cells[number])
        for column, start, end in _row_cells(xml, a, b):
            if column not in wanted:
                continue
            element = xml[start:end]
            head = _start_tag(element)
            style = _STYLE.search(head)
            if style:
                styles[(number, column)] = int(style.group(1))
            kind = _KIND.search(head)
            if "<f" in element or ("<v>" in element and (kind is None or kind.group(1) in "nbd")):
                occupied.add((number, column))
    return styles, occupied


def column_styles(xml: str, rows: set[int], columns: list[int], sample: int = 2000) -> dict[int, int]:
    """Return each column's most common style among its value cells in ``rows``.

    Looks at the first ``sample`` of those rows; a column none of whose cells has a
    value and a style is left out.
    """
    start, end = sheet_data_span(xml)
    wanted = set(columns)
    counts: dict[int, Counter[int]] = {c: Counter() for c in columns}
    seen, number = 0, 0
    for match in _ROW.finditer(xml, start, end):
        number = _row_number(match.group(), number)
        if number not in rows:
            continue
        column = -1
        for cell in _CELL.finditer(match.group()):
            element = cell.group()
            head = _start_tag(element)
            found = _CELL_REF.search(head)
            column = letters_index(found.group(1)) if found else column + 1
            if column in wanted and "<v>" in element and "<f" not in element:
                style = _STYLE.search(head)
                counts[column][int(style.group(1)) if style else 0] += 1
        seen += 1
        if seen >= sample:
            break
    return {c: n.most_common(1)[0][0] for c, n in counts.items() if n}


def drop_formula_results(xml: str) -> str:
    """Remove the stored result (``<v>`` and the result type) of every formula cell.

    A spreadsheet program then computes each formula when the file is opened, so no
    result computed from the unfilled inputs survives.
    """
    if "<f" not in xml:
        return xml
    start, end = sheet_data_span(xml)
    body = _AFTER_SHARED.sub("/>", _AFTER_FORMULA.sub("</f>", xml[start:end]))
    if ' t="' in body:
        body = _FORMULA_TYPE.sub(r"<c\1\2", body)
    return xml[:start] + body + xml[end:]


def value_columns(xml: str, first_row: int) -> list[int]:
    """Return the 0-based columns holding a value (number, text) in any row from ``first_row`` on."""
    start, end = sheet_data_span(xml)
    numbers, starts, _ = locate_rows(xml, start, end) if '<row r="' not in xml else ([], [], [])
    if numbers:  # rows without numbers: start at the first row from first_row on
        start = next((a for n, a in zip(numbers, starts, strict=True) if n >= first_row), end)
    else:
        for number in range(first_row, first_row + 1000):  # the first numbered row from first_row on
            at = xml.find(f'<row r="{number}"', start, end)
            if at >= 0:
                start = at
                break
    return sorted(letters_index(letters) for letters in set(_VALUE_LETTERS.findall(xml, start, end)))
