"""What each distinct text of a column is: number, marker, censored entry, formula error or text.

Texts are classified once per distinct text (a column of a million cells holds few),
with pandas string operations: numbers with either decimal mark and grouped
thousands (:func:`parse_numbers`), missing and below-limit markers, censored entries
("<0.05", "< LOD 0.05", "BDL") and formula error texts saved by a spreadsheet program.
:class:`KnownTexts` keeps the answers while one sheet is read, so the texts that recur
in column after column are classified once.
"""

from __future__ import annotations

import threading

import numpy as np
import pandas as pd

from imputer_app.sheets._cell_classes import BLANK, CENSORED, ERROR_TEXTS, FORMULA_ERROR, MARKER, NUMBER, TEXT
from imputer_app.sheets._markers import BELOW_SIDES, CENSORED_PATTERN, LIMIT_FAMILIES, Markers

#: What a number written as text may look like (signs, digits, marks, an exponent).
_NUMBER_CHARS = r"[-+\u2212]?[\d.,]*\d[\d.,]*(?:[eE][-+]?\d+)?"


def parse_numbers(texts: pd.Series, decimal: str, first: np.ndarray | None = None) -> np.ndarray:
    """Parse trimmed text as numbers with the given decimal mark; NaN where it is not one.

    Thousands separators are removed only in the unambiguous grouped form
    (``1.234.567,8`` with decimal ``,``; ``1,234,567.8`` with decimal ``.``).
    ``nan``, ``inf`` and overflowing text are not numbers. ``first`` may give the
    texts' first characters (:func:`_first_chars`) when the caller has them.
    """
    values = np.full(len(texts), np.nan)
    # only texts made of digits, marks, signs and an exponent can be numbers
    # the cheap first-character test spares the pattern on long lists of names and codes
    candidate = _first_char_in(_first_chars(texts) if first is None else first, _NUMBER_STARTS)
    if candidate.any():
        matches = texts[candidate].str.fullmatch(_NUMBER_CHARS)
        candidate[candidate] = matches.to_numpy(dtype=bool, na_value=False)
    if not candidate.any():
        return values
    t = texts[candidate].str.replace("\u2212", "-", regex=False)  # typographic minus sign
    grouping, mark = (".", ",") if decimal == "," else (",", ".")
    grouped = t.str.fullmatch(rf"[+-]?\d{{1,3}}(?:\{grouping}\d{{3}})+(?:\{mark}\d*)?")
    if grouped.any():
        t = t.where(~grouped, t.str.replace(grouping, "", regex=False))
    if decimal == ",":
        t = t.str.replace(",", ".", regex=False)
    found = pd.to_numeric(t, errors="coerce").to_numpy(dtype=float, na_value=np.nan)
    values[candidate] = np.where(np.isfinite(found), found, np.nan)
    return values


#: First characters of texts that :data:`_NUMBER_CHARS`, :data:`CENSORED_PATTERN` (case-
#: insensitive: sides, "less than", "under", bare BDL-type words) and the formula error
#: texts can match.
_NUMBER_STARTS = np.array(sorted("+-\u22120123456789.,"))
_CENSORED_STARTS = np.array(sorted("<>\u2264\u2265bBaAlLgGuUoO"))
_ERROR_STARTS = np.array(["#"])
# per-text string methods called from numpy's loop (no Python-level loop over texts)
strip_texts = np.frompyfunc(str.strip, 1, 1)
_LOWER = np.frompyfunc(str.lower, 1, 1)


def _first_chars(texts: pd.Series) -> np.ndarray:
    """Each text's first character ("" for an empty text), as a numpy array of one-character strings."""
    return texts.to_numpy(dtype=object).astype("U1")


