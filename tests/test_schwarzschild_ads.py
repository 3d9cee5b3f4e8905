"""schwarzschild-ads: neutral AdS black hole with the thermal AdS background."""
import math

import numpy as np
import pytest
import sympy as sp
from scipy.optimize import minimize_scalar

from bhchem import bind
from contract import FamilyContract
from reference_values import ads_radius_to_pressure


class TestSchwarzschildAdsContract(FamilyContract):
    family_name = "schwarzschild-ads"
    parameter_sets = [{}, {"d": 5}, {"d": 9}]


@pytest.mark.parametrize("L", [0.5, 1.0, 3.7])
def test_minimum_temperature_4d(L):
    """Hawking & Page 1983 (REFERENCES['HP83-tmin']): T_min = sqrt(3)/(2 pi L) at r+ = L/sqrt(3)."""
    th = bind("schwarzschild-ads")
    Pv = ads_radius_to_pressure(L)
    res = minimize_scalar(lambda x: float(th.T(x, Pv)), bracket=(0.1 * L, L), tol=1e-12)
    assert res.x == pytest.approx(L / math.sqrt(3), rel=1e-6)
    assert res.fun == pytest.approx(math.sqrt(3) / (2 * math.pi * L), rel=1e-12)


@pytest.mark.parametrize("L", [0.5, 1.0, 3.7])
def test_hawking_page_point_4d(L):
    """Hawking & Page 1983: G = 0 (= G of thermal AdS) at r+ = L, where T = 1/(pi L)."""
    th = bind("schwarzschild-ads")
    Pv = ads_radius_to_pressure(L)
    assert float(th.G(L, Pv)) == pytest.approx(0.0, abs=1e-14 * L)
    assert float(th.T(L, Pv)) == pytest.approx(1 / (math.pi * L), rel=1e-14)
    assert float(th.G(1.01 * L, Pv)) < 0 < float(th.G(0.99 * L, Pv))
    assert np.all(th.quantity("G_background", np.array([0.3, 1.0]), Pv) == 0.0)


@pytest.mark.parametrize("d", [4, 5, 6, 7, 10])
def test_hawking_page_point_in_d_dimensions(d):
    """Exact: G = Omega r^(d-3) (1 - r^2/L^2)/(16 pi), so G = 0 at r+ = L and there
    T = (d-2)/(2 pi L) (d-dimensional form, e.g. Kubiznak, Mann & Teo, CQG 34 (2017)
    063001; the closed form of G is re-derived here by hand, exact)."""
    th = bind("schwarzschild-ads", d=d)
    L = sp.Symbol("L", positive=True)
    Pexpr = (d - 1) * (d - 2) / (16 * sp.pi * L**2)
    G = th.derivation.quantities["G"].subs(sp.Symbol("P", positive=True), Pexpr)
    x = th.derivation.state
    Om = 2 * sp.pi ** sp.Rational(d - 1, 2) / sp.gamma(sp.Rational(d - 1, 2))
    assert sp.simplify(G - Om * x ** (d - 3) * (1 - x**2 / L**2) / (16 * sp.pi)) == 0
    T = th.derivation.quantities["T"].subs(sp.Symbol("P", positive=True), Pexpr).subs(x, L)
    assert sp.simplify(T - (d - 2) / (2 * sp.pi * L)) == 0
