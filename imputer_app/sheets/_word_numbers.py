"""Simple decimals of up to eight bytes read eight bytes at a time.

A cell of a long csv column is mostly a short decimal (``"12.345"``). Its bytes, padded
with zeros to eight, make one unsigned 64-bit word (first character in the lowest
byte), and a few whole-word operations over a column of words check the form and give
the digits' integer: the "SIMD within a register" tricks of Lamport 1975 ("Multiple
byte processing with full-word instructions", CACM 18(8)) and the eight-digit
conversion of Langdale and Lemire 2019 ("Parsing gigabytes of JSON per second", VLDB
Journal 28(6), sec. 6: eight digits in three multiplications). Every operation is a
numpy ufunc over the whole column (no Python per cell), so it runs outside the GIL.

A simple decimal here is the same as in
:func:`~imputer_app.sheets._fast_text.plain_number_values`: a sign or none, digits with
at most one decimal mark, at least one digit, nothing else. With at most eight digits
its integer and its power of ten are exact doubles, so one division gives the
correctly rounded value (Clinger 1990, "How to read floating point numbers
accurately": the fast path).
"""

from __future__ import annotations

import numpy as np

#: Widest cell, in bytes, that fits one word.
WORD_BYTES = 8
_WORD = np.dtype("<u8")  # byte k of the word is character k on any machine
_ONES = np.uint64(0x0101010101010101)
_HIGH = np.uint64(0x8080808080808080)
_LOW7 = np.uint64(0x7F7F7F7F7F7F7F7F)
_POWERS_OF_TEN = np.array([float(10**k) for k in range(WORD_BYTES + 1)])  # exact doubles
# the eight-digit conversion (Langdale and Lemire 2019)
_PAIRS = np.uint64(0x000000FF000000FF)
_MUL_HIGH = np.uint64(100 + (1_000_000 << 32))
_MUL_LOW = np.uint64(1 + (10_000 << 32))
_ZEROS = _ONES * np.uint64(ord("0"))
_ABOVE_NINE = _ONES * np.uint64(0x80 - 10)  # a byte 0-127 above 9 gets its high bit
_LOWER = _ONES * np.uint64(0x20)  # ASCII letters to lower case
_E = _ONES * np.uint64(ord("e"))
_1, _7, _8, _16, _32, _64 = (np.uint64(k) for k in (1, 7, 8, 16, 32, 64))
#: Words read at a time: the temporaries of one block stay in the processor's cache.
BLOCK = 1 << 14


def words_of(codes: np.ndarray) -> np.ndarray | None:
    """Each text's bytes as one word, or None when some text is longer than eight bytes.

    Parameters
    ----------
    codes : ndarray of uint8, shape (width, n)
        The texts' bytes padded with 0, one row per position. When ``codes`` is a view
        of rows of eight bytes (the splitter's layout: ``rows[:, :width].T`` of a
        C-ordered ``rows`` of shape (m, 8), zeros past each text), those rows are the
        words and nothing is copied.
    """
    width, n = codes.shape
    if width > WORD_BYTES:
        return None
    owner = codes.base
    if (
        isinstance(owner, np.ndarray)
        and owner.dtype == np.uint8
        and owner.ndim == 2
        and owner.shape[1] == WORD_BYTES
        and owner.flags.c_contiguous
        and codes.strides == (1, WORD_BYTES)
    ):
        skip, rest = divmod(codes.ctypes.data - owner.ctypes.data, WORD_BYTES)
        if not rest and 0 <= skip <= owner.shape[0] - n:
            return owner.view(_WORD).reshape(-1)[skip : skip + n]
    rows = np.zeros((n, WORD_BYTES), dtype=np.uint8)
    rows[:, :width] = codes.T
    return rows.view(_WORD).reshape(n)


