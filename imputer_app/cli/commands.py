"""One function per ``kinfill`` command: read, fill or test, write, print a summary.

Heavy packages (engine, sheets, validation, charts, the app) are imported inside the
command that needs them, so that ``kinfill --help`` starts at once.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from imputer_app.cli.evidence import chosen_by_test, interval_line, k_line, weights_record, weights_text
from imputer_app.cli.exit_codes import EXIT_OK, UsageError
from imputer_app.cli.outputs import (
    XLSX_MAX_COLUMNS,
    XLSX_MAX_ROWS,
    existing_input,
    fill_output,
    refuse_input,
    refuse_overwrite,
    refuse_too_wide_for_xlsx,
    remove_stale,
    write_text,
)
from imputer_app.cli.plan_options import build_plan, check_plan_columns, spell_out_roles
from imputer_app.cli.progress import StopFlag, TextProgress, default_signals, stop_on_ctrl_c
from imputer_app.cli.text import fill_summary, recovery_table, terminal_safe
from imputer_app.plan import PLAN_SUFFIX, FillPlan
from imputer_app.work import Progress

if TYPE_CHECKING:
    from imputer_app.sheets import Sheet
    from imputer_app.validation import RecoveryReport


def run_fill(args: argparse.Namespace) -> int:
    """``kinfill fill``: read, fill, write the cleaned copy and its log, print a summary."""
    source = existing_input(args.input)
    out = fill_output(source, args.out)
    refuse_overwrite([out], args.force)
    refuse_too_wide_for_xlsx(source, out)
    check_picture_folder(args.pictures)
    plan = plan_for(args)
    from imputer_app.engine import impute
    from imputer_app.sheets import export_side_files, write_result

    sidecars = export_side_files(out)
    refuse_input(sidecars, source)
    refuse_overwrite(sidecars, args.force)
    old_sidecars = [p for p in sidecars if os.path.lexists(p)]
    bar = TextProgress.for_args(args, sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = read_input(source, args, plan, bar.stage("reading"), stop)
            check_fits_xlsx(out, sheet)
            report = None
            if isinstance(args.k, str):  # --k best | best-per-column: the recovery test chooses
                plan, report = chosen_by_test(sheet, plan, args.k, bar.stage("testing"), stop)
            plan = k_in_effect(sheet, plan)  # said before the fill, which may take a while
            hidden = None if report is None else report.hidden  # calibrate on the test's cells
            result = impute(sheet, plan, progress=bar.stage("filling"), cancel=stop, hidden=hidden)
            pictures = fill_picture_files(args.pictures, result, source, args.force)
            written = write_result(
                out,
                sheet,
                result,
                plan,
                report=report,
                progress=bar.stage("writing"),
                cancel=stop,
                layout=args.layout,
            )
    finally:
        bar.done()
    if pictures:
        from imputer_app.sheets import write_picture_files

        written = [*written, *write_picture_files(pictures, source=source, force=args.force)]
    print_notes(sheet.problems, result.warnings)
    show(fill_summary(source, result, written, sheet, layout=args.layout))
    for line in (k_line(plan, report, args.k) if report else None, interval_line(result)):
        if line:
            show(line)
    for path in remove_stale(old_sidecars, written, source):
        show(f"removed {path} (left over from an earlier export)")
    return EXIT_OK


def fill_picture_files(folder: Path | None, result: Any, source: Path, force: bool) -> dict[Path, bytes]:
    """Draw ``kinfill fill --pictures`` before anything is written, and check their names."""
    if folder is None:
        return {}
    from imputer_app.sheets import picture_files

    files = picture_files(folder, result)
    refuse_input(list(files), source)
    refuse_overwrite(list(files), force)
    folder.mkdir(exist_ok=True)
    return files


def check_picture_folder(folder: Path | None) -> None:
    """Refuse a ``--pictures`` folder that is a file or lies in a missing folder (before any work)."""
    if folder is None:
        return
    if folder.exists() and not folder.is_dir():
        raise UsageError(f"--pictures must name a folder; {folder} is a file")
    if not folder.parent.is_dir():
        raise UsageError(f"folder not found for --pictures: {folder.parent}")


def run_score_k(args: argparse.Namespace) -> int:
    """``kinfill score-k``: run the recovery test and print the per-k table."""
    source = existing_input(args.input)
    outputs = [p for p in (args.json, args.plot) if p is not None]
    refuse_input(outputs, source)
    refuse_overwrite(outputs, args.force)
    if args.plot is not None and args.plot.suffix.lower() not in (".png", ".svg"):
        raise UsageError(f"--plot must end in .png or .svg; got {args.plot.name}")
    plan = plan_for(args)
    from imputer_app.validation import recovery_test

    bar = TextProgress.for_args(args, sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = read_input(source, args, plan, bar.stage("reading"), stop)
            plan = capped_k(plan, len(sheet.frame), quiet=True)
            report = recovery_test(
                sheet,
                plan,
                ks=capped_range(args.k_range, len(sheet.frame)),
                hide_fraction=args.hide,
                repeats=args.repeats,
                seed=args.seed,
                masking=args.masking,
                progress=bar.stage("testing"),
                cancel=stop,
            )
    finally:
        bar.done()
    print_notes(sheet.problems, report.warnings)
    show(recovery_table(report))
    if args.json is not None:
        from imputer_app.engine import calibrate_intervals

        record = score_record(report, sheet)
        calibration = calibrate_intervals(sheet, plan, hidden=report.hidden)  # the test's cells
        record["intervals"] = None if calibration is None else calibration.to_dict()
        text = json.dumps(record, indent=2, ensure_ascii=False) + "\n"
        write_text(args.json, text, source=source, force=args.force)
        show(f"wrote {args.json}")
    if args.plot is not None:
        from imputer_app.charts import plot_error_vs_k, save_figure

        save_figure(plot_error_vs_k(report), args.plot, force=args.force, source=source)
        show(f"wrote {args.plot}")
    return EXIT_OK


def run_gaps(args: argparse.Namespace) -> int:
    """``kinfill gaps``: run the gap check and print it in plain words or as JSON."""
    source = existing_input(args.input)
    plan = plan_for(args)
    from imputer_app.cli.gaps_text import gaps_record, gaps_text
    from imputer_app.validation import gap_check

    bar = TextProgress(sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = read_input(source, args, plan, bar.stage("reading"), stop)
            check = gap_check(sheet, plan, progress=bar.stage("checking"), cancel=stop)
    finally:
        bar.done()
    print_notes(sheet.problems, ())
    if args.json:
        print(json.dumps(gaps_record(check, sheet), indent=2, ensure_ascii=False, allow_nan=False))
    else:
        show(gaps_text(check, source.name))
    return EXIT_OK


def run_plan(args: argparse.Namespace) -> int:
    """``kinfill plan``: write the plan Kinfill would use for a sheet, roles spelled out."""
    source = existing_input(args.input)
    out: Path = args.out if args.out is not None else source.with_name(source.stem + PLAN_SUFFIX)
    refuse_input([out], source)
    refuse_overwrite([out], args.force)
    plan = plan_for(args)
    from imputer_app.engine import prepare

    bar = TextProgress.for_args(args, sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = read_input(source, args, plan, bar.stage("reading"), stop)
            if isinstance(args.k, str):  # --k best | best-per-column
                plan, _ = chosen_by_test(sheet, plan, args.k, bar.stage("testing"), stop)
    finally:
        bar.done()
    resolved = spell_out_roles(prepare(sheet, plan).plan, [str(c) for c in sheet.frame.columns])
    resolved.save(out, force=args.force, source=source)
    print_notes(sheet.problems, ())
    show(f"wrote {out}")
    return EXIT_OK


def run_suggest_weights(args: argparse.Namespace) -> int:
    """``kinfill suggest-weights``: learn the weights, print before/after, write a plan."""
    source = existing_input(args.input)
    out = args.out if args.out is not None else source.with_name(source.stem + PLAN_SUFFIX)
    outputs = [out, *([args.json] if args.json is not None else [])]
    refuse_input(outputs, source)
    refuse_overwrite(outputs, args.force)
    plan = plan_for(args)
    from imputer_app.validation import suggest_weights

    bar = TextProgress(sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = read_input(source, args, plan, bar.stage("reading"), stop)
            got = suggest_weights(sheet, plan, seed=args.seed, progress=bar.stage("searching"), cancel=stop)
    finally:
        bar.done()
    print_notes(sheet.problems, ())
    show(weights_text(got))
    got.plan.save(out, source=source, force=args.force)
    show(f"wrote {out}")
    if args.json is not None:
        text = json.dumps(weights_record(got, sheet), indent=2, ensure_ascii=False) + "\n"
        write_text(args.json, text, source=source, force=args.force)
        show(f"wrote {args.json}")
    return EXIT_OK


def run_gui(args: argparse.Namespace) -> int:
    """``kinfill gui``: open the app with the file given, if any.

    The one place where the command line reaches up to the layer above it; the layer
    contract in pyproject.toml names this import. It is made here, not at the top, so
    that the other commands never load Qt.
    """
    if args.input is not None:
        existing_input(args.input)
    if no_display():
        raise UsageError("no display found (DISPLAY and WAYLAND_DISPLAY are empty); use kinfill fill instead")
    from imputer_app.gui import launch

    with default_signals():
        code = launch.main([] if args.input is None else [str(args.input)])
    return int(code or 0)


def no_display() -> bool:
    """True on Linux/BSD without X11 or Wayland (and no Qt platform chosen by hand)."""
    if sys.platform == "darwin" or sys.platform.startswith("win"):
        return False
    env = os.environ
    return not (env.get("DISPLAY") or env.get("WAYLAND_DISPLAY") or env.get("QT_QPA_PLATFORM"))


def plan_for(args: argparse.Namespace) -> FillPlan:
    """Return the plan of a command: plan file, export or default, then the options."""
    if args.plan is not None:
        base = FillPlan.load(args.plan)
    elif args.plan_from is not None:
        from imputer_app.sheets import read_export_plan

        base = read_export_plan(existing_input(args.plan_from))
    else:
        base = FillPlan()
    k = getattr(args, "k", None)
    return build_plan(
        base,
        k=k if isinstance(k, int) else None,  # best / best-per-column: chosen after reading
        similarity=args.similarity,
        fill=args.fill,
        carry=args.carry,
        weights=args.weight,
        scaling=args.scaling,
        rounding=getattr(args, "rounding", None),
        group=args.group,
        markers=getattr(args, "marker", ()),
    )


def read_input(
    source: Path, args: argparse.Namespace, plan: FillPlan, progress: Progress, stop: StopFlag
) -> Sheet:
    """Read the input sheet as the options say, and check that it has the plan's columns.

    The sheet is read as the app reads it: a column the plan makes a category keeps
    its cells as read (numbers stay numbers), and the fill treats it as a category,
    so that the app and the command line write the same cells. Only the plan's
    number columns are read as numbers (words in them become unreadable entries).
    """
    from imputer_app.sheets import read_sheet

    numbers = {column: kind for column, kind in plan.kinds.items() if kind == "number"}
    sheet = read_sheet(
        source,
        sheet=args.sheet,
        header_row=args.header_row,
        kinds=numbers or None,
        encoding=args.encoding,
        markers=dict(plan.markers) or None,
        progress=progress,
        cancel=stop,
    )
    check_plan_columns(plan, source.name, [str(c) for c in sheet.frame.columns])
    return sheet


def score_record(report: RecoveryReport, sheet: Sheet) -> dict[str, Any]:
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


def k_in_effect(sheet: Sheet, plan: FillPlan) -> FillPlan:
    """Return ``plan`` with the k the fill will use, said in a note when it is not the k asked for.

    A k beyond the donors any gap can have averages every donor there is: the plan
    takes that number, so the note, the summary and the run record name the same k.
    """
    from imputer_app.validation import check_k

    check = check_k(sheet, plan)
    if check.too_large:
        print_notes((check.message(),), ())
        plan = plan.replace(k=check.used)
    return capped_k(plan, len(sheet.frame))


def capped_k(plan: FillPlan, n_rows: int, *, quiet: bool = False) -> FillPlan:
    """Return ``plan`` with k at most the number of possible donors (``n_rows - 1``), said in a note.

    A row is never its own donor, so a larger k uses every donor anyway; capping it
    keeps the neighbour search from sizing its work by the k asked for.
    """
    donors = max(n_rows - 1, 1)
    if plan.k <= donors:
        return plan
    if not quiet:
        print_notes((f"k = {plan.k} is more than the {donors} possible donors; every donor is used",), ())
    return plan.replace(k=donors)


def capped_range(ks: Sequence[int], n_rows: int) -> tuple[int, ...]:
    """Return the k values to test, those above the possible donors (``n_rows - 1``) made that number."""
    donors = max(n_rows - 1, 1)
    kept = tuple(sorted({min(k, donors) for k in ks}))
    if max(ks) > donors:
        print_notes(
            (f"k values above the {donors} possible donors are tested as k = {donors} (every donor)",), ()
        )
    return kept


def check_fits_xlsx(out: Path, sheet: Sheet) -> None:
    """Refuse, before the fill, a sheet wider or longer than an xlsx sheet holds (ECMA-376 limits).

    A wide text sheet is refused before reading already (:func:`refuse_too_wide_for_xlsx`).
    """
    if out.suffix.lower() != ".xlsx":
        return
    n_rows, n_columns = sheet.frame.shape
    if n_columns > XLSX_MAX_COLUMNS or n_rows + 2 > XLSX_MAX_ROWS:
        raise UsageError(
            f"{sheet.source.path.name} has {n_rows:,} rows and {n_columns:,} columns, more than an xlsx "
            f"sheet holds ({XLSX_MAX_ROWS:,} x {XLSX_MAX_COLUMNS:,}); use --out with a .csv name"
        )


def show(text: str) -> None:
    """Print a summary on standard output, control characters escaped (text comes from the sheet)."""
    print(terminal_safe(text))


def print_notes(problems: Sequence[str], warnings: Sequence[str]) -> None:
    """Print the reader's problems and the fill's warnings as ``note:`` lines on stderr."""
    for line in (*problems, *warnings):
        print(terminal_safe(f"note: {line}"), file=sys.stderr)
