"""``--encoding`` reads a csv in the encoding the user names, and refuses an unknown name."""

from __future__ import annotations

import pandas as pd

from tests.cli.helpers import run

# Line 2 is UTF-8 ("Größe"), line 3 is cp1252 ("Straße"): a file mixing two encodings.
MIXED = b"name,value,other\nGr\xc3\xb6\xc3\x9fe,1,10\nStra\xdfe,2,20\nx,,30\ny,4,40\nz,5,50\n"


def test_a_mixed_file_is_refused_until_an_encoding_is_named(tmp_path, capsys):
    source = tmp_path / "mixed.csv"
    source.write_bytes(MIXED)
    out = tmp_path / "out.csv"
    code, _, err = run(["fill", source, "--out", out], capsys)
    assert code == 2 and "mixes two text encodings" in err and not out.exists()
    code, _, err = run(["fill", source, "--encoding", "cp1252", "--out", out], capsys)
    assert code == 0, err
    # Read as cp1252 throughout: the UTF-8 bytes of line 2 become two characters each.
    names = pd.read_csv(out)["name"].tolist()
    assert names[1] == "Straße" and names[0] == "GrÃ¶ÃŸe"


def test_an_unknown_encoding_is_one_line_and_exit_2(tmp_path, capsys):
    source = tmp_path / "mixed.csv"
    source.write_bytes(MIXED)
    code, _, err = run(["fill", source, "--encoding", "no-such-code", "--out", tmp_path / "o.csv"], capsys)
    assert code == 2
    assert "unknown text encoding 'no-such-code'" in err and "Traceback" not in err
