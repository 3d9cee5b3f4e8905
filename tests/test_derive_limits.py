"""Counted bounds on the derivation (issue 22 item 13): sizes are estimated before sympy
expands or cancels, and a step above a limit is refused in one line, never timed."""
import dataclasses
import os
import importlib
import math
from pathlib import Path

import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from bhchem import Family, Parameter
from bhchem.declare import registry
from bhchem.declare.declarative import load_declarative
from bhchem.errors import MalformedFamilyError
from bhchem.declare.expression_parser import operation_limit
from bhchem.declare.symbols import P, parameter_symbol, r

# the derivation module (``bhchem.derive`` is the function of the same name)
dv = importlib.import_module("bhchem.core.derive")

ROOT = Path(__file__).resolve().parents[1]
Q = parameter_symbol("Q")
a = parameter_symbol("a")
#: a generous count for refusing a too-large derivation: the estimates cost a few
#: thousand operations; before the fix, sympy.cancel ran for minutes (billions)
REFUSAL_BUDGET = 5_000_000


def toy(enthalpy, entropy=sp.pi * r**2):
    """A fresh 4D family (a new object: derive() caches per family object)."""
    return Family(name="toy", summary="toy", reference="none (a test of the limits)",
                  dimension=4,
                  parameters=(Parameter("Q", 1.0, length_dimension=1),
                              Parameter("a", 1.0, length_dimension=1)),
                  enthalpy=enthalpy, entropy=entropy)


# -- the estimate: exact combinatorics ------------------------------------------------------
@pytest.mark.parametrize("t, n", [(1, 50), (2, 0), (2, 1), (2, 64), (3, 2), (3, 4), (4, 6),
                                  (5, 3)])
def test_multinomial_term_count_is_the_number_of_monomials(t, n):
    """#(x_1 + ... + x_t)^n = C(t + n - 1, n): exponent vectors summing to n ("stars and
    bars", derived here); with positive coefficients no term cancels, so sympy's expansion
    has exactly that many terms."""
    xs = sp.symbols(f"x0:{t}")
    expected = math.comb(t + n - 1, n)
    assert dv.multinomial_terms(t, n) == expected
    if n <= 6:
        assert len(sp.Add.make_args(sp.expand(sum(xs) ** n))) == expected
    if t == 2:
        assert expected == n + 1  # binomial theorem


def test_multinomial_count_is_capped_not_computed_huge():
    assert dv.multinomial_terms(10**6, 10**6) == 10**30  # the cap, from lgamma first


def test_estimate_is_exact_for_a_generic_power_and_spreads_ignore_monomial_factors():
    x, y, z = sp.symbols("x y z")
    est = dv.estimate_expansion((x + y + z) ** 4)
    assert (est.numerator_terms, est.denominator_terms) == (15, 1)  # C(6, 4), exact
    assert dict(est.degrees) == {x: 4, y: 4, z: 4}
    # r^3 (1 + r)^2 has exponents 3..5 of r: spread 2 (a gcd removes r^3 first)
    assert dv.estimate_expansion(r**3 * (1 + r) ** 2).degrees[r] == 2
    # a common denominator takes each factor once, at its highest power:
    # 1/r^2 + 1/r^4 = (r^2 + 1)/r^4
    est = dv.estimate_expansion(1 / r**2 + 1 / r**4)
    assert (est.numerator_terms, est.denominator_terms) == (2, 1)


_atoms = st.sampled_from([r, P, Q, a, sp.Integer(2), sp.Rational(1, 3)])


def _grow(children):
    return st.one_of(
        st.tuples(children, children).map(lambda t: t[0] + t[1]),
        st.tuples(children, children).map(lambda t: t[0] * t[1]),
        st.tuples(children, st.integers(-3, 3)).map(lambda t: t[0] ** t[1]),
    )


@settings(max_examples=40, deadline=None)
@given(st.recursive(_atoms, _grow, max_leaves=8))
def test_estimate_bounds_the_real_expansion(expr):
    """The estimate is an upper bound on sympy's own result: terms of the expanded
    numerator and denominator of together(expr), and every degree spread."""
    est = dv.estimate_expansion(expr)
    num, den = sp.fraction(sp.together(expr))
    num, den = sp.expand(num), sp.expand(den)
    assert len(sp.Add.make_args(num)) <= est.numerator_terms
    assert len(sp.Add.make_args(den)) <= est.denominator_terms
    for part in (num, den):
        for g in part.free_symbols:
            exps = [sp.degree(t, g) for t in sp.Add.make_args(part)]
            assert max(exps) - min(exps) <= est.degrees.get(g, 0), (expr, g)


# -- refusals --------------------------------------------------------------------------------
def test_issue_22_formula_is_refused_before_expanding():
    """Issue 22 item 13: M = (r+Q)^64 + (r+P)^64 passed every parser limit and then ran
    for more than 120 s inside sympy.cancel.  Now T = M_r/S_r is refused at once: its
    coefficients in r have degree 63 in both P and Q (126 > MAX_COEFFICIENT_DEGREE)."""
    fam = toy((r + Q) ** 64 + (r + P) ** 64)
    with operation_limit(REFUSAL_BUDGET, "the derivation") as meter:
        with pytest.raises(dv.DerivationTooLarge) as info:
            dv.derive(fam)
    msg = str(info.value)
    assert "\n" not in msg
    assert msg.startswith("family toy: T = (dM/dS)_P would be a polynomial in r whose "
                          "coefficients reach total degree 126 in the other variables"), msg
    assert "above the limit of 32 (MAX_COEFFICIENT_DEGREE)" in msg
    assert msg.endswith("simplify the formula by hand (fewer terms, lower powers of sums, "
                        "fewer variables in them)")
    assert meter.count < REFUSAL_BUDGET
    assert isinstance(info.value, MalformedFamilyError)  # the CLI: one line, exit code 2


