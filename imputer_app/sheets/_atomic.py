"""Write export files all-or-nothing, and never over the input file.

A thin use of :mod:`imputer_app.files`, the one atomic writer: every output is first
written to a fresh temporary file in its own target folder, then all temporaries are
renamed into place together. Any failure, including the user's cancel, removes every
temporary file; the error names the cause in words a user can act on.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path

from imputer_app.files import TEMP_SUFFIX, atomic_targets, check_targets, explain, same_file

__all__ = ["TEMP_SUFFIX", "atomic_outputs", "check_targets", "explain", "same_file"]


@contextmanager
def atomic_outputs(
    targets: Sequence[Path], *, source: Path | None = None, force: bool = True
) -> Iterator[list[Path]]:
    """Yield temporary paths for ``targets``; rename them into place on success.

    Parameters
    ----------
    targets : sequence of Path
        Final file names.
    source : Path or None
        The input file; a target naming it raises :class:`~imputer_app.errors.ExportError`.
    force : bool, default=True
        Whether existing targets may be replaced. Exports replace by default because
        their callers ask first (``--force`` on the command line, the app's save
        dialog); a link at a target is replaced itself, never written through.

    Yields
    ------
    list of Path
        One empty temporary file per target, same order, in the target's folder.
    """
    with atomic_targets(targets, source=source, force=force) as temps:
        yield temps
