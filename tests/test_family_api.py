"""Declaration API, domains, registry and plug-in files."""
import dataclasses
import math
import textwrap

import numpy as np
import pytest
import sympy as sp

from bhchem import (Domain, DuplicateFamilyError, Family, MalformedFamilyError, Parameter,
                       UnknownFamilyError, bind)
from bhchem.declare import registry
from bhchem.declare.symbols import P, parameter_symbol, pi, r

Q = parameter_symbol("Q")
_M = r / 2 * (1 + 8 * pi * P * r**2 / 3 + Q**2 / r**2)


def _family(**over):
    kw = dict(name="test-family", summary="s", reference="ref",
              parameters=(Parameter("Q", 1.0, 1, Domain.nonnegative()),),
              enthalpy=_M, entropy=pi * r**2)
    kw.update(over)
    return Family(**kw)


# -- domains -------------------------------------------------------------------
def test_domain_contains_and_describe():
    assert Domain.nonnegative().contains(0.0) and not Domain.nonnegative().contains(-1e-300)
    assert not Domain.positive().contains(0.0)
    assert Domain.integers(4).contains(4) and not Domain.integers(4).contains(4.5)
    assert not Domain.integers(4).contains(3)
    assert Domain.one_of(1, 0, -1).contains(-1) and not Domain.one_of(1, 0, -1).contains(2)
    for bad in (math.nan, math.inf, -math.inf, "x", None):
        assert not Domain.real().contains(bad)
    assert Domain.nonnegative().describe("Q") == "Q >= 0"
    assert Domain.integers(5).describe("d") == "d >= 5, integer"
    assert Domain.one_of(1, 0, -1).describe("k") == "k in {1, 0, -1}"
    assert Domain.interval(0, 1, closed="lower").describe("a") == "0 <= a < 1"


# -- malformed declarations ----------------------------------------------------------
@pytest.mark.parametrize("over, match", [
    (dict(entropy=None), "entropy S is missing"),
    (dict(enthalpy=None, entropy=None), "enthalpy M and the entropy S are missing"),
    (dict(enthalpy=_M + sp.Symbol("zeta") * r), "undeclared symbol.*zeta"),
    (dict(name="Bad Name"), "kebab-case"),
    (dict(summary=""), "summary"),
    (dict(reference=""), "reference"),
    (dict(parameters=(Parameter("Q", -1.0, 1, Domain.nonnegative()),)), "outside its domain"),
    (dict(parameters=(Parameter("Q", 1.0, 1), Parameter("Q", 2.0, 1))), "declared twice"),
    (dict(parameters=(Parameter("T", 1.0, 1),)), "reserved"),
    (dict(parameters=(Parameter("Q", 1.0, sp.Symbol("x")),)), "may only depend on d"),
    (dict(dimension=2), "dimension"),
    (dict(dimension=4.5), "dimension"),
    (dict(enthalpy="not an expression"), "not a sympy expression|undeclared"),
    (dict(conditions=(r + 1,)), "must be a relation"),
])
def test_malformed_family_is_refused(over, match):
    with pytest.raises(MalformedFamilyError, match=match):
        _family(**over)


def test_entropy_without_state_dependence_is_refused():
    fam = _family(entropy=sp.Integer(3))
    with pytest.raises(MalformedFamilyError, match="does not depend on the state variable"):
        bind(fam)


def test_symbols_canonicalised_by_name():
    """A plug-in author's own symbols (other assumptions) are the engine's symbols."""
    rr, PP, QQ = sp.symbols("r P Q")
    fam = _family(name="own-symbols", enthalpy=rr / 2 * (1 + 8 * sp.pi * PP * rr**2 / 3
                                                          + QQ**2 / rr**2),
                  entropy=sp.pi * rr**2)
    th = bind(fam, Q=1.0)
    ref = bind(_family(name="ref-symbols"), Q=1.0)
    assert float(th.T(1.3, 0.01)) == pytest.approx(float(ref.T(1.3, 0.01)), rel=1e-15)


def test_constant_quantity_broadcasts():
    th = bind("schwarzschild-ads")
    out = th.quantity("G_background", np.ones((3, 2)), 0.1)
    assert out.shape == (3, 2) and np.all(out == 0)


# -- registry ----------------------------------------------------------------------
def test_bundled_families_discovered():
    names = registry.available_families()
    assert {"rn-ads", "schwarzschild-ads", "vdw-fluid"} <= set(names)


def test_unknown_family_lists_known():
    with pytest.raises(UnknownFamilyError, match="known families: .*rn-ads"):
        registry.get_family("no-such-family")


def test_duplicate_name_is_an_error():
    fam = _family(name="rn-ads")
    with pytest.raises(DuplicateFamilyError, match="already taken"):
        registry.register(fam, "test")


