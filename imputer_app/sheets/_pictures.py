"""Pictures of a fill for the export and ``kinfill fill --pictures``: PNG and SVG files, a "Pictures" sheet.

Per fill column with filled numbers: the distribution of measured and filled values,
and a scatter of the column against its *scatter partner*: the other number
similarity column with the strongest straight-line relation to it (largest absolute
Pearson correlation over rows where both hold a measured value). That is the
column a filled value is most likely to be judged against, so a filled value off
the cloud shows there first. When the result carries a coverage table (``coverage``
with ``level`` and ``observed``), the coverage picture is added; otherwise it is
skipped.
"""

from __future__ import annotations

import io
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from imputer_app import __version__
from imputer_app.charts import plot_coverage, plot_fill_distribution, plot_fill_scatter
from imputer_app.errors import Cancelled
from imputer_app.files import atomic_targets

if TYPE_CHECKING:
    from matplotlib.figure import Figure
    from xlsxwriter import Workbook

#: Name of the xlsx export's sheet of pictures.
PICTURES_SHEET = "Pictures"
#: Formats each picture is written in by :func:`write_pictures`.
PICTURE_FORMATS = ("png", "svg")
#: PNG resolution: sharp at report width (6.4 in x 150 dpi = 960 px).
PNG_DPI = 150
#: Smaller PNGs inside the workbook keep it light.
SHEET_DPI = 96
#: Rows of the Pictures sheet one picture takes (a 6.4 x 4.2 in figure at 96 dpi is ~400 px).
ROWS_PER_PICTURE = 28


@dataclass(frozen=True)
class Picture:
    """One picture of a fill: a file stem, a caption and its figure."""

    stem: str
    caption: str
    figure: Figure


@dataclass(frozen=True)
class FilledTable:
    """What the pictures read, for callers without a ``FillResult`` (the xlsx writer)."""

    frame: pd.DataFrame
    filled: pd.DataFrame
    censored: pd.DataFrame
    coverage: pd.DataFrame | None = None


def record_coverage(record: Mapping[str, Any]) -> pd.DataFrame | None:
    """The pooled ``(all)`` coverage rows of a run record, as a table for :func:`plot_coverage`."""
    pooled = ((record.get("intervals") or {}).get("coverage") or {}).get("(all)")
    if not pooled:
        return None
    return pd.DataFrame({"level": pooled["level"], "observed": pooled["observed"], "n": pooled["n_cells"]})


def scatter_partner(result: Any, column: str, similarity: Sequence[str] | None = None) -> str | None:
    """Return the number similarity column most related to ``column`` (see the module docstring).

    Parameters
    ----------
    result : FillResult-like
        Has ``frame`` and ``filled``.
    column : str
        A number column.
    similarity : sequence of str or None, default=None
        The candidates; by default ``result.plan.similarity_columns``.

    Returns
    -------
    str or None
        None when no other number similarity column shares two measured rows with it.
    """
    frame: pd.DataFrame = result.frame
    filled: pd.DataFrame = result.filled
    candidates = [
        str(c)
        for c in (similarity if similarity is not None else result.plan.similarity_columns) or ()
        if c != column and c in frame.columns and pd.api.types.is_numeric_dtype(frame[c])
    ]

    def measured(name: str) -> np.ndarray:
        values = frame[name].to_numpy(dtype=float).copy()
        if name in filled.columns:
            values[filled[name].to_numpy(dtype=bool)] = np.nan
        return values

    target = measured(column)
    best, strength = None, -1.0
    for other in candidates:
        x = measured(other)
        both = ~np.isnan(target) & ~np.isnan(x)
        if both.sum() < 3 or np.ptp(target[both]) == 0 or np.ptp(x[both]) == 0:
            continue
        r = abs(float(np.corrcoef(target[both], x[both])[0, 1]))
        if r > strength:
            best, strength = other, r
    return best


def fill_pictures(
    result: Any, coverage: pd.DataFrame | None = None, similarity: Sequence[str] | None = None
) -> list[Picture]:
    """Return the pictures of a fill, in the order they are written.

    Parameters
    ----------
    result : FillResult-like
        Has ``frame``, ``filled`` (and optionally ``censored``) and ``plan``.
    similarity : sequence of str or None, default=None
        Scatter partner candidates; by default ``result.plan.similarity_columns``.
    coverage : DataFrame or None, default=None
        A coverage table (``level``, ``observed``); by default ``result.coverage`` when
        the result has one. No coverage picture without it.
    """
    pictures: list[Picture] = []
    used: set[str] = set()
    filled: pd.DataFrame = result.filled
    for column in [str(c) for c in filled.columns if bool(filled[c].any())]:
        if not pd.api.types.is_numeric_dtype(result.frame[column]):
            continue
        stem = _stem(column, used)
        caption = f"{column}: measured and filled values"
        pictures.append(Picture(f"{stem}.distribution", caption, plot_fill_distribution(result, column)))
        partner = scatter_partner(result, column, similarity)
        if partner is not None:
            picture = plot_fill_scatter(result, partner, column)
            pictures.append(Picture(f"{stem}.scatter", f"{column} against {partner}", picture.figure))
    table = coverage if coverage is not None else getattr(result, "coverage", None)
    if isinstance(table, pd.DataFrame) and {"level", "observed"} <= set(table.columns) and len(table):
        pictures.append(Picture("coverage", "Interval coverage", plot_coverage(table)))
    return pictures


