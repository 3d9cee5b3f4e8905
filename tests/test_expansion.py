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
    assert set(doc) - {"convention", "admissibility", "ensemble"} == {"inversion", "isenthalps",
                                                                   "notes"}
    assert set(doc["inversion"]) == {"points", "T_min", "ratio_to_Tc", "T_c", "P_at_min",
                                     "x_at_min", "at_low_pressure_end", "residual",
                                     "why_no_T_min", "pressure_range", "headline_branch",
                                     "branches"}
    assert [set(b) for b in doc["inversion"]["branches"]] == [
        {"points", "ends", "reaches_zero_pressure", "T_min", "P_at_min", "x_at_min",
         "minimum_at", "residual", "converged", "why_no_minimum"}]
    assert doc["inversion"]["branches"][0]["ends"] == ["top of the pressure range", "P = 0"]
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


# -- user files: Euler-Heisenberg-AdS and 4D Gauss-Bonnet-AdS (issue 12, items 4 and 5) ----------
# Both families are loaded as a researcher would, through the family-file loader, from the example
# files in examples/families/.  The independent references below are derived here with sympy at
# 50 digits from the M and S that the files declare (metric forms named beside each file: Magos &
# Breton, PRD 102 (2020) 084011 for Euler-Heisenberg, from memory; the regularised 4D
# Gauss-Bonnet metric, from memory), never from the tool's own functions.
import sympy as sp  # noqa: E402

from bhchem.declare import registry  # noqa: E402
from bhchem.cli.main import main  # noqa: E402
from bhchem.present.analysis_text import expansion_json  # noqa: E402
from bhchem.numerics import bracketed_root  # noqa: E402

EXAMPLES = __import__("pathlib").Path(__file__).resolve().parents[1] / "examples" / "families"
EH_FILE = EXAMPLES / "euler_heisenberg_ads.toml"
GB_FILE = EXAMPLES / "gauss_bonnet_4d_ads.toml"
_r, _P, _T = sp.symbols("r P T", positive=True)


def _eh_M_S(Q, a):
    """M and S of the Euler-Heisenberg-AdS file (f(r+) = 0 of the Magos-Breton metric, area law)."""
    Q, a = sp.Rational(str(Q)), sp.Rational(str(a))
    return (_r / 2 * (1 + 8 * sp.pi * _P * _r**2 / 3 + Q**2 / _r**2 - a * Q**4 / (20 * _r**6)),
            sp.pi * _r**2)


def _gb_M_S(Q, alpha):
    """M and S of the 4D Gauss-Bonnet-AdS file (f(r+) = 0; Wald entropy with the log term)."""
    Q, al = sp.Rational(str(Q)), sp.Rational(str(alpha))
    return (_r / 2 * (1 + (al + Q**2) / _r**2 + 8 * sp.pi * _P * _r**2 / 3),
            sp.pi * _r**2 + 4 * sp.pi * al * sp.log(_r))