def _first_char_in(first: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """True where a first character (see :func:`_first_chars`) is one of ``starts``."""
    return np.isin(first, starts)


class KnownTexts:
    """Distinct texts already classified while one sheet is read (one decimal mark, one marker set).

    The same few texts (markers, censored entries) recur in column after column; each
    is classified once, and a column with few distinct texts is answered from here.
    """

    #: Columns with more distinct texts (names, identifiers) are classified directly.
    MOST = 256

    def __init__(self, decimal: str, markers: Markers) -> None:
        self.decimal, self.markers = decimal, markers
        self._found: dict[str, tuple[object, ...]] = {}
        self._lock = threading.Lock()  # columns may be classified in threads

    def classify(self, uniques: np.ndarray) -> dict[str, np.ndarray]:
        """What :func:`classify_texts` returns for the (untrimmed) texts ``uniques``."""
        with self._lock:
            new = [text for text in dict.fromkeys(uniques.tolist()) if text not in self._found]
            if new:
                found = classify_texts(
                    pd.Series(strip_texts(np.array(new, dtype=object)), dtype=str), self.decimal, self.markers
                )
                each = zip(*(found[name].tolist() for name in _CLASSIFIED), strict=True)
                self._found.update(zip(new, each, strict=True))
            rows = [self._found[text] for text in uniques.tolist()]
        return {
            name: np.array([row[k] for row in rows], dtype=_CLASSIFIED[name])
            for k, name in enumerate(_CLASSIFIED)
        }


#: The fields :func:`classify_texts` returns, with their dtypes.
_CLASSIFIED: dict[str, type] = {
    "cls": np.int8, "number": float, "text": object, "side": object, "limit": float, "token": object,
}  # fmt: skip


def classify_texts(texts: pd.Series, decimal: str, markers: Markers) -> dict[str, np.ndarray]:
    """Class, number, side, limit and limit family of each (trimmed) text."""
    blank = (texts == "").to_numpy()
    lowered = pd.Series(_LOWER(texts.to_numpy(dtype=object)), dtype=object)
    below = lowered.isin(markers.below).to_numpy() & ~blank
    marker = lowered.isin(markers.texts).to_numpy() & ~blank
    first = _first_chars(texts)
    numbers = parse_numbers(texts, decimal, first)
    number = np.isfinite(numbers) & ~marker
    marker |= number & markers.match_numbers(numbers)
    number &= ~marker
    cls = np.where(blank, BLANK, np.where(marker, MARKER, np.where(number, NUMBER, TEXT))).astype(np.int8)
    # a formula error saved as text (a csv written by a spreadsheet program)
    error = np.flatnonzero((cls == TEXT) & _first_char_in(first, _ERROR_STARTS))
    cls[error[texts.iloc[error].str.upper().isin(ERROR_TEXTS).to_numpy()]] = FORMULA_ERROR
    found = {
        "cls": cls,
        "number": np.where(number, numbers, np.nan),
        "text": texts.to_numpy(dtype=object),
        "side": np.full(len(texts), "", dtype=object),
        "limit": np.full(len(texts), np.nan),
        "token": np.full(len(texts), "", dtype=object),
    }
    # a "not detected" marker: below an unknown limit of detection
    hits = below & ~marker
    cls[hits] = CENSORED
    found["side"][hits], found["token"][hits] = "<", "LOD"
    rest = np.flatnonzero(cls == TEXT)
    if rest.size:  # a censored entry starts with a side or a bare limit word: test only those
        rest = rest[_first_char_in(first[rest], _CENSORED_STARTS)]
    if rest.size:
        censored = _censored(texts.iloc[rest], decimal)
        hit = censored["side"].notna().to_numpy()
        cls[rest[hit]] = CENSORED
        for name in ("side", "limit", "token"):
            found[name][rest[hit]] = censored[name].to_numpy()[hit]
    return found


def _censored(texts: pd.Series, decimal: str) -> pd.DataFrame:
    """Side ("<"/">", None when not censored), numeric limit and limit family per text."""
    found = texts.str.extract(CENSORED_PATTERN).astype(object)
    side_word, bare = found["side"].to_numpy(), found["bare"].to_numpy()
    matched = np.flatnonzero(~pd.isna(side_word) | ~pd.isna(bare))
    side = np.full(len(texts), None, dtype=object)
    token = np.full(len(texts), "", dtype=object)
    limit = np.full(len(texts), np.nan)
    if matched.size:
        words = np.where(pd.isna(found["token"].to_numpy()), bare, found["token"].to_numpy())[matched]
        below = [pd.isna(w) or str(w).lower() in BELOW_SIDES for w in side_word[matched]]
        side[matched] = ["<" if b else ">" for b in below]
        token[matched] = ["" if pd.isna(w) else LIMIT_FAMILIES.get(str(w).lower(), "") for w in words]
        numbers = pd.Series(found["num"].to_numpy()[matched], dtype=object).fillna("").astype(str)
        first = parse_numbers(numbers, decimal)
        other = parse_numbers(numbers, "." if decimal == "," else ",")
        limit[matched] = np.where(np.isnan(first), other, first)
    return pd.DataFrame({"side": side, "limit": limit, "token": token}, index=texts.index)
