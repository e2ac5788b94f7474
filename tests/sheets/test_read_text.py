"""Delimited text: separator, decimal mark, encoding, quoting, overrides, row numbers.

Files are written by hand (bytes spelled out here) or by Python's ``csv`` module, an
independent writer following RFC 4180 quoting; every value and state read back is
compared with the table that was written.
"""

from __future__ import annotations

import csv
import io
import math
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from imputer_app.sheets._model import Sheet
from imputer_app.sheets._read import read_sheet
from imputer_app.sheets._text import detect_delimiter

MISSING = "missing"
OBSERVED = "observed"


def _write(tmp_path: Path, name: str, text: str, encoding: str = "utf-8") -> Path:
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return path


def _column(sheet: Sheet, name: str) -> tuple[list[Any], list[str]]:
    return sheet.frame[name].tolist(), sheet.states[name].astype(str).tolist()


def note(sheet: Sheet, row: int, column: str) -> dict[str, Any]:
    """The one cell note of (row, column) as a dict."""
    notes = sheet.cell_notes
    hit = notes[(notes["row"] == row) & (notes["column"] == column)]
    assert len(hit) == 1, (row, column)
    return {str(k): v for k, v in hit.iloc[0].items()}


def _same(actual: list[Any], expected: list[Any]) -> bool:
    return all(
        (isinstance(e, float) and math.isnan(e) and pd.isna(a)) or a == e
        for a, e in zip(actual, expected, strict=True)
    )


@pytest.mark.parametrize(
    ("text", "delimiter", "decimal"),
    [
        ("site,pH,nitrate\nA,7.21,0.5\nB,6.90,1.25\n", ",", "."),
        ("site;pH;nitrate\nA;7,21;0,5\nB;6,90;1,25\n", ";", ","),
        ("site;pH;nitrate\nA;7.21;0.5\nB;6.90;1.25\n", ";", "."),
        ("site\tpH\tnitrate\nA\t7,21\t0,5\nB\t6,90\t1,25\n", "\t", ","),
        ("site\tpH\tnitrate\nA\t7.21\t0.5\nB\t6.90\t1.25\n", "\t", "."),
        ("site|pH|nitrate\nA|7.21|0.5\nB|6.90|1.25\n", "|", "."),
        # a ";" file with decimal commas also splits evenly on ","; ";" must win
        ("1,5;2,5\n3,5;4,5\n", ";", ","),
    ],
    ids=["comma-point", "semicolon-comma", "semicolon-point", "tab-comma", "tab-point", "pipe", "ambiguous"],
)
def test_separator_and_decimal_detected(tmp_path: Path, text: str, delimiter: str, decimal: str) -> None:
    sheet = read_sheet(_write(tmp_path, "t.csv", text))
    assert (sheet.source.delimiter, sheet.source.decimal) == (delimiter, decimal)
    numbers = sheet.frame.select_dtypes("number")
    if "pH" in sheet.frame:
        assert sheet.frame["pH"].tolist() == [7.21, 6.90]
        assert sheet.frame["nitrate"].tolist() == [0.5, 1.25]
        assert sheet.frame["site"].tolist() == ["A", "B"]
    else:  # no header: the first row is data
        assert sheet.source.header_row == 0
        np.testing.assert_array_equal(numbers.to_numpy(), [[1.5, 2.5], [3.5, 4.5]])


