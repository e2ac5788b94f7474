"""The text edits behind the workbook export, on small hand-written parts.

Element names follow ECMA-376 Part 1 (worksheet sec. 18.3, styles sec. 18.8).
"""

from __future__ import annotations

from xml.etree import ElementTree

import pytest

from imputer_app.sheets import _patch_cells as cells
from imputer_app.sheets import _patch_notes as notes
from imputer_app.sheets import _patch_parts as parts
from imputer_app.sheets import _patch_styles as styles

HEAD = '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>'
TAIL = "</sheetData></worksheet>"


def sheet(rows: str) -> str:
    return HEAD + rows + TAIL


def new(ref: str, value: str) -> str:
    return f'<c r="{ref}" s="9"><v>{value}</v></c>'


@pytest.mark.parametrize(
    ("rows", "wanted", "expected"),
    [
        # replace a styled blank cell, keep its neighbours
        (
            '<row r="2" spans="1:3"><c r="A2"><v>1</v></c><c r="B2" s="3"/><c r="C2"><v>3</v></c></row>',
            {2: {1: new("B2", "7")}},
            '<row r="2"><c r="A2"><v>1</v></c>' + new("B2", "7") + '<c r="C2"><v>3</v></c></row>',
        ),
        # insert a missing cell between two, and one after the last
        (
            '<row r="2"><c r="A2"><v>1</v></c><c r="D2"><v>4</v></c></row>',
            {2: {2: new("C2", "7"), 5: new("F2", "8")}},
            '<row r="2"><c r="A2"><v>1</v></c>' + new("C2", "7")
            + '<c r="D2"><v>4</v></c>' + new("F2", "8") + "</row>",
        ),
        # a missing row goes between its neighbours; an empty row element opens
        (
            '<row r="1"><c r="A1"><v>1</v></c></row><row r="3" ht="20" customHeight="1"/>',
            {2: {0: new("A2", "5")}, 3: {1: new("B3", "6")}},
            '<row r="1"><c r="A1"><v>1</v></c></row><row r="2">'
            + new("A2", "5")
            + '</row><row r="3" ht="20" customHeight="1">'
            + new("B3", "6")
            + "</row>",
        ),
        # rows and cells without r attributes are counted in order
        (
            "<row><c><v>1</v></c><c><v>2</v></c></row><row><c><v>3</v></c></row>",
            {2: {1: new("B2", "9")}},
            "<row><c><v>1</v></c><c><v>2</v></c></row><row><c><v>3</v></c>" + new("B2", "9") + "</row>",
        ),
        # a row after the last one is appended
        ('<row r="1"><c r="A1"><v>1</v></c></row>', {40: {0: new("A40", "2")}},
         '<row r="1"><c r="A1"><v>1</v></c></row><row r="40">' + new("A40", "2") + "</row>"),
    ],
)  # fmt: skip
def test_set_cells_writes_in_order_and_keeps_the_rest(rows: str, wanted: dict, expected: str) -> None:
    result = cells.set_cells(sheet(rows), wanted)
    assert result == sheet(expected)
    ElementTree.fromstring(result)  # still well-formed


def test_set_cells_opens_an_empty_sheet_data() -> None:
    xml = '<worksheet xmlns="urn:x"><sheetData/><pageMargins left="1"/></worksheet>'
    assert cells.set_cells(xml, {3: {0: new("A3", "1")}}) == (
        '<worksheet xmlns="urn:x"><sheetData><row r="3">'
        + new("A3", "1")
        + '</row></sheetData><pageMargins left="1"/></worksheet>'
    )


