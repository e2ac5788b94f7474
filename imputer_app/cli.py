"""Headless commands: ``kinfill fill``, ``kinfill score-k``, ``kinfill plan``, ``kinfill gui``.

The commands make the same calls as the app (read, fill or test, write) so that a plan
saved from the app and run here gives the same export. Exit codes:

- 0: done;
- 1: an internal fault (a bug): one line, or the traceback with ``--debug``;
- 2: bad input or usage (missing file, unknown column, bad setting): one line;
- 130: stopped with Ctrl+C; nothing was written (128 + SIGINT, the shell convention).
"""

from __future__ import annotations

import argparse
import contextlib
import importlib
import json
import os
import sys
import traceback
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any, NoReturn

from imputer_app import __version__
from imputer_app.cli_plan import build_plan, check_plan_columns, plan_from_export, spell_out_roles
from imputer_app.cli_progress import TextProgress, stop_on_ctrl_c
from imputer_app.cli_text import fill_summary, recovery_table
from imputer_app.errors import Cancelled, KinfillError
from imputer_app.plan import PLAN_SUFFIX, FillPlan

if TYPE_CHECKING:
    from imputer_app.sheets import Sheet

EXIT_OK = 0
EXIT_FAULT = 1
EXIT_USAGE = 2
EXIT_STOPPED = 130

#: Output formats ``kinfill fill`` can write, by extension.
OUTPUT_SUFFIXES = (".xlsx", ".csv", ".tsv")
SCALINGS = ("zscore", "range", "robust", "none")


class UsageError(KinfillError):
    """A command-line argument is unusable (exit code 2)."""


class _Parser(argparse.ArgumentParser):
    """An argument parser whose errors are one line (no usage block) and exit 2."""

    def error(self, message: str) -> NoReturn:
        self.exit(EXIT_USAGE, f"{self.prog}: {message} (see {self.prog} --help)\n")


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


def _add_plan_options(parser: argparse.ArgumentParser, *, with_k: bool) -> None:
    source = parser.add_mutually_exclusive_group()
    source.add_argument("--plan", metavar="FILE", type=Path, help=f"start from this plan ({PLAN_SUFFIX})")
    source.add_argument(
        "--plan-from", metavar="EXPORT", type=Path, help="start from the plan recorded in an earlier export"
    )
    if with_k:
        parser.add_argument("--k", metavar="N", type=int, help="donors per filled cell (default 5)")
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
    cols.add_argument("--scaling", choices=SCALINGS, help="how numbers are put on one scale (default zscore)")
    cols.add_argument("--group", metavar="COL", help="take donors only from rows of the same group")


def _add_common(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--debug", action="store_true", default=argparse.SUPPRESS, help="show tracebacks of faults"
    )


def _subparser(subs: Any, name: str, help_text: str, epilog: str) -> argparse.ArgumentParser:
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
    fill.add_argument("--force", action="store_true", help="replace existing output files")
    _add_common(fill)
    fill.set_defaults(run=run_fill)

    score = _subparser(
        subs, "score-k", "run the recovery test for a range of k and print the errors", SCORE_EXAMPLES
    )
    _add_read_options(score)
    _add_plan_options(score, with_k=False)
    test = score.add_argument_group("recovery test")
    test.add_argument(
        "--k-range", metavar="KS", type=k_range, default=k_range("1-30"), help="k values (default 1-30)"
    )
    test.add_argument(
        "--hide", metavar="SHARE", type=fraction, default=0.1, help="share of known cells hidden (0.1)"
    )
    test.add_argument(
        "--repeats", metavar="N", type=positive_int, default=5, help="repeats with new hidden cells (5)"
    )
    test.add_argument("--seed", metavar="N", type=int, default=0, help="random seed of the hiding (0)")
    test.add_argument(
        "--masking", choices=("random", "pattern"), default="random", help="how cells are hidden"
    )
    score.add_argument("--json", metavar="FILE", type=Path, help="write the full report as JSON")
    score.add_argument(
        "--plot", metavar="FILE.png", type=Path, help="write the error-vs-k chart (png or svg)"
    )
    score.add_argument("--force", action="store_true", help="replace existing output files")
    _add_common(score)
    score.set_defaults(run=run_score_k)

    plan = _subparser(subs, "plan", "write the default plan for a sheet, to edit", PLAN_EXAMPLES)
    _add_read_options(plan)
    _add_plan_options(plan, with_k=True)
    plan.add_argument("--out", metavar="FILE", type=Path, help=f"plan file (default <input>{PLAN_SUFFIX})")
    plan.add_argument("--force", action="store_true", help="replace an existing plan file")
    _add_common(plan)
    plan.set_defaults(run=run_plan)

    gui = _subparser(subs, "gui", "open the Kinfill window", GUI_EXAMPLES)
    gui.add_argument("input", metavar="INPUT", nargs="?", type=Path, help="a sheet to open")
    _add_common(gui)
    gui.set_defaults(run=run_gui)
    return parser


