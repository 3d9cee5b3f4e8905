"""Ruppeiner curvature and the normalised curvature R_N (bhchem.analysis.curvature).

Sources: Wei, Liu & Mann, PRL 123 (2019) 071103, arXiv:1906.10840 (R_N = R C_V for C_V -> 0;
universal amplitude -1/8 along the coexisting branches; abstract verified, the printed
closed form of R_N not reached: the expression used is derived in chemistry/curvature.py);
Hosseini Mansoori, Rafiee & Wei, arXiv:2007.03255 (R_N t^2 -> -1/8 for t -> 0^- along
coexistence and -1/2 for t -> 0^+, charged AdS in 4D and higher d; abstract verified);
Ruppeiner, Rev. Mod. Phys. 67 (1995) 605 (sign convention in which the 2-sphere has
R < 0; the ideal gas is flat; from memory); exact geometry (a product metric is flat).
"""
import argparse
import json
import math

import numpy as np
import pytest
import sympy as sp

from bhchem import Family, bind
from bhchem.analysis.curvature import (_brioschi_R, critical_amplitude, curvature_map,
                                 isochore_amplitude, normalised_curvature, ruppeiner_scalar)
from bhchem.errors import BhchemError
from bhchem.declare.symbols import P as Psym, v as vsym


def test_sign_convention_two_sphere():
    """R = -2K: the unit 2-sphere (E = 1, F = 0, G = sin^2 u) has R = -2 in this convention."""
    u = np.linspace(0.3, 2.8, 7)
    g = {"E": np.ones_like(u), "F": 0 * u, "G": np.sin(u) ** 2, "Eu": 0 * u, "Ev": 0 * u,
         "Fu": 0 * u, "Fv": 0 * u, "Gu": 2 * np.sin(u) * np.cos(u), "Gv": 0 * u,
         "Evv": 0 * u, "Fuv": 0 * u, "Guu": 2 * np.cos(2 * u)}
    np.testing.assert_allclose(_brioschi_R(g), -2.0, rtol=1e-13)


def _spinodal_T(x, Q, d):
    """For P = T a(v) - b(v), R_N = s (s - 2T)/(2 (T - s)^2) with s = b'/a' (derived in
    chemistry/curvature.py).  For rn-ads in d dimensions (GKM12's T): s is T at the
    spinodal pressure of that r."""
    om = 2 * math.pi ** ((d - 1) / 2) / math.gamma((d - 1) / 2)
    q2 = (8 * math.pi * Q / (math.sqrt(2 * (d - 2) * (d - 3)) * om)) ** 2
    # T = [(d-3) + 16 pi P r^2/(d-2) - (d-3) q^2 r^(6-2d)]/(4 pi r); T_r = 0 gives P_sp(r)
    P_sp = (d - 2) * ((d - 3) - (2 * d - 5) * (d - 3) * q2 * x ** (6 - 2 * d)) / (16 * math.pi * x**2)
    return ((d - 3) + 16 * math.pi * P_sp * x**2 / (d - 2) - (d - 3) * q2 * x ** (6 - 2 * d)) \
        / (4 * math.pi * x), P_sp


@pytest.mark.parametrize("d", [4, 5])
def test_rn_ads_normalised_curvature_closed_form(d):
    """The symbolic (T, V)-derivative pipeline against the closed form s(s - 2T)/(2(T - s)^2);
    in 4D s = 1/(pi v) - 8Q^2/(pi v^3) (v = 2r, KM12's equation of state), so R_N changes
    sign at v = 2 sqrt(2) Q for every T (and at T = s/2)."""
    Q = 0.8
    th = bind("rn-ads", Q=Q, d=d)
    r = np.geomspace(0.5, 6.0, 40)
    for P in (0.002, 0.03):
        T = th.T(r, P)
        s, _ = _spinodal_T(r, Q, d)
        if d == 4:
            v = 2 * r
            np.testing.assert_allclose(s, 1 / (math.pi * v) - 8 * Q**2 / (math.pi * v**3), rtol=1e-12)
        np.testing.assert_allclose(normalised_curvature(th, r, P), s * (s - 2 * T) / (2 * (T - s) ** 2),
                                   rtol=1e-9, atol=1e-12)
    if d == 4:
        r0 = math.sqrt(2) * Q
        vals = normalised_curvature(th, np.array([r0 * 0.999, r0 * 1.001]), 0.01)
        assert vals[0] > 0 > vals[1]   # repulsive for smaller holes, attractive beyond


def test_cv_zero_family_has_no_finite_R():
    th = bind("rn-ads", Q=1.0)
    with pytest.raises(BhchemError, match="C_V = 0"):
        ruppeiner_scalar(th, 2.0, 0.003)