def _exact_zero_pressure_inversion(M, S, dps=50):
    """(r_i, T_i) of the physical P = 0 inversion state, derived exactly: T = (dM/dS)_P,
    V = (dM/dP)_S, inversion T = V (dT/dV)_P (mu = 0), i.e. T V_r - V T_r = 0 at fixed P; at
    P = 0 its numerator is a polynomial in r whose real positive roots are isolated at `dps`
    digits; the physical one has T > 0 (there must be exactly one)."""
    T = sp.diff(M, _r) / sp.diff(S, _r)
    V = sp.diff(M, _P)  # S depends on r only, so fixed S is fixed r
    num = sp.numer(sp.together((T * sp.diff(V, _r) - V * sp.diff(T, _r)).subs(_P, 0)))
    roots = sp.Poly(sp.expand(num), _r).nroots(n=dps, maxsteps=200)
    phys = []
    for rt in roots:
        if abs(sp.im(rt)) < sp.Float(10) ** (-dps // 2) and sp.re(rt) > 0:
            t = T.subs({_P: 0, _r: sp.re(rt)}).evalf(dps)
            if t > 0:
                phys.append((sp.re(rt), t))
    assert len(phys) == 1, phys
    return float(phys[0][0]), float(phys[0][1])


def _exact_critical_temperature(M, S, dps=50):
    """T_c of the (single) physical critical point, derived exactly: solve T(r, P) = T for P,
    then dP/dr = d2P/dr2 = 0 at fixed T (v = 2r in 4D, so r is as good as v); eliminate T."""
    T = sp.diff(M, _r) / sp.diff(S, _r)
    Pr = sp.solve(sp.Eq(T, _T), _P)[0]
    T_of_r = sp.solve(sp.diff(Pr, _r), _T)[0]
    num = sp.numer(sp.together(sp.diff(Pr, _r, 2).subs(_T, T_of_r)))
    out = []
    for rt in sp.Poly(sp.expand(num), _r).nroots(n=dps, maxsteps=200):
        if abs(sp.im(rt)) < sp.Float(10) ** (-dps // 2) and sp.re(rt) > 0:
            tc = T_of_r.subs(_r, sp.re(rt)).evalf(dps)
            pc = Pr.subs({_T: tc, _r: sp.re(rt)}).evalf(dps)
            if tc > 0 and pc > 0:
                out.append(float(tc))
    assert len(out) == 1, out
    return out[0]


def _load(path):
    registry.load_family_file(path)


def _cli(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def _no_inf_nan(text):
    words = text.replace(",", " ").replace(";", " ").replace("(", " ").replace(")", " ").split()
    return not any(w.lower() in ("inf", "-inf", "nan", "+inf") for w in words)


def test_euler_heisenberg_file_minimum_inversion_temperature(capsys):
    """Issue 12 item 4: the EH-AdS file (Q = 1, a = 0.1) printed T_i,min = inf.  The headline is
    the minimum of the branch that reaches P -> 0; at the P = 0 end it equals the exact P = 0
    inversion temperature derived here at 50 digits (agreement to 1e-10 relative), and its ratio
    to the exact T_c (derived here too) is what the CLI prints, in text and in JSON."""
    _load(EH_FILE)
    Q, a = 1.0, 0.1
    M, S = _eh_M_S(Q, a)
    r_i, T_i = _exact_zero_pressure_inversion(M, S)
    T_c = _exact_critical_temperature(M, S)
    code, out, err = _cli(capsys, "expansion", "euler-heisenberg-ads", "--family-file", str(EH_FILE),
                          "-p", f"Q={Q},a={a}", "--json")
    assert code == 0, err
    inv = json.loads(out)["inversion"]
    assert inv["T_min"] == pytest.approx(T_i, rel=1e-10)
    assert inv["ratio_to_Tc"] == pytest.approx(T_i / T_c, rel=1e-10)
    zero = [b for b in inv["branches"] if b["reaches_zero_pressure"]]
    assert len(zero) == 1 and zero[0]["T_min"] == inv["T_min"]
    assert zero[0]["x_at_min"] == pytest.approx(r_i, rel=1e-10) and zero[0]["P_at_min"] == 0.0
    # the text says the same, and never inf or nan
    code, text, err = _cli(capsys, "expansion", "euler-heisenberg-ads", "--family-file",
                           str(EH_FILE), "-p", f"Q={Q},a={a}")
    assert code == 0, err
    assert _no_inf_nan(text), text
    line, = [ln for ln in text.splitlines() if "T_i,min =" in ln]
    assert float(line.split("T_i,min =")[1].split()[0]) == pytest.approx(T_i, rel=1e-10)
    assert "P -> 0" in line


def test_euler_heisenberg_inversion_branches():
    """The EH inversion curve, branch by branch.  Exact (derived here): with T linear in P the
    inversion condition T V_r = V T_r is linear in P, so every inversion state lies on
    P_i(r) = -1/(4 pi r^2) + 3Q^2/(8 pi r^4) - 5aQ^4/(32 pi r^8) (sympy solves it below) with
    T_i(r) = T(r, P_i(r)).  The range used by default reaches a second, coupling-dominated branch
    that does not reach P = 0: it starts at the edge of the physical domain, where T_i(r) = 0, so
    it has no minimum of its own, and the tool says so in one line instead of giving a number."""
    _load(EH_FILE)
    Q, a = 1.0, 0.1
    M, S = _eh_M_S(Q, a)
    T = sp.diff(M, _r) / sp.diff(S, _r)
    V = sp.diff(M, _P)
    P_i = sp.solve(sp.Eq(T * sp.diff(V, _r), V * sp.diff(T, _r)), _P)[0]
    assert sp.simplify(P_i - (-1 / (4 * sp.pi * _r**2) + sp.Rational(3, 8) / (sp.pi * _r**4)
                              - sp.Rational(5, 320) / (sp.pi * _r**8))) == 0
    T_i = sp.simplify(T.subs(_P, P_i))
    fP, fT = sp.lambdify(_r, P_i, "numpy"), sp.lambdify(_r, T_i, "numpy")
    th = bind("euler-heisenberg-ads", Q=Q, a=a)
    res = joule_thomson_expansion(th)
    inv = res.inversion
    assert len(inv.branches) == 2
    for b in inv.branches:
        np.testing.assert_allclose(b.P, fP(b.x), rtol=1e-9, atol=1e-14)
        np.testing.assert_allclose(b.T, fT(b.x), rtol=1e-9)
        assert np.all(np.diff(b.P) != 0) and len(set(np.sign(np.diff(b.P)))) == 1  # monotone in P
    low, = [b for b in inv.branches if b.reaches_zero_pressure]
    other, = [b for b in inv.branches if not b.reaches_zero_pressure]
    assert inv.branches[inv.headline] is low and low.T_min == inv.T_min
    # the second branch: at smaller r, P > 0 everywhere on it, ends at T_i = 0 (exact root below)
    r_edge = max(float(rt) for rt in sp.Poly(sp.numer(sp.together(T_i)), _r).nroots(n=30)
                 if rt.is_real and rt > 0 and fP(float(rt)) > 0)
    assert other.x.max() < low.x.min() and other.P.min() > 0
    assert other.ends[0].startswith("edge of the physical domain") and "T >= 0" in other.ends[0]
    assert other.x.min() > r_edge and other.x.min() == pytest.approx(r_edge, rel=1e-2)
    assert other.T_min is None and "\n" not in other.why_no_minimum
    assert "edge of the physical domain" in other.why_no_minimum
    assert low.ends[1] == "P = 0" and low.converged and low.residual < 1e-12
    doc = expansion_json(res)
    assert [b["reaches_zero_pressure"] for b in doc["inversion"]["branches"]] == \
        [b.reaches_zero_pressure for b in inv.branches]


def test_gauss_bonnet_file_pressure_range_stays_inside_the_condition(capsys):
    """Issue 12 item 5: the 4D Gauss-Bonnet file declares 32 pi P alpha < 3 (a real AdS vacuum).
    A pressure range asked beyond it is cut at the condition, with a one-line note naming it, and
    every inversion and isenthalp state satisfies it; the default range is inside too."""
    _load(GB_FILE)
    alpha = 1.0
    bound = 3 / (32 * math.pi * alpha)  # the declared condition, solved for P
    th = bind("gauss-bonnet-4d-ads", Q=0.0, alpha=alpha)
    inv = inversion_curve(th, pressure_max=0.05)
    assert inv.pressure_range[1] < bound and inv.pressure_range[1] == pytest.approx(bound, rel=1e-9)
    assert inv.T.size and np.all(32 * math.pi * inv.P * alpha < 3)
    for extra in ([], ["--pressure-max", "0.05"]):
        code, out, err = _cli(capsys, "expansion", "gauss-bonnet-4d-ads", "--family-file",
                              str(GB_FILE), "-p", f"Q=0,alpha={alpha}", "--json", *extra)
        assert code == 0, err
        doc = json.loads(out)
        pts = [p for p in doc["inversion"]["points"]]
        pts += [p for c in doc["isenthalps"] for p in c["points"]]
        assert pts and all(32 * math.pi * P * alpha < 3 for _, P in pts)
        assert doc["inversion"]["pressure_range"][1] < bound
    assert doc["inversion"]["pressure_range"][1] == pytest.approx(bound, rel=1e-9)
    code, text, err = _cli(capsys, "expansion", "gauss-bonnet-4d-ads", "--family-file", str(GB_FILE),
                           "-p", f"Q=0,alpha={alpha}", "--pressure-max", "0.05")
    assert code == 0 and _no_inf_nan(text)
    note, = [ln for ln in text.splitlines() if "32*pi*P*alpha < 3" in ln]
    assert "note:" in note


@pytest.mark.parametrize("Q, alpha", [(1.0, 0.2), (1.0, 3.0), (0.0, 1.0)])
def test_gauss_bonnet_file_runs_and_matches_the_exact_zero_pressure_inversion(capsys, Q, alpha):
    """Issue 12 item 5: `expansion` on the 4D Gauss-Bonnet file ended in 'internal error:
    ValueError: f(a) and f(b) must have different signs' (Q = 1 with alpha = 0.2 or 3: a default
    mass sat exactly on a bracket end).  Now it runs; its T_i,min is the exact P = 0 inversion
    temperature derived here (1e-10 relative), and the maximum of each default isenthalp lies on
    the inversion curve (mu = 0 there, Joule-Thomson: the maximum of T(P) at fixed M)."""
    _load(GB_FILE)
    M, S = _gb_M_S(Q, alpha)
    r_i, T_i = _exact_zero_pressure_inversion(M, S)
    code, text, err = _cli(capsys, "expansion", "gauss-bonnet-4d-ads", "--family-file",
                           str(GB_FILE), "-p", f"Q={Q},alpha={alpha}")
    assert code == 0, err
    assert _no_inf_nan(text), text
    th = bind("gauss-bonnet-4d-ads", Q=Q, alpha=alpha)
    res = joule_thomson_expansion(th)
    assert res.inversion.T_min == pytest.approx(T_i, rel=1e-10)
    assert res.inversion.x_at_min == pytest.approx(r_i, rel=1e-10)
    assert res.inversion.pressure_range[1] < 3 / (32 * math.pi * alpha)
    with_max = [c for c in res.isenthalps if c.T_max is not None]
    assert len(with_max) >= 2
    for c in with_max:
        assert abs(c.mu_at_max) < 1e-12
        T_inv = [T for x, T in inversion_states(th, c.P_at_T_max)]
        assert min(abs(T - c.T_max) for T in T_inv) <= 1e-10 * c.T_max


def test_bracket_that_does_not_bracket_is_no_root():
    """A bracket without a sign change is 'no root here' (None), never an exception; an end that
    is an exact root is returned as it is (common practice for bracketing solvers)."""
    assert bracketed_root(lambda u: u * u + 1.0, -1.0, 1.0) is None
    assert bracketed_root(lambda u: float("nan"), 0.0, 1.0) is None
    assert bracketed_root(lambda u: u - 0.25, 0.25, 1.0) == 0.25
    assert bracketed_root(lambda u: math.cos(u), 0.0, 3.0) == pytest.approx(math.pi / 2, rel=1e-15)


def test_engine_corner_in_a_gap_of_the_physical_domain_is_named_honestly():
    """EH-AdS at P = 0.2 has physical states at tiny r (the a Q^4/r^7 term makes T > 0 there)
    and beyond extremality, with T < 0 in between (exact: T(r, P) from the file's M and S, r = 0.49
    gives T < 0).  A cycle corner inside that gap is refused with the physical volume pieces, none
    containing it; the message used to claim one span [1e-14, 7e14] that contains V = 0.5."""
    import re
    from bhchem.analysis.engines import state_at
    from bhchem.errors import StateDomainError
    _load(EH_FILE)
    th = bind("euler-heisenberg-ads", Q=1.0, a=0.1)
    M, S = _eh_M_S(1.0, 0.1)
    T = sp.diff(M, _r) / sp.diff(S, _r)
    V_gap = 0.5
    r_gap = (3 * V_gap / (4 * math.pi)) ** (1 / 3)
    assert float(T.subs({_P: sp.Rational(1, 5), _r: r_gap})) < 0  # inside the gap
    with pytest.raises(StateDomainError) as err:
        state_at(th, 0.2, V_gap)
    msg = str(err.value)
    assert "\n" not in msg
    pieces = [(float(a), float(b)) for a, b in re.findall(r"\[([0-9.e+-]+), ([0-9.e+-]+)\]", msg)]
    assert len(pieces) == 2
    assert all(not (a <= V_gap <= b) for a, b in pieces)
    assert pieces[0][1] < V_gap < pieces[1][0]


def test_euler_heisenberg_isenthalps_meet_the_branch_reaching_zero_pressure():
    """Joule-Thomson: the maximum of an isenthalp T(P) is an inversion point (mu = 0).  The
    default isenthalps of EH-AdS are placed on the branch that reaches P = 0, so each has an
    interior maximum with mu = 0 whose (P, T) is on that branch: T equals T_i(r) of the closed
    form derived in test_euler_heisenberg_inversion_branches at the state where P_i(r) = P.
    Each isenthalp stays on one piece of the physical domain (EH also has physical states at
    tiny r, with the same M; the isenthalp used to jump there) and keeps M fixed."""
    _load(EH_FILE)
    th = bind("euler-heisenberg-ads", Q=1.0, a=0.1)
    res = joule_thomson_expansion(th)
    M, S = _eh_M_S(1.0, 0.1)
    T = sp.diff(M, _r) / sp.diff(S, _r)
    V = sp.diff(M, _P)
    P_i = sp.solve(sp.Eq(T * sp.diff(V, _r), V * sp.diff(T, _r)), _P)[0]
    T_i = sp.simplify(T.subs(_P, P_i))
    assert len(res.isenthalps) == 4
    for c in res.isenthalps:
        assert c.T_max is not None and abs(c.mu_at_max) < 1e-12
        low = res.inversion.branches[res.inversion.headline]
        # the inversion state on the P = 0 branch at P*: root of P_i(r) = P* between its ends
        r_star = sp.nsolve(P_i - sp.Float(c.P_at_T_max, 30), _r,
                           (float(low.x.min()), float(low.x.max())), solver="bisect", prec=30)
        assert c.T_max == pytest.approx(float(T_i.subs(_r, r_star)), rel=1e-10)
        np.testing.assert_allclose(th.M(c.x, c.P), c.M, rtol=1e-13)
        for (x1, P1), (x2, P2) in zip(zip(c.x[:-1], c.P[:-1]), zip(c.x[1:], c.P[1:])):
            assert np.all(th.physical(np.geomspace(x1, x2, 50), P2))


def test_van_der_waals_default_expansion_accepts_negative_enthalpies():
    """A fluid's enthalpy H = U + PV may be negative (vdW: U = c T - a/v, textbook): the
    default run chose such isenthalps and then refused them ('masses must be positive').  The lowest
    inversion temperature is 3/4 T_c (textbook, re-derived in test_van_der_waals_inversion_curve)
    and every default isenthalp has its maximum on the inversion curve."""
    th = bind("vdw-fluid", a=1.0, b=1.0)
    res = joule_thomson_expansion(th)
    assert res.inversion.ratio_to_Tc == pytest.approx(0.75, abs=1e-12)
    assert any(c.M < 0 for c in res.isenthalps)
    for c in res.isenthalps:
        assert c.T_max is not None and abs(c.mu_at_max) < 1e-12
        v = np.array([x for x, T in inversion_states(th, c.P_at_T_max)])
        assert np.min(np.abs(2 * (v - 1) ** 2 / v**2 / c.T_max - 1)) < 1e-10
    # a value no physical state has (M < 0 for charged AdS: M >= M_extremal > 0) is an empty
    # isenthalp with a note, not a number
    res = joule_thomson_expansion(bind("rn-ads", Q=1.0), masses=[-1.0], pressure_max=0.1)
    assert res.isenthalps[0].T.size == 0
    assert "no physical state with M = -1 in the pressure range" in res.notes


def test_branch_running_toward_zero_pressure_has_no_minimum():
    """Planar (k = 0) charged Gauss-Bonnet-AdS in d = 5: T = 4Pr/3 - c/r^5 with c = 2Q^2/(3 pi^3)
    (the family's T; alpha drops out for k = 0) and V proportional to r^4.  Derived here:
    T = V (dT/dV)_P = (r/4) T_r gives P_i = 9c/(4 r^6), T_i = 2c/r^5 = 2c (4 P_i/(9c))^(5/6),
    so the curve runs into P -> 0 only as r -> infinity, with T_i -> 0: there is no state at
    P = 0 and no minimum inversion temperature, which the tool must say instead of a number."""
    th = bind("gauss-bonnet-ads", d=5, k=0, alpha=0.05, Q=1.0)
    sym = {s.name: s for s in th.derivation.quantities["T"].free_symbols}
    T = th.derivation.quantities["T"].subs(sym["Q"], 1)
    r = th.derivation.state
    c = 2 / (3 * sp.pi**3)
    assert sp.simplify(T - (4 * sym["P"] * r / 3 - c / r**5)) == 0
    V = th.derivation.quantities["V"]
    assert sp.simplify(r * sp.diff(V, r) / V) == 4  # V proportional to r^4
    inv = inversion_curve(th, pressure_max=0.05)
    cf = float(c)
    assert len(inv.branches) == 1
    b = inv.branches[0]
    np.testing.assert_allclose(b.P, 9 * cf / (4 * b.x**6), rtol=1e-9)
    np.testing.assert_allclose(b.T, 2 * cf / b.x**5, rtol=1e-9)
    assert not b.reaches_zero_pressure and b.ends[1] == "approach to P -> 0 (no state at P = 0)"
    assert inv.T_min is None and inv.ratio_to_Tc is None and "\n" not in inv.why_no_T_min
    assert "runs toward P -> 0 without reaching it" in inv.why_no_T_min


_TOY = '''
name = "toy-inversion-minimum"
summary = "invented test scenario: an inversion curve whose temperature has an inner minimum"
reference = "invented for the bhchem tests (no paper)"

[dimension]
default = 4
minimum = 4
maximum = 4

[parameters.k1]
default = 1.0
length_dimension = "0"
domain = "> 0"

[parameters.k2]
default = 1.0
length_dimension = "-2"
domain = "> 0"

[expressions]
M = "r/2 * (-4*pi*k1 + 8*pi*P*r^2/3 + 8*pi*k2*(r^2*ln(r)/3 - r^2/9))"
S = "pi*r^2"
'''


def test_minimum_inside_a_branch_is_refined(tmp_path):
    """A minimum of T_i inside the branch (not at P = 0) is refined by a bounded minimisation.
    Invented family (4D, V = 4 pi r^3/3) built for this test.  Derived here: with
    M = r/2 (1 + 8 pi P r^2/3 + g) and S = pi r^2, T = 2Pr + h/(4 pi r), h = 1 + (r g)', and
    T = V (dT/dV)_P gives P_i = (r h' - 4h)/(16 pi r^2), T_i = (r h' - 2h)/(8 pi r).  The M
    above has h = -4 pi k1 + 8 pi k2 r^2 ln r, so T_i = k1/r + k2 r and
    P_i = k1/r^2 + k2/2 - k2 ln r (monotone in r): the minimum T_i = 2 sqrt(k1 k2) sits at
    r* = sqrt(k1/k2), P* = k2 (3 - ln(k1/k2))/2 (sympy re-derives both below).  T to 1e-12; the location of a quadratic minimum only to ~sqrt(machine epsilon)
    (common practice), so r* and P* to 1e-6."""
    from bhchem.declare.declarative import load_declarative
    path = tmp_path / "toy.toml"
    path.write_text(_TOY)
    fam, = load_declarative(path)
    k1, k2 = 0.7, 1.9
    th = bind(fam, k1=k1, k2=k2)
    rr = sp.Symbol("rr", positive=True)
    h = -4 * sp.pi * k1 + 8 * sp.pi * k2 * rr**2 * sp.log(rr)
    P_i = (rr * sp.diff(h, rr) - 4 * h) / (16 * sp.pi * rr**2)
    T_i = sp.simplify((rr * sp.diff(h, rr) - 2 * h) / (8 * sp.pi * rr))
    r_star = sp.nsolve(sp.diff(T_i, rr), rr, 1.0)
    T_star, P_star = float(T_i.subs(rr, r_star)), float(P_i.subs(rr, r_star))
    assert T_star == pytest.approx(2 * math.sqrt(k1 * k2), rel=1e-14)
    assert P_star == pytest.approx(k2 * (3 - math.log(k1 / k2)) / 2, rel=1e-14)
    inv = inversion_curve(th, pressure_max=3 * P_star)
    assert len(inv.branches) == 1 and inv.branches[0].reaches_zero_pressure
    np.testing.assert_allclose(inv.T, [float(T_i.subs(rr, x)) for x in inv.x], rtol=1e-10)
    assert not inv.at_low_pressure_end and inv.branches[0].minimum_at == "inside"
    assert inv.branches[0].converged and inv.residual < 1e-12
    assert inv.T_min == pytest.approx(T_star, rel=1e-12)
    assert inv.P_at_min == pytest.approx(P_star, rel=1e-6)
    assert inv.x_at_min == pytest.approx(float(r_star), rel=1e-6)