def simple_word_values(words: np.ndarray, mark: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Which words hold a simple decimal, its value (NaN elsewhere) and its decimals.

    Parameters
    ----------
    words : ndarray of uint64, shape (n,)
        Texts of up to eight bytes from :func:`words_of`.
    mark : int
        The byte of the decimal mark.

    Returns
    -------
    simple : ndarray of bool
        True for a sign or none, then digits with at most one ``mark``, at least one
        digit and nothing else (a zero byte inside a text is not padding).
    values : ndarray of float
        The correctly rounded value where ``simple`` (``"-0"`` is -0.0), NaN elsewhere.
    places : ndarray of int8
        The digits after the mark where ``simple`` (0 without a mark), -1 elsewhere.
    """
    simple = np.empty(words.shape[0], dtype=bool)
    values = np.empty(words.shape[0])
    places = np.empty(words.shape[0], dtype=np.int8)
    marks = _ONES * np.uint64(mark)
    for start in range(0, words.shape[0], BLOCK):
        block = slice(start, start + BLOCK)
        simple[block], values[block], places[block] = _block_values(words[block], marks)
    return simple, values, places


def _block_values(words: np.ndarray, marks: np.uint64) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """:func:`simple_word_values` for one block of words (``marks``: the mark in every byte)."""
    first = words & np.uint64(0xFF)
    negative = first == ord("-")
    signed = negative | (first == ord("+"))
    body = np.where(signed, words >> _8, words) if signed.any() else words
    filled = (((body & _LOW7) + _LOW7) | body) & _HIGH  # the high bit of every byte that is not zero
    spread = (filled >> _7) * np.uint64(0xFF)  # 0xFF for each filled byte
    at_mark = _zero_bytes(body ^ marks)  # the high bit of a mark byte
    n_marks = np.bitwise_count(at_mark)
    below = (at_mark >> _7) - _1  # the bytes before the mark; all when there is none
    digits = (body & below) | ((body >> _8) & ~below)  # the mark taken out
    count = (np.bitwise_count(filled) - n_marks).astype(np.uint64)  # digits
    shift = _64 - (count << np.uint64(3))  # moves the digits to the top (64 for none)
    digits ^= _ZEROS >> shift  # "0"-"9" to 0-9 in the digits' bytes (a shift of 64 gives 0)
    # the filled bytes come first (no zero byte inside), and every digit byte is 0-9
    bad = (spread & (spread + _1)) | ((digits | (digits + _ABOVE_NINE)) & _HIGH)
    simple = (bad == 0) & (n_marks <= 1) & (count >= 1)
    digits <<= shift  # leading zeros up to eight digits
    digits = digits * np.uint64(10) + (digits >> _8)
    digits = ((digits & _PAIRS) * _MUL_HIGH + ((digits >> _16) & _PAIRS) * _MUL_LOW) >> _32
    places = np.bitwise_count(filled & ~below) - n_marks  # digits after the mark
    # below 10**8: as signed integers (a faster conversion); places past 8 (not simple) clipped
    found = digits.view(np.int64).astype(float) / np.take(_POWERS_OF_TEN, places, mode="clip")
    np.negative(found, out=found, where=negative)
    found[~simple] = np.nan
    return simple, found, np.where(simple, places, -1)


def word_digits_after_mark(words: np.ndarray, mark: int) -> tuple[np.ndarray, np.ndarray]:
    """Per word: the digits after its last ``mark`` (0 without one), and whether it holds ``e`` or ``E``.

    The word form of :func:`~imputer_app.sheets._precision.text_decimals`' count of
    decimals, for texts from :func:`words_of`.
    """
    after = np.empty(words.shape[0], dtype=np.int64)
    exponent = np.empty(words.shape[0], dtype=bool)
    marks = _ONES * np.uint64(mark)
    for start in range(0, words.shape[0], BLOCK):
        block = slice(start, start + BLOCK)
        after[block], exponent[block] = _block_decimals(words[block], marks)
    return after, exponent


def _zero_bytes(words: np.ndarray) -> np.ndarray:
    """The high bit of every zero byte, exactly (no carries between bytes)."""
    return ~((((words & _LOW7) + _LOW7) | words) | _LOW7)


def _block_decimals(words: np.ndarray, marks: np.uint64) -> tuple[np.ndarray, np.ndarray]:
    at_mark = _zero_bytes(words ^ marks)
    zeros = words ^ _ZEROS
    digit = ~((((zeros & _LOW7) + _ABOVE_NINE) | zeros) | _LOW7)  # high bit of bytes "0"-"9"
    upto = at_mark | (at_mark >> _8)  # every byte up to the last mark
    upto |= upto >> _16
    upto |= upto >> _32
    after = np.where(at_mark != 0, np.bitwise_count(digit & ~upto), 0)
    exponent = _zero_bytes((words | _LOWER) ^ _E) != 0
    return after, exponent
