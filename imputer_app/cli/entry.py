"""``kinfill``'s entry point: parse the arguments, run the command, turn errors into exit codes.

Every failure ends as one line on standard error and an exit code
(:mod:`imputer_app.cli.exit_codes`); a traceback only with ``--debug``.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import sys
import traceback
from collections.abc import Callable, Iterator, Sequence

from imputer_app.cli.exit_codes import EXIT_FAULT, EXIT_OK, EXIT_STOPPED, EXIT_USAGE
from imputer_app.cli.parser import build_parser
from imputer_app.errors import Cancelled, KinfillError


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
        with quiet_output(bool(getattr(args, "quiet", False))):
            return run(args)
    except KinfillError as exc:
        if debug:
            traceback.print_exc()
        print(f"{prog}: {one_line(str(exc))}", file=sys.stderr)
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
        print(f"{prog}: internal error: {type(exc).__name__}: {one_line(str(exc))}{hint}", file=sys.stderr)
        return EXIT_FAULT


@contextlib.contextmanager
def quiet_output(quiet: bool) -> Iterator[None]:
    """``--quiet``: the summary on stdout goes nowhere (notes and errors stay on stderr)."""
    if not quiet:
        yield
        return
    with open(os.devnull, "w", encoding="utf-8") as nowhere, contextlib.redirect_stdout(nowhere):
        yield


def one_line(text: str) -> str:
    r"""Collapse a message onto one line (the exit-code contract promises one line).

    Examples
    --------
    >>> one_line("no column 'pH'\n  in a.csv")
    "no column 'pH' in a.csv"
    """
    return " ".join(text.split())
