"""Response functions along isobars and isotherms (bhchem.analysis.response).

Sources: van der Waals closed forms (textbook, e.g. Callen, Thermodynamics, 2nd ed. 1985,
Secs. 3.5, 3.9; the formulas are re-derived in each test from P = T/(v-b) - a/v^2);
charged AdS in 4D from the temperature and entropy of Kubiznak & Mann, JHEP 07 (2012) 033,
arXiv:1205.0559 (critical point r_c = sqrt(6) Q, T_c = sqrt(6)/(18 pi Q)); exact
thermodynamic identities C_P - C_V = T V alpha^2/kappa_T, kappa_T - kappa_S = T V
alpha^2/C_P (Callen Sec. 3.9).
"""
import math

import numpy as np
import pytest

from bhchem import bind
from bhchem.errors import StateDomainError
from bhchem.analysis.response import (along_isobar, along_isotherm, cv_vanishes, local_exponent,
                                response_functions)

Q = 1.0
PC_RN = 1 / (96 * math.pi * Q**2)          # KM12: P_c = 1/(96 pi Q^2)
TC_RN = math.sqrt(6) / (18 * math.pi * Q)  # KM12
RC_RN = math.sqrt(6) * Q                   # KM12: v_c = 2 sqrt(6) Q, r = v/2


def test_vdw_closed_forms():
    """vdW (a = b = 1, c_v = 3/2): alpha_P, kappa_T, C_V, C_P, kappa_S from P(T, v)."""
    th = bind("vdw-fluid", a=1.0, b=1.0)
    a = b = 1.0
    v = np.geomspace(1.3, 40.0, 60)
    for P in (0.01, 0.037, 0.2):
        r = response_functions(th, v, P)
        T = (P + a / v**2) * (v - b)
        D = T * v**3 - 2 * a * (v - b) ** 2
        alpha = v**2 * (v - b) / D
        kappa_T = v**2 * (v - b) ** 2 / D
        C_V = 1.5
        C_P = C_V + T * v * alpha**2 / kappa_T
        kappa_S = kappa_T * C_V / C_P
        np.testing.assert_allclose(r["alpha_P"], alpha, rtol=1e-11)
        np.testing.assert_allclose(r["kappa_T"], kappa_T, rtol=1e-11)
        np.testing.assert_allclose(r["C_V"], C_V, rtol=1e-12)
        np.testing.assert_allclose(r["C_P"], C_P, rtol=1e-11)
        np.testing.assert_allclose(r["kappa_S"], kappa_S, rtol=1e-11)


def test_vdw_divergences_are_the_spinodals():
    """Isobar P < P_c: divergences at the roots of P = a (v - 2b)/v^3 (the vdW spinodal
    curve); isotherm T < T_c: at the roots of T = 2a (v-b)^2/v^3 (exact)."""
    th = bind("vdw-fluid", a=1.0, b=1.0)
    P = 0.5 / 27
    c = along_isobar(th, P)
    roots = np.roots([P, 0, -1.0, 2.0])          # P v^3 - a v + 2ab = 0
    expect = np.sort([r.real for r in roots if abs(r.imag) < 1e-12 and r.real > 1])
    got = np.sort([d.x for d in c.divergences])
    assert [d.kind for d in c.divergences] == ["spinodal", "spinodal"]
    np.testing.assert_allclose(got, expect, rtol=1e-12)
    for d in c.divergences:
        assert set(d.quantities) >= {"C_P", "kappa_T", "alpha_P"}
    T = 0.9 * 8 / 27
    c = along_isotherm(th, T)
    roots = np.roots([T, -2.0, 4.0, -2.0])       # T v^3 - 2a (v - b)^2 = 0
    expect = np.sort([r.real for r in roots if abs(r.imag) < 1e-12 and r.real > 1])
    got = np.sort([d.x for d in c.divergences if d.denominator == "T_x"])
    np.testing.assert_allclose(got, expect, rtol=1e-12)
    assert c.max_identity_residual < 1e-12


def test_static_black_hole_cv_vanishes_and_is_said():
    """rn-ads: S and V are functions of r alone, so C_V = kappa_S = 0 identically."""
    th = bind("rn-ads", Q=Q)
    assert cv_vanishes(th)
    c = along_isobar(th, 0.5 * PC_RN)
    assert c.vanishing == ("C_V", "kappa_S")
    assert np.all(c.values["C_V"][np.isfinite(c.values["C_P"])] == 0)
    assert any("vanish identically" in n for n in c.notes)
    # with C_V = 0 the identity reduces to C_P = T V alpha^2 / kappa_T
    assert c.max_identity_residual < 1e-12


