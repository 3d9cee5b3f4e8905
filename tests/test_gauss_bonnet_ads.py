"""gauss-bonnet-ads: charged Gauss-Bonnet AdS black holes, d >= 5, k = 1, 0, -1.

Sources
-------
CCLY13 Cai, Cao, Li & Yang, JHEP 09 (2013) 005, arXiv:1306.6233, with alpha~ = (d-3)(d-4) alpha:
       f = k + r^2/(2 alpha~) [1 - sqrt(1 + 64 pi alpha~ M/((d-2) Sigma r^(d-1))
           - (charge term) - 64 pi alpha~ P/((d-1)(d-2)))],
       Wald entropy S = Sigma r+^(d-2)/4 (1 + 2(d-2) alpha~ k/((d-4) r+^2)),
       T = [16 pi P r^4 + (d-2) k ((d-3) r^2 + (d-5) k alpha~)]/(4 pi (d-2) r (r^2 + 2 k alpha~))
           (uncharged),
       Smarr (d-3) M = (d-2) T S - 2 P V + 2 Psi alpha (+ (d-3) Phi Q),
       d = 5, k = 1, Q = 0 critical point: P_c = 1/(48 pi alpha~), T_c = 1/(2 pi sqrt(6 alpha~)),
       v_c = 4 sqrt(6 alpha~)/3.
WL14   Wei & Liu, PRD 90 (2014) 044057 (arXiv:1402.2837, id from memory): the same entropy and
       temperature with charge.
These formulas are written from memory (the search tool reached no text of the papers); the
critical point is also re-derived here by hand (see the test), T is cross-checked against the
surface gravity of the metric function built in the test, and the alpha -> 0 limit against
rn-ads (GKM 2012 normalisation, which this family uses for Q).
"""
import math

import mpmath as mp
import numpy as np
import pytest
import sympy as sp

from bhchem import bind
from bhchem.core.checks import check_first_law, check_smarr
from contract import FamilyContract


class TestGaussBonnetAdsContract(FamilyContract):
    family_name = "gauss-bonnet-ads"
    parameter_sets = [{}, {"d": 6, "alpha": 0.3, "Q": 0.5}, {"k": -1, "alpha": 0.05},
                      {"k": 0, "Q": 2.0}, {"d": 7, "k": -1, "alpha": 1.0, "Q": 2.0},
                      {"alpha": 0.0}, {"d": 5, "Q": 0.0, "alpha": 1.0}]


def omega(d):
    return 2 * math.pi ** ((d - 1) / 2) / math.gamma((d - 1) / 2)


def metric_charge(Qv, d):
    """GKM 2012: Q = sqrt(2(d-2)(d-3)) Omega q/(8 pi)."""
    return 8 * math.pi * Qv / (math.sqrt(2 * (d - 2) * (d - 3)) * omega(d))


@pytest.mark.parametrize("d", [5, 6, 7, 8])
def test_reduces_to_rn_ads_at_alpha_zero(d):
    """alpha = 0, k = 1: every quantity of rn-ads in the same d (exact identity; 1e-12 allows for
    the different arrangement of the compiled expressions, G = M - TS cancels); small alpha
    moves M by the first-order GB term (d-2) Omega alpha~ r^(d-5)/(16 pi) (CCLY13's M)."""
    Qv = 0.7
    gb = bind("gauss-bonnet-ads", d=d, k=1, alpha=0.0, Q=Qv)
    rn = bind("rn-ads", d=d, Q=Qv)
    rp = np.geomspace(0.4, 20, 30)
    for Pv in (1e-3, 0.05):
        for name in ("M", "S", "T", "V", "G", "v"):
            np.testing.assert_allclose(gb.quantity(name, rp, Pv), rn.quantity(name, rp, Pv),
                                       rtol=1e-12)
        np.testing.assert_allclose(gb.potential("Q", rp, Pv), rn.potential("Q", rp, Pv), rtol=1e-12)
        np.testing.assert_array_equal(gb.physical(rp, Pv), rn.physical(rp, Pv))
    a = 1e-6
    gba = bind("gauss-bonnet-ads", d=d, k=1, alpha=a, Q=Qv)
    rp = np.geomspace(0.4, 3.0, 12)   # M(r) = O(1): the difference keeps ~1e-9 relative accuracy
    dM = gba.M(rp, 0.01) - rn.M(rp, 0.01)
    at = (d - 3) * (d - 4) * a
    np.testing.assert_allclose(dM, (d - 2) * omega(d) * at * rp ** (d - 5) / (16 * math.pi),
                               rtol=1e-8)