# ----------------------------------------------------------------------- main
def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line and return its exit code.

    Parameters
    ----------
    argv : sequence of str or None
        Arguments after the program name; ``None`` reads ``sys.argv``.

    Returns
    -------
    int
        0 done, 1 internal fault, 2 bad input or usage, 130 stopped by Ctrl+C.
    """
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help, --version and usage errors
        return exc.code if isinstance(exc.code, int) else EXIT_USAGE
    debug = bool(getattr(args, "debug", False))
    if args.command is None:
        print("kinfill: choose a command: fill, score-k, plan or gui (see kinfill --help)", file=sys.stderr)
        return EXIT_USAGE
    prog = f"kinfill {args.command}"
    run: Callable[[argparse.Namespace], int] = args.run
    try:
        return run(args)
    except KinfillError as exc:
        if debug:
            traceback.print_exc()
        print(f"{prog}: {_one_line(str(exc))}", file=sys.stderr)
        return EXIT_USAGE
    except (Cancelled, KeyboardInterrupt):
        print(f"{prog}: stopped; nothing written", file=sys.stderr)
        return EXIT_STOPPED
    except BrokenPipeError:
        # The reader of our output (e.g. `| head`) went away; the work itself is done.
        # Point stdout at nothing so the interpreter's final flush cannot fail again.
        with contextlib.suppress(OSError, ValueError, AttributeError):
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return EXIT_OK
    except Exception as exc:
        if debug:
            traceback.print_exc()
            hint = ""
        else:
            hint = " (run again with --debug to see where)"
        print(f"{prog}: internal error: {type(exc).__name__}: {_one_line(str(exc))}{hint}", file=sys.stderr)
        return EXIT_FAULT


def _one_line(text: str) -> str:
    """Collapse a message onto one line (the exit-code contract promises one line)."""
    return " ".join(text.split())


# ------------------------------------------------------------------- commands
def run_fill(args: argparse.Namespace) -> int:
    """``kinfill fill``: read, fill, write the cleaned copy and its log, print a summary."""
    source = _existing_input(args.input)
    out = _fill_output(source, args.out)
    _refuse_overwrite([out], args.force)
    plan = plan_for(args)
    from imputer_app.engine import impute
    from imputer_app.sheets import write_result

    sidecars = _sidecars(out)
    _refuse_input(sidecars, source)
    _refuse_overwrite(sidecars, args.force)
    old_sidecars = [p for p in sidecars if p.exists()]
    bar = TextProgress(sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = _read(source, args, plan, bar.stage("reading"), stop)
            result = impute(sheet, plan, progress=bar.stage("filling"), cancel=stop)
            written = write_result(out, sheet, result, plan, progress=bar.stage("writing"), cancel=stop)
    finally:
        bar.done()
    _print_notes(sheet.problems, result.warnings)
    print(fill_summary(source, result, written, sheet))
    _remove_stale(old_sidecars, written, source)
    return EXIT_OK


def run_score_k(args: argparse.Namespace) -> int:
    """``kinfill score-k``: run the recovery test and print the per-k table."""
    source = _existing_input(args.input)
    outputs = [p for p in (args.json, args.plot) if p is not None]
    _refuse_input(outputs, source)
    _refuse_overwrite(outputs, args.force)
    if args.plot is not None and args.plot.suffix.lower() not in (".png", ".svg"):
        raise UsageError(f"--plot must end in .png or .svg; got {args.plot.name}")
    plan = plan_for(args)
    from imputer_app.validation import recovery_test

    bar = TextProgress(sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = _read(source, args, plan, bar.stage("reading"), stop)
            report = recovery_test(
                sheet,
                plan,
                ks=args.k_range,
                hide_fraction=args.hide,
                repeats=args.repeats,
                seed=args.seed,
                masking=args.masking,
                progress=bar.stage("testing"),
                cancel=stop,
            )
    finally:
        bar.done()
    _print_notes(sheet.problems, getattr(report, "warnings", ()))
    print(recovery_table(report))
    if args.json is not None:
        _write_text(args.json, json.dumps(_score_record(report, sheet), indent=2, ensure_ascii=False) + "\n")
        print(f"wrote {args.json}")
    if args.plot is not None:
        _write_plot(report, args.plot)
        print(f"wrote {args.plot}")
    return EXIT_OK


def run_plan(args: argparse.Namespace) -> int:
    """``kinfill plan``: write the plan Kinfill would use for a sheet, roles spelled out."""
    source = _existing_input(args.input)
    out: Path = args.out if args.out is not None else source.with_name(source.stem + PLAN_SUFFIX)
    _refuse_input([out], source)
    _refuse_overwrite([out], args.force)
    plan = plan_for(args)
    from imputer_app.engine import prepare

    bar = TextProgress(sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = _read(source, args, plan, bar.stage("reading"), stop)
    finally:
        bar.done()
    resolved = spell_out_roles(prepare(sheet, plan).plan, [str(c) for c in sheet.frame.columns])
    resolved.save(out)
    _print_notes(sheet.problems, ())
    print(f"wrote {out}")
    return EXIT_OK


def run_gui(args: argparse.Namespace) -> int:
    """``kinfill gui``: open the app (the GUI layer sits above this one, so import it late)."""
    try:
        launch = importlib.import_module("imputer_app.gui.launch")
    except ModuleNotFoundError as exc:
        if exc.name and exc.name.startswith("imputer_app.gui"):
            print("kinfill gui: not built yet: the Kinfill window is still being made", file=sys.stderr)
            return EXIT_FAULT
        raise
    if args.input is not None:
        _existing_input(args.input)
    if _no_display():
        raise UsageError("no display found (DISPLAY and WAYLAND_DISPLAY are empty); use kinfill fill instead")
    gui_argv = [] if args.input is None else [str(args.input)]
    code = launch.main(gui_argv)
    return int(code or 0)


def _no_display() -> bool:
    """True on Linux/BSD without X11 or Wayland (and no Qt platform chosen by hand)."""
    if sys.platform == "darwin" or sys.platform.startswith("win"):
        return False
    env = os.environ
    return not (env.get("DISPLAY") or env.get("WAYLAND_DISPLAY") or env.get("QT_QPA_PLATFORM"))


# -------------------------------------------------------------------- helpers
def plan_for(args: argparse.Namespace) -> FillPlan:
    """Return the plan of a command: plan file, export or default, then the options."""
    if args.plan is not None:
        base = FillPlan.load(args.plan)
    elif args.plan_from is not None:
        base = plan_from_export(_existing_input(args.plan_from))
    else:
        base = FillPlan()
    return build_plan(
        base,
        k=getattr(args, "k", None),
        similarity=args.similarity,
        fill=args.fill,
        carry=args.carry,
        weights=args.weight,
        scaling=args.scaling,
        group=args.group,
    )


def _read(source: Path, args: argparse.Namespace, plan: FillPlan, progress: Any, stop: Any) -> Sheet:
    from imputer_app.sheets import read_sheet

    sheet = read_sheet(
        source,
        sheet=args.sheet,
        header_row=args.header_row,
        kinds=dict(plan.kinds) or None,
        progress=progress,
        cancel=stop,
    )
    check_plan_columns(plan, source.name, [str(c) for c in sheet.frame.columns])
    return sheet


def _existing_input(path: Path) -> Path:
    if not path.exists():
        raise UsageError(f"file not found: {path}")
    if path.is_dir():
        raise UsageError(f"{path} is a folder; give a sheet file")
    return path


def _fill_output(source: Path, out: Path | None) -> Path:
    target = out if out is not None else source.with_name(source.stem + ".filled.xlsx")
    if target.suffix.lower() not in OUTPUT_SUFFIXES:
        raise UsageError(f"--out must end in {' or '.join(OUTPUT_SUFFIXES)}; got {target.name}")
    if _same_file(target, source):
        raise UsageError(f"--out is the input file {source.name}; Kinfill never overwrites its input")
    if not target.parent.is_dir():
        raise UsageError(f"folder not found for --out: {target.parent}")
    return target


def _sidecars(out: Path) -> list[Path]:
    """Files a csv/tsv export writes beside its table (none for xlsx)."""
    if out.suffix.lower() == ".xlsx":
        return []
    from imputer_app.sheets._write_csv import side_files

    return [p for p in side_files(out, with_unfilled=True).values() if p != out]


def _remove_stale(old_sidecars: Sequence[Path], written: Sequence[Path], source: Path) -> None:
    """Remove side files of an earlier export (replaced with --force) that this one lacks."""
    for path in old_sidecars:
        if path not in written and path.exists() and not _same_file(path, source):
            path.unlink()
            print(f"removed {path} (left over from an earlier export)")


def _same_file(path: Path, source: Path) -> bool:
    """True when ``path`` names ``source`` (also through a link or another spelling)."""
    if path.resolve() == source.resolve():
        return True
    try:
        return path.exists() and os.path.samefile(path, source)
    except OSError:
        return False


def _refuse_input(paths: Sequence[Path], source: Path) -> None:
    """Refuse any output that is the input sheet: --force replaces outputs, never the input."""
    for path in paths:
        if _same_file(path, source):
            raise UsageError(
                f"{path.name} would replace the input file {source.name}; "
                "Kinfill never overwrites its input, choose another name"
            )


def _refuse_overwrite(paths: Sequence[Path], force: bool) -> None:
    existing = [p for p in paths if p.exists()]
    if existing and not force:
        names = ", ".join(str(p) for p in existing)
        raise UsageError(f"{names} already exist{'s' if len(existing) == 1 else ''}; add --force to replace")


def _score_record(report: Any, sheet: Sheet) -> dict[str, Any]:
    """The recovery report as JSON, with the input it was run on and the cautions."""
    from imputer_app import CAUTIONS

    source = sheet.source
    given = {
        "file": source.path.name,
        "sha256": source.sha256,
        "sheet": source.sheet,
        "header_row": source.header_row,
    }
    return {"input": given, **report.to_dict(), "cautions": CAUTIONS}


def _write_text(path: Path, text: str) -> None:
    from imputer_app.errors import ExportError

    try:
        path.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise ExportError(f"cannot write {path}: {exc.strerror or exc}") from exc


def _write_plot(report: Any, path: Path) -> None:
    from imputer_app.charts import save_figure
    from imputer_app.charts.error_vs_k import plot_error_vs_k

    save_figure(plot_error_vs_k(report), path)


def _print_notes(problems: Sequence[str], warnings: Sequence[str]) -> None:
    for line in (*problems, *warnings):
        print(f"note: {line}", file=sys.stderr)
