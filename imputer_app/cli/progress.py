"""Terminal helpers of the command line: a text progress bar and the stop signals.

Ctrl+C (SIGINT), SIGTERM and SIGHUP all stop a command the same way: during long work
the first one sets a :class:`StopFlag` (the work stops at its next check and nothing is
written), a second one, or one outside long work, raises :class:`Stopped`. The exit
code is 128 + the signal's number (130 for Ctrl+C, 143 for SIGTERM, 129 for SIGHUP).

Kept apart from :mod:`imputer_app.cli.commands` so that the commands stay short.
Nothing here imports the engine, the sheets or Qt.
"""

from __future__ import annotations

import signal
import threading
import time
from collections.abc import Iterator, Mapping
from contextlib import contextmanager, suppress
from types import FrameType
from typing import Any, NoReturn, TextIO

from imputer_app.work import Progress

BAR_WIDTH = 28
#: Choices of ``--progress``.
PROGRESS_MODES = ("auto", "bar", "lines", "none")
#: In ``lines`` mode, a line each time a stage passes another tenth of its work.
LINE_STEP = 10
#: Seconds between two redraws of the bar; more often only flickers and costs time.
REDRAW_EVERY = 0.1


class TextProgress:
    """Draw ``label [#####.....]  45%`` on a terminal, redrawing in place.

    Parameters
    ----------
    stream : text stream
        Usually ``sys.stderr``. When it is not a terminal (a pipe, a log file, a test's
        capture) nothing at all is drawn, so logs stay clean.
    enabled : bool or None, default=None
        Force drawing on or off; ``None`` asks ``stream.isatty()``.

    Examples
    --------
    >>> import io
    >>> bar = TextProgress(io.StringIO())
    >>> report = bar.stage("filling")
    >>> report(5, 10)  # draws nothing: a StringIO is not a terminal
    >>> bar.done()
    """

    def __init__(self, stream: TextIO, *, enabled: bool | None = None, lines: bool = False) -> None:
        self.stream = stream
        if enabled is None:
            isatty = getattr(stream, "isatty", None)
            enabled = bool(isatty and isatty())
        self.enabled = enabled and not lines
        self.lines = lines
        self._label = ""
        self._last_draw = 0.0
        self._drawn = False
        self._last_step = -1

    @classmethod
    def for_args(cls, args: object, stream: TextIO) -> TextProgress:
        """The progress a command's ``--progress`` and ``--quiet`` ask for (default: auto).

        Examples
        --------
        >>> import argparse, io
        >>> TextProgress.for_args(argparse.Namespace(progress="lines"), io.StringIO()).lines
        True
        """
        mode = "none" if getattr(args, "quiet", False) else getattr(args, "progress", "auto")
        if mode == "lines":
            return cls(stream, lines=True)
        return cls(stream, enabled={"auto": None, "bar": True, "none": False}[mode])

    def stage(self, label: str) -> Progress:
        """Start a new stage called ``label`` and return its ``progress(done, total)``."""
        self._label = label
        self._last_draw = 0.0
        self._last_step = -1
        if self.lines:
            self.stream.write(f"{label}...\n")
            self.stream.flush()
        return self._update

    def _write_line(self, done: int, total: int) -> None:
        """``lines`` mode: one line each time the stage passes another tenth (never in place)."""
        if total <= 0:
            return
        step = min(100, int(100 * done / total)) // LINE_STEP
        if step > self._last_step and step > 0:
            self._last_step = step
            self.stream.write(f"{self._label}: {step * LINE_STEP}% ({done} of {total})\n")
            self.stream.flush()

    def _update(self, done: int, total: int) -> None:
        if self.lines:
            self._write_line(done, total)
            return
        if not self.enabled:
            return
        now = time.monotonic()
        finished = total > 0 and done >= total
        if not finished and now - self._last_draw < REDRAW_EVERY:
            return
        self._last_draw = now
        self.stream.write("\r" + render_bar(self._label, done, total))
        self.stream.flush()
        self._drawn = True

    def done(self) -> None:
        """Clear the bar's line, so that the summary starts on a clean line."""
        if self.enabled and self._drawn:
            self.stream.write("\r\033[K")
            self.stream.flush()
            self._drawn = False


