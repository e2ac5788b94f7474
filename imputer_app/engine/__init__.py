"""Fill gaps by k-nearest-neighbour imputation.

The numeric core (distances, neighbour search, combining donors, fill decisions,
the fill log) is numpy only; reading a DataFrame or a :class:`SheetLike` sheet
(``_input``, ``_roles``, ``_prepare``) and building the :class:`FillResult`
(``_result``) are the engine's only pandas modules.
"""

from imputer_app.engine._combine import combine
from imputer_app.engine._conformal import Calibration, ColumnCalibration, score_cells
from imputer_app.engine._impute import calibrate_intervals, impute
from imputer_app.engine._input import SheetLike
from imputer_app.engine._intervals import FAR, WIDE_RANGE
from imputer_app.engine._neighbours import NeighbourCache, only_combining_changed
from imputer_app.engine._prepare import default_role_reasons, default_roles, prepare
from imputer_app.engine._result import FillResult
from imputer_app.engine._reuse import HiddenCells
from imputer_app.engine._search import ColumnDonors, nearest_donors
from imputer_app.engine._table import PreparedTable

__all__ = [
    "FAR",
    "WIDE_RANGE",
    "Calibration",
    "ColumnCalibration",
    "ColumnDonors",
    "FillResult",
    "HiddenCells",
    "NeighbourCache",
    "PreparedTable",
    "SheetLike",
    "calibrate_intervals",
    "combine",
    "default_role_reasons",
    "default_roles",
    "impute",
    "nearest_donors",
    "only_combining_changed",
    "prepare",
    "score_cells",
]
