"""Each number column's measured precision: the most decimals its observed values show.

The decimals come from what the lab sees, not from the stored binary number: a
delimited file's cell text (``6.40`` has two decimals), a workbook column's number
format (``0.00`` shows two), and only where neither says, the stored number read to
12 significant digits (:func:`imputer_app.plan_rounding.float_decimals`). Filled numbers
are rounded to this precision by default (see :mod:`imputer_app.plan_rounding`).

Number format codes follow ECMA-376 Part 1, sec. 18.8.30 (``numFmt``) and 18.8.31
(the built-in formats 0-49).
"""

from __future__ import annotations

import html
import io
import re
import zipfile
from xml.etree import ElementTree

import numpy as np

from imputer_app.plan_rounding import MAX_DECIMALS, float_decimals
from imputer_app.sheets._cell_classes import NUMBER
from imputer_app.sheets._cells import ParsedColumn
from imputer_app.sheets._patch_cells import column_styles
from imputer_app.sheets._patch_styles import children, get_attr
from imputer_app.sheets._string_cells import as_objects, ascii_codes, is_string_array
from imputer_app.sheets._word_numbers import word_digits_after_mark, words_of
from imputer_app.sheets._xlsx_package import sheet_parts

#: Built-in number formats (ECMA-376 Part 1, sec. 18.8.31) with fixed decimals.
BUILT_IN_DECIMALS = {1: 0, 2: 2, 3: 0, 4: 2, 9: 2, 10: 4, 37: 0, 38: 0, 39: 2, 40: 2}
#: Decompressed bytes of a worksheet looked at for its columns' styles (its first rows).
_SHEET_PREFIX = 4 << 20
_QUOTED = re.compile(r'"[^"]*"|\[[^\]]*\]|\\.|_.|\*.')
_DATE_LETTERS = re.compile(r"[yYmMdDhHsS]")


def format_decimals(code: str) -> int | None:
    """Decimals a number format code shows, or None when it shows no fixed number of them.

    General, text (``@``), scientific and date formats give None; each ``%`` adds two.

    Examples
    --------
    >>> format_decimals("0.00"), format_decimals("#,##0.000;[Red]-#,##0.000"), format_decimals("0.0%")
    (2, 3, 3)
    >>> format_decimals("General"), format_decimals("0.00E+00"), format_decimals("yyyy-mm-dd")
    (None, None, None)
    """
    section = _QUOTED.sub("", code.split(";", 1)[0])
    if "E" in section.upper() or _DATE_LETTERS.search(section) or not re.search(r"[0#?]", section):
        return None
    point = section.find(".")
    decimals = len(re.findall(r"[0#?]", section[point + 1 :])) if point >= 0 else 0
    return min(decimals + 2 * section.count("%"), MAX_DECIMALS)


def text_decimals(
    texts: np.ndarray,
    decimal: str,
    codes: np.ndarray | None = None,
    rows: np.ndarray | None = None,
    places: np.ndarray | None = None,
) -> int | None:
    """The most decimals among number texts (``"6.40"`` has 2, ``"1.5e-3"`` has 4).

    Parameters
    ----------
    texts : ndarray of str, object (str) or StringDType, shape (n,)
        Cells read as numbers, as written in the file.
    decimal : {".", ","}
        The file's decimal mark; a grouping mark (``1,234`` with ``.``) is no decimal.
    codes : ndarray of uint8, shape (width, n), optional
        The texts' bytes padded with 0, one row per character position
        (:func:`~imputer_app.sheets._string_cells.ascii_codes`), when the caller has them.
    rows : ndarray of bool, shape (n,), optional
        The texts to look at; default all.
    places : ndarray of int8, shape (n,), optional
        The decimals of texts already known from reading them (-1 where not known:
        :attr:`~imputer_app.sheets._cells.ParsedColumn.places`); only the others are
        counted here.
    """
    if rows is None:
        rows = np.ones(texts.shape[0], dtype=bool)
    if not rows.any():
        return None
    if places is not None:
        known = rows & (places >= 0)
        best = int(places[known].max(initial=0))
        others = np.flatnonzero(rows & ~known)
        if others.size:
            found = text_decimals(texts[others], decimal, None if codes is None else codes[:, others])
            best = max(best, found or 0)
        return min(best, MAX_DECIMALS)
    if codes is None and is_string_array(texts):
        codes = ascii_codes(texts)
    if codes is None:  # one row of character codes per position
        texts = np.asarray(as_objects(texts[rows]), dtype=str)
        rows = np.ones(texts.shape[0], dtype=bool)
        codes = texts.view(np.uint32).reshape(len(texts), -1).T
    words = words_of(codes)
    if words is not None:  # texts of up to eight bytes: a word at a time
        after, exponent = word_digits_after_mark(words, ord(decimal))
    else:
        after, exponent = _digits_after_mark(codes, ord(decimal))
    best = int(after[rows & ~exponent].max(initial=0))
    for one in texts[rows & exponent].tolist():  # rare: 1.5e-3
        mantissa, _, power = one.strip().lower().partition("e")
        at = mantissa.rfind(decimal)
        digits = len(mantissa) - at - 1 if at >= 0 else 0
        try:
            best = max(best, digits - int(power))
        except ValueError:
            continue
    return min(max(best, 0), MAX_DECIMALS)


