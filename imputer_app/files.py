r"""The one atomic writer: every file Kinfill writes goes through here.

A file is first written under a fresh temporary name in its own target folder, created
exclusively (``O_CREAT | O_EXCL | O_NOFOLLOW``, so nothing already there is used up and
no link is followed), then flushed to disk and renamed over the target (``os.replace``
stays on one file system, so a reader sees the old file or the new one, never half of
each), and the folder is flushed too. Any failure, including the user's cancel, removes
the temporary file and leaves the old target as it was; the error names the cause in
one line (folder not writable, file open elsewhere, disk full).

Before writing, a target is refused when it is the input file (same path, hard link or
link to it, even with ``force``), a folder, in a missing folder, or already there
without ``force`` (a dangling link counts as there). With ``force`` a link at the target
is replaced itself; the file it points to is never written.

Temporary files are named ``.<target name>.<process id>.<8 hex digits>.kinfill.tmp``. A
process killed mid-write leaves one behind; the next write into that folder removes
such files when they are older than this process and their process is gone.

Examples
--------
>>> import tempfile
>>> folder = Path(tempfile.mkdtemp())
>>> write_text_atomic(folder / "note.txt", "hello\n").read_text()
'hello\n'
>>> write_text_atomic(folder / "note.txt", "again\n")  # doctest: +ELLIPSIS
Traceback (most recent call last):
...
imputer_app.errors.ExportError: cannot write note.txt: it already exists in ...
"""

from __future__ import annotations

import errno
import os
import re
import secrets
import stat
import time
from collections.abc import Iterator, Sequence
from contextlib import contextmanager, suppress
from pathlib import Path

from imputer_app.errors import ExportError

#: Ending of temporary files; ``.gitignore``-style patterns for ``*.tmp`` catch them.
TEMP_SUFFIX = ".kinfill.tmp"

#: When this module was loaded: our own temporary files are never older than this.
STARTED = time.time()

StrPath = str | os.PathLike[str]

# ".<name>.<pid>.<hex>.kinfill.tmp"; the pid part is absent in names of older versions.
_TEMP_NAME = re.compile(r"^\..+?\.(?:(\d+)\.)?[0-9a-f]{8}" + re.escape(TEMP_SUFFIX) + r"\Z", re.DOTALL)
_NOFOLLOW = getattr(os, "O_NOFOLLOW", 0)
_CLOEXEC = getattr(os, "O_CLOEXEC", 0)

_FULL = {errno.ENOSPC, errno.EDQUOT, errno.EFBIG}
_DENIED = {errno.EACCES, errno.EPERM, errno.EROFS}
_BUSY = {errno.EBUSY, errno.ETXTBSY}
_NO_FSYNC = {errno.EINVAL, errno.ENOTSUP, errno.EOPNOTSUPP}


# ------------------------------------------------------------------ checks
def same_file(target: StrPath, source: StrPath) -> bool:
    """Return whether ``target`` names the file ``source``.

    True for the same path spelled differently, a hard link, a link to the source or
    the source reached through a link (compares device and inode numbers).

    Parameters
    ----------
    target, source : str or path-like
        The file about to be written and the input file.
    """
    if Path(target).resolve() == Path(source).resolve():
        return True
    try:
        src = os.stat(source)
    except OSError:
        return False
    for look in (os.stat, os.lstat):
        try:
            info = look(target)
        except OSError:
            continue
        if (info.st_dev, info.st_ino) == (src.st_dev, src.st_ino):
            return True
    return False


def check_target(target: StrPath, *, source: StrPath | None = None, force: bool = False) -> Path:
    """Refuse a target that is the input, a folder, in a missing folder, or there without ``force``.

    Parameters
    ----------
    target : str or path-like
        The file to write.
    source : str or path-like or None, default=None
        The input file, which Kinfill never overwrites, ``force`` or not.
    force : bool, default=False
        Whether an existing file (or link) at ``target`` may be replaced.

    Returns
    -------
    Path
        ``target`` as an absolute path.

    Raises
    ------
    ExportError
        Naming the file and what to do instead.
    """
    full = Path(os.path.abspath(target))
    if source is not None and same_file(full, source):
        raise ExportError(
            f"refusing to write {full.name}: it is the input file {source}; "
            "choose another name (Kinfill never overwrites its input)"
        )
    try:
        info: os.stat_result | None = os.lstat(full)
    except OSError:
        info = None
    if info is not None and stat.S_ISDIR(info.st_mode):
        raise ExportError(f"cannot write {full}: a folder of that name exists")
    if not full.parent.is_dir():
        raise ExportError(f"cannot write {full.name}: folder {full.parent} does not exist")
    if info is not None and not force:
        what = "a link of that name" if stat.S_ISLNK(info.st_mode) else "it already"
        raise ExportError(
            f"cannot write {full.name}: {what} exists in {full.parent}; "
            "choose another name or replace it on purpose (--force)"
        )
    return full


