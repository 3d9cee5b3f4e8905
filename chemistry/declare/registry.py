"""Where families come from: installed packages (entry-point group ``bhchem.families``,
through which the bundled ``bhchem.models`` are found too) and plug-in files given by the user.

A module contributes families through a module-level ``FAMILY`` (one
:class:`~bhchem.declare.family.Family`) or ``FAMILIES`` (a sequence of them).  An
entry point may name such a module or a Family object directly.  Two families
with one name are an error, wherever they come from.
"""
from __future__ import annotations

import contextlib
import dataclasses
import hashlib
import importlib
import importlib.util
import sys
import threading
import warnings
from importlib import metadata
from pathlib import Path

from bhchem.errors import (BhchemError, DuplicateFamilyError, FamilyFileReloaded,
                           MalformedFamilyError, UnknownFamilyError)
from bhchem.declare.family import Family
from bhchem.declare.declarative import load_declarative

ENTRY_POINT_GROUP = "bhchem.families"

_lock = threading.RLock()
_families: dict[str, Family] = {}
_origins: dict[str, str] = {}
_discovered = False
#: resolved path -> (SHA-256 of the content, the families it defined)
_loaded_files: dict[str, tuple] = {}


def _families_of(obj, origin: str) -> list[Family]:
    if isinstance(obj, Family):
        return [obj]
    fams = []
    if hasattr(obj, "FAMILY"):
        fams.append(obj.FAMILY)
    if hasattr(obj, "FAMILIES"):
        fams.extend(obj.FAMILIES)
    if not fams:
        raise MalformedFamilyError(
            f"{origin}: defines no family (expected a module-level FAMILY = Family(...))")
    for f in fams:
        if not isinstance(f, Family):
            raise MalformedFamilyError(
                f"{origin}: FAMILY must be a bhchem.Family, not {type(f).__name__}")
    return fams


def register(family: Family, origin: str = "API") -> Family:
    """Add a family; a second family with the same name raises DuplicateFamilyError."""
    with _lock:
        old = _families.get(family.name)
        if old is not None and old is not family:
            raise DuplicateFamilyError(
                f"family name {family.name!r} from {origin} is already taken by "
                f"{_origins[family.name]}; rename one of them")
        _families[family.name] = family
        _origins[family.name] = origin
    return family


def _with_source(fam: Family, source: str) -> Family:
    """The family with ``source`` filled in (a new frozen object; the original is untouched)."""
    return fam if fam.source else dataclasses.replace(fam, source=source)


def _load_entry_point(ep) -> None:
    """Register the families of one entry point (once: a module already loaded by an
    earlier lookup registers the same objects again, which is not a duplicate)."""
    origin = f"entry point {ep.name} ({ep.value})"
    try:
        obj = ep.load()
        fams = _families_of(obj, origin)
    except BhchemError:
        raise
    except Exception as exc:  # a broken third-party package: say which
        raise MalformedFamilyError(f"{origin} failed to load: {exc}") from None
    module = sys.modules.get(ep.value.split(":")[0])
    for fam in fams:
        live = _families.get(fam.name)
        if live is not None and _origins.get(fam.name) == origin:
            continue
        register(_with_source(fam, getattr(module, "__file__", "") or ep.value), origin)


def _discover() -> None:
    """Register every family of the entry-point group, bundled ones included.

    The bundled families are entry points of this distribution like any third-party
    package's (``[project.entry-points."bhchem.families"]`` in pyproject.toml), so the
    engine never imports its own data by name.
    """
    global _discovered
    with _lock:
        if _discovered:
            return
        for ep in sorted(_entry_points(), key=lambda e: (e.value, e.name)):
            _load_entry_point(ep)
        _discovered = True


def _entry_points():
    try:
        return list(metadata.entry_points(group=ENTRY_POINT_GROUP))
    except TypeError:  # pragma: no cover - Python < 3.10 API
        return list(metadata.entry_points().get(ENTRY_POINT_GROUP, []))


def available_families() -> dict[str, Family]:
    """All registered families by name (bundled, installed, loaded), sorted."""
    _discover()
    with _lock:
        return dict(sorted(_families.items()))


def get_family(name: str) -> Family:
    """The family called ``name``.

    Raises
    ------
    UnknownFamilyError
        Naming the known families.
    """
    with _lock:
        if name in _families:
            return _families[name]
        if not _discovered:
            # a cold command needs one family: load the entry point of that name first
            # (the bundled ones are named after their family); the full discovery, which
            # also reports duplicate names across packages, runs for anything else
            for ep in _entry_points():
                if ep.name == name and ep.value.startswith("bhchem.models."):
                    _load_entry_point(ep)
            if name in _families:
                return _families[name]
    fams = available_families()
    if name not in fams:
        raise UnknownFamilyError(
            f"unknown family {name!r}; known families: {', '.join(fams)} "
            f"(or load one with --family-file PATH)")
    return fams[name]


