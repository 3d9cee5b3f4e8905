"""Atomic, umask-respecting file writes (the base layer: every writer uses these).

:func:`atomic_file` (and :func:`atomic_write` on top of it) writes a file next to its
destination and renames it into place only when writing succeeded; readers see the old
file or the new one, never half of one.  :func:`atomic_directory` does the same for a
whole folder.  The temporary file is created with mode 0666 and the temporary folder
with 0777, both filtered by the process umask by the kernel, so the result has the
permissions any other writer (``open(path, "w")``, ``mkdir``) would give: 0644 / 0755
under umask 022, 0600 / 0700 under umask 077.  (``tempfile.mkstemp`` and ``mkdtemp``
use 0600 and 0700 whatever the umask, which left figures and report folders unreadable
to anyone else.)
"""
from __future__ import annotations

import errno
import glob
import os
import secrets
import shutil
import signal
from contextlib import contextmanager

from bhchem.errors import BhchemError

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX: no advisory locks, see output_lock
    fcntl = None

#: attempts at an unused temporary name before giving up (a count, never a time)
_NAME_ATTEMPTS = 100


#: environment variable naming a stage at which the process kills itself (fault tests)
FAULT_ENV = "BHCHEM_FAULT_STAGE"
_fault_hits: dict = {}


def fault_point(stage: str) -> None:
    """Kill this process with SIGKILL at ``stage`` if ``BHCHEM_FAULT_STAGE`` asks for it.

    ``BHCHEM_FAULT_STAGE=name`` kills at the first time ``name`` is reached,
    ``name:N`` at the N-th time (a count, never a time).  Unset: does nothing.  Used by the
    fault-injection tests to interrupt a run at a named instant.

    Parameters
    ----------
    stage : str
        The name of this instant, e.g. ``"report-swap"``.
    """
    want = os.environ.get(FAULT_ENV)
    if not want:
        return
    name, _, count = want.partition(":")
    if name != stage:
        return
    _fault_hits[stage] = _fault_hits.get(stage, 0) + 1
    if _fault_hits[stage] >= (int(count) if count.isdigit() else 1):
        os.kill(os.getpid(), signal.SIGKILL)


def _temporary_name(path: str, suffix: str) -> str:
    directory, base = os.path.split(os.path.abspath(path))
    return os.path.join(directory, f".{base}.{secrets.token_hex(6)}{suffix}")


@contextmanager
def atomic_file(path, mode: str = "wb", encoding: str | None = None):
    """Open a temporary file beside ``path``; on success rename it to ``path``.

    The temporary file is created with ``os.open(..., 0o666)``, so it ends with
    0666 & ~umask like any file a program creates; if the block raises, the temporary
    file is removed and ``path`` is untouched.

    Parameters
    ----------
    path : str or os.PathLike
    mode : {'wb', 'w'}
    encoding : str, optional
        For text mode (default UTF-8).

    Yields
    ------
    file object
    """
    if mode not in ("wb", "w"):
        raise ValueError("atomic_file writes: mode must be 'w' or 'wb'")
    path = os.fspath(path)
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0) \
        | getattr(os, "O_CLOEXEC", 0)
    for _ in range(_NAME_ATTEMPTS):
        tmp = _temporary_name(path, ".tmp")
        try:
            fd = os.open(tmp, flags, 0o666)
            break
        except FileExistsError:
            continue
    else:  # pragma: no cover - 100 random 48-bit names all taken
        raise FileExistsError(f"no free temporary name beside {path}")
    try:
        if mode == "w":
            fh = os.fdopen(fd, "w", encoding=encoding or "utf-8", newline="")
        else:
            fh = os.fdopen(fd, "wb")
        with fh:
            fault_point("atomic-file-open")
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.remove(tmp)


def atomic_write(path, data, encoding: str = "utf-8") -> str:
    """Write ``data`` (str or bytes) to ``path`` atomically; returns the path."""
    path = os.fspath(path)
    if isinstance(data, str):
        with atomic_file(path, "w", encoding=encoding) as fh:
            fh.write(data)
    else:
        with atomic_file(path, "wb") as fh:
            fh.write(data)
    return path


