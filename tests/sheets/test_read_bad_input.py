"""Bad input: each case gives one clear one-line SheetError and writes nothing.

Outside references for the crafted files: the zip layout (local and central directory
headers) follows PKWARE's APPNOTE.TXT sec. 4.3; the password-protected workbook is an
OLE compound file laid out after Microsoft's [MS-CFB] (v3, 512-byte sectors) holding the
streams "EncryptionInfo" and "EncryptedPackage" named in [MS-OFFCRYPTO] sec. 2.3.4; the
.xls files are BIFF8 record streams after [MS-XLS] (BOF 0x0809, BoundSheet8 0x0085,
FilePass 0x002F, Dimensions 0x0200, Number 0x0203, Label 0x0204, EOF 0x000A). Record
numbers and layouts are quoted from memory; python-calamine reading the files back
confirms them.
"""

from __future__ import annotations

import errno
import io
import struct
import zipfile
from pathlib import Path
from typing import Any

import openpyxl
import pytest

from imputer_app.errors import KinfillError, SheetError
from imputer_app.sheets import _guards
from imputer_app.sheets._read import list_sheets, read_sheet

END, FREE, FAT_SECTOR, NO_STREAM = 0xFFFFFFFE, 0xFFFFFFFF, 0xFFFFFFFD, 0xFFFFFFFF


def _snapshot(folder: Path) -> dict[str, tuple[int, bytes]]:
    return {p.name: (p.stat().st_mtime_ns, p.read_bytes()) for p in folder.iterdir() if p.is_file()}


def _refused(path: Path, *words: str, **options: Any) -> str:
    """Read ``path``, expect a one-line SheetError containing ``words``; nothing written."""
    before = _snapshot(path.parent) if path.parent.exists() else {}
    with pytest.raises(SheetError) as caught:
        read_sheet(path, **options)
    message = str(caught.value)
    assert isinstance(caught.value, KinfillError)
    assert "\n" not in message and message
    for word in words:
        assert word.lower() in message.lower(), message
    assert (_snapshot(path.parent) if path.parent.exists() else {}) == before
    return message


def _workbook(path: Path, rows: list[list[object]], title: str = "Data") -> Path:
    book = openpyxl.Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.title = title
    for row in rows:
        sheet.append(row)
    book.save(path)
    return path


def compound_file(streams: dict[str, bytes]) -> bytes:
    """A minimal compound file ([MS-CFB] v3) with the given top-level streams (>= 4096 bytes each)."""
    sector = 512
    fat = [FAT_SECTOR, END]
    entries = [("Root Entry", 5, END, 0)]
    next_sector = 2
    for name, data in streams.items():
        data = _pad(data, sector)
        count = len(data) // sector
        fat += [next_sector + i + 1 for i in range(count - 1)] + [END]
        entries.append((name, 2, next_sector, len(data)))
        next_sector += count
    fat += [FREE] * (128 - len(fat))
    directory = b""
    for number, (name, kind, start, size) in enumerate(entries):
        encoded = (name + "\0").encode("utf-16-le")
        child = 1 if kind == 5 else NO_STREAM
        right = number + 1 if 0 < number < len(entries) - 1 else NO_STREAM
        directory += (
            encoded.ljust(64, b"\0")
            + struct.pack("<HBBIII", len(encoded), kind, 1, NO_STREAM, right, child)
            + b"\0" * 36
            + struct.pack("<IQ", start, size)
        )
    directory = directory.ljust(sector, b"\0")
    header = (
        _guards.OLE_SIGNATURE
        + b"\0" * 16
        + struct.pack("<HHHHH", 0x3E, 3, 0xFFFE, 9, 6)
        + b"\0" * 6
        + struct.pack("<IIIIIIIII", 0, 1, 1, 0, 4096, END, 0, END, 0)
        + struct.pack("<109I", 0, *([FREE] * 108))
    )
    body = b"".join(_pad(data, sector) for data in streams.values())
    return header + struct.pack("<128I", *fat) + directory + body