def test_semicolon_decimal_comma_lab_export(tmp_path: Path) -> None:
    """Thousands points, censored entries and markers in a European export."""
    text = (
        "Probe;Leitfähigkeit;Nitrat;Phosphat\n"
        "P1;1.234,5;7,21;<0,05\n"
        "P2;987,0;lost;0,120\n"
        "P3;2.001;< 0,1;-\n"
        "P4;15;>2000;1,5e-2\n"
    )
    sheet = read_sheet(_write(tmp_path, "lab.csv", text))
    values, states = _column(sheet, "Leitfähigkeit")
    assert values == [1234.5, 987.0, 2001.0, 15.0] and states == [OBSERVED] * 4
    values, states = _column(sheet, "Nitrat")
    assert _same(values, [7.21, math.nan, math.nan, math.nan])
    assert states == [OBSERVED, MISSING, "censored", "censored"]
    values, states = _column(sheet, "Phosphat")
    assert _same(values, [math.nan, 0.12, math.nan, 0.015])
    assert states == ["censored", OBSERVED, MISSING, OBSERVED]
    assert note(sheet, 2, "Phosphat")["limit"] == 0.05
    assert (note(sheet, 4, "Nitrat")["side"], note(sheet, 4, "Nitrat")["limit"]) == ("<", 0.1)
    assert (note(sheet, 5, "Nitrat")["side"], note(sheet, 5, "Nitrat")["limit"]) == (">", 2000.0)
    assert (note(sheet, 3, "Nitrat")["state"], note(sheet, 3, "Nitrat")["text"]) == (MISSING, "lost")


@pytest.mark.parametrize(
    ("encoding", "bom", "reported"),
    [
        ("utf-8", b"", "utf-8"),
        ("utf-8", b"\xef\xbb\xbf", "utf-8-sig"),
        ("cp1252", b"", "cp1252"),
        ("utf-16-le", b"\xff\xfe", "utf-16"),
        ("utf-16-be", b"\xfe\xff", "utf-16"),
    ],
)
def test_encodings(tmp_path: Path, encoding: str, bom: bytes, reported: str) -> None:
    text = "Probe\tTemperatur\tLeitfähigkeit\n\t°C\tµS/cm\nP1\t12,5\t250\nP2\t13,0\t260\n"
    path = tmp_path / "enc.txt"
    path.write_bytes(bom + text.encode(encoding))
    sheet = read_sheet(path)
    assert sheet.source.encoding == reported
    assert [c.name for c in sheet.columns] == ["Probe", "Temperatur", "Leitfähigkeit"]  # no BOM in the name
    assert sheet.units == {"Probe": None, "Temperatur": "°C", "Leitfähigkeit": "µS/cm"}
    assert sheet.source.units_row == 2
    assert sheet.frame["Temperatur"].tolist() == [12.5, 13.0]


def test_cp1252_bytes_by_hand(tmp_path: Path) -> None:
    """0xB5 is µ and 0xB0 is ° in Windows-1252 (code page table, quoted from memory)."""
    path = tmp_path / "win.csv"
    path.write_bytes(b"sample;cond\r\n;\xb5S/cm\r\nS1;250\r\n")
    sheet = read_sheet(path)
    assert sheet.source.encoding == "cp1252"
    assert sheet.units["cond"] == "µS/cm"


def test_overrides_beat_detection(tmp_path: Path) -> None:
    # detection would pick ";" and decimal "," here; the caller says otherwise
    path = _write(tmp_path, "o.txt", "a;b,c\n1;2,3\n4;5,6\n", "latin-1")
    sheet = read_sheet(path, delimiter=",", decimal=".", encoding="latin-1")
    assert (sheet.source.delimiter, sheet.source.decimal, sheet.source.encoding) == (",", ".", "latin-1")
    assert [c.name for c in sheet.columns] == ["a;b", "c"]
    assert sheet.frame["c"].tolist() == [3.0, 6.0]
    assert sheet.states["a;b"].astype(str).tolist() == ["observed", "observed"]
    tab = read_sheet(_write(tmp_path, "t.csv", "x\ty\n1,5\t2\n"), delimiter="tab")
    assert tab.source.delimiter == "\t" and tab.frame["x"].tolist() == [1.5]


