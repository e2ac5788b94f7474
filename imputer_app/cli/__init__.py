"""Headless commands: ``kinfill fill``, ``kinfill score-k``, ``kinfill plan``, ``kinfill gui``.

The commands make the same calls as the app (read, fill or test, write) so that a plan
saved from the app and run here gives the same export. Exit codes
(:mod:`imputer_app.cli.exit_codes`):

- 0: done;
- 1: an internal fault (a bug): one line, or the traceback with ``--debug``;
- 2: bad input or usage (missing file, unknown column, bad setting): one line;
- 130: stopped with Ctrl+C; nothing was written (128 + SIGINT, the shell convention);
  SIGTERM and SIGHUP stop the same way with 143 and 129 (128 + the signal's number).

Modules: :mod:`~imputer_app.cli.entry` (``main``, errors to exit codes),
:mod:`~imputer_app.cli.parser` (arguments), :mod:`~imputer_app.cli.commands` (one
function per command), :mod:`~imputer_app.cli.outputs` (input and output file checks),
:mod:`~imputer_app.cli.plan_options` (options on top of a plan),
:mod:`~imputer_app.cli.progress` (progress bar, Ctrl+C) and
:mod:`~imputer_app.cli.text` (printed summaries).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from imputer_app.cli.entry import main
from imputer_app.cli.exit_codes import EXIT_FAULT, EXIT_OK, EXIT_STOPPED, EXIT_USAGE, UsageError

if TYPE_CHECKING:
    from imputer_app.cli.parser import build_parser


def __getattr__(name: str) -> Any:
    # The parser (and the commands behind it) load on first use, after ``main`` has
    # installed the stop-signal handlers: an early Ctrl+C is then one line, not a traceback.
    if name == "build_parser":
        from imputer_app.cli.parser import build_parser

        return build_parser
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


__all__ = ["EXIT_FAULT", "EXIT_OK", "EXIT_STOPPED", "EXIT_USAGE", "UsageError", "build_parser", "main"]
