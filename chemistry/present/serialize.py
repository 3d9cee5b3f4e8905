"""One serializer and one atomic writer for everything bhchem writes.

JSON
----
:func:`to_json` is the only way a result becomes JSON text, for every ``--json``
output and every JSON file (``results.json`` of a report, the atlas files).  It

* turns NaN and +-infinity into ``null`` (RFC 8259 has no token for them, so a strict
  parser rejects ``NaN``) and lists where that happened under the top-level key
  ``non_finite`` as JSON Pointers (RFC 6901), e.g. ``"/smarr/max_residual"``;
* turns numpy scalars and arrays into plain JSON numbers, booleans and lists;
* sorts keys and prints floats with Python's shortest round-trip representation, so
  the same result gives the same bytes;
* adds the ``convention`` record of :mod:`bhchem.conventions` to a top-level object
  that lacks one, and completes one that has only its own entries (every result
  carries the conventions it uses; a result's own entries are kept and win);
* calls ``json.dumps(..., allow_nan=False)``, so a stray non-finite number can never
  escape as a non-standard token.

Files
-----
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

import json
import math
import os
import secrets
import shutil
from contextlib import contextmanager

#: top-level key listing where non-finite numbers were replaced by null
NON_FINITE_KEY = "non_finite"
#: attempts at an unused temporary name before giving up (a count, never a time)
_NAME_ATTEMPTS = 100


# -- JSON ---------------------------------------------------------------------------------
def _pointer_token(key) -> str:
    return str(key).replace("~", "~0").replace("/", "~1")


def jsonable(obj, non_finite: list | None = None, _path: str = ""):
    """A JSON-ready copy of ``obj``: non-finite floats -> None, numpy -> Python.

    Parameters
    ----------
    obj : object
        Nested dicts, lists, tuples, numbers (Python or numpy), numpy arrays,
        strings, booleans and None.
    non_finite : list, optional
        When given, the JSON Pointer (RFC 6901) of every replaced non-finite number
        is appended to it.

    Returns
    -------
    object
        Dict keys become strings, tuples and arrays become lists.
    """
    if isinstance(obj, bool) or obj is None or isinstance(obj, (str, int)):
        return obj
    if isinstance(obj, float):
        if math.isfinite(obj):
            return obj
        if non_finite is not None:
            non_finite.append(_path)
        return None
    if isinstance(obj, dict):
        return {str(k): jsonable(v, non_finite, f"{_path}/{_pointer_token(k)}")
                for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v, non_finite, f"{_path}/{i}") for i, v in enumerate(obj)]
    if hasattr(obj, "tolist") and getattr(obj, "ndim", 0) > 0:  # numpy arrays
        return jsonable(obj.tolist(), non_finite, _path)
    if hasattr(obj, "item") and not isinstance(obj, (bytes, bytearray)):  # numpy scalars
        try:
            value = obj.item()
        except (ValueError, AttributeError, TypeError):
            return obj
        if value is not obj:
            return jsonable(value, non_finite, _path)
    return obj


def to_json(doc, *, family=None, convention: bool = True, indent: int | None = 2) -> str:
    """The JSON text of a result (no trailing newline).

    Parameters
    ----------
    doc : dict or list
        The result.  Non-finite floats become null (see :func:`jsonable`).
    family : Family, optional
        Whose conventions to add (``convention_record(family)``: the family may override
        entries); without it the general conventions are added.
    convention : bool
        Give a top-level dict the full ``convention`` record (default): added when
        missing, completed when the document has only its own entries (which win).  Off
        only for documents whose entries carry their own (``bhchem families --json``).
    indent : int or None

    Returns
    -------
    str
        Sorted keys, shortest round-trip floats, strictly standard JSON.
    """
    where: list = []
    out = jsonable(doc, where)
    if isinstance(out, dict):
        own = out.get("convention")
        if convention and (own is None or isinstance(own, dict)):
            # the general record (with the family's overrides), then the result's own
            # entries (e.g. an analysis's sign convention) on top
            from bhchem.conventions import convention_record
            out["convention"] = {**jsonable(convention_record(family)), **(own or {})}
        if where:
            out[NON_FINITE_KEY] = sorted(set(out.get(NON_FINITE_KEY) or []) | set(where))
    return json.dumps(out, indent=indent, sort_keys=True, allow_nan=False)


def strict_loads(text: str):
    """``json.loads`` that refuses the non-standard tokens NaN, Infinity, -Infinity."""
    def refuse(token):
        raise ValueError(f"non-standard JSON token {token!r}")
    return json.loads(text, parse_constant=refuse)


# -- atomic files -----------------------------------------------------------------------------
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
