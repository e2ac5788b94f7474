"""Progress reporting and cancellation shared by every long-running step.

Long work (read, recovery test, fill, export) takes ``progress(done, total)`` and a
``cancel`` flag. The GUI passes a :class:`threading.Event` from its worker thread; the
CLI passes a flag set by Ctrl+C. Any object with an ``is_set()`` method, or a callable
returning ``bool``, is accepted as a cancel flag.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Protocol, runtime_checkable

from imputer_app.errors import Cancelled

Progress = Callable[[int, int], None]

#: Rows per slice of work on a long column (see :func:`row_slices`).
SLICE_ROWS = 100_000
#: Where Linux (cgroup v2) tells a container's CPU quota: "quota period" in microseconds, or "max".
CPU_QUOTA_FILE = Path("/sys/fs/cgroup/cpu.max")


def usable_cores() -> int:
    """The cores this process may run on.

    Its affinity (on Linux; elsewhere the machine's cores), and no more than its
    container's CPU quota, which the affinity does not show.
    """
    affinity = getattr(os, "sched_getaffinity", None)
    cores = len(affinity(0)) if affinity is not None else os.cpu_count() or 1
    try:
        quota, period = CPU_QUOTA_FILE.read_text().split()[:2]
        return min(cores, max(1, math.ceil(int(quota) / int(period))))
    except (OSError, ValueError, ZeroDivisionError):  # no such file, or "max": no quota
        return cores


#: Threads that work side by side on one long task (a long csv's pieces and columns, the
#: neighbour search's chunks and batches, exact distances): numpy, BLAS and scipy's trees
#: release Python's lock, so each uses a core. Two at least, four at most: measured with
#: four on a million rows x 10, peak memory 1.45 -> 1.56 GB (200,000 x 30: 0.90 -> 0.85).
#: The answers are the same with any number: tests read and search with one thread and
#: with three.
WORKERS = max(2, min(4, usable_cores()))


@runtime_checkable
class Flag(Protocol):
    """Anything with ``is_set()``, such as :class:`threading.Event`."""

    def is_set(self) -> bool:
        """True when the work should stop."""
        ...


CancelFlag = Flag | Callable[[], bool]


def is_cancelled(cancel: CancelFlag | None) -> bool:
    """Return True when ``cancel`` asks the work to stop.

    Parameters
    ----------
    cancel : Event-like, callable or None
        ``None`` never cancels.
    """
    if cancel is None:
        return False
    if isinstance(cancel, Flag):
        return bool(cancel.is_set())
    return bool(cancel())


def raise_if_cancelled(cancel: CancelFlag | None) -> None:
    """Raise :class:`~imputer_app.errors.Cancelled` when ``cancel`` is set."""
    if is_cancelled(cancel):
        raise Cancelled("stopped at the user's request; nothing was changed")


def report(progress: Progress | None, done: int, total: int) -> None:
    """Call ``progress(done, total)`` when a callback was given."""
    if progress is not None:
        progress(done, total)


def row_slices(n: int, step: int | None = None) -> Iterator[slice]:
    """Consecutive slices covering ``range(n)``, each at most ``step`` (default :data:`SLICE_ROWS`) long.

    One numpy call on a million texts or Python objects (a cast, a comparison, a list
    made from an array) holds Python's global lock from start to end, a tenth of a
    second or more; the app's window, on another thread, cannot repaint meanwhile. The
    same call made slice by slice gives other threads their turn between slices.

    Examples
    --------
    >>> [(s.start, s.stop) for s in row_slices(250_000)]
    [(0, 100000), (100000, 200000), (200000, 250000)]
    """
    step = step or SLICE_ROWS  # read at each call, so that a test can make slices short
    for start in range(0, n, step):
        yield slice(start, min(start + step, n))