@contextmanager
def atomic_directory(path, replace: bool = False):
    """Build a folder under a temporary name beside ``path``; on success move it there.

    The temporary folder is made with ``os.mkdir(..., 0o777)`` (so 0777 & ~umask).  If
    the block raises, it is removed and ``path`` is untouched.  With ``replace`` an
    existing folder at ``path`` is first renamed aside, then removed once the new one
    is in place (renamed back if moving the new one fails).

    Yields
    ------
    str
        The temporary folder to write into.
    """
    path = os.path.abspath(os.fspath(path))
    for _ in range(_NAME_ATTEMPTS):
        tmp = _temporary_name(path, ".tmpdir")
        try:
            os.mkdir(tmp, 0o777)
            break
        except FileExistsError:
            continue
    else:  # pragma: no cover
        raise FileExistsError(f"no free temporary name beside {path}")
    try:
        yield tmp
        aside = None
        if replace and os.path.lexists(path):
            aside = _temporary_name(path, ".old")
            os.rename(path, aside)
        fault_point("report-swap")
        try:
            os.rename(tmp, path)
        except BaseException:
            if aside is not None:
                os.rename(aside, path)
            raise
        if aside is not None:
            if os.path.isdir(aside) and not os.path.islink(aside):
                shutil.rmtree(aside, ignore_errors=True)
            else:
                os.remove(aside)
    finally:
        if os.path.isdir(tmp):
            shutil.rmtree(tmp, ignore_errors=True)


class OutputBusyError(BhchemError):
    """Another bhchem process is writing the same output."""


def _lock_name(path: str) -> str:
    directory, base = os.path.split(os.path.abspath(path))
    return os.path.join(directory, f".{base}.bhchem-lock")


@contextmanager
def output_lock(path):
    """Hold an exclusive advisory lock on the output ``path`` (a file beside it).

    A second process asking for the same output is refused at once with
    :class:`OutputBusyError` (no waiting).  The lock dies with its process (also on
    SIGKILL), so a lock file left behind by a killed run is reused, never trusted.  The lock
    file is removed on release.  Without ``fcntl`` (not POSIX) no lock is taken.

    Parameters
    ----------
    path : str or os.PathLike
        The output file or folder.

    Yields
    ------
    None
    """
    path = os.path.abspath(os.fspath(path))
    if fcntl is None:  # pragma: no cover
        yield
        return
    lock = _lock_name(path)
    for _ in range(_NAME_ATTEMPTS):
        fd = os.open(lock, os.O_RDWR | os.O_CREAT | getattr(os, "O_CLOEXEC", 0), 0o666)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as exc:
            os.close(fd)
            if exc.errno in (errno.EAGAIN, errno.EACCES, errno.EWOULDBLOCK):
                raise OutputBusyError(f"{path} is being written by another bhchem process "
                                      f"(lock {lock}); wait for it or choose another "
                                      f"output") from None
            raise
        try:
            same = os.path.samestat(os.fstat(fd), os.stat(lock))
        except FileNotFoundError:
            same = False
        if same:
            break
        os.close(fd)  # the holder removed that lock file as we opened it: take the new one
    else:  # pragma: no cover
        raise OutputBusyError(f"{path}: could not take the lock {lock}")
    try:
        yield
    finally:
        try:
            os.remove(lock)
        finally:
            os.close(fd)


def clean_stale(path) -> list:
    """Remove the temporaries a killed run of ours left beside ``path``; restore a bundle.

    Looks for ``.NAME.<hex>.tmp`` (files of :func:`atomic_file`), ``.NAME.<hex>.tmpdir``
    (folders of :func:`atomic_directory`) and ``.NAME.<hex>.old`` (a folder renamed aside
    by a replacing :func:`atomic_directory`): an ``.old`` folder is renamed back to
    ``path`` when ``path`` is missing (the run was killed between the two renames),
    otherwise removed.  Call it only while holding :func:`output_lock` on ``path``.

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    list of str
        One description per temporary handled, e.g. ``"removed .R.0a1b2c3d4e5f.tmpdir"``.
    """
    path = os.path.abspath(os.fspath(path))
    directory, base = os.path.split(path)
    done = []
    pattern = os.path.join(glob.escape(directory), f".{glob.escape(base)}.*")
    for cand in sorted(glob.glob(pattern)):
        name = os.path.basename(cand)
        middle = name[len(base) + 2:]
        token, _, suffix = middle.partition(".")
        if len(token) != 12 or any(c not in "0123456789abcdef" for c in token) \
                or suffix not in ("tmp", "tmpdir", "old"):
            continue
        if suffix == "old" and not os.path.lexists(path):
            os.rename(cand, path)
            done.append(f"restored {base} from {name}")
            continue
        if os.path.isdir(cand) and not os.path.islink(cand):
            shutil.rmtree(cand, ignore_errors=True)
        else:
            os.remove(cand)
        done.append(f"removed {name}")
    return done


def check_writable_folder(directory, what: str) -> None:
    """Raise :class:`BhchemError` (one line) unless ``directory`` is a writable folder.

    Parameters
    ----------
    directory : str
        The folder that will receive a new file or folder.
    what : str
        What is being written (for the message).
    """
    if not os.path.isdir(directory):
        kind = "is a file, not a folder" if os.path.exists(directory) else "does not exist"
        raise BhchemError(f"{what}: {directory} {kind}")
    if not os.access(directory, os.W_OK | os.X_OK):
        raise BhchemError(f"{what}: the folder {directory} is not writable")
