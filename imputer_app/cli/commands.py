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

from imputer_app.cli.exit_codes import EXIT_OK, UsageError
from imputer_app.cli.outputs import (
    existing_input,
    fill_output,
    refuse_input,
    refuse_overwrite,
    remove_stale,
    write_text,
)
from imputer_app.cli.plan_options import build_plan, check_plan_columns, spell_out_roles
from imputer_app.cli.progress import StopFlag, TextProgress, stop_on_ctrl_c
from imputer_app.cli.text import fill_summary, recovery_table
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
    plan = plan_for(args)
    from imputer_app.engine import impute
    from imputer_app.sheets import export_side_files, write_result

    sidecars = export_side_files(out)
    refuse_input(sidecars, source)
    refuse_overwrite(sidecars, args.force)
    old_sidecars = [p for p in sidecars if p.exists()]
    bar = TextProgress(sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = read_input(source, args, plan, bar.stage("reading"), stop)
            result = impute(sheet, plan, progress=bar.stage("filling"), cancel=stop)
            written = write_result(
                out, sheet, result, plan, progress=bar.stage("writing"), cancel=stop, layout=args.layout
            )
    finally:
        bar.done()
    print_notes(sheet.problems, result.warnings)
    print(fill_summary(source, result, written, sheet, layout=args.layout))
    remove_stale(old_sidecars, written, source)
    return EXIT_OK


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

    bar = TextProgress(sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = read_input(source, args, plan, bar.stage("reading"), stop)
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
    print_notes(sheet.problems, report.warnings)
    print(recovery_table(report))
    if args.json is not None:
        write_text(args.json, json.dumps(score_record(report, sheet), indent=2, ensure_ascii=False) + "\n")
        print(f"wrote {args.json}")
    if args.plot is not None:
        from imputer_app.charts import plot_error_vs_k, save_figure

        save_figure(plot_error_vs_k(report), args.plot)
        print(f"wrote {args.plot}")
    return EXIT_OK


def run_plan(args: argparse.Namespace) -> int:
    """``kinfill plan``: write the plan Kinfill would use for a sheet, roles spelled out."""
    source = existing_input(args.input)
    out: Path = args.out if args.out is not None else source.with_name(source.stem + PLAN_SUFFIX)
    refuse_input([out], source)
    refuse_overwrite([out], args.force)
    plan = plan_for(args)
    from imputer_app.engine import prepare

    bar = TextProgress(sys.stderr)
    try:
        with stop_on_ctrl_c(sys.stderr) as stop:
            sheet = read_input(source, args, plan, bar.stage("reading"), stop)
    finally:
        bar.done()
    resolved = spell_out_roles(prepare(sheet, plan).plan, [str(c) for c in sheet.frame.columns])
    resolved.save(out)
    print_notes(sheet.problems, ())
    print(f"wrote {out}")
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
    return build_plan(
        base,
        k=getattr(args, "k", None),
        similarity=args.similarity,
        fill=args.fill,
        carry=args.carry,
        weights=args.weight,
        scaling=args.scaling,
        group=args.group,
        markers=getattr(args, "marker", ()),
    )


def read_input(
    source: Path, args: argparse.Namespace, plan: FillPlan, progress: Progress, stop: StopFlag
) -> Sheet:
    """Read the input sheet as the options say, and check that it has the plan's columns."""
    from imputer_app.sheets import read_sheet

    sheet = read_sheet(
        source,
        sheet=args.sheet,
        header_row=args.header_row,
        kinds=dict(plan.kinds) or None,
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


def print_notes(problems: Sequence[str], warnings: Sequence[str]) -> None:
    """Print the reader's problems and the fill's warnings as ``note:`` lines on stderr."""
    for line in (*problems, *warnings):
        print(f"note: {line}", file=sys.stderr)
