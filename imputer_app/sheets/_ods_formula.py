"""OpenDocument formulas written again in the spreadsheet (A1) syntax of an .xlsx.

An .ods cell stores ``of:=SUM([.D3:.E3])`` (OpenFormula, ISO/IEC 26300 part 2); the same
formula in an .xlsx is ``SUM(D3:E3)``. The common forms are translated: references to a
cell or a range of the same sheet (``[.D3]``, ``[.D3:.E3]``) or of another sheet
(``[$Methods.B2]``, ``[$'Site data'.B2]``), and ``;`` between arguments. Anything else
(whole columns, named expressions in brackets, functions of an add-in namespace) gives
None, and the copy keeps that cell's value instead of a formula it could get wrong.
"""

from __future__ import annotations

import re

_CELL = r"\$?[A-Z]{1,3}\$?[0-9]{1,7}"
_SHEET = r"\$?(?:'(?:[^']|'')+'|[A-Za-z_][A-Za-z0-9_]*)"
_REFERENCE = re.compile(
    rf"\[(?P<sheet>{_SHEET})?\.(?P<first>{_CELL})(?::(?P<sheet2>{_SHEET})?\.(?P<last>{_CELL}))?\]"
)
_STRING = re.compile(r'"(?:[^"]|"")*"')
#: Function names from add-in namespaces (``ORG.OPENOFFICE.``, ``COM.MICROSOFT.``) have no sure match.
_NAMESPACED = re.compile(r"\b(?:ORG|COM)\.[A-Z]", re.IGNORECASE)


def excel_formula(odf: str) -> str | None:
    """Return ``odf`` (an ``of:=`` formula of an .ods cell) in .xlsx syntax, or None.

    Examples
    --------
    >>> excel_formula("of:=SUM([.D3:.E3])")
    '=SUM(D3:E3)'
    >>> excel_formula("of:=IF([.B3]>0;[$Methods.C$2];0)")
    '=IF(B3>0,Methods!C$2,0)'
    >>> excel_formula('of:="pH "&TEXT([.C3];"0.00")')
    '="pH "&TEXT(C3,"0.00")'
    >>> excel_formula("of:=[.A:.A]") is None
    True
    """
    if not odf.startswith("of:="):
        return None
    body = odf[len("of:=") :]
    parts: list[str | None] = []
    position = 0
    for text in _STRING.finditer(body):  # strings are copied as they are
        parts.append(_translate(body[position : text.start()]))
        parts.append(text.group(0))
        position = text.end()
    parts.append(_translate(body[position:]))
    if any(part is None for part in parts):
        return None
    return "=" + "".join(part for part in parts if part is not None)


def _translate(code: str) -> str | None:
    """Translate a piece of formula without string literals; None when unsure."""
    if _NAMESPACED.search(code):
        return None
    translated = _REFERENCE.sub(_reference, code)
    if "[" in translated or "]" in translated:
        return None
    return translated.replace(";", ",")


def _reference(found: re.Match[str]) -> str:
    sheet, first, last = found.group("sheet"), found.group("first"), found.group("last")
    prefix = sheet.lstrip("$") + "!" if sheet else ""
    if last is None:
        return prefix + first
    second = found.group("sheet2")
    if second and second.lstrip("$") != (sheet or "").lstrip("$"):
        return "[" + found.group(0)  # a range over two sheets: left untranslated
    return f"{prefix}{first}:{last}"