@pytest.mark.parametrize("d", [5, 6, 7])
@pytest.mark.parametrize("k", [1, 0, -1])
def test_wald_entropy(d, k):
    """CCLY13 / WL14: S = Omega r+^(d-2)/4 (1 + 2(d-2) k alpha~/((d-4) r+^2)), alpha~ = (d-3)(d-4)
    alpha (symbolic identity), which differs from the area A/4 whenever k alpha != 0."""
    th = bind("gauss-bonnet-ads", d=d, k=k)
    r = sp.Symbol("r", positive=True)
    alpha = sp.Symbol("alpha", real=True)
    Om = 2 * sp.pi ** sp.Rational(d - 1, 2) / sp.gamma(sp.Rational(d - 1, 2))
    at = (d - 3) * (d - 4) * alpha
    S_paper = Om * r ** (d - 2) / 4 * (1 + 2 * (d - 2) * k * at / ((d - 4) * r**2))
    assert sp.simplify(th.derivation.quantities["S"] - S_paper) == 0
    if k != 0:
        assert sp.simplify(th.derivation.quantities["S"] - Om * r ** (d - 2) / 4) != 0


def test_area_entropy_would_violate_the_first_law():
    """The Wald entropy is needed: with S = A/4 the surface-gravity T is not (dM/dS)_P."""
    d, k, av, Qv, Pv = 5, 1, 0.2, 0.5, 0.01
    th = bind("gauss-bonnet-ads", d=d, k=k, alpha=av, Q=Qv)
    rp, h = 1.3, 1e-6
    dM = (th.M(rp + h, Pv) - th.M(rp - h, Pv)) / (2 * h)
    dA4 = omega(d) * (d - 2) * rp ** (d - 3) / 4
    assert abs(dM / dA4 - float(th.T(rp, Pv))) / float(th.T(rp, Pv)) > 0.1


@pytest.mark.parametrize("d", [5, 6, 8])
@pytest.mark.parametrize("k", [1, 0, -1])
def test_temperature_uncharged_is_the_paper_formula(d, k):
    """CCLY13: T = [16 pi P r^4 + (d-2) k ((d-3) r^2 + (d-5) k alpha~)]/(4 pi (d-2) r (r^2 + 2 k alpha~))
    at Q = 0 (symbolic identity with the engine's T and with (dM/dS)_P)."""
    th = bind("gauss-bonnet-ads", d=d, k=k, Q=0.0)
    q = th.derivation.quantities
    r, P = sp.Symbol("r", positive=True), sp.Symbol("P", positive=True)
    alpha, Q = sp.Symbol("alpha", real=True), sp.Symbol("Q", real=True)
    at = (d - 3) * (d - 4) * alpha
    T_paper = (16 * sp.pi * P * r**4 + (d - 2) * k * ((d - 3) * r**2 + (d - 5) * k * at)) \
        / (4 * sp.pi * (d - 2) * r * (r**2 + 2 * k * at))
    assert sp.simplify(q["T"].subs(Q, 0) - T_paper) == 0
    assert sp.simplify(th.derivation.temperature_derived.subs(Q, 0) - T_paper) == 0


@pytest.mark.parametrize("d, k, av, Qv", [(5, 1, 0.2, 0.5), (6, 1, 0.1, 1.0), (6, -1, 0.05, 0.3),
                                          (7, 0, 0.4, 2.0), (5, -1, 0.1, 0.0)])
def test_temperature_is_the_surface_gravity(d, k, av, Qv):
    """T = f'(r+)/(4 pi) for CCLY13's metric function written here with the engine's M and the
    GKM charge (f(r+) = 0 checks M; mpmath at 40 digits); relative 1e-12."""
    th = bind("gauss-bonnet-ads", d=d, k=k, alpha=av, Q=Qv)
    with mp.workdps(40):
        at = mp.mpf((d - 3) * (d - 4)) * mp.mpf(av)
        q = mp.mpf(metric_charge(Qv, d))
        Om = 2 * mp.pi ** (mp.mpf(d - 1) / 2) / mp.gamma(mp.mpf(d - 1) / 2)
        for rp in (0.9, 1.7, 4.0):
            Pv = mp.mpf(0.02)
            Mv = mp.mpf(float(th.M(rp, float(Pv))))

            def f(rr):
                inner = (1 + 64 * mp.pi * at * Mv / ((d - 2) * Om * rr ** (d - 1))
                         - 4 * at * q**2 / rr ** (2 * d - 4)
                         - 64 * mp.pi * at * Pv / ((d - 1) * (d - 2)))
                return k + rr**2 / (2 * at) * (1 - mp.sqrt(inner))

            rp_ = mp.mpf(rp)
            assert abs(f(rp_)) < 1e-13 * (1 + abs(k))
            T_metric = mp.diff(f, rp_) / (4 * mp.pi)
            assert float(th.T(rp, float(Pv))) == pytest.approx(float(T_metric), rel=1e-12)


