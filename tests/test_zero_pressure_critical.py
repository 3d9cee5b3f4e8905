"""A solution of the critical conditions at exactly P = 0 (regression: a ZeroDivisionError).

The toy family examples/families/haloed_rn_ads.toml (our own invention) has, with v = 2 r,

    T(r, P) = (1 + 8 pi P r^2 - Q^2/r^2 - 2 mu/r^3) / (4 pi r).

At P = 0 the critical conditions T_r = T_rr = 0 are (derived below with sympy)
-r^3 + 3 Q^2 r + 8 mu = 0 and r^3 - 6 Q^2 r - 20 mu = 0, whose sum gives r = -4 mu/Q^2 and then
mu = -Q^3/4, r = Q.  So at mu = -Q^3/4 one solution of the critical conditions sits exactly at
P = 0 (where the small branch is born); a scan over mu in [-0.3, -0.2] lands on it.  The fold
test stepped the pressure by relative amounts of P_c and divided by it.
"""
from __future__ import annotations

import math
from pathlib import Path

import mpmath as mp
import pytest
import sympy as sp

from bhchem import analyze_isobar, bind, find_critical_points, load_family_file
from bhchem.declare import registry

FAMILY = Path(__file__).resolve().parents[1] / "examples" / "families" / "haloed_rn_ads.toml"


@pytest.fixture(scope="module")
def th():
    with registry.registry_scope():
        (fam,) = load_family_file(FAMILY)
        yield bind(fam, Q=1.0, mu=-0.25)


def _T(r, P, Q=1, mu=-sp.Rational(1, 4)):
    return (1 + 8 * sp.pi * P * r**2 - Q**2 / r**2 - 2 * mu / r**3) / (4 * sp.pi * r)


def test_exact_zero_pressure_solution_from_sympy():
    r, Q = sp.symbols("r Q", positive=True)
    mu = sp.Symbol("mu", real=True)
    f = _T(r, 0, Q, mu)
    sol = sp.solve([sp.numer(sp.together(sp.diff(f, r))),
                    sp.numer(sp.together(sp.diff(f, r, 2)))], [r, mu], dict=True)
    assert {(s[r], s[mu]) for s in sol if s[r].is_positive} == {(Q, -Q**3 / 4)}


def test_critical_search_keeps_the_zero_pressure_solution(th):
    search = find_critical_points(th)  # raised ZeroDivisionError before the fix
    zero = [p for p in search.points if p.P == 0]
    assert len(zero) == 1
    (z,) = zero
    assert z.x == pytest.approx(1.0, rel=1e-12)
    assert z.T == pytest.approx(float(_T(sp.Integer(1), 0)), rel=1e-12)  # 1/(8 pi)
    assert not z.physical  # P > 0 is required
    # a loop of T(r) forms for P > 0 near r = 1: T_r = 2P - (r-1)^2 (r+2)/(4 pi r^5) has two
    # roots beside r = 1 for small P > 0 and none for P < 0 -- a 'standard' fold
    r = sp.symbols("r", positive=True)
    for P, n in ((1 / (8 * sp.pi * 10**4), 2), (-1 / (8 * sp.pi * 10**4), 0)):
        roots = sp.Poly(sp.numer(sp.together(sp.diff(_T(r, P), r))), r).real_roots()
        assert sum(1 for q in roots if 0.7 < q < 1.3) == n
    assert z.kind == "standard"
    # the physical one: P_c from the critical polynomial r^3 - 6 r + 5 = 0 (20 mu = -5),
    # i.e. r = (-1 + sqrt(21))/2, P_c from T_r = 0 there
    (cp,) = search.physical
    rc = (math.sqrt(21) - 1) / 2
    assert cp.x == pytest.approx(rc, rel=1e-12)
    Pc = float(sp.solve(sp.diff(_T(r, sp.Symbol("P")), r).subs(r, sp.nsimplify(rc)),
                        sp.Symbol("P"))[0])
    assert cp.P == pytest.approx(Pc, rel=1e-10)


def test_coexistence_at_mu_minus_quarter_is_maxwell(th):
    P = 0.0045  # between the terminal point (~0.00359) and P_c (~0.00512)
    res = analyze_isobar(th, P)
    (tr,) = [t for t in res.transitions if t.kind == "first-order"]
    a, b = tr.states
    assert abs(a.T - b.T) <= 1e-10 * tr.T and abs(a.G - b.G) <= 1e-10 * abs(a.G)
    # independent check with mpmath (30 digits): G = M - T S on both states from the
    # family's formulas, and Maxwell's equal area on the isotherm P(V) at T*, with the
    # thermodynamic volume V = dM/dP = 4 pi r^3/3 (dG = V dP on an isotherm; the P-v area
    # is not equal when v is not proportional to V)
    mp.mp.dps = 30
    M = lambda r: r / 2 * (1 + 8 * mp.pi * P * r**2 / 3 + 1 / r**2 - 0.25 / r**3)
    T = lambda r: (1 + 8 * mp.pi * P * r**2 - 1 / r**2 + 0.5 / r**3) / (4 * mp.pi * r)
    G = lambda r: M(r) - T(r) * mp.pi * r**2
    rs, rl = sorted((a.x, b.x))
    rs, rl = mp.findroot(lambda u, w: (T(u) - T(w), G(u) - G(w)), (rs, rl))
    assert float(rs) == pytest.approx(min(a.x, b.x), rel=1e-9)
    assert float(rl) == pytest.approx(max(a.x, b.x), rel=1e-9)
    Tstar = T(rs)
    assert float(Tstar) == pytest.approx(tr.T, rel=1e-11)
    Pr = lambda r: (4 * mp.pi * r * Tstar - 1 + 1 / r**2 - 0.5 / r**3) / (8 * mp.pi * r**2)
    dV = lambda r: 4 * mp.pi * r**2  # dV/dr
    area = mp.quad(lambda r: Pr(r) * dV(r), [rs, rl]) - P * 4 * mp.pi / 3 * (rl**3 - rs**3)
    assert abs(float(area)) <= 1e-9 * P * float(4 * mp.pi / 3 * (rl**3 - rs**3))
