"""Keep a recovery test's hidden cells so that a fill can calibrate its intervals on them.

A recovery test hides known cells fold by fold, repeat by repeat, and fills them for
every k tested. :class:`HiddenCellCollector` keeps, per fill column, the scores of up
to :data:`KEEP_PER_COLUMN` of those cells for every k, each cell once (the first time
it was hidden: a cell hidden again in a later repeat would count twice)
(:func:`imputer_app.engine.score_cells`), within a memory budget; the report hands them
to :func:`imputer_app.engine.impute` as ``hidden=report.hidden``.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from imputer_app import engine
from imputer_app.engine import ColumnDonors, HiddenCells, PreparedTable

#: Most cells kept per fill column (as many as a fill's own calibration hides at most).
KEEP_PER_COLUMN = 400
#: Fewest kept per column however many columns and ks there are (a 95 % quantile needs 19).
KEEP_AT_LEAST = 24
#: Numbers kept in all (cells x ks x 3, as float32): about 32 MB.
BUDGET = 8_000_000


class HiddenCellCollector:
    """Collects the hidden cells' scores fold by fold, each cell once."""

    def __init__(self, table: PreparedTable, ks: Sequence[int]) -> None:
        self.table = table
        self.ks = tuple(int(k) for k in ks)
        per_column = BUDGET // max(3 * len(self.ks) * len(table.fill_columns), 1)
        self.cap = max(KEEP_AT_LEAST, min(KEEP_PER_COLUMN, per_column))
        self.scores: dict[str, list[np.ndarray]] = {}
        self.rows: dict[str, list[np.ndarray]] = {}
        self.kept: dict[str, int] = {}
        self.seen = {c: np.zeros(table.n_rows, dtype=bool) for c in table.fill_columns}

    def add(self, hidden: PreparedTable, donors: Mapping[str, ColumnDonors]) -> None:
        """Score one fold's hidden cells for every k and keep them, up to the cap per column."""
        room = {c: self.cap - self.kept.get(c, 0) for c in donors}
        wanted = {c: self._fresh(c, d, room[c]) for c, d in donors.items() if room[c] > 0}
        wanted = {c: d for c, d in wanted.items() if len(d.rows)}
        if not wanted:
            return
        for col, found in engine.score_cells(self.table, hidden, wanted, self.ks).items():
            rows = np.asarray(wanted[col].rows, dtype=np.intp)
            ok = np.flatnonzero(np.isfinite(found[:, 0, :]).all(axis=0))
            self.seen[col][rows[ok]] = True
            self.scores.setdefault(col, []).append(found[:, :, ok].astype(np.float32))
            self.rows.setdefault(col, []).append(rows[ok])
            self.kept[col] = self.kept.get(col, 0) + len(ok)

    def _fresh(self, column: str, donors: ColumnDonors, room: int) -> ColumnDonors:
        """The first ``room`` cells of ``donors`` not kept before (scoring the rest would be wasted)."""
        rows = np.asarray(donors.rows, dtype=np.intp)
        take = np.flatnonzero(~self.seen[column][rows])[:room]
        return ColumnDonors(rows[take], donors.index[take], donors.distance[take], donors.count[take])

    def result(self, masking: str) -> HiddenCells:
        """The kept cells, with the tested plan and the hiding used."""
        return HiddenCells(
            ks=self.ks,
            scores={c: np.concatenate(parts, axis=2) for c, parts in self.scores.items()},
            rows={c: np.concatenate(parts) for c, parts in self.rows.items()},
            plan=self.table.plan.to_dict(),
            masking=masking,
        )
