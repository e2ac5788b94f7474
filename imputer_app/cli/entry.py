"""``kinfill``'s entry point: parse the arguments, run the command, turn errors into exit codes.

Every failure ends as one line on standard error and an exit code
(:mod:`imputer_app.cli.exit_codes`); a traceback only with ``--debug``. Every message
printed passes :func:`~imputer_app.cli.text.terminal_safe`, so text from a sheet (a
column name, a cell) cannot steer the terminal.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import sys
import traceback
from collections.abc import Callable, Iterator, Sequence

from imputer_app.cli.exit_codes import EXIT_FAULT, EXIT_OK, EXIT_USAGE
from imputer_app.cli.progress import Stopped, stop_signal, stop_signals_handled
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
        0 done, 1 internal fault, 2 bad input or usage, 128 + the signal's number when
        stopped (130 Ctrl+C, 143 SIGTERM, 129 SIGHUP).
    """
    # Stop signals first: an early Ctrl+C (while the parser loads) is one line, too.
    try:
        with stop_signals_handled():
            return _main(argv)
    except KeyboardInterrupt as exc:  # a signal that came while a handler was swapped
        return _stopped("kinfill", exc)


def _main(argv: Sequence[str] | None) -> int:
    try:
        from imputer_app.cli.parser import build_parser

        args = build_parser().parse_args(argv)
    except SystemExit as exc:  # --help, --version and usage errors
        return exc.code if isinstance(exc.code, int) else EXIT_USAGE
    except KeyboardInterrupt as exc:
        return _stopped("kinfill", exc)
    debug = bool(getattr(args, "debug", False))
    if args.command is None:
        say("kinfill: choose a command: fill, score-k, plan or gui (see kinfill --help)")
        return EXIT_USAGE
    prog = f"kinfill {args.command}"
    run: Callable[[argparse.Namespace], int] = args.run
    try:
        with quiet_output(bool(getattr(args, "quiet", False))):
            return run(args)
    except KinfillError as exc:
        if debug:
            traceback.print_exc()
        say(f"{prog}: {one_line(str(exc))}")
        return EXIT_USAGE
    except (Cancelled, KeyboardInterrupt) as exc:
        return _stopped(prog, exc)
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
        say(f"{prog}: internal error: {type(exc).__name__}: {one_line(str(exc))}{hint}")
        return EXIT_FAULT


def _stopped(prog: str, exc: BaseException) -> int:
    """One line for a stop by Ctrl+C, SIGTERM or SIGHUP; exit 128 + the signal's number."""
    signum = exc.signum if isinstance(exc, Stopped) else stop_signal()
    say(f"{prog}: stopped; nothing written")
    return 128 + signum


def say(message: str) -> None:
    """Print one message line on standard error, control characters escaped.

    A closed terminal (after SIGHUP) cannot be written to; the exit code still tells.
    """
    from imputer_app.cli.text import terminal_safe

    with contextlib.suppress(OSError, ValueError):
        print(terminal_safe(message), file=sys.stderr)


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
