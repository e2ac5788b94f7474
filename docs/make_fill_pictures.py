"""Draw docs/fill_pictures.png, the README's picture of a fill, from the demo sheet.

Run from the repository root: ``python docs/make_fill_pictures.py``. It fills
sample_sheets/river_survey.xlsx with the default plan and draws, side by side, the
Nitrate distribution (measured and filled) and Nitrate against Conductivity, its
scatter partner, with the same chart functions as the export and the app.
"""

from __future__ import annotations

import io
from pathlib import Path

from matplotlib.figure import Figure

from imputer_app.charts import plot_fill_distribution, plot_fill_scatter
from imputer_app.engine import impute
from imputer_app.files import write_bytes_atomic
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet, scatter_partner

ROOT = Path(__file__).resolve().parents[1]
SOURCE = ROOT / "sample_sheets" / "river_survey.xlsx"
TARGET = ROOT / "docs" / "fill_pictures.png"
COLUMN = "Nitrate"


def draw() -> Figure:
    """The two pictures of the demo sheet's Nitrate fill in one figure."""
    result = impute(read_sheet(SOURCE), FillPlan())
    partner = scatter_partner(result, COLUMN)
    assert partner is not None
    figure = Figure(figsize=(12.0, 4.6), layout="constrained")
    left, right = figure.subfigures(1, 2, width_ratios=[1.0, 1.05])
    plot_fill_distribution(result, COLUMN, figure=left)  # type: ignore[arg-type]
    plot_fill_scatter(result, partner, COLUMN, figure=right)  # type: ignore[arg-type]
    return figure


def main() -> Path:
    """Write the picture through Kinfill's atomic writer and return its path."""
    buffer = io.BytesIO()
    draw().savefig(buffer, format="png", dpi=110, metadata={"Software": "Kinfill"})
    return write_bytes_atomic(TARGET, buffer.getvalue(), force=True)


if __name__ == "__main__":
    print(main())
