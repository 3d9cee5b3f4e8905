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


def test_declared_domains_become_assumptions_of_the_derivation(monkeypatch):
    """Issue 21 item 6: a parameter declared >= 0 is nonnegative in the derivation, so
    sqrt(g**2) is g, not Abs(g) (such terms appear when a metric is solved for the mass).
    A toy family (invented for this test) with M = r/2 (1 + 8 pi P r^2/3 + sqrt(g^2)^3/r^3):
    Phi_g and C_P carry no Abs, are shorter, and equal the real-domain derivation
    numerically; the stored expressions keep the canonical (real) symbols."""
    import numpy as np

    from bhchem import Domain, Family, Parameter, bind
    from bhchem.declare.symbols import P, parameter_symbol, pi, r
    monkeypatch.setenv("BHCHEM_CACHE_DIR", "off")
    g = parameter_symbol("g")

    def toy(domain, name):
        return Family(name=name, summary="toy", reference="invented for this test", dimension=4,
                      parameters=(Parameter("g", 0.5, length_dimension=1, domain=domain),),
                      enthalpy=r / 2 * (1 + 8 * pi * P * r**2 / 3 + sp.sqrt(g**2)**3 / r**3),
                      entropy=pi * r**2)

    th, th_real = bind(toy(Domain.nonnegative(), "toy-nonneg")), bind(toy(Domain.real(), "toy-real"))
    for name in ("Phi_g", "C_P"):
        e, e_real = th.derivation.quantities[name], th_real.derivation.quantities[name]
        assert not e.has(sp.Abs) and e_real.has(sp.Abs), name
        assert sp.count_ops(e) < sp.count_ops(e_real), name
        x = np.array([1.5, 3.0, 7.0])
        a, b = th.quantity(name, x, 0.001), th_real.quantity(name, x, 0.001)
        assert np.allclose(a, b, rtol=1e-12, atol=0), name
    assert th.derivation.parameters == (g,)      # the canonical (real) symbol, as before


def test_the_first_law_proof_is_kept_next_to_the_derivation(tmp_path, monkeypatch):
    """A new process (here: a fresh copy of the family, missing the in-memory caches) reads
    the symbolic first-law proof from the cache folder instead of redoing it; the note is
    keyed like the derivation, so an edited family misses it; a damaged note is recomputed."""
    from bhchem.core import checks
    monkeypatch.setenv("BHCHEM_CACHE_DIR", str(tmp_path))
    fam = get_family("rn-ads")
    first = derive(dataclasses.replace(fam))
    assert derivation_cache.load_note(first.family, first.discrete, "first-law-proved", ("core/checks.py",)) is None
    assert checks.first_law_proved(first) is True
    (note,) = [p for p in os.listdir(tmp_path) if p.startswith("note-")]
    again = derive(dataclasses.replace(fam))            # a new object: memory caches miss
    assert derivation_cache.load_note(again.family, again.discrete, "first-law-proved", ("core/checks.py",)) is True
    edited = derive(dataclasses.replace(fam, entropy=fam.entropy * 2))
    assert derivation_cache.load_note(edited.family, edited.discrete, "first-law-proved", ("core/checks.py",)) is None
    assert derivation_cache.load_note(again.family, again.discrete, "first-law-proved", ("core/derive.py",)) is None
    (tmp_path / note).write_bytes(b"not a pickle")
    assert derivation_cache.load_note(again.family, again.discrete, "first-law-proved", ("core/checks.py",)) is None
    assert checks.first_law_proved(derive(dataclasses.replace(fam))) is True   # recomputed
