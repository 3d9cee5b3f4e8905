"""Joule-Thomson expansion (bhchem.analysis.expansion).

Sources: Okcu & Aydiner, EPJC 77 (2017) 24, arXiv:1611.06327 (charged AdS 4D:
T_i,min / T_c = 1/2); Mo, Li, Lan & Xu, arXiv:1804.02650 (d-dimensional charged AdS: the
ratio decreases with d; abstract verified, their explicit expression not reached); the
closed forms below are derived here from T alpha_P = 1 with the temperature and volume of
Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251; the van der Waals
inversion curve is textbook (T = 2a(v-b)^2/(b v^2), lowest inversion temperature 3/4 T_c
at P -> 0), re-derived in the test from P = T/(v-b) - a/v^2.
"""
import argparse
import json
import math

import numpy as np
import pytest

from bhchem import bind
from bhchem.errors import BhchemError
from bhchem.analysis.expansion import (inversion_curve, inversion_states, isenthalp,
                                 joule_thomson_coefficient, joule_thomson_expansion)
from bhchem.analysis.response import response_functions

Q = 1.0


def test_rn_ads_4d_ratio_is_one_half():
    """Okcu & Aydiner 2017: T_i,min/T_c = 1/2 for charged AdS in 4D; the minimum sits at the
    P -> 0 end, where T_i = 1/(6 sqrt(6) pi Q) (derived: r_i = sqrt(3/2) Q)."""
    th = bind("rn-ads", Q=Q, d=4)
    inv = inversion_curve(th)
    assert inv.at_low_pressure_end and inv.P_at_min == 0.0
    assert inv.ratio_to_Tc == pytest.approx(0.5, abs=1e-12)
    assert inv.T_min == pytest.approx(1 / (6 * math.sqrt(6) * math.pi * Q), rel=1e-13)
    assert inv.x_at_min == pytest.approx(math.sqrt(1.5) * Q, rel=1e-13)
    # scale invariance: the ratio does not depend on Q
    assert inversion_curve(bind("rn-ads", Q=3.7)).ratio_to_Tc == pytest.approx(0.5, abs=1e-12)


def test_rn_ads_4d_inversion_curve_closed_form():
    """Every inversion state satisfies P_i = (3Q^2 - 2r^2)/(8 pi r^4) and
    T_i = (2Q^2 - r^2)/(4 pi r^3) (T alpha_P = 1 with T = (1 + 8 pi P r^2 - Q^2/r^2)/(4 pi r),
    V = 4 pi r^3/3)."""
    th = bind("rn-ads", Q=Q)
    inv = inversion_curve(th, pressure_max=0.5)
    r = inv.x
    assert len(r) > 100
    np.testing.assert_allclose(inv.P, (3 * Q**2 - 2 * r**2) / (8 * math.pi * r**4),
                               rtol=1e-10, atol=1e-15)
    np.testing.assert_allclose(inv.T, (2 * Q**2 - r**2) / (4 * math.pi * r**3), rtol=1e-11)
    # T_i rises monotonically with P along the curve
    order = np.argsort(inv.P)
    assert np.all(np.diff(inv.T[order]) > 0)


def test_mu_from_jacobians_equals_the_textbook_form():
    """mu = (T_P M_x - T_x M_P)/M_x equals V (T alpha_P - 1)/C_P (dH = T dS + V dP), for a
    static (rn-ads) and a rotating (kerr-ads, V depends on S and P) family, and equals the
    slope dT/dP of the computed isenthalp (Richardson-extrapolated central differences)."""
    for th, xs, P in ((bind("rn-ads", Q=Q), np.geomspace(0.9, 20, 30), 0.01),
                      (bind("kerr-ads", J=1.0), np.geomspace(15.0, 400.0, 30), 0.003)):
        mu = joule_thomson_coefficient(th, xs, P)
        r = response_functions(th, xs, P)
        ref = r["V"] * (r["T"] * r["alpha_P"] - 1) / r["C_P"]
        np.testing.assert_allclose(mu, ref, rtol=1e-10)
    th = bind("rn-ads", Q=Q)
    M, P, h = 1.6, 0.05, 1e-4
    c = isenthalp(th, M, [P - h, P + h, P - h / 2, P + h / 2, P])
    T = dict(zip(c.P, c.T))
    d1 = (T[P + h] - T[P - h]) / (2 * h)
    d2 = (T[P + h / 2] - T[P - h / 2]) / h
    slope = (4 * d2 - d1) / 3
    x = c.x[list(c.P).index(P)]
    assert float(joule_thomson_coefficient(th, x, P)) == pytest.approx(slope, rel=1e-8)
    assert np.allclose(th.M(c.x, c.P), M, rtol=1e-14)