def check_targets(
    targets: Sequence[StrPath], source: StrPath | None = None, *, force: bool = False
) -> list[Path]:
    """Apply :func:`check_target` to each target; return them as absolute paths."""
    return [check_target(t, source=source, force=force) for t in targets]


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


# ------------------------------------------------------------------ writing
@contextmanager
def atomic_targets(
    targets: Sequence[StrPath], *, source: StrPath | None = None, force: bool = False
) -> Iterator[list[Path]]:
    """Yield temporary paths for ``targets``; rename them all into place on success.

    For writers that take a file name (xlsxwriter, matplotlib's ``savefig``) or write
    several files that belong together (a csv export and its side files).

    Parameters
    ----------
    targets : sequence of str or path-like
        Final file names (checked with :func:`check_target`).
    source : str or path-like or None, default=None
        The input file; a target naming it raises :class:`ExportError`.
    force : bool, default=False
        Whether existing targets may be replaced.

    Yields
    ------
    list of Path
        One empty temporary file per target, same order, in the target's folder.

    Raises
    ------
    ExportError
        For any ``OSError`` while creating, writing or renaming (temporary files removed;
        when a later rename fails, the files already renamed are removed too, so a
        run's files are all new or absent).
    Cancelled
        Passed through after removing the temporary files.
    """
    finals = check_targets(targets, source, force=force)
    for folder in dict.fromkeys(final.parent for final in finals):
        remove_stale_temps(folder)
    temps: list[Path] = []
    try:
        for final in finals:
            temp, fd = _create_temp(final)
            temps.append(temp)
            os.close(fd)
        try:
            yield temps
        except OSError as exc:
            raise explain(exc, _target_of(exc, finals, temps), "write") from exc
        _commit(finals, temps)
    finally:
        for temp in temps:
            _remove_quietly(temp)


@contextmanager
def atomic_target(target: StrPath, *, source: StrPath | None = None, force: bool = False) -> Iterator[Path]:
    """Yield one temporary path for ``target``; rename it into place on success.

    Parameters
    ----------
    target : str or path-like
        The final file name.
    source : str or path-like or None, default=None
        The input file, never written.
    force : bool, default=False
        Whether an existing file at ``target`` may be replaced.

    Examples
    --------
    >>> with atomic_target("chart.png", force=True) as temp:  # doctest: +SKIP
    ...     figure.savefig(temp, format="png")
    """
    with atomic_targets([target], source=source, force=force) as temps:
        yield temps[0]


def write_bytes_atomic(
    target: StrPath, data: bytes, *, source: StrPath | None = None, force: bool = False
) -> Path:
    """Write ``data`` to ``target`` all-or-nothing and return the absolute path written.

    Parameters
    ----------
    target : str or path-like
        The file to write.
    data : bytes
        Its whole content.
    source : str or path-like or None, default=None
        The input file, never written.
    force : bool, default=False
        Whether an existing file (or link) at ``target`` may be replaced.

    Raises
    ------
    ExportError
        When the target is refused or cannot be written; the old target is untouched.
    """
    with atomic_target(target, source=source, force=force) as temp:
        fd = os.open(temp, os.O_WRONLY | os.O_TRUNC | _NOFOLLOW | _CLOEXEC)
        try:
            _write_all(fd, data)
        finally:
            os.close(fd)
    return Path(os.path.abspath(target))


def write_text_atomic(
    target: StrPath,
    text: str,
    *,
    source: StrPath | None = None,
    force: bool = False,
    encoding: str = "utf-8",
) -> Path:
    """Write ``text`` to ``target`` all-or-nothing; see :func:`write_bytes_atomic`.

    Line endings are written as given (no translation).
    """
    return write_bytes_atomic(target, text.encode(encoding), source=source, force=force)


