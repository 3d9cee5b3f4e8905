"""The on-disk derivation cache: same results, never stale, damage-tolerant, bounded."""
import dataclasses
import os
import subprocess
import sys

import sympy as sp

from bhchem import get_family
from bhchem.core import derivation_cache
from bhchem.core.derive import derive


def _files(folder):
    return sorted(p for p in os.listdir(folder) if p.startswith("derivation-"))


def test_a_cached_derivation_equals_a_fresh_one(tmp_path, monkeypatch):
    monkeypatch.setenv("BHCHEM_CACHE_DIR", str(tmp_path))
    fam = get_family("born-infeld-ads")
    # a copy of the family: not in the in-memory cache, same content, so the disk key matches
    copy = dataclasses.replace(fam)
    fresh = derive(copy)
    assert len(_files(tmp_path)) == 1
    loaded = derivation_cache.load(copy, dict(fresh.discrete))
    assert loaded is not None and loaded.family is copy
    for name, expr in fresh.quantities.items():
        assert sp.srepr(loaded.quantities[name]) == sp.srepr(expr), name
    assert loaded.eos == fresh.eos and loaded.conditions == fresh.conditions


def test_a_changed_family_misses_the_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("BHCHEM_CACHE_DIR", str(tmp_path))
    fam = get_family("rn-ads")
    derive(dataclasses.replace(fam))
    edited = dataclasses.replace(fam, entropy=fam.entropy * 2)   # a different family content
    assert derivation_cache.load(edited, {"d": 4}) is None
    assert derivation_cache.cache_key(fam, {"d": 4}) != derivation_cache.cache_key(edited, {"d": 4})
    assert derivation_cache.cache_key(fam, {"d": 4}) != derivation_cache.cache_key(fam, {"d": 5})


def test_a_damaged_cache_file_is_ignored_and_rewritten(tmp_path, monkeypatch):
    monkeypatch.setenv("BHCHEM_CACHE_DIR", str(tmp_path))
    fam = dataclasses.replace(get_family("rn-ads"))
    first = derive(fam)
    (name,) = _files(tmp_path)
    for junk in (b"", b"not a pickle", b"\x80\x05garbage"):
        (tmp_path / name).write_bytes(junk)
        again = derive(dataclasses.replace(fam))  # a new object: memory cache misses
        assert sp.srepr(again.quantities["T"]) == sp.srepr(first.quantities["T"])
        assert derivation_cache.load(fam, dict(first.discrete)) is not None  # rewritten


def test_off_switch_and_unwritable_folder(tmp_path, monkeypatch):
    monkeypatch.setenv("BHCHEM_CACHE_DIR", "off")
    assert derivation_cache.cache_dir() is None
    derive(dataclasses.replace(get_family("rn-ads")))
    blocked = tmp_path / "a-file"
    blocked.write_text("x")
    monkeypatch.setenv("BHCHEM_CACHE_DIR", str(blocked / "sub"))  # cannot be created
    d = derive(dataclasses.replace(get_family("rn-ads")))         # derives in memory anyway
    assert d.quantities["T"] is not None


def test_the_cache_is_bounded(tmp_path, monkeypatch):
    monkeypatch.setenv("BHCHEM_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(derivation_cache, "MAX_ENTRIES", 2)
    fam = get_family("rn-ads")
    for d in (4, 5, 6, 7):
        derive(dataclasses.replace(fam), d=d)
    assert len(_files(tmp_path)) == 2


def test_the_cli_fills_and_uses_the_cache(tmp_path):
    env = {**os.environ, "BHCHEM_CACHE_DIR": str(tmp_path)}
    cmd = [sys.executable, "-m", "bhchem", "show", "rn-ads", "-p", "Q=1", "--json"]
    first = subprocess.run(cmd, env=env, capture_output=True, text=True, check=True).stdout
    assert len(_files(tmp_path)) == 1
    second = subprocess.run(cmd, env=env, capture_output=True, text=True, check=True).stdout
    assert first == second
