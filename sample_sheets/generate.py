"""Generate Kinfill's invented demo sheets from a fixed seed.

Usage::

    python sample_sheets/generate.py [--seed 20261201] [--out DIR]

Writes into ``DIR`` (default: this folder):

- ``river_survey.xlsx``: the river campaign as a lab workbook: sheet "Survey" (title row,
  header row, units row, then data, with a formula column and a free-text notes column)
  and sheet "Methods" (a few lines on how the samples were taken);
- ``river_survey.csv``: the same data as a European lab system exports it (``;``
  separator, decimal comma, UTF-8, one header row);
- ``river_survey_wide.xlsx``: a wide trace-element panel (150 specimens x 60 numbers).

Most gaps are random, but nitrate values go missing more often where conductivity is
high (:func:`add_pattern_gaps`), so the gap check has a pattern to find.

Everything is invented: the river, the authority, the stations and every number. The
same seed gives a byte-identical CSV and byte-identical workbooks (fixed document
dates; xlsxwriter writes fixed ZIP timestamps).
"""

from __future__ import annotations

import argparse
import csv
import datetime as dt
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import xlsxwriter
from xlsxwriter.format import Format
from xlsxwriter.worksheet import Worksheet

DEFAULT_SEED = 20261201
HERE = Path(__file__).resolve().parent

TITLE = "Vessany river survey 2024-2025, Vessany Basin Water Authority (invented demo data)"
WIDE_TITLE = "Trace-element panel, invented demo data"
#: Fixed document date so that workbooks are byte-identical from run to run.
DOC_DATE = dt.datetime(2026, 12, 1, 12, 0, 0)

N_STATIONS = 8
N_ROUNDS = 38  # fortnightly rounds: 8 x 38 = 304 samples
FIRST_ROUND = dt.date(2024, 3, 4)

#: (header, unit, decimals) of the measurement columns, in sheet order.
MEASURES: tuple[tuple[str, str, int], ...] = (
    ("pH", "", 2),
    ("Conductivity", "µS/cm", 0),
    ("Nitrate", "mg/L", 2),
    ("Phosphate", "mg/L", 3),
    ("Dissolved oxygen", "mg/L", 1),
    ("Temperature", "°C", 1),
    ("Turbidity", "NTU", 1),
)
ID_COLUMNS: tuple[tuple[str, str], ...] = (("Sample ID", ""), ("Station", ""), ("Sample date", ""))

#: Reporting limits: measured values below these are written as "<limit".
LIMITS = {"Nitrate": 0.1, "Phosphate": 0.02}

#: Share of plain random gaps per measurement column (uneven on purpose).
GAP_RATES = {
    "pH": 0.05,
    "Conductivity": 0.07,
    "Nitrate": 0.10,
    "Phosphate": 0.15,
    "Dissolved oxygen": 0.08,
    "Temperature": 0.03,
    "Turbidity": 0.09,
}

#: Chance that a sample in the top quarter of conductivity has no nitrate value.
PATTERN_GAP_RATE = 0.8

#: The workbook's computed column: oxygen saturation from oxygen and temperature, written
#: as a formula in every row (blank where either input is missing).
SATURATION = ("Oxygen saturation", "%")

#: The workbook's free-text column: the field crew's remarks, on a few samples only.
NOTES_HEADER = "Notes"
NOTE_SHARE = 0.1
FIELD_NOTES = (
    "bottle cracked in transport, resampled",
    "duplicate taken",
    "brown water after rain",
    "probe recalibrated on site",
    "sampled from the bridge (high flow)",
    "ice along the bank",
    "algae on the intake screen",
    "sample held overnight before analysis",
)

#: The second sheet of the workbook: how the samples were taken (invented).
METHODS_SHEET = "Methods"
METHODS_LINES = (
    "Methods of the Vessany river survey (invented demo text)",
    "",
    "Grab samples were taken mid-stream at 0.3 m depth into rinsed 1 L bottles.",
    "pH, dissolved oxygen and temperature were measured on site with a field meter.",
    "Conductivity, nitrate, phosphate and turbidity were measured in the authority's lab",
    "within 24 hours; nitrate and phosphate results below the reporting limit are written <limit.",
    "Oxygen saturation is computed in the Survey sheet from dissolved oxygen and temperature.",
    "Cells left blank, 'lost' or 'NA': no result (bottle lost, instrument fault or rejected in QC).",
)


