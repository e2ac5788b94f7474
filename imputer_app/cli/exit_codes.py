"""Exit codes of ``kinfill`` and the error a bad argument raises."""

from __future__ import annotations

from imputer_app.errors import KinfillError

#: Done.
EXIT_OK = 0
#: An internal fault (a bug): one line, or the traceback with ``--debug``.
EXIT_FAULT = 1
#: Bad input or usage (missing file, unknown column, bad setting): one line.
EXIT_USAGE = 2
#: Stopped with Ctrl+C; nothing was written (128 + SIGINT, the shell convention).
#: SIGTERM and SIGHUP stop the same way with 128 + their number (143, 129).
EXIT_STOPPED = 130


class UsageError(KinfillError):
    """A command-line argument is unusable (exit code 2)."""
