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
from collections.abc import Mapping

_ROW = re.compile(r"<row\b[^>]*?/>|<row\b[^>]*>.*?</row>", re.S)
_CELL = re.compile(r"<c\b[^>]*?/>|<c\b[^>]*>.*?</c>", re.S)
_ROW_NUMBER = re.compile(r'\sr="(\d+)"')
_CELL_REF = re.compile(r'\sr="([A-Z]+)(\d+)"')
_STYLE = re.compile(r'\ss="(\d+)"')
_SPANS = re.compile(r'\sspans="[^"]*"')
_VALUE = re.compile(r"<v>.*?</v>|<v/>", re.S)
_TYPE = re.compile(r'\st="[^"]*"')


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
    pending = sorted(cells)
    pieces: list[str] = []
    position, number, k = 0, 0, 0
    for match in _ROW.finditer(body):
        number = _row_number(match.group(), number)
        while k < len(pending) and pending[k] < number:
            pieces.append(body[position : match.start()] + _new_row(pending[k], cells[pending[k]]))
            position = match.start()
            k += 1
        if k < len(pending) and pending[k] == number:
            pieces.append(body[position : match.start()] + _patched_row(match.group(), cells[number]))
            position = match.end()
            k += 1
        if k == len(pending):
            break
    pieces.append(body[position:])
    pieces.extend(_new_row(row, cells[row]) for row in pending[k:])
    return "".join(pieces)


def _new_row(number: int, cells: Mapping[int, str]) -> str:
    return f'<row r="{number}">' + "".join(cells[c] for c in sorted(cells)) + "</row>"


def _patched_row(row: str, new: Mapping[int, str]) -> str:
    head = _SPANS.sub("", _start_tag(row))
    if row.endswith("/>"):
        return head[:-2] + ">" + "".join(new[c] for c in sorted(new)) + "</row>"
    inner = row[len(_start_tag(row)) : -len("</row>")]
    pieces: list[str] = []
    pending = sorted(new)
    position, column, k = 0, -1, 0
    for match in _CELL.finditer(inner):
        found = _CELL_REF.search(_start_tag(match.group()))
        column = letters_index(found.group(1)) if found else column + 1
        while k < len(pending) and pending[k] < column:
            pieces.append(inner[position : match.start()] + new[pending[k]])
            position = match.start()
            k += 1
        if k < len(pending) and pending[k] == column:
            pieces.append(inner[position : match.start()] + new[column])
            position = match.end()
            k += 1
    pieces.append(inner[position:])
    pieces.extend(new[c] for c in pending[k:])
    return head + "".join(pieces) + "</row>"


def cell_styles(xml: str, cells: Mapping[int, Mapping[int, str]] | None = None) -> dict[tuple[int, int], int]:
    """Return the style index (``s``) of every cell with one, keyed by (row, column index).

    When ``cells`` is given, only rows among its keys are looked at.
    """
    start, end = sheet_data_span(xml)
    styles: dict[tuple[int, int], int] = {}
    number = 0
    for match in _ROW.finditer(xml, start, end):
        number = _row_number(match.group(), number)
        if cells is not None and number not in cells:
            continue
        column = -1
        for cell in _CELL.finditer(match.group()):
            head = _start_tag(cell.group())
            found = _CELL_REF.search(head)
            column = letters_index(found.group(1)) if found else column + 1
            style = _STYLE.search(head)
            if style:
                styles[(number, column)] = int(style.group(1))
    return styles


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


def _drop_value(match: re.Match[str]) -> str:
    element = match.group()
    if "<f" not in element:
        return element
    head = _start_tag(element)
    if head.endswith("/>"):
        return element
    return _TYPE.sub("", head) + _VALUE.sub("", element[len(head) :])


def drop_formula_results(xml: str) -> str:
    """Remove the stored result (``<v>`` and the result type) of every formula cell.

    A spreadsheet program then computes each formula when the file is opened, so no
    result computed from the unfilled inputs survives.
    """
    if "<f" not in xml:
        return xml
    start, end = sheet_data_span(xml)
    return xml[:start] + _CELL.sub(_drop_value, xml[start:end]) + xml[end:]