def test_python_plugin_file(tmp_path):
    path = tmp_path / "my_family.py"
    path.write_text(textwrap.dedent("""
        from bhchem import Domain, Family, Parameter
        from bhchem.declare.symbols import P, parameter_symbol, pi, r
        eta = parameter_symbol("eta")
        FAMILY = Family(name="plugin-test-family", summary="a plug-in", reference="none",
                        parameters=(Parameter("eta", 0.1, 2, Domain.nonnegative()),),
                        enthalpy=r / 2 * (1 + 8 * pi * P * r**2 / 3) + eta / r,
                        entropy=pi * r**2)
    """))
    fams = registry.load_family_file(path)
    assert [f.name for f in fams] == ["plugin-test-family"]
    assert registry.get_family("plugin-test-family").source == str(path)
    assert registry.load_family_file(path) == fams  # loading twice is idempotent


@pytest.mark.parametrize("content, match", [
    ("x = (", "line 1: syntax error"),
    ("x = 1", "defines no family"),
    ("FAMILY = 3", "must be a bhchem.Family"),
    ("raise RuntimeError('boom')", "failed while loading: RuntimeError: boom"),
    ("from bhchem import Family\nFAMILY = Family(name='x y', summary='s', reference='r')",
     "kebab-case"),
])
def test_bad_plugin_files(tmp_path, content, match):
    path = tmp_path / "bad_family.py"
    path.write_text(content)
    with pytest.raises(MalformedFamilyError, match=match) as info:
        registry.load_family_file(path)
    assert str(path) in str(info.value)


def test_missing_and_unsupported_files(tmp_path):
    with pytest.raises(MalformedFamilyError, match="no such file"):
        registry.load_family_file(tmp_path / "absent.py")
    other = tmp_path / "family.txt"
    other.write_text("hello")
    with pytest.raises(MalformedFamilyError, match="expected a .py plug-in or a .toml"):
        registry.load_family_file(other)


def test_entry_point_families(monkeypatch):
    """An installed package adds families through the 'bhchem.families' entry-point group."""
    fam = _family(name="entry-point-family")

    class FakeEntryPoint:
        name, value = "demo", "demo_pkg:FAMILY"

        def load(self):
            return fam

    installed = registry._entry_points()
    monkeypatch.setattr(registry, "_entry_points", lambda: [FakeEntryPoint(), *installed])
    monkeypatch.setattr(registry, "_families", {})
    monkeypatch.setattr(registry, "_origins", {})
    monkeypatch.setattr(registry, "_discovered", False)
    got = registry.get_family("entry-point-family")
    assert got == dataclasses.replace(fam, source="demo_pkg:FAMILY")  # source filled in a copy
    assert fam.source == ""                                           # the declaration untouched
    # the bundled families come through the same entry-point group
    assert "rn-ads" in registry.available_families()
    assert all(ep.value.startswith("bhchem.models.") for ep in installed
               if ep.name in registry.available_families() and ep.name != "demo")


_PLUGIN = '''
from bhchem.declare import Family, Parameter
from bhchem.declare.symbols import P, parameter_symbol, pi, r
Q = parameter_symbol("Q")
FAMILY = Family(name="edited-plugin", summary="s", reference="test", dimension=4,
                parameters=(Parameter("Q", 1.0, length_dimension=1),),
                enthalpy=r / 2 * (1 + 8 * pi * P * r**2 / 3 + FACTOR * Q**2 / r**2),
                entropy=pi * r**2)
'''


def test_an_edited_plugin_is_reloaded_and_says_so(tmp_path):
    """Editing a plug-in between loads takes effect (keyed by content), with a warning."""
    from bhchem.errors import FamilyFileReloaded
    path = tmp_path / "edited.py"
    with registry.registry_scope():
        path.write_text(_PLUGIN.replace("FACTOR", "1"))
        (first,) = registry.load_family_file(path)
        assert registry.load_family_file(path) == [first]          # unchanged: one load
        path.write_text(_PLUGIN.replace("FACTOR", "2"))
        with pytest.warns(FamilyFileReloaded, match="changed since it was loaded"):
            (second,) = registry.load_family_file(path)
        assert second is not first
        assert registry.get_family("edited-plugin") is second
        # the new content is what gets derived: Phi_Q doubles with the factor 2
        th1, th2 = bind(first), bind(second)
        assert abs(th2.potential("Q", 2.0, 0.01) / th1.potential("Q", 2.0, 0.01) - 2) < 1e-14


def test_an_identical_copy_under_another_name_is_the_same_family(tmp_path):
    with registry.registry_scope():
        a, b = tmp_path / "a.py", tmp_path / "b.py"
        a.write_text(_PLUGIN.replace("FACTOR", "1"))
        b.write_text(_PLUGIN.replace("FACTOR", "1"))
        first = registry.load_family_file(a)
        assert registry.load_family_file(b) == first           # no DuplicateFamilyError
        b.write_text(_PLUGIN.replace("FACTOR", "3"))   # a different family under a taken name
        with pytest.raises(DuplicateFamilyError):
            registry.load_family_file(b)