def test_formula_results_are_dropped_and_nothing_else() -> None:
    xml = sheet(
        '<row r="1"><c r="A1" s="2" t="str"><f>B1&amp;"x"</f><v>abc</v></c><c r="B1" t="s"><v>0</v></c>'
        '<c r="C1"><f t="shared" ref="C1:C2" si="0">A1+1</f><v>2</v></c></row>'
    )
    assert cells.drop_formula_results(xml) == sheet(
        '<row r="1"><c r="A1" s="2"><f>B1&amp;"x"</f></c><c r="B1" t="s"><v>0</v></c>'
        '<c r="C1"><f t="shared" ref="C1:C2" si="0">A1+1</f></c></row>'
    )


def test_column_styles_take_the_most_common_style_of_value_cells() -> None:
    xml = sheet(
        '<row r="1"><c r="B1" s="1"><v>0</v></c></row>'  # header row: not a data row
        '<row r="2"><c r="B2" s="5"><v>1</v></c><c r="C2" s="7"><f>B2</f><v>1</v></c></row>'
        '<row r="3"><c r="B3" s="5"><v>2</v></c><c r="C3" s="8"/></row>'
        '<row r="4"><c r="B4" s="6"><v>3</v></c></row>'
    )
    assert cells.column_styles(xml, {2, 3, 4}, [1, 2]) == {1: 5}
    assert cells.cell_styles(xml, {3: [1, 2], 2: [1, 2]}) == (
        {(2, 1): 5, (2, 2): 7, (3, 1): 5, (3, 2): 8},
        {(2, 1), (2, 2), (3, 1)},
    )


@pytest.mark.parametrize(
    ("wanted", "taken", "expected"),
    [
        ("Fill log", ["Data"], "Fill log"),
        ("Fill log", ["fill LOG", "Fill log (2)"], "Fill log (3)"),
        ("A" * 40, ["A" * 31], "A" * 27 + " (2)"),
    ],
)
def test_free_sheet_names(wanted: str, taken: list[str], expected: str) -> None:
    assert parts.free_name(wanted, taken) == expected
    assert len(expected) <= parts.MAX_SHEET_NAME


def test_marked_styles_clone_the_base_and_only_append() -> None:
    xml = (
        '<styleSheet xmlns="urn:x"><fonts count="1"><font/></fonts><fills count="2"><fill/><fill/></fills>'
        '<borders count="1"><border/></borders>'
        '<cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/>'
        '<xf numFmtId="2" fontId="0" fillId="0" borderId="0" applyNumberFormat="1">'
        '<alignment wrapText="1"/></xf>'
        "</cellXfs></styleSheet>"
    )
    patched, marked = styles.add_marked(xml, [1], "#D2E7EF")
    assert marked == {1: 2}
    xfs = styles.children(patched, "cellXfs")
    assert xfs[:2] == styles.children(xml, "cellXfs")
    assert xfs[2] == (
        '<xf numFmtId="2" fontId="0" fillId="2" borderId="0" applyNumberFormat="1" applyFill="1">'
        '<alignment wrapText="1"/></xf>'
    )
    assert 'rgb="FFD2E7EF"' in styles.children(patched, "fills")[2]
    assert '<cellXfs count="3">' in patched and '<fills count="3">' in patched


def test_merged_styles_get_fresh_number_format_ids() -> None:
    target = (
        '<styleSheet xmlns="urn:x"><numFmts count="1"><numFmt numFmtId="164" formatCode="0.0"/></numFmts>'
        '<fonts count="1"><font/></fonts><fills count="1"><fill/></fills>'
        '<borders count="1"><border/></borders><cellXfs count="1">'
        '<xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellXfs></styleSheet>'
    )
    donor = (
        '<styleSheet><numFmts count="1"><numFmt numFmtId="164" formatCode="yyyy-mm-dd"/></numFmts>'
        '<fonts count="2"><font/><font><b/></font></fonts><fills count="1"><fill/></fills>'
        '<borders count="1"><border/></borders><cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" '
        'borderId="0" xfId="0"/><xf numFmtId="164" fontId="1" fillId="0" borderId="0" xfId="0"/></cellXfs>'
        "</styleSheet>"
    )
    merged, mapping = styles.merge(target, donor)
    assert mapping == [1, 2]
    assert styles.children(merged, "numFmts")[1] == '<numFmt numFmtId="165" formatCode="yyyy-mm-dd"/>'
    assert (
        styles.children(merged, "cellXfs")[2]
        == '<xf numFmtId="165" fontId="2" fillId="1" borderId="1" xfId="0"/>'
    )


