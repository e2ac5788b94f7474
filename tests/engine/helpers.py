"""Small tables shared by the engine tests (seeded, so every run sees the same data)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pandas as pd


def random_frame(n_rows: int, n_cols: int, gap: float, seed: int) -> pd.DataFrame:
    """Normal values with MCAR gaps (fixed seed), columns c0, c1, ..."""
    rng = np.random.default_rng(seed)
    x = rng.normal(size=(n_rows, n_cols))
    x[rng.random(x.shape) < gap] = np.nan
    return pd.DataFrame(x, columns=[f"c{j}" for j in range(n_cols)])


def fake_sheet(frame: pd.DataFrame, censored: list[tuple[object, str, str, str, float]]) -> SimpleNamespace:
    """A sheet-like object: ``censored`` holds (row label, column, text, side, limit)."""
    states = pd.DataFrame(
        np.where(frame.isna(), "missing", "observed"), index=frame.index, columns=frame.columns
    )
    rows = []
    for row, col, text, side, limit in censored:
        states.loc[row, col] = "censored"
        rows.append(
            {"row": row, "column": col, "state": "censored", "text": text, "side": side, "limit": limit}
        )
    kinds = pd.CategoricalDtype(["observed", "missing", "censored", "text_in_number"])
    states = states.astype(kinds)
    notes = pd.DataFrame(rows, columns=["row", "column", "state", "text", "side", "limit"])
    return SimpleNamespace(frame=frame, states=states, cell_notes=notes)