def load_family_file(path) -> list[Family]:
    """Load and register the families defined in a plug-in file.

    A ``.py`` file is a Python plug-in with the same API as the bundled modules
    (it is executed: load only files you trust).  Declarative ``.toml`` files are
    read by :mod:`bhchem.declare.declarative` with a safe parser of our own (no Python
    evaluation of their text).

    Raises
    ------
    MalformedFamilyError
        Naming the file and the fault.
    """
    p = Path(path)
    if not p.is_file():
        raise MalformedFamilyError(f"family file {path}: no such file")
    try:
        content = p.read_bytes()
    except OSError as exc:
        raise MalformedFamilyError(f"family file {path}: cannot be read ({exc.strerror})") from None
    digest = hashlib.sha256(content).hexdigest()
    _discover()
    key = str(p.resolve())
    with _lock:
        earlier = _loaded_files.get(key)
        if earlier is not None and earlier[0] == digest:   # the same file twice is one load
            return list(earlier[1])
        for other, (other_digest, other_fams) in _loaded_files.items():
            if other_digest == digest and other != key:      # an identical copy elsewhere
                return list(other_fams)
    if p.suffix == ".py":
        fams = _load_python(p, digest)
    elif p.suffix == ".toml":
        fams = load_declarative(p)
    else:
        raise MalformedFamilyError(
            f"family file {path}: expected a .py plug-in or a .toml declaration")
    fams = [dataclasses.replace(fam, source=str(p)) for fam in fams]
    with _lock:
        if earlier is not None:  # the file was edited since it was loaded: replace its families
            for old in earlier[1]:
                if _families.get(old.name) is old:
                    del _families[old.name]
                    _origins.pop(old.name, None)
            warnings.warn(f"family file {p} changed since it was loaded; reloaded "
                          f"{', '.join(f.name for f in fams)} from its new content",
                          FamilyFileReloaded, stacklevel=2)
        for fam in fams:
            register(fam, f"file {p}")
        _loaded_files[key] = (digest, list(fams))
    return fams


def _load_python(p: Path, digest: str) -> list[Family]:
    # one module name per content: an edited file is a new module, never a stale one
    modname = f"bhchem_plugin_{digest[:24]}"
    spec = importlib.util.spec_from_file_location(modname, p)
    if spec is None or spec.loader is None:
        raise MalformedFamilyError(f"family file {p}: cannot be imported")
    module = importlib.util.module_from_spec(spec)
    try:
        sys.modules[modname] = module
        # a plug-in's own prints go to stderr: stdout carries results (e.g. --json)
        with contextlib.redirect_stdout(sys.stderr):
            spec.loader.exec_module(module)
    except BhchemError as exc:
        sys.modules.pop(modname, None)
        raise MalformedFamilyError(f"family file {p}: {exc}") from None
    except SyntaxError as exc:
        sys.modules.pop(modname, None)
        raise MalformedFamilyError(
            f"family file {p}, line {exc.lineno}: syntax error: {exc.msg}") from None
    except SystemExit as exc:
        sys.modules.pop(modname, None)
        raise MalformedFamilyError(
            f"family file {p}: called sys.exit({exc.code}) while loading") from None
    except KeyboardInterrupt:
        sys.modules.pop(modname, None)
        raise
    except BaseException as exc:  # anything a plug-in can raise, BaseException subclasses too
        sys.modules.pop(modname, None)
        raise MalformedFamilyError(
            f"family file {p}: failed while loading: {type(exc).__name__}: {exc}") from None
    try:
        return _families_of(module, f"family file {p}")
    except MalformedFamilyError:
        raise


@contextlib.contextmanager
def registry_scope(*forget: str):
    """A block after which the registry is as it was before it.

    Families registered (or files loaded) inside the block are forgotten when it
    ends; the names in ``forget`` are also hidden inside the block.  For tests and
    notebooks that try out families under names that may be taken.

    Examples
    --------
    >>> from bhchem.declare import registry
    >>> with registry_scope():
    ...     _ = registry.available_families()
    """
    _discover()
    with _lock:
        saved = dict(_families), dict(_origins), dict(_loaded_files)
        for name in forget:
            _families.pop(name, None)
            _origins.pop(name, None)
        for path, (_, fams) in list(_loaded_files.items()):  # so that they load again
            if any(f.name in forget for f in fams):
                del _loaded_files[path]
    try:
        yield
    finally:
        with _lock:
            for live, old in zip((_families, _origins, _loaded_files), saved):
                live.clear()
                live.update(old)


def _reset_for_tests() -> None:
    """Forget every registered family (test helper)."""
    global _discovered
    with _lock:
        _families.clear()
        _origins.clear()
        _loaded_files.clear()
        _discovered = False