def _digits_after_mark(codes: np.ndarray, mark: int) -> tuple[np.ndarray, np.ndarray]:
    """Per text (a column of ``codes``): digits after its last ``mark``, and an ``e`` or ``E``.

    One pass per character position, each over every text.
    """
    after = np.zeros(codes.shape[1], dtype=np.int64)  # digits since the last mark
    seen = np.zeros(codes.shape[1], dtype=bool)
    exponent = np.zeros(codes.shape[1], dtype=bool)
    for position in codes:
        at_mark = position == mark
        seen |= at_mark
        after *= ~at_mark
        after += (position - ord("0")) < 10  # unsigned codes: below "0" wraps round
        exponent |= (position | 0x20) == ord("e")
    return np.where(seen, after, 0), exponent


def column_decimals(parsed: ParsedColumn, from_text: bool, decimal: str, shown: int | None) -> int | None:
    """The measured precision of one column: None when it holds no number.

    ``from_text`` says the cells are a delimited file's text; ``shown`` is the decimals
    of the column's number format in a workbook (None for General or none).
    """
    number = parsed.cls == NUMBER
    if not number.any():
        return None
    if from_text:
        return text_decimals(parsed.raw, decimal, parsed.codes, number, parsed.places)
    if shown is not None:
        return shown
    return float_decimals(parsed.number[number])


def workbook_formats(data: bytes, sheet: str, rows: np.ndarray, positions: list[int]) -> dict[int, int]:
    """Decimals of each column's number format in a ``.xlsx``/``.xlsm`` worksheet.

    Each column's format is that of the most common style among its value cells in
    the first data rows (the style a filled cell is written with). Columns in General
    or another format without fixed decimals are left out, as is everything when the
    package cannot be read (the reader reports that itself).

    Parameters
    ----------
    data : bytes
        The workbook file.
    sheet : str
        The worksheet's name.
    rows : ndarray of int
        1-based file rows of the data.
    positions : list of int
        0-based file columns wanted.
    """
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as package:
            part = sheet_parts(package).get(sheet)
            if part is None or "xl/styles.xml" not in package.namelist():
                return {}
            styles = package.read("xl/styles.xml").decode("utf-8", "replace")
            with package.open(str(part)) as stream:
                head = stream.read(_SHEET_PREFIX).decode("utf-8", "ignore")
    except (OSError, KeyError, zipfile.BadZipFile, ElementTree.ParseError, EOFError, ValueError):
        return {}
    if "<sheetData" not in head:
        return {}
    if "</sheetData>" not in head:  # only the first rows were read: close the data there
        cut = head.rfind("</row>")
        end = cut + len("</row>") if cut >= 0 else head.index(">", head.index("<sheetData")) + 1
        head = head[:end] + "</sheetData>"
    by_column = column_styles(head, set(rows.tolist()), positions)
    xfs = children(styles, "cellXfs")
    codes = {
        get_attr(f, "numFmtId"): html.unescape(get_attr(f, "formatCode")) for f in children(styles, "numFmts")
    }
    out: dict[int, int] = {}
    for position, style in by_column.items():
        if not 0 <= style < len(xfs):
            continue
        number_format = int(get_attr(xfs[style], "numFmtId", "0") or 0)
        code = codes.get(str(number_format))
        found = format_decimals(code) if code is not None else BUILT_IN_DECIMALS.get(number_format)
        if found is not None:
            out[position] = found
    return out