@pytest.mark.parametrize("d, k, av, Qv", [(5, 1, 0.2, 0.5), (6, -1, 0.05, 1.0), (7, 0, 0.3, 0.0),
                                          (8, 1, 1.0, 3.0)])
def test_smarr_with_gauss_bonnet_term(d, k, av, Qv):
    """CCLY13: (d-3) M = (d-2) TS - 2PV + 2 Psi alpha + (d-3) Phi Q, explicitly (rtol 1e-12) and
    as the engine's verdict."""
    th = bind("gauss-bonnet-ads", d=d, k=k, alpha=av, Q=Qv)
    rp = np.geomspace(0.3, 100, 80)
    for Pv in (1e-3, 5e-3):
        ok = th.physical(rp, Pv)
        x = rp[ok]
        assert x.size > 10
        lhs = (d - 3) * th.M(x, Pv)
        rhs = (d - 2) * th.T(x, Pv) * th.S(x, Pv) - 2 * Pv * th.V(x, Pv) \
            + 2 * th.potential("alpha", x, Pv) * av + (d - 3) * th.potential("Q", x, Pv) * Qv
        np.testing.assert_allclose(lhs, rhs, rtol=1e-12)
    res = check_smarr(th)
    assert res.holds and res.max_residual < 1e-13
    assert "+ 2 Phi_alpha alpha" in res.relation


@pytest.mark.parametrize("values", [{"d": 5}, {"d": 6, "k": -1, "alpha": 0.1},
                                    {"d": 9, "k": 0, "alpha": 0.5, "Q": 4.0}])
def test_first_law(values):
    """dM = T dS + V dP + Psi dalpha + Phi dQ with the Wald entropy (residual < 1e-12)."""
    res = check_first_law(bind("gauss-bonnet-ads", **values))
    assert res.holds and res.max_residual < 1e-12 and res.proved


@pytest.mark.parametrize("av", [0.05, 0.5, 2.0])
def test_critical_point_5d_uncharged(av):
    """CCLY13 (from memory), d = 5, k = 1, Q = 0: P_c = 1/(48 pi alpha~), T_c = 1/(2 pi sqrt(6 alpha~)),
    v_c = 4 sqrt(6 alpha~)/3 with alpha~ = 2 alpha.  Also by hand: with v = 4r/3 the EOS is
    P = (3T/(4r))(1 + 2 alpha~/r^2) - 3/(8 pi r^2); P_r = P_rr = 0 gives r^2 = 6 alpha~.  Checked
    on the engine's closed-form P(T, v): dP/dv = d2P/dv2 = 0 and P = P_c there (1e-13)."""
    th = bind("gauss-bonnet-ads", d=5, k=1, alpha=av, Q=0.0)
    eos = th.derivation.eos
    assert eos.form == "closed"
    T, v = sp.Symbol("T", real=True), sp.Symbol("v", positive=True)
    alpha, Q = sp.Symbol("alpha", real=True), sp.Symbol("Q", real=True)
    Pv = eos.pressure.subs({alpha: av, Q: 0})
    at = 2 * av
    Tc, vc, Pc = 1 / (2 * math.pi * math.sqrt(6 * at)), 4 * math.sqrt(6 * at) / 3, 1 / (48 * math.pi * at)
    at_c = {T: Tc, v: vc}
    assert float(Pv.subs(at_c)) == pytest.approx(Pc, rel=1e-13)
    scale = Pc / vc
    assert abs(float(sp.diff(Pv, v).subs(at_c))) < 1e-13 * scale
    assert abs(float(sp.diff(Pv, v, 2).subs(at_c))) < 1e-13 * scale / vc
    assert Pc * vc / Tc == pytest.approx(1 / 3, rel=1e-13)   # 5D GB ratio (derived from the above)


def test_hyperbolic_domain_conditions():
    """CCLY13: horizons on the GB branch need 1 + 2 k alpha~/r+^2 > 0 (k = -1: r+^2 > 2 alpha~) and
    the AdS vacuum needs 4 alpha~ < L^2, i.e. 64 pi alpha~ P < (d-1)(d-2)."""
    d, av = 6, 0.1
    at = (d - 3) * (d - 4) * av
    th = bind("gauss-bonnet-ads", d=d, k=-1, alpha=av, Q=0.2)
    Pv = 0.01
    rp = np.array([0.9, 0.99, 1.01, 1.2]) * math.sqrt(2 * at)
    T_ok = th.T(rp, Pv) >= 0
    np.testing.assert_array_equal(th.physical(rp, Pv), (rp**2 > 2 * at) & T_ok)
    P_max = (d - 1) * (d - 2) / (64 * math.pi * at)
    big = bind("gauss-bonnet-ads", d=d, k=1, alpha=av, Q=0.2)
    assert bool(big.physical(3.0, 0.99 * P_max)) and not bool(big.physical(3.0, 1.01 * P_max))
