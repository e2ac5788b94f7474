"""Measure every sheet of an ``.xls`` workbook from its records, before the parser opens it.

The workbook parser reads every sheet of an ``.xls`` file into a dense grid when it
opens the file, and gives formula errors as empty cells. Here the file's compound
container ([MS-CFB] sec. 2: header, FAT, directory, mini stream) is walked to its
``Workbook`` stream, and the BIFF records of each sheet ([MS-XLS] sec. 2.4) are read for
cell positions only: NUMBER, RK, MULRK, LABEL, LABELSST, RSTRING, BOOLERR, BLANK,
MULBLANK and FORMULA. The same pass finds cached formula errors (a FORMULA record whose
result is an error, [MS-XLS] 2.5.133 FormulaValue, or a BOOLERR record holding an
error), formula cells, and cells beyond the limits. A file whose container cannot be
walked is left to the parser, which gives its own message.
"""

from __future__ import annotations

import struct
from collections.abc import Iterator
from pathlib import Path

import numpy as np

from imputer_app.sheets._extent import Extent, refuse_if_too_large

_FREE, _END = 0xFFFFFFFF, 0xFFFFFFFE
_HEAD = struct.Struct("<HH")
_STREAMS = ("Workbook", "Book")
_BOF, _EOF, _BOUNDSHEET, _FILEPASS, _FORMULA, _BOOLERR = 0x0809, 0x000A, 0x0085, 0x002F, 0x0006, 0x0205
#: Records that start with a cell's row and column (u16 each); MULRK/MULBLANK give a span.
_CELLS = frozenset({0x0203, 0x027E, 0x0204, 0x00FD, 0x00D6, 0x0201, _FORMULA, _BOOLERR})
_SPANS = frozenset({0x00BD, 0x00BE})
#: BErr codes ([MS-XLS] 2.5.10) as spreadsheet programs show them.
ERROR_CODES = {
    0x00: "#NULL!", 0x07: "#DIV/0!", 0x0F: "#VALUE!", 0x17: "#REF!",
    0x1D: "#NAME?", 0x24: "#NUM!", 0x2A: "#N/A", 0x2B: "#GETTING_DATA",
}  # fmt: skip


class _UnreadableError(Exception):
    """The container or its records are not as [MS-CFB]/[MS-XLS] describe."""


def xls_extents(data: bytes, path: Path) -> dict[str, Extent]:
    """Measure every worksheet of the ``.xls`` file ``data`` and refuse one too large.

    Returns
    -------
    dict of str to Extent
        Per sheet name, in workbook order: last row and column, cached formula errors
        and formula cells. Empty when the file cannot be walked (the parser then reports it).

    Raises
    ------
    SheetError
        When a sheet reaches beyond :data:`~imputer_app.sheets._extent.MAX_CELLS`.
    """
    try:
        stream = _workbook_stream(data)
        sheets = _boundsheets(stream)
        extents = {name: _scan_sheet(stream, offset) for name, offset in sheets}
    except (_UnreadableError, struct.error, IndexError, ValueError):
        return {}
    for name, extent in extents.items():
        refuse_if_too_large(extent, path, name)
    return extents


