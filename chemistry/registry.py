"""Where families come from: the bundled ``models`` package, installed packages
(entry-point group ``bhchem.families``) and plug-in files given by the user.

A module contributes families through a module-level ``FAMILY`` (one
:class:`~chemistry.family.Family`) or ``FAMILIES`` (a sequence of them).  An
entry point may name such a module or a Family object directly.  Two families
with one name are an error, wherever they come from.
"""
from __future__ import annotations

import importlib
import importlib.util
import pkgutil
import sys
import threading
from importlib import metadata
from pathlib import Path

from .errors import (BhchemError, DuplicateFamilyError, MalformedFamilyError,
                     UnknownFamilyError)
from .family import Family

ENTRY_POINT_GROUP = "bhchem.families"

_lock = threading.RLock()
_families: dict[str, Family] = {}
_origins: dict[str, str] = {}
_discovered = False
_loaded_files: dict[str, list] = {}


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
                f"{origin}: FAMILY must be a chemistry.Family, not {type(f).__name__}")
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


def _discover() -> None:
    global _discovered
    with _lock:
        if _discovered:
            return
        import models
        for info in sorted(pkgutil.iter_modules(models.__path__), key=lambda i: i.name):
            if info.name.startswith("_"):
                continue
            module = importlib.import_module(f"models.{info.name}")
            for fam in _families_of(module, f"bundled module models/{info.name}.py"):
                if not fam.source:
                    object.__setattr__(fam, "source", getattr(module, "__file__", ""))
                register(fam, f"bundled module models/{info.name}.py")
        for ep in _entry_points():
            try:
                obj = ep.load()
                fams = _families_of(obj, f"entry point {ep.name} ({ep.value})")
            except BhchemError:
                raise
            except Exception as exc:  # a broken third-party package: say which
                raise MalformedFamilyError(
                    f"entry point {ep.name} ({ep.value}) failed to load: {exc}") from None
            for fam in fams:
                if not fam.source:
                    mod = __import__("sys").modules.get(ep.value.split(":")[0])
                    object.__setattr__(fam, "source", getattr(mod, "__file__", "") or ep.value)
                register(fam, f"entry point {ep.name} ({ep.value})")
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
    read by :mod:`chemistry.declarative` with a safe parser of our own (no Python
    evaluation of their text).

    Raises
    ------
    MalformedFamilyError
        Naming the file and the fault.
    """
    p = Path(path)
    if not p.is_file():
        raise MalformedFamilyError(f"family file {path}: no such file")
    _discover()
    key = str(p.resolve())
    with _lock:
        if key in _loaded_files:  # the same file twice is one load
            return list(_loaded_files[key])
    if p.suffix == ".py":
        fams = _load_python(p)
    elif p.suffix == ".toml":
        try:
            from .declarative import load_declarative
        except ImportError:
            raise MalformedFamilyError(
                f"family file {path}: declarative .toml families are not supported by this "
                f"version; write a Python plug-in (.py) instead") from None
        fams = load_declarative(p)
    else:
        raise MalformedFamilyError(
            f"family file {path}: expected a .py plug-in or a .toml declaration")
    for fam in fams:
        object.__setattr__(fam, "source", str(p))
        register(fam, f"file {p}")
    with _lock:
        _loaded_files[key] = list(fams)
    return fams


def _load_python(p: Path) -> list[Family]:
    modname = f"bhchem_plugin_{abs(hash(str(p.resolve())))}"
    spec = importlib.util.spec_from_file_location(modname, p)
    if spec is None or spec.loader is None:
        raise MalformedFamilyError(f"family file {p}: cannot be imported")
    module = importlib.util.module_from_spec(spec)
    try:
        sys.modules[modname] = module
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
    except Exception as exc:
        sys.modules.pop(modname, None)
        raise MalformedFamilyError(
            f"family file {p}: failed while loading: {type(exc).__name__}: {exc}") from None
    try:
        return _families_of(module, f"family file {p}")
    except MalformedFamilyError:
        raise


def _reset_for_tests() -> None:
    """Forget every registered family (test helper)."""
    global _discovered
    with _lock:
        _families.clear()
        _origins.clear()
        _loaded_files.clear()
        _discovered = False
