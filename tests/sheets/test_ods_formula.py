"""OpenDocument formulas written again in .xlsx syntax (OpenFormula, ISO/IEC 26300-2:
references ``[.A1]``, ``[$Sheet.A1]``, ``;`` between arguments; quoted from memory)."""

from __future__ import annotations

import pytest

from imputer_app.sheets._ods_formula import excel_formula


@pytest.mark.parametrize(
    ("odf", "xlsx"),
    [
        ("of:=SUM([.D3:.E3])", "=SUM(D3:E3)"),
        ("of:=[.C4]+[.D4]+[.E4]", "=C4+D4+E4"),
        ("of:=[$Methods.B$2]*2", "=Methods!B$2*2"),
        ("of:=AVERAGE([$'Site data'.$A$1:.$A$9])", "=AVERAGE('Site data'!$A$1:$A$9)"),
        ('of:=IF([.B3]>0;"a;b";"[.x]")', '=IF(B3>0,"a;b","[.x]")'),
        ('of:="say ""hi"""&[.A1]', '="say ""hi"""&A1'),
        ("of:=ROUND([.C3]/3;2)", "=ROUND(C3/3,2)"),
    ],
)
def test_common_forms_translate(odf: str, xlsx: str) -> None:
    assert excel_formula(odf) == xlsx


@pytest.mark.parametrize(
    "odf",
    [
        "of:=SUM([.A:.A])",  # a whole column
        "of:=[$Sheet1.A1:$Sheet2.A3]",  # a range over two sheets
        "of:=ORG.OPENOFFICE.WEEKS([.A1];[.A2];0)",  # an add-in function
        "of:=[#REF!]",
        "=A1+B1",  # not OpenFormula
    ],
)
def test_other_forms_give_none(odf: str) -> None:
    assert excel_formula(odf) is None