@dataclass
class Survey:
    """The river campaign: one row per sample, text cells exactly as written."""

    sample_ids: list[str]
    stations: list[str]
    dates: list[dt.date]
    values: dict[str, np.ndarray]  # measured numbers, rounded
    text: dict[str, list[str]]  # "" = plain value (see values), else what the cell says
    empty: dict[str, np.ndarray]  # bool: cell left blank
    notes: list[str]  # the field crew's remarks ("" for most samples)


# ---------------------------------------------------------------- simulation
def simulate_river(rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Return true (gap-free) measurements and design columns, in sample order.

    Stations ST-01 (headwater) to ST-08 (downstream). Temperature follows the season;
    oxygen falls with temperature; conductivity and nitrate rise downstream and are
    diluted by high flow; turbidity rises with flow events; phosphate follows turbidity.
    """
    rounds = np.repeat(np.arange(N_ROUNDS), N_STATIONS)
    station = np.tile(np.arange(N_STATIONS), N_ROUNDS)
    day = rounds * 14 + station // 3  # three stations a day
    doy = np.array([(FIRST_ROUND + dt.timedelta(days=int(d))).timetuple().tm_yday for d in day])
    pos = station / (N_STATIONS - 1)  # 0 upstream .. 1 downstream

    # Flow per round, shared by all stations: a wetter winter plus a few storms.
    season = np.cos(2 * np.pi * (doy - 30) / 365.25)
    log_flow_round = 0.35 * np.cos(2 * np.pi * (np.arange(N_ROUNDS) * 14 + 63) / 365.25)
    log_flow_round += 0.25 * rng.standard_normal(N_ROUNDS)
    storms = rng.choice(N_ROUNDS, size=5, replace=False)
    log_flow_round[storms] += rng.uniform(0.9, 1.6, size=5)
    log_flow = log_flow_round[rounds] + 0.1 * rng.standard_normal(rounds.size)

    st_eff = rng.standard_normal((4, N_STATIONS)) * np.array([[0.4], [25.0], [0.25], [0.15]])
    temp = 11.0 - 7.5 * season + 1.2 * pos + st_eff[0, station] + 0.9 * rng.standard_normal(rounds.size)
    temp = np.clip(temp, 0.3, None)
    saturation = 14.6 - 0.394 * temp + 0.0077 * temp**2  # oxygen solubility (common practice, no source)
    oxygen = saturation * (0.97 - 0.12 * pos) + 0.35 * rng.standard_normal(rounds.size)
    cond = (170 + 420 * pos**1.3 + st_eff[1, station]) * np.exp(-0.25 * log_flow)
    cond *= np.exp(0.05 * rng.standard_normal(rounds.size))
    nitrate = (0.12 + 4.5 * pos**1.5 + pos * st_eff[2, station]) * np.exp(0.25 * season - 0.1 * log_flow)
    nitrate *= np.exp(0.18 * rng.standard_normal(rounds.size))
    turbidity = np.exp(1.1 + 1.3 * log_flow + 0.5 * pos + 0.35 * rng.standard_normal(rounds.size))
    phosphate = (0.015 + 0.05 * pos + 0.004 * turbidity) * np.exp(
        st_eff[3, station] + 0.3 * rng.standard_normal(rounds.size)
    )
    ph = 7.3 + 0.35 * pos + 0.06 * (oxygen - saturation * 0.9) - 0.04 * log_flow
    ph += 0.12 * rng.standard_normal(rounds.size)
    return {
        "round": rounds,
        "station": station,
        "day": day,
        "pH": ph,
        "Conductivity": cond,
        "Nitrate": nitrate,
        "Phosphate": phosphate,
        "Dissolved oxygen": oxygen,
        "Temperature": temp,
        "Turbidity": turbidity,
    }


def place_gaps(rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
    """Return a bool gap mask per measurement column, uneven on purpose.

    Random gaps at column-specific rates, a few broken-bottle rows with several gaps,
    and two instrument failures: the turbidity meter for ten samples in a row and the
    oxygen probe at one station for five rounds.
    """
    gaps = {name: rng.random(n) < rate for name, rate in GAP_RATES.items()}
    names = list(GAP_RATES)
    for row in rng.choice(n, size=7, replace=False):
        for name in rng.choice(names, size=int(rng.integers(3, 6)), replace=False):
            gaps[str(name)][row] = True
    start = int(rng.integers(60, n - 80))
    gaps["Turbidity"][start : start + 10] = True
    first_round = int(rng.integers(5, N_ROUNDS - 6))
    station = int(rng.integers(0, N_STATIONS))
    rows = (np.arange(first_round, first_round + 5) * N_STATIONS) + station
    gaps["Dissolved oxygen"][rows] = True
    return gaps


def add_pattern_gaps(gaps: dict[str, np.ndarray], true: dict[str, np.ndarray], seed: int) -> None:
    """Add nitrate gaps that come where conductivity is high, so the gap check finds a pattern.

    The story: the saltiest samples were sent away to be diluted and some nitrate
    results never came back. A quarter of the samples (the highest true conductivity)
    lose their nitrate value with probability :data:`PATTERN_GAP_RATE`. The draws come
    from their own generator, so every other cell of the sheet stays as it was.
    """
    rng = np.random.default_rng(seed + 2)
    conductivity = true["Conductivity"]
    high = conductivity > np.quantile(conductivity, 0.75)
    gaps["Nitrate"] |= high & (rng.random(conductivity.size) < PATTERN_GAP_RATE)


def build_survey(seed: int) -> Survey:
    """Simulate the campaign and write every cell as a lab sheet would show it."""
    rng = np.random.default_rng(seed)
    true = simulate_river(rng)
    n = true["round"].size
    gaps = place_gaps(rng, n)
    add_pattern_gaps(gaps, true, seed)
    values: dict[str, np.ndarray] = {}
    text: dict[str, list[str]] = {}
    for name, _unit, decimals in MEASURES:
        values[name] = np.round(true[name], decimals)
        text[name] = [""] * n
        limit = LIMITS.get(name)
        if limit is not None:
            for row in np.flatnonzero(values[name] < limit):
                text[name][row] = f"<{limit:g}"
        # Written missing markers: most gaps stay blank, some say "lost" or NA ("n.d." would
        # mean below the limit of detection, not a gap).
        kinds = rng.random(n)
        for row in np.flatnonzero(gaps[name]):
            text[name][row] = "lost" if kinds[row] < 0.1 else "NA" if kinds[row] < 0.17 else ""
    start = FIRST_ROUND
    dates = [start + dt.timedelta(days=int(d)) for d in true["day"]]
    return Survey(
        sample_ids=[f"VR-{dates[i]:%y}-{i + 1:04d}" for i in range(n)],
        stations=[f"ST-{s + 1:02d}" for s in true["station"]],
        dates=dates,
        values=values,
        text=text,
        empty={name: gaps[name] & (np.array(text[name]) == "") for name, _u, _d in MEASURES},
        notes=field_notes(seed, n),
    )


def field_notes(seed: int, n: int) -> list[str]:
    """Return the notes column: a remark on about :data:`NOTE_SHARE` of the samples.

    The draws come from their own generator, so every other cell stays as it was.
    """
    rng = np.random.default_rng(seed + 3)
    chosen = rng.random(n) < NOTE_SHARE
    picks = rng.integers(0, len(FIELD_NOTES), n)
    return [FIELD_NOTES[picks[i]] if chosen[i] else "" for i in range(n)]


def saturation_formula(row: int, oxygen: str, temperature: str) -> str:
    """The Excel formula of the oxygen saturation (%) in 1-based sheet ``row``.

    The solubility curve is the simulation's (common practice, no source); the result
    is blank unless both inputs are numbers.
    """
    o, t = f"{oxygen}{row}", f"{temperature}{row}"
    return f'=IF(COUNT({o},{t})=2,ROUND(100*{o}/(14.6-0.394*{t}+0.0077*{t}^2),0),"")'


def saturation_value(oxygen: float, temperature: float) -> float:
    """The formula's result (ROUND rounds halves away from zero, as spreadsheets do)."""
    percent = 100 * oxygen / (14.6 - 0.394 * temperature + 0.0077 * temperature**2)
    return float(np.floor(percent + 0.5))


# ------------------------------------------------------------------- writing
def _cell_text(survey: Survey, name: str, row: int, decimals: int, decimal_mark: str) -> str:
    if survey.empty[name][row]:
        return ""
    written = survey.text[name][row]
    if written:
        return written.replace(".", decimal_mark) if written.startswith("<") else written
    return f"{survey.values[name][row]:.{decimals}f}".replace(".", decimal_mark)


def survey_csv_text(survey: Survey) -> str:
    """Return the CSV text: ``;`` separator, decimal comma, ISO dates, ``\\n`` line ends."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, delimiter=";", lineterminator="\n")
    writer.writerow([h for h, _u in ID_COLUMNS] + [m for m, _u, _d in MEASURES])
    for row in range(len(survey.sample_ids)):
        cells = [survey.sample_ids[row], survey.stations[row], survey.dates[row].isoformat()]
        cells += [_cell_text(survey, name, row, d, ",") for name, _u, d in MEASURES]
        writer.writerow(cells)
    return buffer.getvalue()


def _workbook(path: Path, title: str) -> xlsxwriter.Workbook:
    book = xlsxwriter.Workbook(str(path))
    book.set_properties({"title": title, "author": "Kinfill demo generator", "created": DOC_DATE})
    return book


def write_survey_xlsx(survey: Survey, path: Path) -> None:
    """Write the workbook: sheet "Survey" (title row, header row, units row, then one row
    per sample, with the saturation formula and the notes) and sheet "Methods"."""
    book = _workbook(path, TITLE)
    sheet = book.add_worksheet("Survey")
    bold = book.add_format({"bold": True})
    date_fmt = book.add_format({"num_format": "yyyy-mm-dd"})
    number_fmts = {
        d: book.add_format({"num_format": "0" if d == 0 else "0." + "0" * d}) for _n, _u, d in MEASURES
    }
    headers = list(ID_COLUMNS) + [(m, u) for m, u, _d in MEASURES] + [SATURATION, (NOTES_HEADER, "")]
    # the title merged across the table's width, as lab sheets often have it
    sheet.merge_range(0, 0, 0, len(headers) - 1, TITLE, bold)
    for col, (header, unit) in enumerate(headers):
        sheet.write_string(1, col, header, bold)
        if unit:
            sheet.write_string(2, col, unit)
    for row in range(len(survey.sample_ids)):
        r = row + 3
        sheet.write_string(r, 0, survey.sample_ids[row])
        sheet.write_string(r, 1, survey.stations[row])
        sheet.write_datetime(r, 2, dt.datetime.combine(survey.dates[row], dt.time()), date_fmt)
        for offset, (name, _unit, decimals) in enumerate(MEASURES):
            col = len(ID_COLUMNS) + offset
            if survey.empty[name][row]:
                continue
            if survey.text[name][row]:
                sheet.write_string(r, col, survey.text[name][row])
            else:
                sheet.write_number(r, col, float(survey.values[name][row]), number_fmts[decimals])
        _write_saturation(sheet, survey, row, number_fmts[0])
        if survey.notes[row]:
            sheet.write_string(r, len(headers) - 1, survey.notes[row])
    sheet.set_column(0, 2, 12)
    sheet.set_column(3, len(headers) - 2, 11)
    sheet.set_column(len(headers) - 1, len(headers) - 1, 34)
    methods = book.add_worksheet(METHODS_SHEET)
    methods.set_column(0, 0, 90)
    for row, line in enumerate(METHODS_LINES):
        if line:
            methods.write_string(row, 0, line, bold if row == 0 else None)
    book.close()


def _write_saturation(sheet: Worksheet, survey: Survey, row: int, fmt: Format) -> None:
    """The formula cell with its stored result (what a spreadsheet program would save)."""
    names = [m for m, _u, _d in MEASURES]
    col = len(ID_COLUMNS) + len(MEASURES)
    oxygen = len(ID_COLUMNS) + names.index("Dissolved oxygen")
    temperature = len(ID_COLUMNS) + names.index("Temperature")
    formula = saturation_formula(row + 4, _letter(oxygen), _letter(temperature))
    oxygen_value = _number(survey, "Dissolved oxygen", row)
    temperature_value = _number(survey, "Temperature", row)
    result: float | str = ""
    if oxygen_value is not None and temperature_value is not None:
        result = saturation_value(oxygen_value, temperature_value)
    sheet.write_formula(row + 3, col, formula, fmt, result)


def _number(survey: Survey, name: str, row: int) -> float | None:
    """The cell's number, or None when it is blank or text (a marker or a censored entry)."""
    if survey.empty[name][row] or survey.text[name][row]:
        return None
    return float(survey.values[name][row])


def _letter(col: int) -> str:
    return chr(ord("A") + col)  # the survey has fewer than 26 columns


# --------------------------------------------------------------- wide panel
N_WIDE_ROWS = 150
N_WIDE_COLUMNS = 60
N_FACTORS = 4


def build_wide(seed: int) -> tuple[list[str], list[str], np.ndarray]:
    """Return specimen IDs, element names and a (150, 60) array with NaN gaps.

    Log-concentrations follow four latent factors (columns load on one or two of them),
    so columns are correlated in blocks. About 7 % of cells are gaps: random ones plus
    low concentrations dropped more often (left-censored, as panels tend to be).
    """
    rng = np.random.default_rng(seed + 1)
    factors = rng.standard_normal((N_WIDE_ROWS, N_FACTORS))
    loadings = np.zeros((N_FACTORS, N_WIDE_COLUMNS))
    main = np.arange(N_WIDE_COLUMNS) % N_FACTORS
    loadings[main, np.arange(N_WIDE_COLUMNS)] = rng.uniform(0.6, 1.0, N_WIDE_COLUMNS)
    second = rng.integers(0, N_FACTORS, N_WIDE_COLUMNS)
    loadings[second, np.arange(N_WIDE_COLUMNS)] += rng.uniform(0.0, 0.4, N_WIDE_COLUMNS)
    noise = 0.45 * rng.standard_normal((N_WIDE_ROWS, N_WIDE_COLUMNS))
    z = factors @ loadings + noise
    centre = rng.uniform(-1.0, 4.0, N_WIDE_COLUMNS)
    spread = rng.uniform(0.3, 0.8, N_WIDE_COLUMNS)
    values = np.exp(centre + spread * z)
    values = np.round(values, 3)
    low = z < np.quantile(z, 0.05, axis=0)
    gaps = (rng.random(values.shape) < 0.05) | (low & (rng.random(values.shape) < 0.5))
    values[gaps] = np.nan
    ids = [f"SP-{i + 1:04d}" for i in range(N_WIDE_ROWS)]
    names = [f"E{j + 1:02d}" for j in range(N_WIDE_COLUMNS)]
    return ids, names, values


def write_wide_xlsx(ids: list[str], names: list[str], values: np.ndarray, path: Path) -> None:
    """Write the wide panel: header in row 1 (no title, no units row), blanks as gaps."""
    book = _workbook(path, WIDE_TITLE)
    sheet = book.add_worksheet("Panel")
    sheet.write_string(0, 0, "Specimen")
    for col, name in enumerate(names, start=1):
        sheet.write_string(0, col, name)
    for row, specimen in enumerate(ids, start=1):
        sheet.write_string(row, 0, specimen)
        for col in range(values.shape[1]):
            value = values[row - 1, col]
            if not np.isnan(value):
                sheet.write_number(row, col + 1, float(value))
    book.close()


# ---------------------------------------------------------------------- main
def generate(seed: int = DEFAULT_SEED, out: Path = HERE) -> list[Path]:
    """Write the three demo sheets into ``out`` and return their paths."""
    out.mkdir(parents=True, exist_ok=True)
    survey = build_survey(seed)
    csv_path = out / "river_survey.csv"
    csv_path.write_bytes(survey_csv_text(survey).encode("utf-8"))
    xlsx_path = out / "river_survey.xlsx"
    write_survey_xlsx(survey, xlsx_path)
    wide_path = out / "river_survey_wide.xlsx"
    write_wide_xlsx(*build_wide(seed), wide_path)
    return [xlsx_path, csv_path, wide_path]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Write Kinfill's invented demo sheets.")
    parser.add_argument("--seed", type=int, default=DEFAULT_SEED, help=f"seed (default {DEFAULT_SEED})")
    parser.add_argument("--out", type=Path, default=HERE, help="folder to write into (default: this folder)")
    args = parser.parse_args(argv)
    for path in generate(args.seed, args.out):
        print(path)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
