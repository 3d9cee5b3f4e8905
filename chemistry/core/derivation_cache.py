"""An on-disk cache of symbolic derivations, so that a cold ``bhchem`` command does not
redo seconds of sympy work that an earlier run already did.

The key is a SHA-256 over everything the derivation depends on: the family's content
(every declared expression by :func:`sympy.srepr`, every parameter with its dimension
and domain; not its file path), the discrete values (d, k, ...), the source text of the
modules that derive (``derive.py``, ``family.py``, ``symbols.py``), and the versions of
bhchem, sympy and Python.  Editing a family, upgrading sympy or changing the derivation
code therefore misses the cache; nothing stale is ever served.

A cache file holds the pickled :class:`~bhchem.core.derive.Derivation` without its
family (the live family object is attached on load) and the full key text, which is
compared on load.  Facts computed from a derivation alone (its symbolic first-law proof,
seconds of sympy in every new process) are kept the same way in ``note-*`` files
(:func:`load_note`, :func:`store_note`), keyed by the derivation's key, the fact's name and
the source text of the module that computes it.  A file that is unreadable, damaged or of
another key is ignored and rewritten.  Writes are atomic (temporary file, then rename), so
a reader never sees half a file.  The folder is ``$BHCHEM_CACHE_DIR``, else
``$XDG_CACHE_HOME/bhchem``, else ``~/.cache/bhchem``; ``BHCHEM_CACHE_DIR=off`` switches the
cache off.  It keeps at most :data:`MAX_ENTRIES` derivation files and as many note files
(the oldest are removed).  The cache only saves time: a folder that cannot be written is
skipped and the derivation is done in memory.
"""
from __future__ import annotations

import dataclasses
import hashlib
import os
import pickle
import platform
import tempfile
from pathlib import Path

import sympy as sp

from bhchem.version import __version__

#: most derivations kept on disk (each file is a few kB to a few hundred kB)
MAX_ENTRIES = 256
_FORMAT = 1
_DERIVING_MODULES = ("core/derive.py", "declare/family.py", "declare/symbols.py",
                     "declare/conditions.py", "core/implicit.py", "core/ensemble.py")
_PACKAGE_DIR = Path(__file__).resolve().parents[1]


def cache_dir() -> Path | None:
    """The cache folder, or None when the cache is switched off."""
    env = os.environ.get("BHCHEM_CACHE_DIR")
    if env is not None:
        return None if env.strip().lower() in ("", "off", "0", "none") else Path(env)
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "bhchem"


def _fingerprint(obj) -> str:
    """A text that changes whenever anything a derivation can depend on changes."""
    if isinstance(obj, sp.Basic):
        return sp.srepr(obj)
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        fields = [f"{f.name}={_fingerprint(getattr(obj, f.name))}"
                  for f in dataclasses.fields(obj) if f.name != "source"]
        return f"{type(obj).__name__}({', '.join(fields)})"
    if isinstance(obj, (list, tuple)):
        return "(" + ", ".join(_fingerprint(o) for o in obj) + ")"
    if isinstance(obj, dict):
        return "{" + ", ".join(f"{k!r}: {_fingerprint(v)}" for k, v in sorted(obj.items())) + "}"
    return repr(obj)


def _sources_fingerprint(modules) -> str:
    """SHA-256 over the source text of ``modules`` (paths relative to the package)."""
    h = hashlib.sha256()
    for rel in modules:
        try:
            h.update((_PACKAGE_DIR / rel).read_bytes())
        except OSError:  # pragma: no cover - an unusual install; key on the name only
            h.update(rel.encode())
    return h.hexdigest()


def _code_fingerprint() -> str:
    return _sources_fingerprint(_DERIVING_MODULES)


def cache_key(family, discrete: dict) -> str:
    """The full key text of a derivation of ``family`` at ``discrete`` values."""
    return "\n".join([
        f"format {_FORMAT}", f"bhchem {__version__}", f"sympy {sp.__version__}",
        f"python {platform.python_version()}", f"code {_code_fingerprint()}",
        f"discrete {sorted(discrete.items())!r}", f"family {_fingerprint(family)}"])