def _stem(column: str, used: set[str]) -> str:
    """A file-name stem for ``column``: letters, digits, ``-`` and ``_`` only, unique."""
    base = re.sub(r"[^A-Za-z0-9_-]+", "_", column).strip("_") or "column"
    stem, n = base, 2
    while stem.lower() in used:
        stem, n = f"{base}_{n}", n + 1
    used.add(stem.lower())
    return stem


def picture_bytes(figure: Figure, fmt: str, dpi: int = PNG_DPI) -> bytes:
    """Render ``figure`` as PNG or SVG bytes (no date in the file, so a re-run gives the same SVG)."""
    buffer = io.BytesIO()
    meta: dict[str, Any] = {"Software": f"Kinfill {__version__}"} if fmt == "png" else {"Date": None}
    figure.savefig(buffer, format=fmt, dpi=dpi, metadata=meta)
    return buffer.getvalue()


def picture_files(
    folder: str | Path,
    result: Any,
    coverage: pd.DataFrame | None = None,
    similarity: Sequence[str] | None = None,
) -> dict[Path, bytes]:
    """Return every picture of :func:`fill_pictures` as PNG and SVG bytes, by file path in ``folder``.

    Drawn before anything is written, so that a caller can check the names first.
    """
    files: dict[Path, bytes] = {}
    for picture in fill_pictures(result, coverage, similarity):
        for fmt in PICTURE_FORMATS:
            files[Path(folder) / f"{picture.stem}.{fmt}"] = picture_bytes(picture.figure, fmt)
    return files


def write_picture_files(
    files: Mapping[Path, bytes], *, source: str | Path | None = None, force: bool = False
) -> list[Path]:
    """Write the files of :func:`picture_files` through the atomic writer, all or none.

    Parameters
    ----------
    files : mapping of Path to bytes
        Target files and their content (their folder must exist).
    source : str or Path or None, default=None
        The input sheet, never written.
    force : bool, default=False
        Replace pictures already there.

    Returns
    -------
    list of Path
        The files written, PNG before SVG for each picture.

    Raises
    ------
    ExportError
        When a file exists (without ``force``), the folder is missing or not writable.
    """
    with atomic_targets(list(files), source=source, force=force) as temps:
        for temp, data in zip(temps, files.values(), strict=True):
            temp.write_bytes(data)
    return list(files)


def add_pictures_sheet(
    book: Workbook,
    result: Any,
    similarity: Sequence[str] | None = None,
    check: Callable[[], object] | None = None,
    name: str = PICTURES_SHEET,
) -> str:
    """Add the "Pictures" sheet with every picture of the fill as a PNG; return a note for the record.

    Nothing is added when the fill has no picture (no number was filled), nor when the
    pictures cannot be drawn: a broken picture must not cost the user the export.

    Parameters
    ----------
    book : xlsxwriter.Workbook
        The workbook being written.
    result : FillResult-like
        Has ``frame`` and ``filled`` (``censored``, ``plan`` and ``coverage`` optional).
    similarity : sequence of str or None, default=None
        Scatter partner candidates (see :func:`scatter_partner`).
    check : callable or None, default=None
        Called before each picture is rendered; raises ``Cancelled`` to stop the export.
    name : str, default="Pictures"
        The sheet's name (another when the workbook already has a "Pictures" sheet).
    """
    images: list[bytes] = []
    try:
        pictures = fill_pictures(result, similarity=similarity)
        for picture in pictures:
            if check is not None:
                check()
            images.append(picture_bytes(picture.figure, "png", SHEET_DPI))
    except Cancelled:
        raise
    except Exception as exc:
        return f"pictures not included: they could not be drawn ({type(exc).__name__}: {exc})"
    if not pictures:
        return "no pictures: no number was filled"
    sheet = book.add_worksheet(name)
    bold = book.add_format({"bold": True, "font_size": 12})
    sheet.write_string(0, 0, "Pictures of the fill: blue circles measured, vermillion triangles filled", bold)
    for i, picture in enumerate(pictures):
        row = 2 + i * (ROWS_PER_PICTURE + 2)
        sheet.write_string(row, 0, picture.caption, bold)
        data = io.BytesIO(images[i])
        sheet.insert_image(row + 1, 0, f"{picture.stem}.png", {"image_data": data, "object_position": 3})
    return f"{len(pictures)} pictures on the {name} sheet"
