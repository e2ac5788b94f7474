"""``kinfill fill`` writes a below-limit entry's stand-in rounded, keeping 2 significant digits.

The rule (README.md, "Rounding of filled numbers"): the column's decimals, but never
fewer than two significant digits; 0.10 / sqrt(2) = 0.0707 is written 0.071 in a
2-decimal column (Hornung & Reed 1990 for the sqrt(2) rule, quoted from memory).
"""

from __future__ import annotations

import csv
import json

from tests.cli.helpers import run


def test_fill_writes_the_rounded_stand_in_in_table_log_and_record(tmp_path, capsys) -> None:
    rows = [["Sample", "Temp", "Nitrate"]]
    for i in range(16):
        nitrate = "<0.10" if i in (3, 9) else "" if i == 6 else f"{0.12 + 0.043 * i:.2f}"
        rows.append([f"S{i:02d}", f"{4 + 0.9 * i:.1f}", nitrate])
    source = tmp_path / "river.csv"
    with source.open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(rows)
    plan = tmp_path / "lab.plan.toml"
    plan.write_text('format = 1\nk = 3\ncensored = "limit_sqrt2"\nrounding = "measured"\n', encoding="utf-8")
    out = tmp_path / "river.filled.csv"
    code, _, err = run(["fill", source, "--plan", plan, "--out", out], capsys)
    assert code == 0, err
    with out.open(encoding="utf-8") as handle:
        table = list(csv.reader(handle))
    assert [table[4][2], table[10][2]] == ["0.071", "0.071"]
    assert len(table[7][2].split(".")[1]) == 2  # the gap's fill: the column's 2 decimals
    with (tmp_path / "river.filled.fill-log.csv").open(encoding="utf-8") as handle:
        log = [r["value"] for r in csv.DictReader(handle) if r["original_state"] == "censored"]
    assert log == ["0.071", "0.071"]
    record = json.loads((tmp_path / "river.filled.run.json").read_text(encoding="utf-8"))
    assert record["rounding"]["decimals"] == {"Nitrate": 2}
