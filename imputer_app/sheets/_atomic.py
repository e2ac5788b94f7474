"""Write export files all-or-nothing, and never over the input file.

Every output is first written to a temporary file in its own target folder (so the
final rename stays on one file system and is atomic, ``os.replace``), then all
temporaries are renamed into place together. Any failure, including the user's
cancel, removes every temporary file; the error names the cause in words a user
can act on (folder not writable, file open elsewhere, disk full).
"""

from __future__ import annotations

import errno
import os
import secrets
from collections.abc import Iterator, Sequence
from contextlib import contextmanager, suppress
from pathlib import Path

from imputer_app.errors import ExportError

#: Ending of temporary files; ``.gitignore``-style patterns for ``*.tmp`` catch them.
TEMP_SUFFIX = ".kinfill.tmp"

_FULL = {errno.ENOSPC, errno.EDQUOT, errno.EFBIG}
_DENIED = {errno.EACCES, errno.EPERM, errno.EROFS}
_BUSY = {errno.EBUSY, errno.ETXTBSY}
_NO_FSYNC = {errno.EINVAL, errno.ENOTSUP, errno.EOPNOTSUPP}


def check_targets(targets: Sequence[Path], source: Path | None) -> list[Path]:
    """Refuse targets that are the input file, a folder, or in a missing folder.

    Parameters
    ----------
    targets : sequence of Path
        Every file an export will write.
    source : Path or None
        The input file, which Kinfill never overwrites.

    Returns
    -------
    list of Path
        The targets as absolute paths.
    """
    checked: list[Path] = []
    for target in targets:
        full = Path(os.path.abspath(target))
        if source is not None and same_file(full, Path(source)):
            raise ExportError(
                f"refusing to write {full.name}: it is the input file {source}; "
                "choose another name (Kinfill never overwrites its input)"
            )
        if full.is_dir():
            raise ExportError(f"cannot write {full}: a folder of that name exists")
        if not full.parent.is_dir():
            raise ExportError(f"cannot write {full.name}: folder {full.parent} does not exist")
        checked.append(full)
    return checked


def same_file(path: str | os.PathLike[str], source: str | os.PathLike[str]) -> bool:
    """Return True when ``path`` names the file ``source`` (the "is this the input file" check).

    Sees through another spelling of the same path, symbolic links, hard links and
    case-insensitive file systems; a path that does not exist is never the input.

    Parameters
    ----------
    path : str or path-like
        A file Kinfill is about to write.
    source : str or path-like
        The input file, which Kinfill never overwrites.

    Examples
    --------
    >>> same_file("a/../b.xlsx", "b.xlsx")
    True
    """
    path, source = Path(path), Path(source)
    if path.resolve() == source.resolve():
        return True
    try:  # hard links and case-insensitive file systems
        return path.exists() and os.path.samefile(path, source)
    except OSError:
        return False


def explain(exc: OSError, target: Path, stage: str) -> ExportError:
    """Turn an ``OSError`` into a one-line :class:`ExportError` naming the cause.

    Parameters
    ----------
    exc : OSError
        The error raised by the operating system.
    target : Path
        The output file being written.
    stage : {"create", "write", "replace"}
        Creating the temporary file, writing it, or renaming it into place.
    """
    folder = target.parent
    code = exc.errno
    if code in _FULL:
        why = f"the disk is full (not enough space in {folder})"
    elif code == errno.EROFS or (
        stage != "replace" and (isinstance(exc, PermissionError) or code in _DENIED)
    ):
        why = f"folder {folder} is not writable (permission denied); choose another folder"
    elif isinstance(exc, PermissionError) or code in _DENIED | _BUSY:
        why = "the file is open in another program or read-only; close it and try again"
    elif code == errno.ENOENT:
        why = f"folder {folder} does not exist (any more)"
    elif code == errno.ENAMETOOLONG:
        why = "the file name is too long"
    else:
        why = exc.strerror or str(exc) or type(exc).__name__
    return ExportError(f"cannot write {target.name}: {why}; nothing was written")


@contextmanager
def atomic_outputs(targets: Sequence[Path], *, source: Path | None = None) -> Iterator[list[Path]]:
    """Yield temporary paths for ``targets``; rename them into place on success.

    Parameters
    ----------
    targets : sequence of Path
        Final file names (checked with :func:`check_targets`).
    source : Path or None
        The input file; a target naming it raises :class:`ExportError`.

    Yields
    ------
    list of Path
        One empty temporary file per target, same order, in the target's folder.

    Raises
    ------
    ExportError
        For any ``OSError`` while creating, writing or renaming (temporary files removed).
    Cancelled
        Passed through after removing the temporary files.
    """
    finals = check_targets(targets, source)
    temps: list[Path] = []
    try:
        for final in finals:
            temps.append(_create_temp(final))
        try:
            yield temps
        except OSError as exc:
            raise explain(exc, _target_of(exc, finals, temps), "write") from exc
        _commit(finals, temps)
    finally:
        for temp in temps:
            _remove_quietly(temp)


def _create_temp(final: Path) -> Path:
    # O_EXCL with a random name: never clobbers anything; mode 0o666 lets the umask
    # give the export the same permissions as any file the user saves.
    for _ in range(10):
        temp = final.with_name(f".{final.name}.{secrets.token_hex(4)}{TEMP_SUFFIX}")
        try:
            fd = os.open(temp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        except FileExistsError:
            continue
        except OSError as exc:
            raise explain(exc, final, "create") from exc
        os.close(fd)
        return temp
    raise ExportError(f"cannot write {final.name}: no free temporary file name in {final.parent}")


def _target_of(exc: OSError, finals: list[Path], temps: list[Path]) -> Path:
    for final, temp in zip(finals, temps, strict=False):
        if exc.filename is not None and os.fspath(exc.filename) in (os.fspath(temp), os.fspath(final)):
            return final
    return finals[0]


def _commit(finals: list[Path], temps: list[Path]) -> None:
    for final, temp in zip(finals, temps, strict=True):
        try:
            _flush_to_disk(temp)
        except OSError as exc:
            raise explain(exc, final, "write") from exc
    done: list[Path] = []
    for final, temp in zip(finals, temps, strict=True):
        try:
            os.replace(temp, final)
        except OSError as exc:
            # Keep the set consistent: a run's files are either all new or absent.
            for path in done:
                _remove_quietly(path)
            raise explain(exc, final, "replace") from exc
        done.append(final)


def _flush_to_disk(path: Path) -> None:
    # Common practice (no source): fsync before rename so a power cut cannot leave
    # an empty file under the final name. Some network and FUSE file systems cannot
    # fsync; there the rename alone has to do.
    fd = os.open(path, os.O_RDWR)
    try:
        os.fsync(fd)
    except OSError as exc:
        if exc.errno not in _NO_FSYNC:
            raise
    finally:
        os.close(fd)


def _remove_quietly(path: Path) -> None:
    with suppress(OSError):
        path.unlink(missing_ok=True)