@pytest.mark.parametrize("enthalpy, limit", [
    ((r + Q) ** 128, "MAX_EXPANDED_DEGREE"),      # degree 127 in r and Q
    (((r + Q) * (r + a) * (r + P) * (r + 1) * (r + 2)) ** 3, "MAX_EXPANDED_TERMS"),  # 4^5 terms
    ((r + Q) ** 16 + (r + P) ** 16, "MAX_COEFFICIENT_DEGREE"),
])
def test_other_blowups_are_refused_by_count(enthalpy, limit):
    with operation_limit(REFUSAL_BUDGET, "the derivation"):
        with pytest.raises(dv.DerivationTooLarge, match=rf"^family toy: .*\({limit}\); "
                                                          r"simplify the formula by hand"):
            dv.derive(toy(enthalpy))


def test_node_limit_after_each_step(monkeypatch):
    monkeypatch.setattr(dv, "MAX_DERIVED_NODES", 12)
    fam = toy(r / 2 * (1 + 8 * sp.pi * P * r**2 / 3 + Q**2 / r**2))
    with pytest.raises(dv.DerivationTooLarge, match=r"more than 12 distinct sub-expressions "
                                                    r"\(MAX_DERIVED_NODES\)"):
        dv.derive(fam)


def test_a_file_at_a_very_high_dimension_is_refused_by_degree():
    """A file may declare d up to 1000; rn-ads as a file at d = 60 needs degree 114 in r
    (r^(2(d-3)) in T), above MAX_EXPANDED_DEGREE = 80 (measured before the fix: 13 s at
    d = 60, 67 s at d = 100, 3 s at d = 40)."""
    [fam] = load_declarative(ROOT / "examples" / "families" / "rn_ads_declarative.toml")
    with operation_limit(REFUSAL_BUDGET, "the derivation"):
        with pytest.raises(dv.DerivationTooLarge, match=r"^family rn-ads-file at d = 60: T = "
                                                          r"\(dM/dS\)_P would reach degree 11\d "
                                                          r"in r .*MAX_EXPANDED_DEGREE"):
            dv.derive(fam, d=60)


# -- what must still derive ------------------------------------------------------------------
def _largest_estimates(fam, **discrete):
    """Derive a fresh copy of ``fam`` (derive() caches per object) and return its largest
    estimates: (terms, degree, coefficient degree)."""
    seen = []
    original = dv.check_expansion

    def spy(expr, what):
        est = original(expr, what)
        seen.append(est)
        return est

    dv.check_expansion = spy
    saved = os.environ.get("BHCHEM_CACHE_DIR")
    os.environ["BHCHEM_CACHE_DIR"] = "off"   # derive for real, not from the on-disk cache
    try:
        der = dv.derive(dataclasses.replace(fam), **discrete)
    finally:
        dv.check_expansion = original
        if saved is None:
            os.environ.pop("BHCHEM_CACHE_DIR", None)
        else:
            os.environ["BHCHEM_CACHE_DIR"] = saved
    assert der.quantities["T"] is not None and seen
    return (max(e.terms for e in seen), max(e.degree for e in seen),
            max(e.coefficient_degree for e in seen))


@pytest.mark.parametrize("name, discrete", [
    ("lovelock3-ads", {"d": 26, "k": 1}),   # the largest degree (60) and term count (261)
    ("gauss-bonnet-ads", {"d": 26, "k": -1}),
    ("rn-ads", {"d": 26}),
    ("kerr-newman-ads", {}),                 # the largest coefficient degree (14)
    ("born-infeld-ads", {}),
    ("vdw-fluid", {}),
])
def test_bundled_families_derive_within_the_limits(name, discrete):
    """Common practice (regression): every bundled family, at the most demanding values of
    its structural parameters, derived before the limits existed and still does, with
    room to spare (at most 3/4 of each limit)."""
    terms, degree, coefficient_degree = _largest_estimates(registry.get_family(name),
                                                           **discrete)
    assert terms <= dv.MAX_EXPANDED_TERMS * 3 // 4
    assert degree <= dv.MAX_EXPANDED_DEGREE * 3 // 4
    assert coefficient_degree <= dv.MAX_COEFFICIENT_DEGREE * 3 // 4


@pytest.mark.parametrize("path", sorted((ROOT / "examples" / "families").glob("*.toml")),
                         ids=lambda p: p.name)
def test_example_files_derive_within_the_limits(path):
    """Common practice (regression): the example files derive, well inside the limits (a
    third of each; the Bardeen file with the first-law entropy, whose S involves the
    charge-like g in nested powers, has coefficient degree 9 of 32)."""
    [fam] = load_declarative(path)
    terms, degree, coefficient_degree = _largest_estimates(fam)
    assert terms <= dv.MAX_EXPANDED_TERMS // 3
    assert degree <= dv.MAX_EXPANDED_DEGREE // 3
    assert coefficient_degree <= dv.MAX_COEFFICIENT_DEGREE // 3
