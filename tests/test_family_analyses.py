"""Critical points and phase structure of the higher-curvature, nonlinear and rotating
families against their papers (issues: critical points, phase structure)."""
import math

import numpy as np
import pytest

from bhchem import bind
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.exponents import critical_exponents
from bhchem.analysis.phases import phase_diagram


def rel(a, b):
    return abs(a - b) / abs(b)


# -- Gauss-Bonnet ---------------------------------------------------------------------------
def test_neutral_gauss_bonnet_5d_ratio_one_third():
    """Cai, Cao, Li & Yang, JHEP 09 (2013) 005: neutral GB in d = 5, k = 1 has a critical
    point with P_c v_c / T_c = 1/3 (and P_c = 1/(48 pi alpha~), alpha~ = 2 alpha)."""
    for alpha in (0.3, 1.0):
        s = find_critical_points("gauss-bonnet-ads", d=5, k=1, alpha=alpha, Q=0.0)
        assert s.completeness == "certified"
        (cp,) = s.physical
        assert cp.kind == "standard"
        assert rel(cp.ratio, 1 / 3) < 1e-12
        assert rel(cp.P, 1 / (48 * math.pi * 2 * alpha)) < 1e-12


def test_neutral_gauss_bonnet_6d_only_degenerate():
    """Cai et al. 2013: in d = 6 (k = 1, Q = 0) the conditions have only a degenerate
    solution with no loop in the isotherms: it must not be reported as a critical point."""
    s = find_critical_points("gauss-bonnet-ads", d=6, k=1, alpha=1.0, Q=0.0)
    assert len(s.points) == 1 and s.points[0].kind == "degenerate"
    assert s.physical == ()


@pytest.mark.parametrize("Q_ours, has_triple", [(0.38, True), (0.30, False), (0.45, False)])
def test_charged_gauss_bonnet_6d_triple_point_window(Q_ours, has_triple):
    """Wei & Liu, PRD 90 (2014) 044057: in d = 6 with alpha~ = 1 a triple point exists for
    their charge in (0.1705, 0.1946).  Their charge is Cai et al.'s, 4 pi Q / Omega_4 =
    3 Q/(2 pi) in our normalisation, so the window is Q in (0.3571, 0.4076): Q = 0.38 is
    inside, 0.30 and 0.45 are outside.  At the triple point three states share T, P, G."""
    th = bind("gauss-bonnet-ads", d=6, k=1, alpha=1 / 6, Q=Q_ours)
    pd = phase_diagram(th, pressure_range=(0.012, 0.08))
    assert bool(pd.triple_points) == has_triple
    assert ("triple-point" in pd.structure) == has_triple
    for tp in pd.triple_points:
        assert tp.residual <= 1e-12
        xs = np.array(tp.states)
        T, G = th.T(xs, tp.P), th.G(xs, tp.P)
        assert np.ptp(T) <= 1e-12 * T.mean() and np.ptp(G) <= 1e-12 * np.abs(G).max()
        assert len(set(np.round(np.log(xs), 6))) == 3
        assert set(tp.phases) == {"small", "intermediate", "large"}


