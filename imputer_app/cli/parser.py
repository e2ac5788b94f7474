"""The ``kinfill`` argument parser: argument types, options, examples shown by ``--help``.

Each command's function lives in :mod:`imputer_app.cli.commands`; the parser only
names it (``run``), so that the parser reads as the list of what a user can type.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import TYPE_CHECKING, NoReturn

from imputer_app import __version__
from imputer_app.cli import commands
from imputer_app.cli.evidence import k_option
from imputer_app.cli.exit_codes import EXIT_USAGE
from imputer_app.cli.progress import PROGRESS_MODES
from imputer_app.plan import CHOICES, DEFAULT_KS, PLAN_SUFFIX, FillPlan
from imputer_app.plan_checks import MARKER_MEANINGS
from imputer_app.words import CHOICE_WORDS, SETTING_TIPS


def choice_help(setting: str, default: str) -> str:
    """Return ``--help`` text for a choice setting: what it decides, then each value's meaning.

    Examples
    --------
    >>> "column_mean = The column's mean is written" in choice_help("no_donor", "leave_empty")
    True
    """
    meanings = (f"{value} = {CHOICE_WORDS[setting][value].explanation}" for value in CHOICES[setting])
    return f"{SETTING_TIPS[setting].rstrip('.')} (default {default}). " + " ".join(meanings)


class _Parser(argparse.ArgumentParser):
    """An argument parser whose errors are one line (no usage block) and exit 2."""

    def error(self, message: str) -> NoReturn:
        self.exit(EXIT_USAGE, f"{self.prog}: {message} (see {self.prog} --help)\n")


if TYPE_CHECKING:
    _SubParsers = argparse._SubParsersAction[_Parser]


# ------------------------------------------------------------- argument types
def column_list(text: str) -> tuple[str, ...]:
    """Parse ``"pH, Nitrate"`` into ``("pH", "Nitrate")`` (for --similarity/--fill/--carry)."""
    names = tuple(part.strip() for part in text.split(",") if part.strip())
    if not names:
        raise argparse.ArgumentTypeError(f"expected comma-separated column names; got {text!r}")
    return names


def column_weight(text: str) -> tuple[str, float]:
    """Parse ``"Nitrate=2"`` into ``("Nitrate", 2.0)``; the name may contain ``=``."""
    name, sep, value = text.rpartition("=")
    if not sep or not name.strip():
        raise argparse.ArgumentTypeError(f"expected COLUMN=WEIGHT, e.g. Nitrate=2; got {text!r}")
    try:
        return name.strip(), float(value)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"weight for column {name.strip()!r} must be a number; got {value!r}"
        ) from None


def marker_meaning(text: str) -> tuple[str, str]:
    """Parse ``"n.d.=below-limit"`` into ``("n.d.", "below-limit")``; the marker may contain ``=``."""
    marker, sep, meaning = text.rpartition("=")
    meaning = meaning.strip().lower()
    if not sep or not marker.strip():
        raise argparse.ArgumentTypeError(f"expected TEXT=MEANING, e.g. n.d.=below-limit; got {text!r}")
    if meaning not in MARKER_MEANINGS:
        raise argparse.ArgumentTypeError(
            f"marker {marker.strip()!r} must mean one of {', '.join(MARKER_MEANINGS)}; got {meaning!r}"
        )
    return marker.strip(), meaning


def k_range(text: str) -> tuple[int, ...]:
    """Parse ``"1-30"``, ``"1,3,5"`` or ``"1-10,15,20"`` into sorted unique k values (>= 1)."""
    ks: set[int] = set()
    try:
        for part in filter(None, (p.strip() for p in text.split(","))):
            low, _, high = part.partition("-")
            first, last = int(low), int(high or low)
            if first > last:
                raise argparse.ArgumentTypeError(f"k range {part!r} runs backwards; write it low-high")
            ks.update(range(first, last + 1))
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected k values like 1-30 or 1,3,5; got {text!r}") from None
    if not ks:
        raise argparse.ArgumentTypeError(f"expected k values like 1-30 or 1,3,5; got {text!r}")
    if min(ks) < 1:
        raise argparse.ArgumentTypeError(f"k must be at least 1; got {min(ks)}")
    return tuple(sorted(ks))


def fraction(text: str) -> float:
    """Parse a share strictly between 0 and 1 (for --hide)."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected a share between 0 and 1, e.g. 0.1; got {text!r}"
        ) from None
    if not 0 < value < 1:
        raise argparse.ArgumentTypeError(f"expected a share between 0 and 1, e.g. 0.1; got {text!r}")
    return value


