"""The icon, desktop entry and MIME registration used by the double-click set-up."""

from __future__ import annotations

import configparser
import struct
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

RESOURCES = Path(__file__).resolve().parent.parent / "resources"
MIME_NS = "{http://www.freedesktop.org/standards/shared-mime-info}"

#: Standard MIME names of the sheet types Kinfill opens, with their file patterns
#: (IANA / freedesktop.org shared-mime-info names; common practice, no source).
SHEET_TYPES = {
    "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet": "*.xlsx",
    "application/vnd.ms-excel.sheet.macroEnabled.12": "*.xlsm",
    "application/vnd.ms-excel": "*.xls",
    "application/vnd.oasis.opendocument.spreadsheet": "*.ods",
    "text/csv": "*.csv",
    "text/tab-separated-values": "*.tsv",
}


def _desktop_entry() -> configparser.SectionProxy:
    parser = configparser.ConfigParser(interpolation=None, delimiters=("=",))
    parser.optionxform = str  # type: ignore[assignment,method-assign]  # keys are case-sensitive
    parser.read(RESOURCES / "kinfill.desktop", encoding="utf-8")
    return parser["Desktop Entry"]


@pytest.mark.parametrize(
    ("key", "value"),
    [
        ("Type", "Application"),
        ("Name", "Kinfill"),
        ("Exec", "kinfill-gui %f"),
        ("Icon", "kinfill"),
        ("Terminal", "false"),
    ],
)
def test_desktop_entry_keys(key: str, value: str) -> None:
    assert _desktop_entry()[key] == value


def test_desktop_entry_lists_every_sheet_type() -> None:
    mime = _desktop_entry()["MimeType"]
    assert mime.endswith(";")
    assert set(mime.rstrip(";").split(";")) == set(SHEET_TYPES)


def test_mime_registration_matches_desktop_entry() -> None:
    root = ET.parse(RESOURCES / "kinfill-mime.xml").getroot()
    assert root.tag == f"{MIME_NS}mime-info"
    found = {
        node.get("type"): [g.get("pattern") for g in node.iter(f"{MIME_NS}glob")]
        for node in root.iter(f"{MIME_NS}mime-type")
    }
    assert found == {name: [pattern] for name, pattern in SHEET_TYPES.items()}


def test_png_icon_is_256_square() -> None:
    data = (RESOURCES / "kinfill.png").read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR"
    width, height = struct.unpack(">II", data[16:24])
    assert (width, height) == (256, 256)


def test_svg_icon_is_square_and_self_contained() -> None:
    root = ET.parse(RESOURCES / "kinfill.svg").getroot()
    assert root.get("viewBox") == "0 0 256 256"
    text = (RESOURCES / "kinfill.svg").read_text(encoding="utf-8")
    assert "href" not in text  # no linked images or fonts
