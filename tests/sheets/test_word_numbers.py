"""Simple decimals read a word (eight bytes) at a time agree with Python's ``float``.

The word path (README "Benchmarks": reading a long csv) takes columns whose texts are
all at most eight bytes; these tests compare it with ``float`` on every text that is a
simple decimal, and check that it refuses every other text, against the byte-per-position
path it stands beside.
"""

from __future__ import annotations

import numpy as np
import pytest

from imputer_app.sheets._cell_classes import in_codes
from imputer_app.sheets._fast_text import _simple_values, plain_number_values
from imputer_app.sheets._precision import _digits_after_mark
from imputer_app.sheets._string_cells import STRING_DTYPE, ascii_codes
from imputer_app.sheets._word_numbers import BLOCK, simple_word_values, word_digits_after_mark, words_of


def _is_simple(text: str, mark: str) -> bool:
    """The definition, spelled out: a sign or none, digits with at most one mark, a digit."""
    body = text[1:] if text[:1] in "+-" else text
    digits = body.replace(mark, "", 1)
    return bool(digits) and digits.isascii() and digits.isdigit()


def _words(texts: list[str]) -> tuple[np.ndarray, np.ndarray]:
    codes = ascii_codes(np.array(texts, dtype=STRING_DTYPE))
    assert codes is not None
    words = words_of(codes)
    assert words is not None
    return codes, words


@pytest.mark.parametrize("mark", [".", ","])
def test_simple_words_equal_float_on_random_texts(mark: str) -> None:
    # reference: Python's float (correctly rounded) on texts of up to 8 bytes drawn from
    # digits, both marks, signs, "e", a space and a NUL, more than one block long
    rng = np.random.default_rng(11)
    alphabet = [*"0123456789+-e .,", "\x00"]
    texts = ["".join(rng.choice(alphabet, rng.integers(0, 9))) for _ in range(3 * BLOCK + 17)]
    texts += ["-0", "+0", "0", "5.", ".5", "-.5", "99999999", "-9999999", "0.000001", "1234567.", "-", "."]
    texts = [t.rstrip("\x00") for t in texts]  # trailing NULs are padding to numpy bytes
    _, words = _words(texts)
    simple, values, places = simple_word_values(words, ord(mark))
    expected_simple = np.array([_is_simple(t, mark) for t in texts])
    np.testing.assert_array_equal(simple, expected_simple)
    expected_places = [
        len(t.partition(mark)[2]) if s else -1 for t, s in zip(texts, expected_simple, strict=True)
    ]
    assert places.tolist() == expected_places
    expected = np.array(
        [float(t.replace(mark, ".")) if s else np.nan for t, s in zip(texts, expected_simple, strict=True)]
    )
    np.testing.assert_array_equal(values, expected)
    assert np.array_equal(np.signbit(values[simple]), np.signbit(expected[simple]))  # "-0" keeps its sign
    assert expected_simple.sum() > 1000


@pytest.mark.parametrize("mark", [".", ","])
def test_words_agree_with_the_byte_per_position_path(mark: str) -> None:
    # the two fast paths on the same short texts (no NUL inside): same texts, same values
    rng = np.random.default_rng(12)
    values = rng.lognormal(1, 2, 5000) * rng.choice([-1, 1], 5000)
    places = rng.integers(0, 4, 5000)
    texts = [f"{v:.{int(d)}f}".replace(".", mark) for v, d in zip(values, places, strict=True)]
    texts = [t for t in texts if len(t) <= 8] + ["", "1e3", " 7", "n.d.", "<0.05", "1.2.3", "1,2,3"]
    codes, words = _words(texts)
    simple, found, _ = simple_word_values(words, ord(mark))
    old_simple, old_found = _simple_values(codes, ord(mark))
    np.testing.assert_array_equal(simple, old_simple)
    np.testing.assert_array_equal(found[simple], old_found[simple])


def test_pack_refuses_texts_over_eight_bytes() -> None:
    codes = ascii_codes(np.array(["123456789", "1"], dtype=STRING_DTYPE))
    assert codes is not None and words_of(codes) is None


@pytest.mark.parametrize("decimal", [".", ","])
def test_plain_numbers_through_words_equal_those_without_codes(decimal: str) -> None:
    # the word path inside plain_number_values against the same call without byte codes
    # (exponents, spaces, markers and censored texts are left to the slower passes)
    texts = ["7.21", "7,21", "", " 5", "5 ", "1e3", "1E-2", "+5", "-.5", "5.", "n.d.", "<0.05", "NA", "1.234",
             "1,234", "-0", "inf", "nan", "1e400", "0x10", "1_000", "+-5", "5..", "e5", "\t5"]  # fmt: skip
    values = np.array(texts, dtype=STRING_DTYPE)
    codes = ascii_codes(values)
    assert codes is not None and words_of(codes) is not None
    with_words = plain_number_values(values, decimal, codes)
    without = plain_number_values(values.astype(object), decimal)
    np.testing.assert_array_equal(with_words, without)


@pytest.mark.parametrize("mark", [".", ","])
def test_word_decimals_agree_with_the_byte_per_position_count(mark: str) -> None:
    # the count of decimals (digits after the last mark, an exponent seen) both ways
    rng = np.random.default_rng(13)
    alphabet = [*"0123456789.,eE+- x"]
    texts = ["".join(rng.choice(alphabet, rng.integers(0, 9))) for _ in range(2 * BLOCK + 5)]
    texts += [t.replace(".", mark) for t in ["6.40", "1.5e-3", "7", "", "1.2.34", "E5", "12345678"]]
    codes, words = _words(texts)
    after, exponent = word_digits_after_mark(words, ord(mark))
    old_after, old_exponent = _digits_after_mark(codes, ord(mark))
    np.testing.assert_array_equal(after, old_after)
    np.testing.assert_array_equal(exponent, old_exponent)
    assert after[-7] == 2 and exponent[-6] and after[-3] == 2


@pytest.mark.parametrize("wanted", [(), (0,), (1, 3, 8), (0, 15), (2, 16), (7, 200, 255)])
@pytest.mark.parametrize("dtype", [np.int8, np.uint8])
def test_in_codes_equals_isin(wanted: tuple[int, ...], dtype: type) -> None:
    # reference: numpy.isin on every code 0-255 (as int8: -128..127 wrap round as before)
    codes = np.arange(256).astype(np.uint8).astype(dtype)
    expected = np.isin(codes.astype(np.uint8), list(wanted))
    np.testing.assert_array_equal(in_codes(codes, wanted), expected)