def test_isenthalp_maxima_lie_on_the_inversion_curve():
    """mu = (dT/dP)_M vanishes at the maximum of each isenthalp, so (P*, T*) is an inversion
    state: T* equals the inversion temperature at P* from the independent root search."""
    th = bind("rn-ads", Q=Q)
    res = joule_thomson_expansion(th)
    assert len(res.isenthalps) == 4
    for c in res.isenthalps:
        assert c.T_max is not None and abs(c.mu_at_max) < 1e-12
        (x_i, T_i), = inversion_states(th, c.P_at_T_max)
        assert c.T_max == pytest.approx(T_i, rel=1e-12)
    # those that end inside the range end at extremality, T -> 0
    ends = [c for c in res.isenthalps if c.P_end is not None]
    assert len(ends) >= 3
    for c in ends:
        assert c.P[-1] == c.P_end and c.T[-1] < 1e-5 * c.T_max


def test_ratio_decreases_with_dimension():
    """Mo, Li, Lan & Xu 2018: T_i,min/T_c decreases with d.  Closed form derived here (P -> 0
    end; T_c of GKM12): ratio = (2d-5)/(6(d-2)) [d(2d-5)/3]^(1/(2d-6)), = 1/2 at d = 4."""
    ratios = []
    for d in range(4, 9):
        inv = inversion_curve(bind("rn-ads", Q=Q, d=d), n_P=40)
        exact = (2 * d - 5) / (6 * (d - 2)) * (d * (2 * d - 5) / 3) ** (1 / (2 * d - 6))
        assert inv.at_low_pressure_end
        assert inv.ratio_to_Tc == pytest.approx(exact, rel=1e-11)
        ratios.append(inv.ratio_to_Tc)
    assert all(b < a for a, b in zip(ratios, ratios[1:]))
    assert ratios[1] == pytest.approx(0.4719567, abs=1e-7)


def test_van_der_waals_inversion_curve():
    """vdW: inversion states on T = 2a(v-b)^2/(b v^2), P = a(2v - 3b)/(b v^2); the lowest
    inversion temperature is 3/4 T_c at P -> 0 (v = 3b/2)."""
    th = bind("vdw-fluid", a=1.0, b=1.0)
    inv = inversion_curve(th, pressure_max=0.3)
    v = inv.x
    # (out at v ~ 1e5 b, the ideal-gas end, the root is ill-conditioned: 1e-10)
    np.testing.assert_allclose(inv.T, 2 * (v - 1) ** 2 / v**2, rtol=2e-10)
    np.testing.assert_allclose(inv.P, (2 * v - 3) / v**2, rtol=1e-9, atol=1e-15)
    assert inv.ratio_to_Tc == pytest.approx(0.75, abs=1e-12)
    # two inversion temperatures at one pressure below the top of the curve (9 P_c)
    assert len(inversion_states(th, 0.1)) == 2


def test_no_inversion_for_schwarzschild_ads():
    """Q = 0: P_i = -2r^2/(8 pi r^4) < 0, so no inversion point with P >= 0 (the r -> 0 limit
    of the closed form above)."""
    th = bind("schwarzschild-ads")
    inv = inversion_curve(th)
    assert inv.T_min is None and inv.ratio_to_Tc is None and len(inv.T) == 0


def _parser():
    """The real command-line parser (the analysis commands are registered in it)."""
    from bhchem.cli.main import build_parser
    return build_parser()


def test_cli_expansion_json_and_figure(capsys, tmp_path):
    parser = _parser()
    fig = tmp_path / "jt.png"
    args = parser.parse_args(["expansion", "rn-ads", "-p", "Q=1", "--masses", "1.3", "1.6",
                              "--json", "-o", str(fig)])
    assert args.func(args) == 0
    out, err = capsys.readouterr()
    doc = json.loads(out)
    assert set(doc) - {"convention"} == {"inversion", "isenthalps"}
    assert set(doc["inversion"]) == {"points", "T_min", "ratio_to_Tc"}
    assert doc["inversion"]["ratio_to_Tc"] == pytest.approx(0.5, abs=1e-12)
    assert [set(c) for c in doc["isenthalps"]] == [{"M", "points"}] * 2
    assert [c["M"] for c in doc["isenthalps"]] == [1.3, 1.6]
    assert all(len(p) == 2 for p in doc["inversion"]["points"])
    assert fig.stat().st_size > 10_000 and "wrote" in err
    with pytest.raises(BhchemError, match="not a number"):
        a = parser.parse_args(["expansion", "rn-ads", "--masses", "two"])
        a.func(a)
    with pytest.raises(BhchemError, match="positive"):
        a = parser.parse_args(["expansion", "rn-ads", "--masses", "-1"])
        a.func(a)
