"""Shared numerical kernels against exact results."""
import math

import numpy as np

from bhchem import bind
from bhchem.numerics import bracketed_roots, isotherm_pressure, sign_change_brackets


def test_isotherm_pressure_equals_the_charged_ads_equation_of_state():
    """P = T/v - 1/(2 pi v^2) + 2 Q^2/(pi v^4), v = 2 r+ (Kubiznak & Mann, JHEP 07 (2012) 033)."""
    th = bind("rn-ads", Q=1.0)
    x = np.geomspace(0.8, 20, 200)
    T = 0.03
    v = 2 * x
    exact = T / v - 1 / (2 * math.pi * v**2) + 2 / (math.pi * v**4)
    got = isotherm_pressure(th, x, T, 0.001)
    ok = exact > 0
    scale = T / v  # the largest term: near P = 0 the sum cancels, so compare on this scale
    assert np.all(np.abs(got[ok] - exact[ok]) <= 1e-14 * scale[ok])
    assert np.all(np.isnan(got[~ok]))                       # P <= 0 is not returned ...
    neg = isotherm_pressure(th, x, T, 0.001, allow_negative=True)
    assert np.allclose(neg, exact, rtol=1e-12, atol=1e-16)  # ... unless asked for


def test_isotherm_pressure_nonlinear_in_P_converges_to_the_isotherm():
    """Kerr-AdS (state S): T is not linear in P; the residual is the check (exact identity)."""
    th = bind("kerr-ads", J=1.0)
    x = np.geomspace(5, 200, 50)
    P0 = 0.002
    T = float(th.T(30.0, P0))
    P = isotherm_pressure(th, x, T, P0)
    ok = np.isfinite(P)
    assert ok.sum() >= 10
    assert np.all(np.abs(th.T(x[ok], P[ok]) / T - 1) <= 1e-11)


def test_bracketed_roots_of_sine_are_multiples_of_pi():
    grid = np.linspace(0.5, 10.0, 37)
    roots = bracketed_roots(math.sin, grid)
    assert np.allclose(roots, [math.pi, 2 * math.pi, 3 * math.pi], rtol=0, atol=1e-14)


def test_bracketed_roots_in_log_and_with_gaps():
    f = lambda x: math.log(x) - math.log(7.0) if x < 50 or x > 60 else math.nan  # noqa: E731
    grid = np.geomspace(1e-3, 1e3, 25)
    assert np.allclose(bracketed_roots(f, grid, log=True), [7.0], rtol=1e-14)
    # a NaN between two sign-different ends is skipped, not an exception
    assert sign_change_brackets([0, 1, 2], [1.0, math.nan, -1.0]) == []
    assert sign_change_brackets([0, 1, 2], [1.0, 0.0, -1.0]) == [(1.0, 1.0)]
