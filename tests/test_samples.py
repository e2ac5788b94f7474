"""The demo-sheet generator is deterministic and its sheets look like a lab's."""

from __future__ import annotations

import csv
import importlib.util
import io
import sys
from pathlib import Path
from types import ModuleType

import numpy as np
import openpyxl
import pytest

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sheets"
GAP_MARKERS = ("", "lost", "NA")


def _load_generator() -> ModuleType:
    spec = importlib.util.spec_from_file_location("kinfill_sample_generator", SAMPLES / "generate.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look the module up by name
    spec.loader.exec_module(module)
    return module


gen = _load_generator()


@pytest.fixture(scope="module")
def default_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("default")
    gen.generate(gen.DEFAULT_SEED, out)
    return out


def _csv_rows(path: Path) -> list[list[str]]:
    return list(csv.reader(io.StringIO(path.read_text(encoding="utf-8")), delimiter=";"))


@pytest.mark.parametrize("name", ["river_survey.csv", "river_survey.xlsx", "river_survey_wide.xlsx"])
def test_same_seed_gives_identical_bytes(default_run: Path, tmp_path: Path, name: str) -> None:
    gen.generate(gen.DEFAULT_SEED, tmp_path)
    assert (tmp_path / name).read_bytes() == (default_run / name).read_bytes()


@pytest.mark.parametrize("name", ["river_survey.csv", "river_survey.xlsx", "river_survey_wide.xlsx"])
def test_shipped_files_equal_fresh_ones(default_run: Path, name: str) -> None:
    assert (SAMPLES / name).read_bytes() == (default_run / name).read_bytes(), (
        f"sample_sheets/{name} is stale: run python sample_sheets/generate.py"
    )


def test_other_seed_differs(default_run: Path, tmp_path: Path) -> None:
    gen.generate(7, tmp_path)
    assert (tmp_path / "river_survey.csv").read_bytes() != (default_run / "river_survey.csv").read_bytes()


def test_csv_layout_is_european(default_run: Path) -> None:
    text = (default_run / "river_survey.csv").read_text(encoding="utf-8")
    rows = _csv_rows(default_run / "river_survey.csv")
    assert rows[0][:3] == ["Sample ID", "Station", "Sample date"]
    assert len(rows) == 1 + 304 and {len(r) for r in rows} == {10}
    assert "\r" not in text
    # decimal comma: pH values look like 7,68 and never 7.68
    ph = [r[3] for r in rows[1:] if r[3] not in GAP_MARKERS]
    assert all("," in v and "." not in v for v in ph)
    ids = [r[0] for r in rows[1:]]
    assert len(set(ids)) == len(ids)
    assert sorted({r[1] for r in rows[1:]}) == [f"ST-{i:02d}" for i in range(1, 9)]


def test_gap_fraction_and_unevenness(default_run: Path) -> None:
    rows = _csv_rows(default_run / "river_survey.csv")[1:]
    cells = np.array([r[3:] for r in rows])
    gaps = np.isin(cells, GAP_MARKERS)
    assert 0.05 <= gaps.mean() <= 0.15
    assert 0.05 <= gaps.sum() / (len(rows) * len(rows[0])) <= 0.15
    per_column = gaps.mean(axis=0)
    assert per_column.max() > 2.5 * per_column.min()  # uneven on purpose
    assert (gaps.sum(axis=1) >= 3).sum() >= 3  # rows with several gaps
    # an instrument failure: a run of at least 8 consecutive gaps in one column
    runs = ("".join("x" if g else " " for g in col).split(" ") for col in gaps.T)
    longest = max(len(run) for col_runs in runs for run in col_runs)
    assert longest >= 8


def test_censored_entries_and_markers_exist(default_run: Path) -> None:
    rows = _csv_rows(default_run / "river_survey.csv")
    header = rows[0]
    column = {name: [r[header.index(name)] for r in rows[1:]] for name in ("Nitrate", "Phosphate")}
    assert 2 <= column["Nitrate"].count("<0,1") <= 15
    assert 2 <= column["Phosphate"].count("<0,02") <= 15
    flat = [cell for r in rows[1:] for cell in r]
    assert flat.count("lost") >= 3 and flat.count("NA") >= 3


def test_correlations_are_realistic(default_run: Path) -> None:
    rows = _csv_rows(default_run / "river_survey.csv")
    header = rows[0]

    def numbers(name: str) -> np.ndarray:
        values = [r[header.index(name)].replace(",", ".") for r in rows[1:]]
        return np.array([float(v) if v and v[0].isdigit() else np.nan for v in values])

    def corr(a: str, b: str) -> float:
        x, y = numbers(a), numbers(b)
        ok = ~np.isnan(x) & ~np.isnan(y)
        return float(np.corrcoef(x[ok], y[ok])[0, 1])

    assert corr("Temperature", "Dissolved oxygen") < -0.7
    assert corr("Conductivity", "Nitrate") > 0.6
    assert corr("Turbidity", "Phosphate") > 0.5


def test_workbook_has_title_header_and_units_rows(default_run: Path) -> None:
    sheet = openpyxl.load_workbook(default_run / "river_survey.xlsx", read_only=True).active
    rows = list(sheet.iter_rows(values_only=True))
    assert "invented" in rows[0][0]
    assert rows[1][:4] == ("Sample ID", "Station", "Sample date", "pH")
    assert rows[1][-2:] == ("Oxygen saturation", "Notes")
    assert rows[2][4:] == ("µS/cm", "mg/L", "mg/L", "mg/L", "°C", "NTU", "%", None)
    assert len(rows) == 3 + 304
    texts = {v for r in rows[3:] for v in r if isinstance(v, str)}
    assert {"<0.02", "<0.1", "lost", "NA"} <= texts


def test_workbook_holds_the_same_numbers_as_the_csv(default_run: Path) -> None:
    sheet = openpyxl.load_workbook(default_run / "river_survey.xlsx", read_only=True).active
    book_rows = list(sheet.iter_rows(min_row=4, values_only=True))
    csv_rows = _csv_rows(default_run / "river_survey.csv")[1:]
    for book_row, csv_row in zip(book_rows, csv_rows, strict=True):
        assert book_row[0] == csv_row[0]
        for value, text in zip(book_row[3:-2], csv_row[3:], strict=True):  # not the formula and notes
            if isinstance(value, float | int):
                assert float(text.replace(",", ".")) == pytest.approx(value)
            else:
                assert (value or "") == text.replace(",", ".")


def test_workbook_has_a_formula_column_notes_and_a_methods_sheet(default_run: Path) -> None:
    path = default_run / "river_survey.xlsx"
    book = openpyxl.load_workbook(path)
    assert book.sheetnames == ["Survey", "Methods"]
    assert "invented" in book["Methods"]["A1"].value and book["Methods"].max_row >= 5
    formulas = [row[0].value for row in book["Survey"].iter_rows(min_row=4, min_col=11, max_col=11)]
    assert formulas[0] == '=IF(COUNT(H4,I4)=2,ROUND(100*H4/(14.6-0.394*I4+0.0077*I4^2),0),"")'
    assert formulas == [gen.saturation_formula(row, "H", "I") for row in range(4, 4 + 304)]
    results = openpyxl.load_workbook(path, data_only=True)["Survey"]
    stored = list(results.iter_rows(min_row=4, values_only=True))
    computed = 0
    for row in stored:
        oxygen, temperature, saturation, note = row[7], row[8], row[10], row[11]
        if isinstance(oxygen, int | float) and isinstance(temperature, int | float):
            # the stored result is the formula's (ROUND halves away from zero, as spreadsheets do)
            expected = np.floor(100 * oxygen / (14.6 - 0.394 * temperature + 0.0077 * temperature**2) + 0.5)
            assert saturation == expected
            computed += 1
        else:
            assert saturation in ("", None)
        assert note is None or note in gen.FIELD_NOTES
    assert 200 < computed < 304
    notes = [row[11] for row in stored if row[11]]
    assert 0.05 < len(notes) / 304 < 0.15 and len(set(notes)) > 4  # free text, mostly empty


def test_wide_sheet_shape_and_gaps(default_run: Path) -> None:
    sheet = openpyxl.load_workbook(default_run / "river_survey_wide.xlsx", read_only=True).active
    rows = list(sheet.iter_rows(values_only=True))
    assert rows[0][0] == "Specimen" and len(rows[0]) == 61 and len(rows) == 151
    values = np.array([[np.nan if v is None else v for v in r[1:]] for r in rows[1:]], dtype=float)
    assert 0.05 <= np.isnan(values).mean() <= 0.10
    # latent factors: columns four apart load on the same factor and correlate
    logs = np.log(values)
    ok = ~np.isnan(logs[:, 0]) & ~np.isnan(logs[:, 4])
    assert np.corrcoef(logs[ok, 0], logs[ok, 4])[0, 1] > 0.4
