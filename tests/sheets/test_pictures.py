"""Pictures of a fill: the scatter partner, PNG/SVG files through the atomic writer, the Pictures sheet."""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

import numpy as np
import openpyxl
import pandas as pd
import pytest

from imputer_app.engine import impute
from imputer_app.errors import ExportError
from imputer_app.plan import FillPlan
from imputer_app.sheets import (
    fill_pictures,
    picture_files,
    read_sheet,
    scatter_partner,
    write_picture_files,
    write_result,
)

DEMO = Path(__file__).resolve().parents[2] / "sample_sheets" / "river_survey.xlsx"


@pytest.fixture
def small() -> pd.DataFrame:
    rng = np.random.default_rng(7)
    a = rng.normal(size=40)
    frame = pd.DataFrame({"a": a, "b": 2 * a + 0.1 * rng.normal(size=40), "c": rng.normal(size=40)})
    frame.loc[[2, 11, 23], "a"] = np.nan
    return frame


@pytest.mark.parametrize(("similarity", "expected"), [(None, "b"), (("a", "c"), "c"), (("a",), None)])
def test_scatter_partner_is_the_most_correlated_similarity_column(
    small: pd.DataFrame, similarity: tuple[str, ...] | None, expected: str | None
) -> None:
    result = impute(small, FillPlan(k=3))
    # |r(a, b)| is close to 1 by construction and |r(a, c)| small (numpy.corrcoef on the measured rows).
    assert scatter_partner(result, "a", similarity) == expected


def test_pictures_per_fill_column_and_coverage_only_when_present(small: pd.DataFrame) -> None:
    result = impute(small, FillPlan(k=3, interval_level=None))
    stems = [p.stem for p in fill_pictures(result)]
    assert stems == ["a.distribution", "a.scatter"]
    with_intervals = impute(small, FillPlan(k=3))
    assert with_intervals.coverage is not None
    assert [p.stem for p in fill_pictures(with_intervals)] == [*stems, "coverage"]
    coverage = pd.DataFrame({"level": [0.8, 0.9], "observed": [0.78, 0.91]})
    with_coverage = SimpleNamespace(
        frame=result.frame, filled=result.filled, plan=result.plan, coverage=coverage
    )
    assert [p.stem for p in fill_pictures(with_coverage)][-1] == "coverage"


def test_files_are_png_and_svg_written_all_or_none(small: pd.DataFrame, tmp_path: Path) -> None:
    result = impute(small, FillPlan(k=3, interval_level=None))
    files = picture_files(tmp_path, result)
    assert sorted(p.name for p in files) == [
        "a.distribution.png",
        "a.distribution.svg",
        "a.scatter.png",
        "a.scatter.svg",
    ]
    written = write_picture_files(files)
    assert written == list(files)
    assert (tmp_path / "a.scatter.png").read_bytes().startswith(b"\x89PNG\r\n\x1a\n")
    svg = (tmp_path / "a.scatter.svg").read_text(encoding="utf-8")
    assert "<svg" in svg and "<dc:date>" not in svg  # no date: a re-run gives the same file
    (tmp_path / "a.scatter.svg").write_text("old", encoding="utf-8")
    (tmp_path / "a.distribution.png").unlink()
    with pytest.raises(ExportError, match="already exists"):
        write_picture_files(files)
    assert not (tmp_path / "a.distribution.png").exists()  # nothing written
    assert (tmp_path / "a.scatter.svg").read_text(encoding="utf-8") == "old"
    write_picture_files(files, force=True)
    assert (tmp_path / "a.scatter.svg").read_text(encoding="utf-8") == svg


def test_file_names_are_safe_and_unique() -> None:
    frame = pd.DataFrame(
        {"NO3 / N": [1.0, np.nan, 3.0, 4.0, 5.0, 6.5], "NO3 | N": [1.0, 2.0, np.nan, 4.5, 5.5, 6.0]}
    )
    result = impute(frame, FillPlan(k=2))
    assert [p.stem for p in fill_pictures(result)] == [
        "NO3_N.distribution",
        "NO3_N.scatter",
        "NO3_N_2.distribution",
        "NO3_N_2.scatter",
    ]


def test_xlsx_export_has_a_pictures_sheet_with_every_picture(tmp_path: Path) -> None:
    sheet = read_sheet(DEMO)
    result = impute(sheet, FillPlan())
    target = tmp_path / "out.xlsx"
    write_result(target, sheet, result, FillPlan())
    book = openpyxl.load_workbook(target)
    assert book.sheetnames.index("Pictures") == book.sheetnames.index("About this fill") - 1
    n = len(fill_pictures(result))
    # The demo sheet fills all seven number columns: a distribution and a scatter each,
    # and the intervals' coverage picture.
    assert n == 15
    assert len(book["Pictures"]._images) == n
    about = {r[0]: r[1] for r in book["About this fill"].iter_rows(values_only=True) if r and r[0]}
    assert about["pictures"] == f"{n} pictures on the Pictures sheet"


def test_cancel_during_an_export_with_pictures_writes_nothing(small: pd.DataFrame, tmp_path: Path) -> None:
    import threading

    from imputer_app.errors import Cancelled

    result = impute(small, FillPlan(k=3))
    stop = threading.Event()
    calls = []

    def progress(done: int, total: int) -> None:
        calls.append(done)
        if len(calls) > 3:
            stop.set()

    with pytest.raises(Cancelled):
        write_result(tmp_path / "out.xlsx", None, result, FillPlan(k=3), progress=progress, cancel=stop)
    assert list(tmp_path.iterdir()) == []