def render_bar(label: str, done: int, total: int, width: int = BAR_WIDTH) -> str:
    """Return one bar line, e.g. ``'filling    [##########..........]  50%'``.

    ``total <= 0`` means the amount of work is unknown: the bar shows ``done`` only.

    Examples
    --------
    >>> render_bar("reading", 1, 4, width=8)
    'reading      [##......]  25%'
    """
    if total <= 0:
        return f"{label:<12} {done}"
    share = min(max(done / total, 0.0), 1.0)
    filled = round(share * width)
    return f"{label:<12} [{'#' * filled}{'.' * (width - filled)}] {share:4.0%}"


#: Signals that stop a command like Ctrl+C (SIGHUP: the terminal was closed; not on Windows).
STOP_SIGNALS: tuple[signal.Signals, ...] = tuple(
    getattr(signal, name) for name in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, name)
)

# The last stop signal received, for the exit code (128 + its number).
_received: list[int] = []


class Stopped(KeyboardInterrupt):
    """A stop signal arrived outside long work (or a second time); carries its number."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


def stop_signal() -> int:
    """Return the number of the last stop signal received (SIGINT when none was)."""
    return _received[-1] if _received else int(signal.SIGINT)


def stop_at_once(signum: int, frame: FrameType | None) -> NoReturn:
    """Signal handler outside long work: stop where we are (cleanups still run)."""
    _received.append(signum)
    raise Stopped(signum)


@contextmanager
def stop_signals_handled() -> Iterator[None]:
    """Make SIGINT, SIGTERM and SIGHUP raise :class:`Stopped` for the block's duration.

    Installed first thing in ``main``, before the heavy imports, so that even a very
    early Ctrl+C ends with one line instead of a traceback. The previous handlers come
    back afterwards (``main`` may run inside another program, e.g. a test).
    """
    _received.clear()  # a signal of an earlier run in this process says nothing about this one
    with _handlers(dict.fromkeys(STOP_SIGNALS, stop_at_once)):
        yield


@contextmanager
def default_signals() -> Iterator[None]:
    """Give the stop signals back their usual meaning for the block (``kinfill gui``).

    Python runs signal handlers only between its own steps; inside Qt's event loop a
    handler would wait, so the window keeps the operating system's behaviour instead.
    """
    usual: dict[signal.Signals, Any] = {sig: signal.SIG_DFL for sig in STOP_SIGNALS}
    usual[signal.SIGINT] = signal.default_int_handler
    with _handlers(usual):
        yield


@contextmanager
def _handlers(handlers: Mapping[signal.Signals, Any]) -> Iterator[None]:
    # Python installs signal handlers in the main thread only; elsewhere nothing changes.
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = {sig: signal.signal(sig, handler) for sig, handler in handlers.items()}
    try:
        yield
    finally:
        for sig, old in previous.items():
            signal.signal(sig, old)


class StopFlag:
    """A cancel flag set by the first stop signal (Ctrl+C, SIGTERM, SIGHUP); a second one interrupts.

    Long work checks the flag about once a second and raises
    :class:`~imputer_app.errors.Cancelled`; the command then writes nothing.
    """

    def __init__(self, stream: TextIO | None = None) -> None:
        self._event = threading.Event()
        self._stream = stream

    def is_set(self) -> bool:
        """Return True once the user pressed Ctrl+C."""
        return self._event.is_set()

    def set(self) -> None:
        """Ask the running work to stop."""
        self._event.set()

    def on_sigint(self, signum: int, frame: FrameType | None) -> None:
        """Signal handler: the first signal asks politely, the second interrupts."""
        _received.append(signum)
        if self._event.is_set():
            raise Stopped(signum)
        self._event.set()
        if self._stream is not None:
            again = (
                "press Ctrl+C again to stop at once"
                if signum == signal.SIGINT
                else f"{signal.Signals(signum).name} received"
            )
            # A closed terminal (SIGHUP) cannot be written to; stopping matters more.
            with suppress(OSError, ValueError):
                self._stream.write(f"\nstopping ({again})...\n")
                self._stream.flush()


@contextmanager
def stop_on_ctrl_c(stream: TextIO | None = None) -> Iterator[StopFlag]:
    """Make the stop signals set a :class:`StopFlag` for the block's duration.

    Outside the main thread (where Python cannot install signal handlers) the flag is
    still returned but only ``KeyboardInterrupt`` stops the work.
    """
    flag = StopFlag(stream)
    with _handlers(dict.fromkeys(STOP_SIGNALS, flag.on_sigint)):
        yield flag
