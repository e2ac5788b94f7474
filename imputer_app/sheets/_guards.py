"""Checks that run before any parser sees a file: type, size, signatures, zip bombs.

Every check raises :class:`~imputer_app.errors.SheetError` with one line that names the
file and says what is wrong, so a damaged, encrypted or hostile file never reaches a
parser (and never produces a traceback). The file is opened read-only and read once;
everything after :func:`read_source` works on those bytes, so a file that changes or
vanishes later cannot make the read inconsistent with its SHA-256.
"""

from __future__ import annotations

import errno
import hashlib
import io
import zipfile
from pathlib import Path
from typing import IO

from imputer_app.errors import SheetError
from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report

#: File suffix (lower case, no dot) to file format.
WORKBOOK_FORMATS = ("xlsx", "xlsm", "xls", "ods")
TEXT_FORMATS = ("csv", "tsv", "txt")
ZIP_FORMATS = ("xlsx", "xlsm", "ods")

#: Largest file Kinfill reads into memory (bytes on disk).
MAX_FILE_BYTES = 1024**3
#: Largest total uncompressed size a workbook's zip may claim (decompression-bomb guard).
MAX_UNCOMPRESSED_BYTES = 2 * 1024**3
#: Largest compression ratio accepted for a zip member bigger than RATIO_CHECK_BYTES.
#: Real worksheets compress about 4-20 times; deflate cannot exceed about 1030.
MAX_RATIO = 300
RATIO_CHECK_BYTES = 10 * 1024**2

OLE_SIGNATURE = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
ZIP_SIGNATURE = b"PK\x03\x04"
_CHUNK = 4 * 1024**2
#: Bytes (or characters) at the start of a file that decide whether it is blank: the whole is
#: stripped only when they are.
BLANK_HEAD = 1 << 16


def file_format(path: Path) -> str:
    """Return the format name of ``path`` from its suffix, or raise SheetError."""
    suffix = path.suffix.lower().lstrip(".")
    if suffix in WORKBOOK_FORMATS or suffix in TEXT_FORMATS:
        return suffix
    known = ", ".join(f".{s}" for s in WORKBOOK_FORMATS + TEXT_FORMATS)
    what = f"unknown file type '.{suffix}'" if suffix else "no file extension"
    raise SheetError(f"cannot read '{path.name}': {what}; Kinfill reads {known} files")


def check_exists(path: Path) -> None:
    """Raise SheetError unless ``path`` is an existing regular file."""
    if not path.exists():
        raise SheetError(f"file not found: '{path}'")
    if not path.is_file():
        raise SheetError(f"'{path}' is a folder or device, not a spreadsheet file")


