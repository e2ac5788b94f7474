"""Build tiny .xlsx and .ods packages by hand, cell XML and all, for hostile-input tests.

Element names follow ECMA-376 Part 1 (SpreadsheetML) and OpenDocument 1.2 Part 1
(``table:table-row``, ``table:number-rows-repeated``).
"""

from __future__ import annotations

import zipfile
from pathlib import Path

_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_PKG = "http://schemas.openxmlformats.org/package/2006/relationships"
_CT = "application/vnd.openxmlformats-officedocument.spreadsheetml"


def xlsx(path: Path, sheet_data: str, name: str = "Data") -> Path:
    """Write a one-sheet workbook whose ``<sheetData>`` holds ``sheet_data``."""
    parts = {
        "[Content_Types].xml": (
            '<?xml version="1.0"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
            '<Default Extension="rels" '
            'ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
            '<Default Extension="xml" ContentType="application/xml"/>'
            f'<Override PartName="/xl/workbook.xml" ContentType="{_CT}.sheet.main+xml"/>'
            f'<Override PartName="/xl/worksheets/sheet1.xml" ContentType="{_CT}.worksheet+xml"/></Types>'
        ),
        "_rels/.rels": (
            f'<?xml version="1.0"?><Relationships xmlns="{_PKG}"><Relationship Id="rId1" '
            f'Type="{_REL}/officeDocument" Target="xl/workbook.xml"/></Relationships>'
        ),
        "xl/workbook.xml": (
            f'<?xml version="1.0"?><workbook xmlns="{_MAIN}" xmlns:r="{_REL}"><sheets>'
            f'<sheet name="{name}" sheetId="1" r:id="rId1"/></sheets></workbook>'
        ),
        "xl/_rels/workbook.xml.rels": (
            f'<?xml version="1.0"?><Relationships xmlns="{_PKG}"><Relationship Id="rId1" '
            f'Type="{_REL}/worksheet" Target="worksheets/sheet1.xml"/></Relationships>'
        ),
        "xl/worksheets/sheet1.xml": (
            f'<?xml version="1.0"?><worksheet xmlns="{_MAIN}"><sheetData>{sheet_data}</sheetData></worksheet>'
        ),
    }
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as package:
        for part, text in parts.items():
            package.writestr(part, text)
    return path


def text_cell(ref: str, text: str) -> str:
    """An inline-string ``<c>`` element."""
    return f'<c r="{ref}" t="inlineStr"><is><t>{text}</t></is></c>'


def number_cell(ref: str, value: float) -> str:
    """A number ``<c>`` element."""
    return f'<c r="{ref}"><v>{value}</v></c>'


def ods(path: Path, rows: str, name: str = "Data") -> Path:
    """Write a one-table OpenDocument spreadsheet whose table holds ``rows``."""
    content = (
        '<?xml version="1.0" encoding="UTF-8"?><office:document-content '
        'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
        'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
        'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" office:version="1.2">'
        f'<office:body><office:spreadsheet><table:table table:name="{name}">{rows}</table:table>'
        "</office:spreadsheet></office:body></office:document-content>"
    )
    manifest = (
        '<?xml version="1.0" encoding="UTF-8"?><manifest:manifest '
        'xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2">'
        '<manifest:file-entry manifest:full-path="/" '
        'manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/>'
        '<manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/>'
        "</manifest:manifest>"
    )
    with zipfile.ZipFile(path, "w") as package:
        package.writestr("mimetype", "application/vnd.oasis.opendocument.spreadsheet")
        package.writestr("content.xml", content, compress_type=zipfile.ZIP_DEFLATED)
        package.writestr("META-INF/manifest.xml", manifest, compress_type=zipfile.ZIP_DEFLATED)
    return path


def ods_cell(value: float | str, repeat: int = 1) -> str:
    """A ``table:table-cell`` holding a number or text, repeated ``repeat`` times."""
    kind = "string" if isinstance(value, str) else "float"
    attr = "" if isinstance(value, str) else f' office:value="{value}"'
    return (
        f'<table:table-cell table:number-columns-repeated="{repeat}" office:value-type="{kind}"{attr}>'
        f"<text:p>{value}</text:p></table:table-cell>"
    )


def ods_row(cells: str, repeat: int = 1) -> str:
    """A ``table:table-row`` repeated ``repeat`` times."""
    return f'<table:table-row table:number-rows-repeated="{repeat}">{cells}</table:table-row>'
