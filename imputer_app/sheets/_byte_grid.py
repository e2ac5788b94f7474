"""Cut the UTF-8 bytes of a quote-free rectangular text into columns of cell bytes.

The text is cut into pieces of about a megabyte that end at a line end; WORKERS threads
find the separators of the pieces side by side and then copy each cell's bytes into
its column, piece after piece, so that the temporaries of a piece stay in the
processor's cache and numpy's loops run outside the GIL. A column of cells of at most
eight bytes keeps them in eight-byte rows, one word per cell
(:func:`~imputer_app.sheets._word_numbers.words_of`); a wider one in rows as wide as
its longest cell, up to a limit.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from imputer_app.sheets._string_cells import STRING_DTYPE
from imputer_app.sheets._word_numbers import WORD_BYTES
from imputer_app.work import WORKERS

#: Bytes of text per piece (a piece ends at the first line end after this many).
PIECE_BYTES = 1 << 20
_WORD = np.dtype("<u8")
_ONE, _THREE = np.uint64(1), np.uint64(3)


@dataclass(frozen=True)
class _Piece:
    """The cells of one piece of text: their first byte and length, one row per line."""

    start: int
    stop: int
    starts: np.ndarray  # int64 (width, lines), from the piece's start: one row per column
    lengths: np.ndarray  # int64 (width, lines)


@dataclass(frozen=True)
class ByteColumn:
    """One column's cells as bytes and as text.

    Attributes
    ----------
    rows : ndarray of uint8, shape (n_rows, row_width)
        Each cell's bytes padded with 0: eight bytes a row (one word) when no cell is
        longer, else as wide as the longest cell up to the caller's limit. A cell over
        the limit is all zeros here.
    longest : int
        The length in bytes of the longest cell.
    texts : ndarray of StringDType, shape (n_rows,)
        Each cell's text ("" for a cell over the limit: the caller cuts those).
    long_cells : list of (int, int, int)
        (row, first byte in the text, length in bytes) of every cell over the limit.
    """

    rows: np.ndarray
    longest: int
    texts: np.ndarray
    long_cells: list[tuple[int, int, int]] = field(default_factory=list)


def cut_columns(
    data: bytes, begin: int, end: int, delimiter: int, longest_kept: int
) -> tuple[np.ndarray, list[ByteColumn]] | None:
    """The grid of texts and each column's cells, or None when the rows differ in width.

    Parameters
    ----------
    data : bytes
        UTF-8 bytes; the text is ``data[begin:end]``, without a line end at its very
        end. A line ends at a LF, and a CR just before it belongs to the line end.
    begin, end : int
        Where the text starts and stops in ``data``.
    delimiter : int
        The separator byte.
    longest_kept : int
        Cells longer than this many bytes are left as zeros in their rows and listed
        in :attr:`ByteColumn.long_cells`.

    Returns
    -------
    (ndarray of StringDType, shape (n_rows, n_columns), list of ByteColumn) or None
        The texts of all columns are one block, column after column, so that each
        column is contiguous in memory (cells over the limit still ""). Byte positions
        in :attr:`ByteColumn.long_cells` count from ``begin``.
    """
    codes = np.frombuffer(data, dtype=np.uint8, count=end - begin, offset=begin)
    bounds = _piece_bounds(data, begin, end)
    with ThreadPoolExecutor(WORKERS, thread_name_prefix="kinfill-csv") as pool:
        pieces = list(pool.map(lambda b: _find_cells(codes, b[0], b[1], delimiter), bounds))
        found = [p for p in pieces if p is not None]
        if len(found) < len(pieces) or any(p.starts.shape[0] != found[0].starts.shape[0] for p in found):
            return None  # some row is shorter or longer than the first
        offsets = np.cumsum([0] + [p.starts.shape[1] for p in found]).tolist()
        longest = np.max([p.lengths.max(axis=1) for p in found], axis=0).tolist()
        n_rows = offsets[-1]
        texts = np.empty(n_rows * len(longest), dtype=STRING_DTYPE)
        columns = [
            ByteColumn(
                np.empty((n_rows, _row_width(most, longest_kept)), dtype=np.uint8),
                most,
                texts[j * n_rows : (j + 1) * n_rows],
            )
            for j, most in enumerate(longest)
        ]
        list(pool.map(lambda k: _copy_cells(codes, found[k], offsets[k], columns), range(len(found))))
    return texts.reshape(len(columns), n_rows).T, columns


def _row_width(longest: int, longest_kept: int) -> int:
    return WORD_BYTES if longest <= WORD_BYTES else min(longest, longest_kept)


def _piece_bounds(data: bytes, begin: int, end: int) -> list[tuple[int, int]]:
    """(start, stop) from ``begin`` of pieces that each end just after a LF (the last at ``end``)."""
    bounds, start = [], begin
    while start < end:
        at = data.find(b"\n", start + PIECE_BYTES, end) if start + PIECE_BYTES < end else -1
        stop = end if at < 0 else at + 1
        bounds.append((start - begin, stop - begin))
        start = stop
    return bounds


def _find_cells(codes: np.ndarray, start: int, stop: int, delimiter: int) -> _Piece | None:
    """The cells of ``codes[start:stop]`` (whole lines), or None when its rows differ in width."""
    piece = codes[start:stop]
    newline = piece == ord("\n")
    ends = np.flatnonzero(newline | (piece == delimiter))
    is_line_end = newline[ends]
    if stop == codes.size:  # the text's last line has no line end: end it here
        ends = np.append(ends, piece.size)
        is_line_end = np.append(is_line_end, True)
    line_ends = np.flatnonzero(is_line_end)
    width = int(line_ends[0]) + 1
    if ends.size % width or not np.array_equal(line_ends, np.arange(width - 1, ends.size, width)):
        return None
    starts = np.empty(ends.size, dtype=np.int64)
    starts[0] = 0
    starts[1:] = ends[:-1] + 1
    crlf = line_ends[piece[ends[line_ends] - 1] == ord("\r")]
    ends[crlf] -= 1  # a CR before the LF belongs to the line end
    ends -= starts
    # one contiguous row per column: the copies below read them column after column
    return _Piece(start, stop, starts.reshape(-1, width).T.copy(), ends.reshape(-1, width).T.copy())


def _copy_cells(codes: np.ndarray, piece: _Piece, offset: int, columns: list[ByteColumn]) -> None:
    """Copy the piece's cells into rows ``offset:`` of every column."""
    widest = max(column.rows.shape[1] for column in columns)
    end = min(piece.stop + widest, codes.size)
    source = codes[piece.start : end]
    if end - piece.stop < widest:  # the text's end: read zeros past it
        source = np.concatenate((source, np.zeros(widest, dtype=np.uint8)))
    lines = piece.starts.shape[1]
    # a word starting at every byte (unaligned, overlapping): one gather reads a cell's eight bytes
    at_every_byte = np.ndarray((source.size - WORD_BYTES + 1,), dtype=_WORD, buffer=source, strides=(1,))
    for j, column in enumerate(columns):
        width = column.rows.shape[1]
        out = column.rows[offset : offset + lines]
        length, starts = piece.lengths[j], piece.starts[j]
        if width == WORD_BYTES:  # the eight bytes from each cell's start, its own kept
            words = out.view(_WORD).reshape(lines)
            np.bitwise_and(
                at_every_byte[starts], (_ONE << (length.astype(np.uint64) << _THREE)) - _ONE, out=words
            )
        else:
            out[...] = sliding_window_view(source, width)[starts]
            out *= np.arange(width) < np.where(length > width, 0, length)[:, None]
            over = np.flatnonzero(length > width)
            firsts, counts = (starts[over] + piece.start).tolist(), length[over].tolist()
            column.long_cells.extend(zip((over + offset).tolist(), firsts, counts, strict=True))
        # UTF-8 bytes to str (under the GIL, beside the other thread's numpy work)
        np.copyto(column.texts[offset : offset + lines], out.view(f"S{width}").ravel(), casting="unsafe")
