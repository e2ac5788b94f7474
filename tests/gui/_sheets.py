"""Small hand-made sheets for GUI tests."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from imputer_app.sheets import ColumnInfo, Sheet, SourceInfo


def make_sheet(frame: pd.DataFrame, states: dict[tuple[int, str], tuple[str, str]], kinds=None) -> Sheet:
    """A Sheet with ``states[(row, column)] = (state, original text)``; all else observed."""
    state_frame = pd.DataFrame("observed", index=frame.index, columns=frame.columns)
    notes = []
    for (row, col), (state, text) in states.items():
        state_frame.loc[row, col] = state
        limit = float(text.lstrip("<>")) if state == "censored" else np.nan
        side = text[0] if state == "censored" else ""
        notes.append({"row": row, "column": col, "state": state, "text": text, "side": side, "limit": limit})
    kinds = kinds or {c: ("number" if frame[c].dtype.kind == "f" else "category") for c in frame.columns}
    return Sheet(
        frame=frame,
        states=state_frame.astype("category"),
        columns=[ColumnInfo(c, kinds[c], "mg/L" if c == "NO3" else None) for c in frame.columns],
        source=SourceInfo(Path("lab.xlsx"), "Sheet1", 1, "0" * 64, "xlsx"),
        cell_notes=pd.DataFrame(notes, columns=["row", "column", "state", "text", "side", "limit"]),
    )