# ------------------------------------------------------------------ compound file
def _workbook_stream(data: bytes) -> bytes:
    """The bytes of the ``Workbook`` (BIFF8) or ``Book`` (BIFF5) stream."""
    if len(data) < 512:
        raise _UnreadableError
    shift, mini_shift = struct.unpack_from("<HH", data, 0x1E)
    n_fat, first_dir = struct.unpack_from("<II", data, 0x2C)
    cutoff, first_minifat, n_minifat, first_difat, n_difat = struct.unpack_from("<IIIII", data, 0x38)
    if not 7 <= shift <= 16 or mini_shift >= shift:
        raise _UnreadableError
    size = 1 << shift
    difat = list(struct.unpack_from("<109I", data, 0x4C))
    sector = first_difat
    for _ in range(n_difat):
        block = _sector(data, sector, size)
        listed = struct.unpack_from(f"<{size // 4}I", block)
        difat.extend(listed[:-1])
        sector = listed[-1]
    fat_sectors = [s for s in difat[:n_fat] if s not in (_FREE, _END)]
    fat = np.frombuffer(b"".join(_sector(data, s, size) for s in fat_sectors), dtype="<u4")
    directory = _chain(data, fat, first_dir, size)
    entries = [directory[i : i + 128] for i in range(0, len(directory) - 127, 128)]
    if not entries:
        raise _UnreadableError
    root_start = struct.unpack_from("<I", entries[0], 116)[0]
    for entry in entries:
        length = struct.unpack_from("<H", entry, 64)[0]
        name = entry[: max(length - 2, 0)].decode("utf-16-le", "replace")
        if entry[66] == 2 and name in _STREAMS:
            start, stream_size = struct.unpack_from("<IQ", entry, 116)
            if size == 512:  # a version 3 file: the high half of the size is not used
                stream_size &= 0xFFFFFFFF
            if stream_size >= cutoff:
                return _chain(data, fat, start, size)[:stream_size]
            mini = _chain(data, fat, root_start, size)
            minifat = np.frombuffer(_chain(data, fat, first_minifat, size), dtype="<u4")
            minifat = minifat[: n_minifat * size // 4]
            return _chain(mini, minifat, start, 1 << mini_shift, in_stream=True)[:stream_size]
    raise _UnreadableError


def _sector(data: bytes, number: int, size: int, in_stream: bool = False) -> bytes:
    """Sector ``number``: of the file (after its 512-byte header sector) or of the mini stream."""
    start = number * size if in_stream else (number + 1) * size
    if start >= len(data):
        raise _UnreadableError
    return data[start : start + size]


def _chain(data: bytes, fat: np.ndarray, first: int, size: int, in_stream: bool = False) -> bytes:
    """The sectors of a chain joined; a chain longer than the table (a loop) is refused."""
    parts: list[bytes] = []
    sector = first
    for _ in range(len(fat) + 1):
        if sector in (_END, _FREE):
            return b"".join(parts)
        if sector >= len(fat):
            raise _UnreadableError
        parts.append(_sector(data, sector, size, in_stream))
        sector = int(fat[sector])
    raise _UnreadableError


# ------------------------------------------------------------------ BIFF records
def _records(stream: bytes, position: int) -> Iterator[tuple[int, int, int]]:
    """(record type, body start, body length) from ``position`` to the substream's EOF."""
    end = len(stream)
    while position + 4 <= end:
        kind, length = struct.unpack_from("<HH", stream, position)
        yield kind, position + 4, length
        if kind == _EOF:
            return
        position += 4 + length


def _record_starts(stream: bytes, position: int) -> list[int]:
    """Where each record begins, from ``position`` to the substream's EOF (headers only)."""
    head = _HEAD.unpack_from
    starts: list[int] = []
    end = len(stream)
    while position + 4 <= end:
        kind, length = head(stream, position)
        starts.append(position)
        if kind == _EOF:
            break
        position += 4 + length
    return starts


def _boundsheets(stream: bytes) -> list[tuple[str, int]]:
    """(name, substream offset) of every worksheet, in workbook order."""
    biff8 = True
    found: list[tuple[str, int]] = []
    for kind, body, length in _records(stream, 0):
        if kind == _BOF and length >= 2:
            biff8 = struct.unpack_from("<H", stream, body)[0] == 0x0600
        elif kind == _FILEPASS:  # encrypted: record bodies are not readable; the parser says so
            raise _UnreadableError
        elif kind == _BOUNDSHEET and length >= 8:
            offset = struct.unpack_from("<I", stream, body)[0]
            sheet_type, count = stream[body + 5], stream[body + 6]
            if sheet_type != 0:  # a chart, macro or module sheet
                continue
            if biff8:
                wide = stream[body + 7] & 1
                raw = stream[body + 8 : body + 8 + count * (2 if wide else 1)]
                name = raw.decode("utf-16-le" if wide else "latin-1")
            else:
                name = stream[body + 7 : body + 7 + count].decode("cp1252", "replace")
            found.append((name.replace("\0", ""), offset))
    return found


def _scan_sheet(stream: bytes, offset: int) -> Extent:
    """Last row and column, formula errors and formula cells of the sheet at ``offset``.

    Only the walk from record to record is a Python loop; the cells' positions and
    results are then read for all records at once.
    """
    extent = Extent()
    starts = np.array(_record_starts(stream, offset), dtype=np.int64)
    if not starts.size:
        return extent
    data = np.frombuffer(stream, dtype=np.uint8)

    def u16(at: np.ndarray) -> np.ndarray:
        return data[at].astype(np.int64) | (data[at + 1].astype(np.int64) << 8)

    kind, length, body = u16(starts), u16(starts + 2), starts + 4
    cells = np.isin(kind, list(_CELLS)) & (length >= 4) & (body + 4 <= len(data))
    spans = np.isin(kind, list(_SPANS)) & (length >= 6) & (body + length <= len(data))
    rows = np.concatenate([u16(body[cells]), u16(body[spans])])
    columns = np.concatenate([u16(body[cells] + 2), u16(body[spans] + length[spans] - 2)])
    if rows.size:
        for far in (int(rows.argmax()), int(columns.argmax())):
            extent.see(int(rows[far]) + 1, int(columns[far]) + 1)
    formula = (kind == _FORMULA) & (length >= 14) & (body + 14 <= len(data))
    at = body[formula]
    rows, columns = u16(at), u16(at + 2)
    for column in np.unique(columns).tolist():
        extent.formulas[column] = rows[columns == column]
    # FormulaValue ([MS-XLS] 2.5.133): bytes 6-7 of the result 0xFFFF, byte 0 = 2 for an error
    error = (data[at + 12] == 0xFF) & (data[at + 13] == 0xFF) & (data[at + 6] == 2)
    codes = data[at[error] + 8]
    boolerr = (kind == _BOOLERR) & (length >= 8) & (body + 8 <= len(data))
    boolerr[boolerr] = data[body[boolerr] + 7] == 1  # fError: the value is an error code
    at = np.concatenate([at[error], body[boolerr]])
    codes = np.concatenate([codes, data[body[boolerr] + 6]])
    for row, column, code in zip(u16(at).tolist(), u16(at + 2).tolist(), codes.tolist(), strict=True):
        extent.errors[(row, column)] = ERROR_CODES.get(code, "#ERROR")
    return extent
