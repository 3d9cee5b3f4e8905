"""States whose charge the numerical inverse of a fixed potential cannot give are reported.

The certified inverse (bhchem.core.implicit) returns NaN where no charge in its domain gives
the potential or several do; the analyses now carry one warning with the count.

Exact facts used, derived here:

* F = (u - u^2/2) exp(-u) - phi with u = q/r (the toy of
  tests/test_ensembles.py::test_a_potential_that_is_not_invertible_is_refused): its maximum
  over u >= 0 is at u* = 2 - sqrt 2 (sympy below), so phi below the maximum has two roots
  at every r and phi above it none;
* a toy family of our own invention with M = r/2 (1 + 8 pi P r^2/3) - r^2 exp(-q/r),
  S = pi r^2: Phi_q = dM/dq = r exp(-q/r) (not algebraic in q: the numerical inverse), so at
  fixed Phi the charge is q = r log(r/Phi) >= 0 for r >= Phi and no state exists for r < Phi;
  there T = (dM/dr)_q / (2 pi r) = (1/2 + 4 pi P r^2 - 2 Phi - Phi log(r/Phi)) / (2 pi r).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp

from bhchem import analyze_isobar, bind
from bhchem.core.implicit import (UNSOLVED_PREFIX, counting, diagnostics, implicit_root,
                                  unsolved_warning)
from bhchem.declare.symbols import parameter_symbol


def test_counting_matches_the_exact_number_of_roots():
    r, q, phi = sp.symbols("r q phi", positive=True)
    u = sp.Symbol("u", nonnegative=True)
    g = (u - u**2 / 2) * sp.exp(-u)
    (u_star,) = [s for s in sp.solve(sp.diff(g, u), u) if s.is_positive and s < 1]
    assert sp.simplify(u_star - (2 - sp.sqrt(2))) == 0
    g_max = float(g.subs(u, u_star))  # 0.2306...
    f = implicit_root((q / r - q**2 / (2 * r**2)) * sp.exp(-q / r) - phi, q, (r, phi),
                      lower=0.0, name="toy_two_roots")
    # the roots q = r u1, r u2 must lie in different cells of the isolation grid (+-16^k:
    # a pair inside one cell changes no sign there and is not seen, see the module
    # docstring of bhchem.core.implicit): put a grid point 16^k between them
    u1, u2 = sorted(float(sp.nsolve(g - 0.5 * g_max, u, u0)) for u0 in (0.1, 1.5))
    rs = 16.0 ** np.array([-1, 0, 1]) / math.sqrt(u1 * u2)
    before = diagnostics()
    with counting() as outer:
        with counting() as c_low:
            low = f._imp_(rs, 0.5 * g_max)       # two roots at every r
        with counting() as c_high:
            high = f._imp_(rs, 1.5 * g_max)      # none
        again = f._imp_(rs, 0.5 * g_max)         # remembered: counted again
    assert np.all(np.isnan(low)) and np.all(np.isnan(high)) and np.all(np.isnan(again))
    assert c_low == {"no_root": 0, "not_unique": 3, "not_converged": 0}
    assert c_high == {"no_root": 3, "not_unique": 0, "not_converged": 0}
    assert outer == {"no_root": 3, "not_unique": 6, "not_converged": 0}
    after = diagnostics()  # the global tally is unchanged in meaning (fresh solves only)
    assert after["not_unique"] - before["not_unique"] == 3
    text = unsolved_warning(outer, ("Phi_q",))
    assert text == (f"9 state evaluations {UNSOLVED_PREFIX} Phi_q (3: no charge in its "
                    f"domain gives it, 6: several do); they are left out (NaN)")
    assert unsolved_warning({"no_root": 0, "not_unique": 0, "not_converged": 0}) is None


def _toy():
    from bhchem.declare import Domain, Family, Parameter
    from bhchem.declare.symbols import P, pi, r
    q = parameter_symbol("q")
    return Family(name="toy-bounded-potential", summary="toy family invented for this test",
                  reference="invented for this test", dimension=4,
                  parameters=(Parameter("q", 1.0, length_dimension=1,
                                        domain=Domain.nonnegative()),),
                  enthalpy=r / 2 * (1 + 8 * pi * P * r**2 / 3) - r**2 * sp.exp(-q / r),
                  entropy=pi * r**2)


def test_isobar_reports_states_without_a_charge_for_the_fixed_potential():
    toy, phi, P = _toy(), 0.2, 0.01
    th = bind(toy, Phi_q=phi)
    assert "certified numerical inverse" in th.family.conventions["inverse_q"]
    # exact values where the state exists, none below r = Phi
    rs = np.array([0.05, 0.15, 0.3, 1.0, 4.0])
    T = np.asarray(th.quantity("T", rs, P))
    exact = (0.5 + 4 * math.pi * P * rs**2 - 2 * phi - phi * np.log(rs / phi)) \
        / (2 * math.pi * rs)
    assert np.all(np.isnan(T[rs < phi]))
    assert np.allclose(T[rs > phi], exact[rs > phi], rtol=1e-12, atol=0)
    res = analyze_isobar(th, P, warn=False, critical_points=(), report_excluded=False)
    notes = [w for w in res.warnings if UNSOLVED_PREFIX in w]
    assert len(notes) == 1, res.warnings
    n = int(notes[0].split()[0])
    assert n > 0 and "Phi_q" in notes[0] and "no charge in its domain gives it" in notes[0]
    assert "several do" not in notes[0]
    assert all(b.x_min >= phi for b in res.branches)  # every state found has r >= Phi