def read_source(
    path: Path, progress: Progress | None = None, cancel: CancelFlag | None = None, share: int = 100
) -> tuple[bytes, str]:
    """Read the whole file once and return its bytes and their SHA-256 (hex).

    ``progress`` receives ``(done, 1000)`` scaled to the first ``share`` thousandths.
    A file that vanishes, shrinks or grows while it is read raises SheetError.
    """
    check_exists(path)
    try:
        expected = path.stat().st_size
    except OSError as error:
        raise _os_error(path, error) from None
    if expected > MAX_FILE_BYTES:
        raise SheetError(
            f"'{path.name}' is {expected / 1024**3:.1f} GB; Kinfill reads files up to "
            f"{MAX_FILE_BYTES // 1024**3} GB"
        )
    digest = hashlib.sha256()
    parts: list[bytes] = []
    done = 0
    try:
        with open(path, "rb") as handle:
            while chunk := handle.read(_CHUNK):
                raise_if_cancelled(cancel)
                parts.append(chunk)
                digest.update(chunk)
                done += len(chunk)
                if done > expected:
                    break
                report(progress, share * done // max(expected, 1), 1000)
    except OSError as error:
        raise _os_error(path, error) from None
    if done != expected:
        raise SheetError(
            f"'{path.name}' changed or vanished while it was being read "
            f"({done} of {expected} bytes); close the program writing it and try again"
        )
    data = b"".join(parts)
    if _is_blank(data, b" \t\r\n\x00\xef\xbb\xbf\xff\xfe"):
        raise SheetError(f"'{path.name}' is empty")
    return data, digest.hexdigest()


def _is_blank(data: bytes, blanks: bytes) -> bool:
    """True when ``data`` holds only ``blanks`` (the start decides a long file without a copy of it)."""
    return not data[:BLANK_HEAD].strip(blanks) and not data.strip(blanks)


def _os_error(path: Path, error: OSError) -> SheetError:
    if error.errno == errno.ENOENT:
        return SheetError(f"'{path.name}' vanished while it was being read (file not found: '{path}')")
    if isinstance(error, PermissionError):
        return SheetError(f"no permission to read '{path}'")
    reason = error.strerror or type(error).__name__
    return SheetError(f"'{path.name}' could not be read: {reason}")


def check_workbook_bytes(data: bytes, path: Path, fmt: str) -> None:
    """Refuse encrypted, mislabelled, damaged or bomb-like workbooks before parsing."""
    if data.startswith(OLE_SIGNATURE[:4]):
        _check_ole(data, path, fmt)
    elif data.startswith(ZIP_SIGNATURE):
        check_zip(io.BytesIO(data), path, fmt)
    else:
        raise _not_a_workbook(path, fmt)


def check_workbook_file(path: Path, fmt: str) -> None:
    """Like :func:`check_workbook_bytes` but reads only the signature and zip directory."""
    check_exists(path)
    try:
        with open(path, "rb") as handle:
            head = handle.read(8)
            handle.seek(0)
            if not head.strip():
                raise SheetError(f"'{path.name}' is empty")
            if head.startswith(OLE_SIGNATURE[:4]):
                _check_ole(handle.read(MAX_FILE_BYTES), path, fmt)
            elif head.startswith(ZIP_SIGNATURE):
                check_zip(handle, path, fmt)
            else:
                raise _not_a_workbook(path, fmt)
    except OSError as error:
        raise _os_error(path, error) from None


def _not_a_workbook(path: Path, fmt: str) -> SheetError:
    return SheetError(f"'{path.name}' is not a valid .{fmt} workbook (damaged, or the wrong extension)")


#: A BIFF8 workbook-globals BOF record (id 0x0809, 16 bytes, version 0x0600, type 0x0005).
_BIFF8_GLOBALS_BOF = b"\x09\x08\x10\x00\x00\x06\x05\x00"
_BIFF_FILEPASS = b"\x2f\x00"


def _check_ole(data: bytes, path: Path, fmt: str) -> None:
    """An OLE compound file must be an unencrypted .xls workbook."""
    # A password-protected .xlsx is an OLE file with the streams "EncryptionInfo" and
    # "EncryptedPackage" (names stored as UTF-16LE); a protected .xls has a FilePass
    # record right after the BOF record of its workbook globals.
    names = ("EncryptedPackage".encode("utf-16-le"), "EncryptionInfo".encode("utf-16-le"))
    bof = data.find(_BIFF8_GLOBALS_BOF)
    filepass = bof >= 0 and data[bof + 20 : bof + 22] == _BIFF_FILEPASS
    if filepass or any(name in data for name in names):
        raise SheetError(
            f"'{path.name}' is password-protected (encrypted); open it in your spreadsheet "
            "program, remove the password and save a copy"
        )
    if fmt in ZIP_FORMATS:
        raise SheetError(
            f"'{path.name}' is an old-style binary workbook saved with a .{fmt} name; rename it to .xls"
        )


def check_zip(source: IO[bytes], path: Path, fmt: str) -> None:
    """Check a workbook's zip directory: readable, not encrypted, not a decompression bomb.

    Only the central directory is read; nothing is decompressed except, for ODS, the
    small manifest that says whether the document is encrypted.
    """
    try:
        archive = zipfile.ZipFile(source)
    except (zipfile.BadZipFile, EOFError, ValueError):
        raise SheetError(
            f"'{path.name}' is damaged (truncated or corrupt) and cannot be opened as a .{fmt} workbook"
        ) from None
    with archive:
        infos = archive.infolist()
        total = sum(info.file_size for info in infos)
        if total > MAX_UNCOMPRESSED_BYTES:
            raise SheetError(
                f"'{path.name}' claims {total / 1024**3:.1f} GB of uncompressed content, more than the "
                f"{MAX_UNCOMPRESSED_BYTES // 1024**3} GB limit; refused as a possible decompression bomb"
            )
        for info in infos:
            ratio = info.file_size / max(info.compress_size, 1)
            if info.file_size > RATIO_CHECK_BYTES and ratio > MAX_RATIO:
                raise SheetError(
                    f"'{path.name}' has a part ('{info.filename}') compressed {ratio:.0f} times, more than "
                    f"the {MAX_RATIO}x limit; refused as a possible decompression bomb"
                )
            if info.flag_bits & 0x1:
                raise SheetError(f"'{path.name}' is password-protected (encrypted zip); remove the password")
        names = {info.filename for info in infos}
        _check_zip_members(archive, names, path, fmt)


def _check_zip_members(archive: zipfile.ZipFile, names: set[str], path: Path, fmt: str) -> None:
    if fmt == "ods":
        if "content.xml" not in names:
            raise SheetError(f"'{path.name}' is a zip archive but not an OpenDocument spreadsheet")
        manifest = archive.getinfo("META-INF/manifest.xml") if "META-INF/manifest.xml" in names else None
        small = manifest is not None and manifest.file_size < 10 * 1024**2
        if small and b"encryption-data" in archive.read("META-INF/manifest.xml"):
            raise SheetError(f"'{path.name}' is password-protected (encrypted); save an unprotected copy")
    elif "[Content_Types].xml" not in names:
        raise SheetError(f"'{path.name}' is a zip archive but not an Excel workbook")


def check_text_bytes(data: bytes, path: Path, utf16: bool) -> None:
    """Refuse binary content in a delimited-text file (NUL bytes, control characters)."""
    sample = data[: 1 << 16]
    hint = ""
    if data.startswith(ZIP_SIGNATURE):
        hint = " (it looks like a zip archive or .xlsx workbook; use the right extension)"
    elif data.startswith(OLE_SIGNATURE[:4]):
        hint = " (it looks like an .xls workbook or other Office file; use the right extension)"
    if not utf16 and b"\x00" in data:
        raise SheetError(f"'{path.name}' contains binary data (NUL bytes), not delimited text{hint}")
    if utf16:
        return
    controls = sum(sample.count(bytes([c])) for c in (*range(1, 9), 11, 12, *range(14, 27), *range(28, 32)))
    if controls > max(8, len(sample) // 100):
        raise SheetError(f"'{path.name}' contains binary data (control characters), not delimited text{hint}")
