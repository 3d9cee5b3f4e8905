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

import os
import secrets
import shutil
from contextlib import contextmanager

#: attempts at an unused temporary name before giving up (a count, never a time)
_NAME_ATTEMPTS = 100


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