def test_notes_are_added_beside_existing_ones() -> None:
    existing = notes.NoteParts(
        '<comments xmlns="urn:x"><authors><author>Lab</author></authors><commentList>'
        '<comment ref="B2" authorId="0"><text><t>theirs</t></text></comment></commentList></comments>',
        notes.new_parts(3).vml,
        False,
        False,
    )
    done, count = notes.add_notes(existing, {(2, 1): "ours on a noted cell", (5, 2): "ours & more\nline 2"})
    assert count == 1
    assert "<t>theirs</t>" in done.comments and "ours on a noted cell" not in done.comments
    assert "<author>Lab</author><author>Kinfill</author>" in done.comments
    assert '<comment ref="C5" authorId="1">' in done.comments and "ours &amp; more\nline 2" in done.comments
    assert "<x:Row>4</x:Row><x:Column>2</x:Column>" in done.vml and "_x0000_s3073" in done.vml
    ElementTree.fromstring(done.comments)


def test_legacy_drawing_goes_before_later_elements() -> None:
    xml = '<worksheet><sheetData/><pageMargins/><drawing r:id="rId1"/><tableParts count="0"/></worksheet>'
    assert parts.rid_attribute(xml, "rId2") == f'xmlns:kr="{parts.REL_NS}" kr:id="rId2"'
    assert notes.add_legacy_drawing(xml, 'r:id="rId2"') == (
        '<worksheet><sheetData/><pageMargins/><drawing r:id="rId1"/><legacyDrawing r:id="rId2"/>'
        '<tableParts count="0"/></worksheet>'
    )


def test_app_titles_and_calc_settings() -> None:
    app = (
        '<Properties><HeadingPairs><vt:vector size="4" baseType="variant"><vt:variant><vt:lpstr>Worksheets'
        "</vt:lpstr></vt:variant><vt:variant><vt:i4>2</vt:i4></vt:variant><vt:variant><vt:lpstr>Named Ranges"
        "</vt:lpstr></vt:variant><vt:variant><vt:i4>1</vt:i4></vt:variant></vt:vector></HeadingPairs>"
        '<TitlesOfParts><vt:vector size="3" baseType="lpstr"><vt:lpstr>Data</vt:lpstr><vt:lpstr>Methods'
        "</vt:lpstr><vt:lpstr>Rng</vt:lpstr></vt:vector></TitlesOfParts></Properties>"
    )
    patched = parts.add_app_titles(app, ["Fill log"])
    assert "<vt:i4>3</vt:i4>" in patched and '<vt:vector size="4" baseType="lpstr">' in patched
    assert "<vt:lpstr>Methods</vt:lpstr><vt:lpstr>Fill log</vt:lpstr><vt:lpstr>Rng</vt:lpstr>" in patched
    book = (
        '<workbook><sheets><sheet name="A" sheetId="3" r:id="rId1"/></sheets><calcPr calcId="1"/></workbook>'
    )
    assert '<calcPr calcId="1" fullCalcOnLoad="1"/>' in parts.full_calc_on_load(book)
    bare = "<workbook><sheets/><definedNames/><extLst/></workbook>"
    assert (
        parts.full_calc_on_load(bare)
        == '<workbook><sheets/><definedNames/><calcPr fullCalcOnLoad="1"/><extLst/></workbook>'
    )
    added = parts.add_sheets(book, [("Fill & log", "rId9")])
    assert '<sheet name="Fill &amp; log" sheetId="4" xmlns:kr=' in added