def _path(folder: Path, key: str, kind: str = "derivation") -> Path:
    return folder / f"{kind}-{hashlib.sha256(key.encode()).hexdigest()[:40]}.pickle"


def load(family, discrete: dict):
    """The cached derivation of ``family`` (with the live family attached), or None."""
    folder = cache_dir()
    if folder is None:
        return None
    key = cache_key(family, discrete)
    try:
        with open(_path(folder, key), "rb") as fh:
            stored = pickle.load(fh)
        if not isinstance(stored, dict) or stored.get("key") != key:
            return None
        return dataclasses.replace(stored["derivation"], family=family)
    except Exception:  # missing, damaged, written by another version: derive again
        return None


def store(derivation, discrete: dict) -> bool:
    """Write ``derivation`` to the cache atomically; False when it could not be written."""
    folder = cache_dir()
    if folder is None:
        return False
    key = cache_key(derivation.family, discrete)
    payload = {"key": key, "derivation": dataclasses.replace(derivation, family=None)}
    try:
        folder.mkdir(parents=True, exist_ok=True)
        data = pickle.dumps(payload, protocol=pickle.HIGHEST_PROTOCOL)
        fd, tmp = tempfile.mkstemp(prefix=".derivation-", suffix=".tmp", dir=folder)
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.replace(tmp, _path(folder, key))
        except BaseException:
            os.unlink(tmp)
            raise
        _prune(folder)
        return True
    except Exception:  # read-only home, full disk, an unpicklable expression: no cache
        return False


def _note_key(family, discrete: dict, topic: str, code: tuple) -> str:
    """The key text of a fact ``topic`` about the derivation of ``family`` at ``discrete``,
    computed by the modules ``code`` (paths relative to the package) besides the deriving
    ones."""
    return "\n".join([cache_key(family, dict(discrete)), f"note {topic}",
                      f"note code {_sources_fingerprint(code)}"])


def load_note(family, discrete: dict, topic: str, code: tuple = ()):
    """A fact stored by :func:`store_note` about the derivation of ``family`` at
    ``discrete`` (its first-law proof; that a closed form exceeded the size limits), or
    None.  The key covers everything a derivation's key covers plus the source text of the
    modules ``code`` (e.g. ``("core/checks.py",)``), so an edited check misses it."""
    folder = cache_dir()
    if folder is None or family is None:
        return None
    try:
        key = _note_key(family, discrete, topic, code)
        with open(_path(folder, key, "note"), "rb") as fh:
            stored = pickle.load(fh)
        if not isinstance(stored, dict) or stored.get("key") != key:
            return None
        return stored["note"]
    except Exception:  # missing, damaged, written by another version: compute again
        return None


def store_note(family, discrete: dict, topic: str, value, code: tuple = ()) -> bool:
    """Store a picklable fact about the derivation of ``family`` at ``discrete``
    (atomically, like a derivation); False when it could not be written."""
    folder = cache_dir()
    if folder is None or family is None:
        return False
    try:
        key = _note_key(family, discrete, topic, code)
        folder.mkdir(parents=True, exist_ok=True)
        data = pickle.dumps({"key": key, "note": value}, protocol=pickle.HIGHEST_PROTOCOL)
        fd, tmp = tempfile.mkstemp(prefix=".note-", suffix=".tmp", dir=folder)
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.replace(tmp, _path(folder, key, "note"))
        except BaseException:
            os.unlink(tmp)
            raise
        _prune(folder, "note")
        return True
    except Exception:  # read-only home, full disk: no note
        return False


def _prune(folder: Path, kind: str = "derivation") -> None:
    files = sorted(folder.glob(f"{kind}-*.pickle"), key=lambda p: p.stat().st_mtime)
    for old in files[: max(0, len(files) - MAX_ENTRIES)]:
        try:
            old.unlink()
        except OSError:  # pragma: no cover - removed by a concurrent run
            pass