# ------------------------------------------------------------------ stale files
def remove_stale_temps(folder: StrPath) -> list[Path]:
    """Remove temporary files of ours that a killed Kinfill left in ``folder``.

    Only regular files owned by this user whose names follow our pattern, last changed
    before this process loaded this module, and whose process (named in the file name)
    is not running, are removed; nothing else is touched. Failures are ignored.

    Parameters
    ----------
    folder : str or path-like
        The target folder of the write about to happen.

    Returns
    -------
    list of Path
        The files removed.
    """
    removed: list[Path] = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        if entry.name.endswith(TEMP_SUFFIX) and _is_stale(entry):
            with suppress(OSError):
                os.unlink(entry.path)
                removed.append(Path(entry.path))
    return removed


def _is_stale(entry: os.DirEntry[str]) -> bool:
    match = _TEMP_NAME.match(entry.name)
    if match is None:
        return False
    try:
        info = entry.stat(follow_symlinks=False)
    except OSError:
        return False
    if not stat.S_ISREG(info.st_mode) or info.st_mtime >= STARTED:
        return False
    if hasattr(os, "geteuid") and info.st_uid != os.geteuid():
        return False
    return match.group(1) is None or not _running(int(match.group(1)))


def _running(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (OSError, OverflowError):  # another user's process, or a pid out of range
        return True
    return True


# ------------------------------------------------------------------ internals
def _create_temp(final: Path) -> tuple[Path, int]:
    # O_EXCL with a random name never uses up anything already there (a link included,
    # with O_NOFOLLOW as a second guard); mode 0o666 lets the umask give the file the
    # same permissions as any file the user saves.
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | _NOFOLLOW | _CLOEXEC
    for _ in range(10):
        temp = final.with_name(f".{final.name}.{os.getpid()}.{secrets.token_hex(4)}{TEMP_SUFFIX}")
        try:
            fd = os.open(temp, flags, 0o666)
        except FileExistsError:
            continue
        except OSError as exc:
            raise explain(exc, final, "create") from exc
        return temp, fd
    raise ExportError(f"cannot write {final.name}: no free temporary file name in {final.parent}")


def _write_all(fd: int, data: bytes) -> None:
    view = memoryview(data)
    while view:
        view = view[os.write(fd, view) :]


def _target_of(exc: OSError, finals: list[Path], temps: list[Path]) -> Path:
    for final, temp in zip(finals, temps, strict=False):
        if exc.filename is not None and os.fspath(exc.filename) in (os.fspath(temp), os.fspath(final)):
            return final
    return finals[0]


def _commit(finals: list[Path], temps: list[Path]) -> None:
    for final, temp in zip(finals, temps, strict=True):
        try:
            _flush_to_disk(final, temp)
        except OSError as exc:
            raise explain(exc, final, "write") from exc
    done: list[Path] = []
    for final, temp in zip(finals, temps, strict=True):
        try:
            os.replace(temp, final)
        except OSError as exc:
            for path in done:
                _remove_quietly(path)
            raise explain(exc, final, "replace") from exc
        done.append(final)
    for folder in dict.fromkeys(final.parent for final in finals):
        _flush_folder(folder)


def _flush_to_disk(final: Path, temp: Path) -> None:
    # Common practice (no source): fsync before rename so a power cut cannot leave an
    # empty file under the final name. Some network and FUSE file systems cannot fsync;
    # there the rename alone has to do.
    fd = os.open(temp, os.O_RDWR | _NOFOLLOW | _CLOEXEC)
    try:
        if not stat.S_ISREG(os.fstat(fd).st_mode):
            raise ExportError(
                f"cannot write {final.name}: its temporary file was replaced; nothing was written"
            )
        os.fsync(fd)
    except OSError as exc:
        if exc.errno not in _NO_FSYNC:
            raise
    finally:
        os.close(fd)


def _flush_folder(folder: Path) -> None:
    # Makes the rename itself durable (common practice, no source). The new file is in
    # place already, so a folder that cannot be flushed is no reason to report failure.
    with suppress(OSError):
        fd = os.open(folder, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0) | _CLOEXEC)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def _remove_quietly(path: Path) -> None:
    # Never raises: a cleanup must not hide the error that caused it.
    with suppress(OSError):
        path.unlink(missing_ok=True)