def positive_int(text: str) -> int:
    """Parse a whole number of at least 1 (for --repeats)."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of at least 1; got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a whole number of at least 1; got {value}")
    return value


# --------------------------------------------------------------------- parser
FILL_EXAMPLES = """\
examples:
  kinfill fill river_survey.xlsx
      fill with the default plan; writes river_survey.filled.xlsx beside the input
  kinfill fill river_survey.csv --k 7 --carry "Sample ID,Sample date" --weight Station=2
  kinfill fill june.xlsx --plan monthly.plan.toml --out june.filled.csv --force
  kinfill fill july.xlsx --plan-from june.filled.xlsx
      re-run exactly the plan recorded in an earlier export

Options given here override the plan file. Column names are separated by commas; use a
plan file for names that contain a comma. Ctrl+C stops and writes nothing (exit 130).
"""

SCORE_EXAMPLES = """\
examples:
  kinfill score-k river_survey.xlsx
  kinfill score-k river_survey.csv --k-range 1-20 --repeats 10 --plot error_vs_k.png
  kinfill score-k lab.xlsx --plan monthly.plan.toml --k-range 1,3,5,7,9 --json scores.json

Hides --hide of the known cells of every fill column, fills them for every k, and
reports the error (NRMSE for numbers, error rate for categories) against a plain column
average. "best" is the lowest error; "one-SE" is the largest k within one standard
error of it (Hastie, Tibshirani & Friedman, ESL 2nd ed., sec. 7.10).
"""

PLAN_EXAMPLES = """\
examples:
  kinfill plan river_survey.xlsx --out river.plan.toml
  kinfill plan river_survey.csv --carry "Sample ID" --k 7 --out river.plan.toml --force

Writes the plan Kinfill would use for this sheet, with the column roles spelled out,
for you to edit and pass to `kinfill fill --plan`.
"""

GAPS_EXAMPLES = """\
examples:
  kinfill gaps river_survey.xlsx
  kinfill gaps river_survey.csv --plan monthly.plan.toml --json > gaps.json

Checks the similarity and fill columns before a fill: Little's test of missing
completely at random (Little 1988), how rows with a gap differ from the others, and
which combinations of gaps occur. A small p-value says the gaps depend on something;
it does not say on what, and a large one does not prove the gaps random.
"""

WEIGHT_EXAMPLES = """\
examples:
  kinfill suggest-weights river_survey.xlsx --out river.plan.toml
  kinfill suggest-weights lab.csv --plan monthly.plan.toml --out weighted.plan.toml --force

Tries the weights 0, 0.5, 1, 2 and 4 for each similarity column on hidden known cells
and keeps those that clearly lower the error; judges the result on other hidden cells.
The weights are written to a plan for `kinfill fill --plan`; nothing is filled here.
"""

GUI_EXAMPLES = """\
examples:
  kinfill gui
  kinfill gui river_survey.xlsx
