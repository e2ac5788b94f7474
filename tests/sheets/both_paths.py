"""Read one csv through the vectorised split and through ``csv.reader`` (for tests comparing them)."""

from __future__ import annotations

from pathlib import Path

import pytest

from imputer_app.sheets import Sheet, _fast_text, _text, read_sheet


def read_both_ways(monkeypatch: pytest.MonkeyPatch, path: Path) -> tuple[Sheet, Sheet]:
    """The sheet read with the fast split forced on (checked to have done the splitting), then off."""
    taken: list[object] = []
    split = _text.split_plain_text
    monkeypatch.setattr(_text, "split_plain_text", lambda *a: taken.append(split(*a)) or taken[-1])
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 0)
    fast = read_sheet(path)
    assert taken and taken[0] is not None  # the fast path did the splitting
    monkeypatch.setattr(_fast_text, "MIN_FAST_CHARS", 1 << 62)
    return fast, read_sheet(path)