def _pad(data: bytes, sector: int) -> bytes:
    # streams under 4096 bytes would live in the mini stream; keep them in normal sectors
    return data.ljust(max(4096, -(-len(data) // sector) * sector), b"\0")


def _record(kind: int, data: bytes = b"") -> bytes:
    return struct.pack("<HH", kind, len(data)) + data


def biff8_workbook(name: str, cells: list[tuple[int, int, float | str]], password: bool = False) -> bytes:
    """An .xls file: one worksheet of numbers and (Latin-1) labels, optionally marked encrypted."""

    def bof(kind: int) -> bytes:
        return _record(0x0809, struct.pack("<HHHHII", 0x0600, kind, 0x0DBB, 0x07CC, 0, 0x0206))

    def workbook_globals(sheet_offset: int) -> bytes:
        filepass = _record(0x002F, struct.pack("<HHH", 1, 1, 1) + b"\x11" * 48) if password else b""
        sheet_name = struct.pack("<BB", len(name), 0) + name.encode("latin-1")
        bound_sheet = _record(0x0085, struct.pack("<IBB", sheet_offset, 0, 0) + sheet_name)
        return bof(0x0005) + filepass + bound_sheet + _record(0x000A)

    rows = 1 + max((r for r, _, _ in cells), default=0)
    columns = 1 + max((c for _, c, _ in cells), default=0)
    sheet = bof(0x0010) + _record(0x0200, struct.pack("<IIHHH", 0, rows, 0, columns, 0))
    for row, column, value in cells:
        if isinstance(value, float):
            sheet += _record(0x0203, struct.pack("<HHHd", row, column, 15, value))
        else:
            text = struct.pack("<HB", len(value), 0) + value.encode("latin-1")
            sheet += _record(0x0204, struct.pack("<HHH", row, column, 15) + text)
    sheet += _record(0x000A)
    stream = workbook_globals(len(workbook_globals(0))) + sheet
    return compound_file({"Workbook": stream})


def _patch_central_size(data: bytes, member: str, size: int) -> bytes:
    """Rewrite the uncompressed size a zip's central directory claims for ``member``."""
    out = bytearray(data)
    start = 0
    while (start := data.find(b"PK\x01\x02", start)) >= 0:
        name_length = struct.unpack_from("<H", data, start + 28)[0]
        if data[start + 46 : start + 46 + name_length].decode() == member:
            struct.pack_into("<I", out, start + 24, size)
        start += 4
    return bytes(out)


# --------------------------------------------------------------------------- cases


def test_missing_file(tmp_path: Path) -> None:
    message = _refused(tmp_path / "nowhere.xlsx", "not found", "nowhere.xlsx")
    assert str(tmp_path) in message


@pytest.mark.parametrize("name", ["empty.csv", "empty.xlsx", "empty.tsv", "empty.ods"])
def test_empty_file(tmp_path: Path, name: str) -> None:
    path = tmp_path / name
    path.write_bytes(b"")
    _refused(path, "empty", name)


def test_blank_text_file(tmp_path: Path) -> None:
    path = tmp_path / "blank.csv"
    path.write_text("\ufeff\n \n\t\n", encoding="utf-8")
    _refused(path, "empty")


def test_workbook_without_values(tmp_path: Path) -> None:
    path = _workbook(tmp_path / "blank.xlsx", [])
    _refused(path, "no cells with values", "Data")


@pytest.mark.parametrize(
    ("name", "content"),
    [("header.csv", "sample;nitrate;pH\n"), ("header_units.csv", "sample,nitrate,pH\n,mg/L,\n\n")],
)
def test_header_only_text(tmp_path: Path, name: str, content: str) -> None:
    path = tmp_path / name
    path.write_text(content, encoding="utf-8")
    _refused(path, "header row", "no data rows", name)


def test_header_only_workbook(tmp_path: Path) -> None:
    path = _workbook(
        tmp_path / "header.xlsx", [["Survey 2024"], [], ["sample", "nitrate", "pH"], ["", "mg/L"]]
    )
    _refused(path, "header row (row 3)", "no data rows")


@pytest.mark.parametrize("cut", [0.5, 0.9])
def test_truncated_xlsx(tmp_path: Path, cut: float) -> None:
    good = _workbook(tmp_path / "good.xlsx", [["a", "b"], [1, 2]]).read_bytes()
    path = tmp_path / "truncated.xlsx"
    path.write_bytes(good[: int(len(good) * cut)])
    _refused(path, "truncated.xlsx", "damaged")


def test_corrupt_xlsx_content(tmp_path: Path) -> None:
    """Zip directory intact, the compressed worksheet garbled: the parser's error is wrapped."""
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_STORED) as archive:
        source = zipfile.ZipFile(_workbook(tmp_path / "good.xlsx", [["a", "b"], [1, 2]]))
        for info in source.infolist():
            data = source.read(info)
            if info.filename.endswith("sheet1.xml"):
                data = data[: len(data) // 2] + b"<<<not xml"
            archive.writestr(info.filename, data)
    path = tmp_path / "corrupt.xlsx"
    path.write_bytes(buffer.getvalue())
    _refused(path, "corrupt.xlsx", "damaged")


def test_password_protected_xlsx(tmp_path: Path) -> None:
    path = tmp_path / "locked.xlsx"
    path.write_bytes(
        compound_file(
            {"EncryptionInfo": b"\x04\x00\x04\x00" + b"\x40" * 60, "EncryptedPackage": b"\x99" * 5000}
        )
    )
    message = _refused(path, "locked.xlsx", "password-protected", "encrypted")
    assert "remove the password" in message
    with pytest.raises(SheetError, match="password-protected"):
        list_sheets(path)


def test_ole_file_without_encryption_named_xlsx(tmp_path: Path) -> None:
    path = tmp_path / "old.xlsx"
    path.write_bytes(compound_file({"Workbook": b"\x09\x08" * 3000}))
    _refused(path, "old.xlsx", "old-style", ".xls")


def test_password_protected_xls(tmp_path: Path) -> None:
    path = tmp_path / "locked.xls"
    path.write_bytes(biff8_workbook("Survey", [(0, 0, "a"), (1, 0, 1.0)], password=True))
    _refused(path, "locked.xls", "password-protected")


def test_xls_that_is_not_a_workbook(tmp_path: Path) -> None:
    path = tmp_path / "fake.xls"
    path.write_text("a,b\n1,2\n", encoding="utf-8")
    _refused(path, "fake.xls", "not a valid .xls")


def test_encrypted_ods(tmp_path: Path) -> None:
    path = tmp_path / "locked.ods"
    with zipfile.ZipFile(path, "w") as archive:
        archive.writestr("mimetype", "application/vnd.oasis.opendocument.spreadsheet")
        archive.writestr("content.xml", b"\x8f\x01encrypted bytes")
        archive.writestr(
            "META-INF/manifest.xml",
            '<manifest:manifest><manifest:file-entry manifest:full-path="content.xml">'
            "<manifest:encryption-data/></manifest:file-entry></manifest:manifest>",
        )
    _refused(path, "password-protected")


@pytest.mark.parametrize(
    "content",
    [
        bytes(range(256)) * 4,
        b"sample,nitrate\nS1,0.5\n\x00\x00\x00\x01\x02",
        b"PK\x03\x04" + b"\x00\x14" * 300,
    ],
    ids=["random-bytes", "nul-bytes-in-text", "zip-named-csv"],
)
def test_binary_file_named_csv(tmp_path: Path, content: bytes) -> None:
    path = tmp_path / "data.csv"
    path.write_bytes(content)
    _refused(path, "data.csv", "binary")


def test_renamed_xlsx_hint(tmp_path: Path) -> None:
    book = _workbook(tmp_path / "book.xlsx", [["a"], [1]])
    path = tmp_path / "book.csv"
    path.write_bytes(book.read_bytes())
    message = _refused(path, "binary")
    assert ".xlsx" in message


@pytest.mark.parametrize("name", ["data.json", "data.xlsb.bak", "data", "results.parquet"])
def test_unknown_extension(tmp_path: Path, name: str) -> None:
    path = tmp_path / name
    path.write_text("a,b\n1,2\n", encoding="utf-8")
    message = _refused(path, name)
    assert ".xlsx" in message and ".csv" in message
    with pytest.raises(SheetError):
        list_sheets(path)


def test_sheet_name_that_does_not_exist(tmp_path: Path) -> None:
    path = tmp_path / "two.xlsx"
    book = openpyxl.Workbook()
    first = book.active
    assert first is not None
    first.title = "Survey"
    first.append(["a", "b"])
    first.append([1, 2])
    book.create_sheet("Notes")
    book.save(path)
    message = _refused(path, "'Summary' not found", "'Survey'", "'Notes'", sheet="Summary")
    assert "available sheets" in message
    _refused(path, "position 2", "'Survey', 'Notes'", sheet=2)
    _refused(tmp_path / "two.xlsx", "sheet must be", sheet=1.5)


def test_sheet_name_for_text_file(tmp_path: Path) -> None:
    path = tmp_path / "table.csv"
    path.write_text("a,b\n1,2\n", encoding="utf-8")
    _refused(path, "text file", "'Survey'", sheet="Survey")
    assert read_sheet(path, sheet="table").frame.shape == (1, 2)


def test_zip_bomb_claiming_three_gigabytes(tmp_path: Path) -> None:
    good = _workbook(tmp_path / "good.xlsx", [["a", "b"], [1, 2]]).read_bytes()
    path = tmp_path / "bomb.xlsx"
    path.write_bytes(_patch_central_size(good, "xl/worksheets/sheet1.xml", 3_000_000_000))
    assert sum(i.file_size for i in zipfile.ZipFile(path).infolist()) > 2 * 1024**3  # APPNOTE 4.3.12
    message = _refused(path, "bomb.xlsx", "decompression bomb", "2 GB")
    assert "2.8 GB" in message
    with pytest.raises(SheetError, match="decompression bomb"):
        list_sheets(path)


def test_zip_bomb_by_compression_ratio(tmp_path: Path) -> None:
    good = _workbook(tmp_path / "good.xlsx", [["a", "b"], [1, 2]]).read_bytes()
    path = tmp_path / "ratio.xlsx"
    path.write_bytes(_patch_central_size(good, "xl/worksheets/sheet1.xml", 600 * 1024**2))
    _refused(path, "compressed", "decompression bomb")


def test_real_deflate_bomb_is_refused_before_inflating(tmp_path: Path) -> None:
    """11 MB of zeros deflate about 1000 times: refused from the directory alone."""
    path = tmp_path / "zeros.xlsx"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("[Content_Types].xml", "<Types/>")
        archive.writestr("xl/worksheets/sheet1.xml", b"\0" * (11 * 1024**2))
    _refused(path, "decompression bomb")


def test_file_deleted_between_listing_and_reading(tmp_path: Path) -> None:
    path = _workbook(tmp_path / "brief.xlsx", [["a", "b"], [1, 2]])
    assert list_sheets(path) == ["Data"]
    path.unlink()
    _refused(path, "brief.xlsx", "not found")


class _VanishingHandle(io.BytesIO):
    """A file handle whose file disappears (ENOENT) after the first chunk, or that ends early."""

    def __init__(self, data: bytes, how: str) -> None:
        super().__init__(data)
        self.how = how
        self.calls = 0

    def read(self, size: int | None = -1) -> bytes:
        self.calls += 1
        if self.calls > 1 and self.how == "vanish":
            raise FileNotFoundError(errno.ENOENT, "No such file or directory")
        if self.calls > 1 and self.how == "shrink":
            return b""
        return super().read(64)


@pytest.mark.parametrize(("mode", "words"), [("vanish", "vanished"), ("shrink", "changed or vanished")])
def test_file_vanishes_while_being_read(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, mode: str, words: str
) -> None:
    path = _workbook(tmp_path / "moving.xlsx", [["a", "b"], [1, 2]])
    data = path.read_bytes()
    monkeypatch.setattr(_guards, "open", lambda *a, **k: _VanishingHandle(data, mode), raising=False)
    _refused(path, "moving.xlsx", words)


def test_folder_named_like_a_sheet(tmp_path: Path) -> None:
    folder = tmp_path / "data.csv"
    folder.mkdir()
    with pytest.raises(SheetError, match="folder"):
        read_sheet(folder)


@pytest.mark.parametrize(
    ("options", "words"),
    [
        ({"decimal": ";"}, "decimal mark"),
        ({"header_row": -1}, "header_row"),
        ({"header_row": 99}, "beyond the last row"),
        ({"encoding": "no-such-codec"}, "unknown text encoding"),
        ({"encoding": "ascii"}, "cannot be decoded as ascii"),
        ({"delimiter": ";;"}, "one character"),
        ({"kinds": {"nope": "number"}}, "no column 'nope'"),
        ({"kinds": {"x": "colour"}}, "not one of"),
    ],
)
def test_bad_options(tmp_path: Path, options: dict[str, object], words: str) -> None:
    path = tmp_path / "opts.csv"
    path.write_bytes("x;y\n1;é\n".encode())
    _refused(path, words, **options)


def test_source_file_is_never_modified(tmp_path: Path) -> None:
    path = _workbook(tmp_path / "keep.xlsx", [["a", "b"], [1, "n.d."], [2, "<0.5"]])
    before = (path.stat().st_mtime_ns, path.read_bytes())
    sheet = read_sheet(path)
    assert (path.stat().st_mtime_ns, path.read_bytes()) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.xlsx"]
    import hashlib

    assert sheet.source.sha256 == hashlib.sha256(before[1]).hexdigest()
