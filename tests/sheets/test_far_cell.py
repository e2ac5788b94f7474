"""The vectorised far-cell measure agrees with listing every cell reference one by one."""

from __future__ import annotations

import re

import numpy as np
import pytest

from imputer_app.sheets._extent import column_number
from imputer_app.sheets._far_cell import XmlBytes, far_cell

_LISTED = re.compile(rb'<c\s[^>]*?\br="([A-Z]{1,4})(\d{1,10})"')


def _listed(chunk: bytes) -> tuple[int, str, int, str]:
    """The reference answer: every reference parsed in Python, the first farthest kept."""
    refs = [
        (int(digits), column_number(letters), (letters + digits).decode())
        for letters, digits in _LISTED.findall(chunk)
    ]
    if not refs:
        return 0, "", 0, ""
    rows, columns = max(r[0] for r in refs), max(r[1] for r in refs)
    far_row = next(ref for row, _, ref in refs if row == rows)
    far_column = next(ref for _, column, ref in refs if column == columns)
    return rows, far_row, columns, far_column


def _cell(ref: str, extra: str = "") -> str:
    return f'<c r="{ref}"{extra}><v>1</v></c>'


def _letters(number: int) -> str:
    text = ""
    while number:
        number, rest = divmod(number - 1, 26)
        text = chr(65 + rest) + text
    return text


@pytest.mark.parametrize("seed", range(8))
def test_random_references_measure_as_listed(seed: int) -> None:
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 400))
    rows = rng.integers(1, 10 ** rng.integers(1, 8, n), dtype=np.int64)
    columns = rng.integers(1, 27 ** rng.integers(1, 4, n), dtype=np.int64)
    extras = ["", ' s="3"', ' t="s"', ' t="inlineStr"']
    body = "".join(
        f'<row r="{r}">' + _cell(f"{_letters(c)}{r}", extras[int(rng.integers(4))]) + "</row>"
        for r, c in zip(rows, columns, strict=True)
    )
    chunk = f'<sheetData><cols><col min="1" max="3"/></cols>{body}</sheetData>'.encode()
    assert far_cell(XmlBytes(chunk)) == _listed(chunk)


@pytest.mark.parametrize(
    ("cells", "expected"),
    [
        ("", (0, "", 0, "")),
        (_cell("A1"), (1, "A1", 1, "A1")),
        # ties: the first reference in file order names the far row and the far column
        (_cell("B7") + _cell("C7") + _cell("C2"), (7, "B7", 3, "C7")),
        (_cell("Z9") + _cell("AA1") + _cell("ZZ3") + _cell("AAA2"), (9, "Z9", 703, "AAA2")),
        (_cell("XFD1048576"), (1_048_576, "XFD1048576", 16_384, "XFD1048576")),
        (_cell("A9999999999"), (9_999_999_999, "A9999999999", 1, "A9999999999")),
        (_cell("A99") + _cell("A100") + _cell("A1000000"), (1_000_000, "A1000000", 1, "A99")),
        ('<cfRule type="x"/><col min="1"/>' + _cell("D4"), (4, "D4", 4, "D4")),
    ],
)
def test_plain_references(cells: str, expected: tuple[int, str, int, str]) -> None:
    assert far_cell(XmlBytes(cells.encode())) == expected


@pytest.mark.parametrize(
    "odd",
    [
        '<c s="1" r="B2"><v>1</v></c>',  # another attribute first
        '<c r="A07"><v>1</v></c>',  # a leading zero
        '<c r="ABCDE1"><v>1</v></c>',  # five letters
        '<c r="A12345678901"><v>1</v></c>',  # eleven digits
        '<c r="a1"><v>1</v></c>',  # lower case
        '<c r="A1B"><v>1</v></c>',  # letters after the digits
        '<c r="1"><v>1</v></c>',  # no letters
        '<c r="A"><v>1</v></c>',  # no digits
        '<c r="A1',  # cut short
    ],
)
def test_other_forms_are_left_to_the_careful_listing(odd: str) -> None:
    assert far_cell(XmlBytes((_cell("A1") + odd).encode())) is None


@pytest.mark.parametrize("offset", [0, 1])
def test_pairs_found_at_even_and_odd_positions(offset: int) -> None:
    xml = XmlBytes(b" " * offset + b'<c r="A1"><f>B1</f></c><c r="B1"/>')
    assert xml.has(b"<f") and not xml.has(b'"e')
    assert xml.find(b"<c").tolist() == [offset, offset + 23]