"""


def _add_read_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "input", metavar="INPUT", type=Path, help="the sheet to read (xlsx, xlsm, xls, ods, csv, tsv)"
    )
    parser.add_argument("--sheet", metavar="NAME", help="worksheet of a workbook (default: the first)")
    parser.add_argument(
        "--header-row", metavar="N", type=positive_int, help="1-based header row (default: detected)"
    )
    parser.add_argument(
        "--encoding",
        metavar="NAME",
        help="text encoding of a csv/tsv file, e.g. utf-8, cp1252, utf-16 (default: detected)",
    )


def _add_plan_options(parser: argparse.ArgumentParser, *, with_k: bool) -> None:
    source = parser.add_mutually_exclusive_group()
    source.add_argument("--plan", metavar="FILE", type=Path, help=f"start from this plan ({PLAN_SUFFIX})")
    source.add_argument(
        "--plan-from", metavar="EXPORT", type=Path, help="start from the plan recorded in an earlier export"
    )
    if with_k:
        parser.add_argument(
            "--k",
            metavar="N",
            type=k_option,
            help="donors per filled cell (default 5; at most every donor); best or best-per-column: "
            "chosen by a recovery test",
        )
    cols = parser.add_argument_group("columns (override the plan)")
    cols.add_argument(
        "--similarity", metavar="COLS", type=column_list, help="similarity columns, comma-separated"
    )
    cols.add_argument("--fill", metavar="COLS", type=column_list, help="fill columns, comma-separated")
    cols.add_argument("--carry", metavar="COLS", type=column_list, help="carried columns, comma-separated")
    cols.add_argument(
        "--weight",
        metavar="COL=W",
        type=column_weight,
        action="append",
        default=[],
        help="weight of a similarity column in the distance (0 or more; repeatable)",
    )
    cols.add_argument(
        "--scaling", choices=CHOICES["scaling"], help=choice_help("scaling", default=FillPlan().scaling)
    )
    cols.add_argument(
        "--rounding", choices=CHOICES["rounding"], help=choice_help("rounding", default=FillPlan().rounding)
    )
    cols.add_argument("--group", metavar="COL", help="take donors only from rows of the same group")
    cols.add_argument(
        "--marker",
        metavar="TEXT=MEANING",
        type=marker_meaning,
        action="append",
        default=[],
        help="what a marker in the cells means: missing or below-limit, e.g. 'n.d.=below-limit' (repeatable)",
    )


def _add_common(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--debug", action="store_true", default=argparse.SUPPRESS, help="show tracebacks of faults"
    )
    parser.add_argument(
        "--progress",
        choices=PROGRESS_MODES,
        default=argparse.SUPPRESS,
        help="how to show progress on stderr: auto (a bar on a terminal, nothing in a pipe), bar, "
        "lines (one line per stage and about every 10%%, for logs and scheduled jobs) or none",
    )
    parser.add_argument(
        "--quiet",
        action="store_true",
        default=argparse.SUPPRESS,
        help="print no progress and no summary; notes and errors still go to stderr",
    )


def _subparser(subs: _SubParsers, name: str, help_text: str, epilog: str) -> argparse.ArgumentParser:
    parser: argparse.ArgumentParser = subs.add_parser(
        name,
        help=help_text,
        description=help_text,
        epilog=epilog,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    return parser


def build_parser() -> argparse.ArgumentParser:
    """Return the ``kinfill`` argument parser (errors print one line and exit 2)."""
    parser = _Parser(
        prog="kinfill",
        description="Fill gaps in measurement sheets by k-nearest neighbours, choose k from evidence, "
        "and export a cleaned sheet with a log for every filled cell.",
        epilog="Run `kinfill COMMAND --help` for a command's options and examples.",
    )
    parser.add_argument("--version", action="version", version=f"kinfill {__version__}")
    _add_common(parser)
    subs = parser.add_subparsers(dest="command", metavar="COMMAND")

    fill = _subparser(
        subs, "fill", "fill the gaps of a sheet and write the cleaned copy and its log", FILL_EXAMPLES
    )
    _add_read_options(fill)
    _add_plan_options(fill, with_k=True)
    fill.add_argument(
        "--out", metavar="OUTPUT", type=Path, help="xlsx, or csv with sidecars (default <input>.filled.xlsx)"
    )
    fill.add_argument(
        "--pictures",
        metavar="DIR",
        type=Path,
        help="also write pictures of the fill (PNG and SVG) into this folder (made if missing)",
    )
    fill.add_argument("--force", action="store_true", help="replace existing output files")
    fill.add_argument(
        "--layout",
        choices=("workbook", "table"),
        default="workbook",
        help="workbook: an xlsx/xlsm input comes back whole with the filled cells written in (default); "
        "table: a flat cleaned table, for scripts",
    )
    _add_common(fill)
    fill.set_defaults(run=commands.run_fill)

    score = _subparser(
        subs, "score-k", "run the recovery test for a range of k and print the errors", SCORE_EXAMPLES
    )
    _add_read_options(score)
    _add_plan_options(score, with_k=False)
    test = score.add_argument_group("recovery test")
    test.add_argument(
        "--k-range",
        metavar="KS",
        type=k_range,
        default=DEFAULT_KS,
        help=f"k values (default {min(DEFAULT_KS)}-{max(DEFAULT_KS)}, as in the app)",
    )
    test.add_argument(
        "--hide", metavar="SHARE", type=fraction, default=0.1, help="share of known cells hidden (0.1)"
    )
    test.add_argument(
        "--repeats", metavar="N", type=positive_int, default=5, help="repeats with new hidden cells (5)"
    )
    test.add_argument("--seed", metavar="N", type=int, default=0, help="random seed of the hiding (0)")
    test.add_argument(
        "--masking",
        choices=("auto", "random", "pattern"),
        default="auto",
        help="how cells are hidden: the sheet's own gap patterns where it has enough, else at random (auto)",
    )
    score.add_argument("--json", metavar="FILE", type=Path, help="write the full report as JSON")
    score.add_argument(
        "--plot", metavar="FILE.png", type=Path, help="write the error-vs-k chart (png or svg)"
    )
    score.add_argument("--force", action="store_true", help="replace existing output files")
    _add_common(score)
    score.set_defaults(run=commands.run_score_k)

    plan = _subparser(subs, "plan", "write the default plan for a sheet, to edit", PLAN_EXAMPLES)
    _add_read_options(plan)
    _add_plan_options(plan, with_k=True)
    plan.add_argument("--out", metavar="FILE", type=Path, help=f"plan file (default <input>{PLAN_SUFFIX})")
    plan.add_argument("--force", action="store_true", help="replace an existing plan file")
    _add_common(plan)
    plan.set_defaults(run=commands.run_plan)

    gaps = _subparser(subs, "gaps", "check why the gaps are there, before filling them", GAPS_EXAMPLES)
    _add_read_options(gaps)
    _add_plan_options(gaps, with_k=False)
    gaps.add_argument("--json", action="store_true", help="print the gap check as JSON")
    _add_common(gaps)
    gaps.set_defaults(run=commands.run_gaps)
    weights = _subparser(
        subs, "suggest-weights", "learn the similarity columns' weights and write a plan", WEIGHT_EXAMPLES
    )
    _add_read_options(weights)
    _add_plan_options(weights, with_k=False)
    weights.add_argument("--out", metavar="FILE", type=Path, help=f"plan file (default <input>{PLAN_SUFFIX})")
    weights.add_argument("--seed", metavar="N", type=int, default=0, help="random seed of the hiding (0)")
    weights.add_argument("--json", metavar="FILE", type=Path, help="write the suggestion as JSON")
    weights.add_argument("--force", action="store_true", help="replace existing output files")
    _add_common(weights)
    weights.set_defaults(run=commands.run_suggest_weights)

    gui = _subparser(subs, "gui", "open the Kinfill window", GUI_EXAMPLES)
    gui.add_argument("input", metavar="INPUT", nargs="?", type=Path, help="a sheet to open")
    _add_common(gui)
    gui.set_defaults(run=commands.run_gui)
    return parser
