"""Cell texts held as a numpy ``StringDType`` array: the compact form of a long delimited file.

A long csv is split straight from its bytes into one ``StringDType`` array (numpy 2):
16 bytes a cell for texts up to 15 bytes and no Python ``str`` per cell, which is what
made reading 1,000,000 x 10 cells slow and big. Iterating or indexing such an array
gives ordinary ``str`` objects, so code that looks at a few cells works unchanged; the
helpers here serve the code that looks at every cell of a column.
"""

from __future__ import annotations

import numpy as np

#: The dtype of a column (or grid) of cell texts split from a long delimited file.
STRING_DTYPE = np.dtypes.StringDType()
#: Texts longer than this are not turned into byte codes (callers take their slower path).
MAX_CODE_WIDTH = 64


def is_string_array(values: np.ndarray) -> bool:
    """True when ``values`` is a numpy ``StringDType`` array (not an object array)."""
    return isinstance(values.dtype, np.dtypes.StringDType)


def as_objects(values: np.ndarray) -> np.ndarray:
    """The texts as an object array of ``str`` (``values`` itself when it is one already)."""
    return values.astype(object) if is_string_array(values) else values


def ascii_codes(values: np.ndarray) -> np.ndarray | None:
    """The byte codes of the texts of a ``StringDType`` array, one row per character position.

    Returns
    -------
    ndarray of uint8, shape (longest text, n), or None
        Column ``i`` holds text ``i``'s bytes padded with 0; row ``k`` the ``k``-th
        character of every text, so a loop over the (few) positions works on long
        contiguous rows. None when some text holds a character outside ASCII (its code
        would not be one byte) or is longer than :data:`MAX_CODE_WIDTH`.
    """
    if not values.size:
        return np.zeros((1, 0), dtype=np.uint8)
    width = max(int(np.strings.str_len(values).max()), 1)
    if width > MAX_CODE_WIDTH:  # a column of long notes: no block of bytes that wide
        return None
    try:
        codes = values.astype(f"S{width}")
    except UnicodeEncodeError:
        return None
    return np.ascontiguousarray(codes.view(np.uint8).reshape(values.shape[0], width).T)