def test_rn_ads_4d_response_closed_forms():
    """C_P = 2S(8PS^2 + S - pi Q^2)/(8PS^2 - S + 3 pi Q^2) (from KM12's T and S = pi r^2;
    the printed form in KM12 is recalled from memory), alpha_P = 3/(r T_r) and
    kappa_T = 6/T_r with T_r = (8 pi P r^2 + 3Q^2/r^2 - 1)/(4 pi r^2) (V = 4 pi r^3/3)."""
    th = bind("rn-ads", Q=Q)
    r = np.geomspace(0.8, 12.0, 50)
    for P in (0.3 * PC_RN, PC_RN * 1.7):
        res = response_functions(th, r, P)
        S = math.pi * r**2
        C_P = 2 * S * (8 * P * S**2 + S - math.pi * Q**2) / (8 * P * S**2 - S + 3 * math.pi * Q**2)
        T_r = (8 * math.pi * P * r**2 + 3 * Q**2 / r**2 - 1) / (4 * math.pi * r**2)
        np.testing.assert_allclose(res["C_P"], C_P, rtol=1e-10)
        np.testing.assert_allclose(res["alpha_P"], 3 / (r * T_r), rtol=1e-10)
        np.testing.assert_allclose(res["kappa_T"], 6 / T_r, rtol=1e-10)


def test_rn_ads_spinodals_and_critical_point():
    """Isobar P < P_c: C_P, kappa_T, alpha_P diverge at 8 pi P r^4 - r^2 + 3Q^2 = 0 (T_r = 0,
    exact from KM12's T); on the critical isobar at r_c = sqrt(6) Q, T_c (KM12)."""
    th = bind("rn-ads", Q=Q)
    P = 0.5 * PC_RN
    c = along_isobar(th, P)
    disc = math.sqrt(1 - 96 * math.pi * P * Q**2)
    expect = sorted(math.sqrt((1 + s * disc) / (16 * math.pi * P)) for s in (-1, 1))
    assert [d.kind for d in c.divergences] == ["spinodal", "spinodal"]
    np.testing.assert_allclose([d.x for d in c.divergences], expect, rtol=1e-12)
    for d in c.divergences:
        assert d.quantities == ("C_P", "alpha_P", "kappa_T") and d.P == P
    crit = along_isobar(th, PC_RN)
    (d,) = crit.divergences
    assert d.kind == "critical point"
    assert d.x == pytest.approx(RC_RN, rel=1e-10) and d.T == pytest.approx(TC_RN, rel=1e-12)
    iso = along_isotherm(th, TC_RN)
    assert [dd.kind for dd in iso.divergences] == ["critical point"]
    assert iso.divergences[0].P == pytest.approx(PC_RN, rel=1e-10)
    # above P_c no divergence at all
    assert along_isobar(th, 2 * PC_RN).divergences == ()


def test_divergence_exponents():
    """Exact local behaviour: near a spinodal T - T_sp ~ (r - r_sp)^2, so C_P ~ |T - T_sp|^(-1/2);
    on the critical isobar T - T_c ~ (r - r_c)^3, so C_P ~ |T - T_c|^(-2/3)."""
    th = bind("rn-ads", Q=Q)
    spin = along_isobar(th, 0.5 * PC_RN).divergences[1]
    assert local_exponent(th, "C_P", spin) == pytest.approx(0.5, abs=1e-6)
    assert local_exponent(th, "kappa_T", spin) == pytest.approx(0.5, abs=1e-6)
    assert local_exponent(th, "alpha_P", spin) == pytest.approx(0.5, abs=1e-6)
    crit = along_isobar(th, PC_RN).divergences[0]
    assert local_exponent(th, "C_P", crit, steps=(3e-3, 1e-3)) == pytest.approx(2 / 3, abs=1e-5)


def test_identities_for_a_family_with_nonzero_cv():
    """kerr-ads (state variable S; V depends on S and P): C_V != 0, and the exact identities
    C_P - C_V = T V alpha^2/kappa_T, kappa_T - kappa_S = T V alpha^2/C_P and
    C_P/C_V = kappa_T/kappa_S hold at every state."""
    th = bind("kerr-ads", J=1.0)
    assert not cv_vanishes(th)
    S = np.geomspace(15.0, 400.0, 40)
    for P in (0.0015, 0.004):
        r = response_functions(th, S, P)
        assert np.all(np.abs(r["C_V"]) > 0)
        assert np.nanmax(r["residual_CP_CV"]) < 1e-10
        assert np.nanmax(r["residual_kT_kS"]) < 1e-10
        np.testing.assert_allclose(r["C_P"] / r["C_V"], r["kappa_T"] / r["kappa_S"], rtol=1e-9)


def test_bad_path_values_are_errors():
    th = bind("rn-ads", Q=Q)
    with pytest.raises(StateDomainError):
        along_isobar(th, -1.0)
    with pytest.raises(StateDomainError):
        along_isotherm(th, float("nan"))