# -- third-order Lovelock ----------------------------------------------------------------------
def test_lovelock_isolated_critical_point_and_exponents():
    """Dolan, Kostouki, Kubiznak & Mann, CQG 31 (2014) 242001: at the fine-tuned hyperbolic
    couplings (alpha~3 = alpha~2^2/3, k = -1) an isolated critical point with non-standard
    exponents alpha = 0, beta = 1, gamma = 2, delta = 3; r_c = sqrt(alpha~2),
    T_c = 1/(2 pi sqrt(alpha~2)), P_c = (d-1)(d-2)/(48 pi alpha~2) (values re-derived by hand
    in tests/test_lovelock3_ads.py)."""
    d, a2 = 7, 1.0
    a3 = (d - 3) * (d - 4) * a2**2 / (3 * (d - 5) * (d - 6))
    at2 = (d - 3) * (d - 4) * a2
    th = bind("lovelock3-ads", d=d, k=-1, alpha2=a2, alpha3=a3, Q=0.0)
    s = find_critical_points(th)
    assert s.completeness == "certified"
    (cp,) = s.points
    assert cp.kind == "isolated" and cp.physical
    assert rel(cp.x, math.sqrt(at2)) < 1e-12
    assert rel(cp.T, 1 / (2 * math.pi * math.sqrt(at2))) < 1e-12
    assert rel(cp.P, (d - 1) * (d - 2) / (48 * math.pi * at2)) < 1e-12
    assert max(cp.residuals.values()) < 1e-12
    ex = critical_exponents(th, cp)
    assert ex.exact == {"alpha": "0", "beta": "1", "gamma": "2", "delta": "3"}
    assert ex.orders == {"n": 3, "m": 2}
    assert abs(ex.fitted["delta"]["value"] - 3) < 1e-3
    assert ex.fitted["beta"]["value"] is None and "series only" in ex.fitted["beta"]["note"]


# -- Born-Infeld -------------------------------------------------------------------------------
def test_born_infeld_critical_point_count_threshold():
    """Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110: below bQ = 1/sqrt(8) there is no
    critical point; just above it two appear (scanned method, complete over its range)."""
    edge = 1 / math.sqrt(8)
    below = find_critical_points("born-infeld-ads", b=edge * (1 - 1e-4), Q=1.0)
    above = find_critical_points("born-infeld-ads", b=edge * (1 + 1e-4), Q=1.0)
    assert below.completeness == "scanned" and below.physical == ()
    assert len(above.physical) == 2
    for cp in above.physical:
        assert max(cp.residuals.values()) < 1e-9


def test_born_infeld_scale_free_invariance():
    """Only bQ matters: (b, Q) = (0.6, 1) and (0.3, 2) give equal scale-free values."""
    a = find_critical_points("born-infeld-ads", b=0.6, Q=1.0).physical[0].scale_free
    b = find_critical_points("born-infeld-ads", b=0.3, Q=2.0).physical[0].scale_free
    for k in a:
        assert a[k] == pytest.approx(b[k], rel=1e-10)


@pytest.mark.parametrize("bQ, reentrant", [(0.48, True), (0.499, True), (0.501, False),
                                           (0.55, False)])
def test_born_infeld_reentrance(bQ, reentrant):
    """Gunasekaran, Kubiznak & Mann 2012: a reentrant large/small/large transition with a
    zeroth-order line for bQ just below 1/2 (upper edge of the window 1/2; from memory),
    none above."""
    pd = phase_diagram(bind("born-infeld-ads", b=bQ, Q=1.0), n_anchor=80)
    zeroth = [l for l in pd.lines if l.kind == "zeroth-order"]
    assert bool(zeroth) == reentrant
    assert ("reentrant" in pd.structure) == reentrant
    for l in zeroth:
        assert set(l.between) == {"large", "small"}
        assert l.checks["max_delta_G"] > 0


# -- Kerr-AdS (scanned, rotating) --------------------------------------------------------------------
def test_kerr_ads_critical_point():
    """Gunasekaran, Kubiznak & Mann 2012, Kerr-AdS: T_c ~ 0.041749/sqrt(J), P_c ~ 0.002857/J
    (from memory, 5 digits); scale invariance J -> 2J exact."""
    s = find_critical_points("kerr-ads", J=1.0)
    assert s.completeness == "scanned"
    (cp,) = s.physical
    assert cp.T == pytest.approx(0.041749, rel=2e-5)
    assert cp.P == pytest.approx(0.002857, rel=2e-4)
    cp2 = find_critical_points("kerr-ads", J=2.0).physical[0]
    for k, v in cp.scale_free.items():
        assert cp2.scale_free[k] == pytest.approx(v, rel=1e-10)
