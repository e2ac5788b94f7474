"""Fill gaps by k-nearest-neighbour imputation.

The numeric core (distances, neighbour search, combining donors) is numpy only;
:mod:`imputer_app.engine._adapter` is the one module that reads DataFrames and sheets
and builds the :class:`FillResult`.
"""

from imputer_app.engine._adapter import FillResult, default_roles, impute, prepare
from imputer_app.engine._combine import combine
from imputer_app.engine._search import ColumnDonors, nearest_donors
from imputer_app.engine._table import PreparedTable

__all__ = [
    "ColumnDonors",
    "FillResult",
    "PreparedTable",
    "combine",
    "default_roles",
    "impute",
    "nearest_donors",
    "prepare",
]
