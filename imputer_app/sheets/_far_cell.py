"""The farthest cell of a piece of worksheet XML, found with numpy over its bytes.

A worksheet of 100,000 x 20 cells holds about two million ``<c r="B7" ...>`` tags. Listing
their references with a regular expression makes two million Python objects; here the
tags are found as byte positions and their references are read column by column of a
small byte matrix, so the cost is a few array operations per piece of XML.

The answer is exact, and the same as listing every reference: the farthest row and the
farthest column with the first reference (in file order) that reaches each. Only the
plain form is measured here: every ``<c `` tag starts ``<c r="``, and every reference is
one to four capital letters then one to ten digits without a leading zero, closed by a
quote. Anything else (another attribute first, a reference such as ``A07`` or ``a1``)
returns None and the caller measures that piece the careful way.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

_TAG = b'<c r="'
_LETTERS, _DIGITS = 4, 10
_PAD = b"\0" * (len(_TAG) + _LETTERS + _DIGITS + 1)


class XmlBytes:
    """A piece of worksheet XML as bytes, with fast tests for two-byte sequences.

    Two bytes are looked for as one 16-bit word at even and at odd positions: half the
    comparisons of two byte tests, and cheaper than ``bytes in`` for a pair whose first
    byte (``<``) is everywhere.
    """

    def __init__(self, chunk: bytes) -> None:
        self.chunk = chunk
        self.data = np.frombuffer(chunk + _PAD, dtype=np.uint8)
        size = len(chunk)
        self._even = self.data[: size // 2 * 2].view("<u2")
        self._odd = self.data[1 : 1 + max(size - 1, 0) // 2 * 2].view("<u2")

    def has(self, pair: bytes) -> bool:
        """True when the two bytes ``pair`` occur one after the other."""
        word = int.from_bytes(pair, "little")
        return bool((self._even == word).any() or (self._odd == word).any())

    def find(self, pair: bytes) -> np.ndarray:
        """Positions of the two bytes ``pair``, in file order."""
        word = int.from_bytes(pair, "little")
        even = np.flatnonzero(self._even == word) * 2
        odd = np.flatnonzero(self._odd == word) * 2 + 1
        return np.sort(np.concatenate([even, odd]))


def far_cell(xml: XmlBytes) -> tuple[int, str, int, str] | None:
    """The farthest row and column that the cell references of ``xml`` reach.

    Parameters
    ----------
    xml : XmlBytes
        Worksheet XML that does not cut a ``<c`` tag in two.

    Returns
    -------
    tuple of (int, str, int, str) or None
        1-based last row, the first reference in it ("B70"), 1-based last column and the
        first reference in it; ``(0, "", 0, "")`` when the chunk holds no cell. None when
        some cell tag is not in the plain form (see the module docstring).
    """
    data, chunk = xml.data, xml.chunk
    starts = xml.find(b"<c")
    starts = starts[data[starts + 2] == 32]  # not <col, <cfRule and the like
    if not starts.size:
        return 0, "", 0, ""
    for k, code in enumerate(_TAG[3:], start=3):  # r=" right after "<c "
        if not (data[starts + k] == code).all():
            return None
    at = starts + len(_TAG)
    letters = _run_length(data, at, lambda b: (b >= 65) & (b <= 90), _LETTERS + 1)
    digits_at = at + letters
    digits = _run_length(data, digits_at, lambda b: (b >= 48) & (b <= 57), _DIGITS + 1)
    plain = (
        (letters >= 1)
        & (letters <= _LETTERS)
        & (digits >= 1)
        & (digits <= _DIGITS)
        & (data[digits_at] != 48)  # no leading zero: more digits then mean a larger row
        & (data[digits_at + digits] == 34)
    )
    if not plain.all():
        return None
    row_pick = _first_largest(data, digits_at, digits, 10, 48)
    column_pick = _first_largest(data, at, letters, 26, 64)
    row_ref, column_ref = (
        chunk[at[i] : digits_at[i] + digits[i]].decode("ascii") for i in (row_pick[0], column_pick[0])
    )
    return row_pick[1], row_ref, column_pick[1], column_ref


def _run_length(
    data: np.ndarray, at: np.ndarray, wanted: Callable[[np.ndarray], np.ndarray], most: int
) -> np.ndarray:
    """How many bytes from each position in ``at`` on satisfy ``wanted``, up to ``most``."""
    length = np.zeros(at.size, dtype=np.int64)
    going = np.ones(at.size, dtype=bool)
    for k in range(most):
        going &= wanted(data[at + k])
        if not going.any():
            break
        length += going
    return length


def _first_largest(
    data: np.ndarray, at: np.ndarray, width: np.ndarray, base: int, zero: int
) -> tuple[int, int]:
    """Index and value of the first largest number written in ``width`` symbols from ``at``.

    Symbols are bytes minus ``zero`` in base ``base``; without leading zeros (digits) or
    with symbols that start at 1 (letters), a longer number is always larger, and among
    numbers of one length the largest is the largest byte by byte: the candidates are
    narrowed one symbol at a time.
    """
    longest = int(width.max())
    among = np.flatnonzero(width == longest)
    for k in range(longest):
        symbol = data[at[among] + k]
        among = among[symbol == symbol.max()]
    first = int(among[0])
    value = 0
    for k in range(longest):
        value = value * base + int(data[at[first] + k]) - zero
    return first, value