def test_quoted_fields_and_record_numbers(tmp_path: Path) -> None:
    """RFC 4180 quoting: separators, quotes and line breaks inside quoted fields.

    The index is the record number, which is the row a spreadsheet program shows.
    """
    text = 'id,comment,value\nS1,"dilute, 1:10",1.5\nS2,"two\nlines",2.5\nS3,"say ""hi""",3.5\n'
    sheet = read_sheet(_write(tmp_path, "q.csv", text))
    assert sheet.frame.index.tolist() == [2, 3, 4]
    assert sheet.frame["comment"].tolist() == ["dilute, 1:10", "two\nlines", 'say "hi"']
    assert sheet.frame["value"].tolist() == [1.5, 2.5, 3.5]


def test_title_lines_blank_lines_and_ragged_rows(tmp_path: Path) -> None:
    text = (
        "Lake survey 2024\n"
        "exported by: lab system\n"
        "\n"
        "sample,site,nitrate,pH\n"
        "S1,north,0.5,7.1\n"
        "\n"
        "S2,south,0.7\n"
        "S3, east ,0.9,7.3,\n"
    )
    sheet = read_sheet(_write(tmp_path, "title.csv", text))
    assert sheet.source.header_row == 4
    assert sheet.frame.index.tolist() == [5, 7, 8]
    assert sheet.frame["site"].tolist() == ["north", "south", "east"]  # trimmed
    values, states = _column(sheet, "pH")
    assert _same(values, [7.1, math.nan, 7.3]) and states == [OBSERVED, MISSING, OBSERVED]
    assert list(sheet.frame.columns) == ["sample", "site", "nitrate", "pH"]  # empty 5th field dropped
    assert any("blank row" in p and "row 6" in p for p in sheet.problems)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("a,b\n1,2\n", ","),
        ("a;b\n1,5;2\n", ";"),
        ("a\tb;c\n1\t2;3\n", "\t"),
        ("single\n1\n2\n", ","),
    ],
)
def test_detect_delimiter_unit(text: str, expected: str) -> None:
    assert detect_delimiter(text, "csv") == expected


def test_tsv_prefers_tab_when_it_fits(tmp_path: Path) -> None:
    sheet = read_sheet(_write(tmp_path, "x.tsv", "a,b\tc\n1,5\t2\n"))
    assert sheet.source.delimiter == "\t"
    assert sheet.frame["c"].tolist() == [2.0]


_FLOATS = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False).map(lambda v: round(v, 4))
_CELLS = st.one_of(_FLOATS, st.sampled_from(["", "NA", "lost", "<0.05", "< 1.5"]))


@settings(max_examples=25, deadline=None)
@given(table=st.lists(st.lists(_CELLS, min_size=3, max_size=3), min_size=1, max_size=12), comma=st.booleans())
def test_round_trip_through_python_csv_writer(
    tmp_path_factory: pytest.TempPathFactory, table: list, comma: bool
) -> None:
    """Every cell written by Python's csv module reads back with the right value and state."""
    folder = tmp_path_factory.mktemp("rt")
    buffer = io.StringIO()
    writer = csv.writer(buffer, delimiter=";" if comma else ",", lineterminator="\n")
    writer.writerow(["id", "x", "y", "z"])
    for i, row in enumerate(table):
        cells = [
            (repr(v).replace(".", ",") if comma else repr(v)) if isinstance(v, float) else v for v in row
        ]
        writer.writerow([f"S{i}", *cells])
    path = folder / "rt.csv"
    path.write_text(buffer.getvalue(), encoding="utf-8")
    # the decimal mark is given: "1,234" alone cannot tell a decimal comma from grouping
    sheet = read_sheet(
        path, decimal="," if comma else ".", kinds={"x": "number", "y": "number", "z": "number"}
    )
    assert sheet.frame.index.tolist() == list(range(2, len(table) + 2))
    for j, name in enumerate("xyz"):
        for i, cell in enumerate(table):
            value, state = sheet.frame[name].iloc[i], str(sheet.states[name].iloc[i])
            written = cell[j]
            if isinstance(written, float):
                assert (value, state) == (written, OBSERVED)
            elif written.startswith("<"):
                assert math.isnan(value) and state == "censored"
            else:
                assert math.isnan(value) and state == MISSING