def test_van_der_waals_two_routes_agree():
    """vdW with constant c_v = 3/2: the curvature of the full metric (Brioschi's formula in
    the (v, P) coordinates) equals R_N(closed form)/c_v exactly, since for constant C_V the
    curvature is exactly R_N/C_V; and R < 0 (attractive) on the stable states."""
    th = bind("vdw-fluid", a=1.0, b=1.0)
    v = np.geomspace(1.4, 30.0, 40)
    for P in (0.01, 0.03, 0.08):
        T = th.T(v, P)
        s = 2 * (v - 1) ** 2 / v**3               # vdW spinodal temperature at v
        R = ruppeiner_scalar(th, v, P)
        np.testing.assert_allclose(R, s * (s - 2 * T) / (2 * (T - s) ** 2) / 1.5, rtol=1e-9)
        np.testing.assert_allclose(normalised_curvature(th, v, P), 1.5 * R, rtol=1e-12)
        stable = th.quantity("C_P", v, P) > 0
        assert np.all(R[stable] < 0)


@pytest.mark.parametrize("c1", [0.0, 0.7])
def test_ideal_gas_is_flat(c1):
    """Ideal gas T = P v with c_v = 3/2 + c1 T: the metric diag(c_v(T)/T^2, 1/v^2) is a
    product metric, so R = 0 (Ruppeiner 1995 for constant c_v)."""
    T = Psym * vsym
    c0 = sp.Rational(3, 2)
    phi = -c0 * (T * sp.log(T) - T) - sp.nsimplify(c1) * T**2 / 2
    fam = Family(name=f"ideal-gas-test-{int(c1 * 10)}", summary="ideal gas (test)",
                 reference="ideal gas, exact", dimension=4, temperature=T,
                 gibbs=-T * sp.log(vsym) + phi + Psym * vsym, state=vsym,
                 specific_volume=vsym, conditions=(vsym > 0,), gravitational=False,
                 typical_state=1, typical_pressure=1)
    th = bind(fam)
    v = np.geomspace(0.3, 30.0, 25)
    cv = th.quantity("C_V", v, 0.5)
    np.testing.assert_allclose(cv, 1.5 + c1 * 0.5 * v, rtol=1e-12)
    R = ruppeiner_scalar(th, v, 0.5)
    assert np.max(np.abs(R * v)) < 1e-10


def test_rn_ads_critical_amplitude_is_minus_one_eighth():
    """WLM 2019 / Mansoori, Rafiee & Wei 2020: R_N (1 - T/T_c)^2 -> -1/8 on both coexisting
    branches (fit of A + B t^(1/2) + C t + D t^(3/2) + E t^2 over t in [1e-5, 1e-2]);
    measured |A + 1/8| ~ 5e-9."""
    th = bind("rn-ads", Q=1.0)
    amp = critical_amplitude(th)
    assert amp.small.amplitude == pytest.approx(-0.125, abs=1e-7)
    assert amp.large.amplitude == pytest.approx(-0.125, abs=1e-7)
    assert amp.fit_range[0] < 2e-5 and amp.fit_range[1] > 5e-3
    # the approach is slow: a single point at t ~ 1e-3 is still off by ~1e-2
    i = int(np.argmin(np.abs(amp.small.t - 1e-3)))
    assert abs(amp.small.values[i] + 0.125) > 1e-3
    # above T_c along the critical isochore the amplitude is -1/2 (Mansoori et al. 2020)
    assert isochore_amplitude(th, amp.critical_point) == pytest.approx(-0.5, abs=1e-8)


def test_amplitude_universal_in_higher_d():
    """Mansoori, Rafiee & Wei 2020: the same -1/8 for higher-dimensional charged AdS."""
    amp = critical_amplitude(bind("rn-ads", Q=1.0, d=5))
    assert amp.small.amplitude == pytest.approx(-0.125, abs=1e-6)
    assert amp.large.amplitude == pytest.approx(-0.125, abs=1e-6)


def _parser():
    """The real command-line parser (the analysis commands are registered in it)."""
    from bhchem.cli.main import build_parser
    return build_parser()


def test_cli_curvature_json_and_sign_map(capsys, tmp_path):
    fig = tmp_path / "rn.png"
    args = _parser().parse_args(["curvature", "rn-ads", "-p", "Q=1", "--json", "-o", str(fig)])
    assert args.func(args) == 0
    out, err = capsys.readouterr()
    doc = json.loads(out)
    assert {"convention", "critical_amplitude"} <= set(doc)
    assert "R = -2K" in doc["convention"]["sign"]
    amp = doc["critical_amplitude"]
    assert {"small", "large", "fit_range"} <= set(amp)
    assert amp["small"] == pytest.approx(-0.125, abs=1e-7)
    assert fig.stat().st_size > 10_000 and "wrote" in err
    # the map itself: both signs present, repulsive only left of v = 2 sqrt(2) Q
    cmap = curvature_map(bind("rn-ads", Q=1.0), nx=80, nT=60, with_amplitude=False)
    R = cmap.R_N
    assert np.nanmax(R) > 0 > np.nanmin(R)
    rep_v = np.broadcast_to(cmap.v[None, :], R.shape)[R > 0]
    assert np.max(rep_v) < 2 * math.sqrt(2) * 1.0 * (1 + 1e-12)
    assert len(cmap.coexistence) > 20 and len(cmap.spinodal) > 20
