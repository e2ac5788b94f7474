"""A corpus of messy delimited files, as bytes, with the text and separator each must give.

Each entry is invented lab data written the way spreadsheet programs and instruments
save it: decimal commas, ``;`` and tab files, quotes with separators inside, byte-order
marks (UTF-8, UTF-16, UTF-32), Windows-1252, and one file mixing UTF-8 with
Windows-1252 (``text`` None: the right answer is to refuse it).
"""

from __future__ import annotations

import codecs
from dataclasses import dataclass


@dataclass(frozen=True)
class Messy:
    """One file of the corpus."""

    name: str
    data: bytes
    text: str | None
    delimiter: str


def _case(name: str, text: str, encoding: str, delimiter: str, bom: bytes = b"") -> Messy:
    return Messy(name, bom + text.encode(encoding), text, delimiter)


_SEMICOLON = "Probe;pH;Nitrat mg/L\nA1;7,21;0,5\nA2;6,9;1,25\nA3;7,0;\nA4;7,35;0,75\n"
_GERMAN = "Probe;Größe;Leitfähigkeit µS/cm\nA;1,5;350\nB;2,0;410\nC;1,75;388\n"
_FRENCH = "site,température °C,remarque\nRhône,12.5,crue\nSaône,13.1,étiage\nDoubs,11.8,\n"
_TAB = "site\tpH\tEC µS/cm\nA1\t7.2\t350\nA2\t6.8\t410\nA3\t7.0\t388\n"
_QUOTED = 'site,comment,pH\nA1,"dry, windy",7.2\nA2,"rain, cold",6.8\nA3,calm,7.0\nA4,"fog, 5 m",7.1\n'
_QUOTED_SEMI = 'Probe;Bemerkung;pH\nA;"trüb; Regen";7,1\nB;klar;6,9\nC;"Schaum; Geruch";7,3\n'
_MIXED = "Probe;Größe\nA;1,5\n".encode() + "B;Größe 2,0\n".encode("cp1252")

CORPUS: tuple[Messy, ...] = (
    _case("comma, point decimals", "site,pH,nitrate\nA1,7.21,0.5\nA2,6.9,\nA3,7.0,1.2\n", "utf-8", ","),
    _case("semicolon, decimal commas", _SEMICOLON, "utf-8", ";"),
    _case("tab, UTF-8 with µ", _TAB, "utf-8", "\t"),
    _case("quotes with separators inside", _QUOTED, "utf-8", ","),
    _case("semicolon quotes with ; inside", _QUOTED_SEMI, "utf-8", ";"),
    _case("UTF-8 byte-order mark", _GERMAN, "utf-8", ";", codecs.BOM_UTF8),
    _case("UTF-16 LE mark, tab (Unicode text)", _TAB, "utf-16-le", "\t", codecs.BOM_UTF16_LE),
    _case("UTF-16 BE mark, comma", _FRENCH, "utf-16-be", ",", codecs.BOM_UTF16_BE),
    _case("UTF-32 LE mark", _FRENCH, "utf-32-le", ",", codecs.BOM_UTF32_LE),
    _case("UTF-32 BE mark", _GERMAN, "utf-32-be", ";", codecs.BOM_UTF32_BE),
    _case("Windows-1252, semicolon", _GERMAN, "cp1252", ";"),
    _case("Windows-1252, comma, accents", _FRENCH, "cp1252", ","),
    _case("Windows-1252 euro sign", "Kosten €;Menge\n12,50;3\n8,75;2\n9,10;4\n", "cp1252", ";"),
    _case("pipe separated", "a|b|c\n1|2|3\n4|5|6\n7|8|9\n", "utf-8", "|"),
    _case(
        "all fields quoted, decimal commas", '"site","pH"\n"A","7,2"\n"B","6,9"\n"C","7,4"\n', "utf-8", ","
    ),
    Messy("UTF-8 mixed with Windows-1252", _MIXED, None, ";"),
)
