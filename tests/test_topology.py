"""Thermodynamic topology, the free-energy landscape and first-passage kinetics, and the
reverse isoperimetric ratio (issue 16), each checked against the source named beside it."""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
import sympy as sp

from bhchem import analyze_isobar, bind, find_critical_points
from bhchem.analysis.critical_branch import find_critical_points_on_branches
from bhchem.analysis.isoperimetric import isoperimetric_ratio, isoperimetric_survey
from bhchem.analysis.landscape import (first_passage, free_energy_landscape, mfpt_integral,
                                       solve_fokker_planck)
from bhchem.analysis.topology import (contour_winding, critical_point_charge,
                                      thermodynamic_topology, zeros_at)
from bhchem.cli.main import main
from bhchem.declare.symbols import pi


def _all_agree(res):
    assert res.converged, res.warnings
    for s in res.samples:
        assert s.agree, s
        assert s.W_contour == s.W
        for z in s.zeros:
            assert z.winding == z.sign_formula
    return True


# -- winding numbers and classes -------------------------------------------------------------
def test_schwarzschild_ads_has_W_0():
    # Wei, Liu & Mann, PRL 129 (2022) 191101, arXiv:2208.01932: small branch -1, large +1,
    # W = 0; class W^{0-} (Wei, Liu & Mann, PRD 110 (2024) L081501, arXiv:2409.09333)
    res = thermodynamic_topology(bind("schwarzschild-ads"), 0.01)
    assert [b.winding for b in res.branches] == [-1, 1]
    assert res.W == 0 and res.topological_class == "W^{0-}"
    assert res.tau_limits == {"small": "0", "large": "0"}
    assert _all_agree(res)
    two = [s for s in res.samples if len(s.zeros) == 2]
    assert two and [z.winding for z in two[0].zeros] == [-1, 1]
    # the annihilation point is the minimum of T: r = 1/sqrt(8 pi P) (derived: T_r = 0)
    (ev,) = res.events
    assert ev.kind == "annihilation" and ev.W_conserved
    assert ev.x == pytest.approx(1 / math.sqrt(8 * math.pi * 0.01), rel=1e-12)


def test_flat_schwarzschild_limit_has_W_minus_1():
    # WLM22 (same paper): the asymptotically flat Schwarzschild hole (P -> 0) has one
    # unstable branch, W = -1; class W^{1-} (WLM24)
    res = thermodynamic_topology(bind("schwarzschild-ads"), 0.0, taus=(1.0, 100.0))
    assert res.W == -1 and res.topological_class == "W^{1-}"
    assert all(s.W == -1 for s in res.samples)
    assert _all_agree(res)


@pytest.mark.parametrize("P_over_Pc", [0.5, 2.0])
def test_charged_ads_has_W_1(P_over_Pc):
    # WLM22: the 4D charged AdS black hole has W = 1 below and above P_c; class W^{1+}
    # (WLM24).  Below P_c: a generation and an annihilation point, W conserved at both.
    th = bind("rn-ads", Q=1.0)
    P_c = 1 / (96 * math.pi)  # Kubiznak & Mann, JHEP 07 (2012) 033
    res = thermodynamic_topology(th, P_over_Pc * P_c)
    assert res.W == 1 and res.topological_class == "W^{1+}"
    assert all(s.W == 1 for s in res.samples)
    assert _all_agree(res)
    if P_over_Pc < 1:
        assert sorted(e.kind for e in res.events) == ["annihilation", "generation"]
        assert all(e.W_conserved for e in res.events)
        assert max(len(s.zeros) for s in res.samples) == 3


def test_charged_gauss_bonnet_ads_has_W_1():
    # Liu & Wang, arXiv:2211.05524: charged Gauss-Bonnet-AdS black holes have W = 1, as
    # charged AdS, for any parameters
    for params in ({"Q": 1.0, "alpha": 0.1}, {"Q": 0.5, "alpha": 1.0, "d": 6}):
        th = bind("gauss-bonnet-ads", **params)
        res = thermodynamic_topology(th, 0.01)
        assert res.W == 1 and res.topological_class == "W^{1+}", params
        assert _all_agree(res)


def test_contour_winding_of_known_fields():
    # index of z^n (as a real field) is n; of conj(z) is -1 (exact, textbook)
    def zpow(n):
        return lambda x, y: ((x + 1j * y) ** n).real, lambda x, y: ((x + 1j * y) ** n).imag
    for n in (1, 2, 3):
        re_, im_ = zpow(n)
        assert contour_winding(lambda x, y: (re_(x, y), im_(x, y)), (-1, 1), (-1, 1)).winding == n
    assert contour_winding(lambda x, y: (x, -y), (-1, 1), (-1, 1)).winding == -1
    c = contour_winding(lambda x, y: (x - 5, y), (-1, 1), (-1, 1))   # zero outside
    assert c.winding == 0 and c.converged


def test_zeros_on_shell_and_sign_formula_is_heat_capacity():
    # on-shell: tau = 1/T at every zero; sign formula = sign C_P (WLM22)
    th = bind("rn-ads", Q=1.0)
    P = 0.5 / (96 * math.pi)
    smp = zeros_at(th, P, 29.0)
    assert len(smp.zeros) == 3
    for z in smp.zeros:
        assert float(th.T(z.x, P)) == pytest.approx(1 / 29.0, rel=1e-13)
        assert z.sign_formula == int(np.sign(th.quantity("C_P", z.x, P)))


# -- critical points ------------------------------------------------------------------------------
def test_born_infeld_critical_point_charges():
    # Wei & Liu, PRD 105 (2022) 104003, arXiv:2112.01706: conventional critical points carry
    # -1, novel ones +1.  Born-Infeld-AdS at Q = 1, b = 0.4 has two; the (r+, P, T) values
    # are the tool's own critical points (already checked in tests/test_born_infeld_ads.py)
    th = bind("born-infeld-ads", Q=1.0, b=0.4)
    cps = sorted(find_critical_points(th).physical, key=lambda c: c.x)
    assert len(cps) == 2
    expected = [((1.1142, 0.0020161, 0.040493), 1, "novel"),
                ((2.0809, 0.0038075, 0.045890), -1, "conventional")]
    charges = []
    for cp, ((r, P, T), q, kind) in zip(cps, expected):
        assert (cp.r, cp.P, cp.T) == pytest.approx((r, P, T), rel=5e-5)
        ch = critical_point_charge(th, cp)
        assert ch.charge == q and ch.sign_formula == q and ch.agree and ch.kind == kind
        charges.append(ch.charge)
    assert sum(charges) == 0


def test_charged_ads_critical_point_is_conventional():
    # Wei & Liu 2022: the charged AdS critical point is conventional, charge -1; the sign
    # formula T~'' = -T_P T_rrr/T_rP derived here with sympy at r_c = sqrt(6) Q
    r, Pp, Q = sp.symbols("r P Q", positive=True)
    T = 1 / (4 * pi * r) + 2 * Pp * r - Q**2 / (4 * pi * r**3)
    Psp = sp.solve(sp.diff(T, r), Pp)[0]
    Tt = sp.simplify(T.subs(Pp, Psp))
    rc = sp.sqrt(6) * Q
    assert sp.simplify(sp.diff(Tt, r).subs(r, rc)) == 0
    assert sp.simplify(sp.diff(Tt, r, 2).subs(r, rc)).subs(Q, 1) < 0    # a maximum: -1
    th = bind("rn-ads", Q=1.0)
    (cp,) = find_critical_points(th).physical
    ch = critical_point_charge(th, cp)
    assert (ch.charge, ch.sign_formula, ch.kind) == (-1, -1, "conventional")


def test_degenerate_point_has_index_0_by_the_contour():
    # uncharged Gauss-Bonnet-AdS in d = 6 has a degenerate solution of the critical
    # conditions (no loop forms): T~ has an inflection there, so the index is 0 (a zero
    # where the field does not turn; exact), and T~'' = 0 silences the sign formula
    th = bind("gauss-bonnet-ads", Q=0.0, d=6)
    (cp,) = [c for c in find_critical_points(th).points if c.kind == "degenerate"]
    ch = critical_point_charge(th, cp)
    assert ch.charge == 0 and ch.sign_formula is None and ch.kind.startswith("degenerate")


def test_critical_cli_reports_charges(capsys):
    # wired through find_critical_points_on_branches into the API, text and JSON
    (cp,) = find_critical_points_on_branches(bind("rn-ads", Q=1.0)).physical
    assert cp.topological_charge.charge == -1
    assert main(["critical", "rn-ads"]) == 0
    out = capsys.readouterr().out
    assert "topological charge -1 (conventional; contour integral and sign formula agree)" in out
    assert "total topological charge of the physical critical points: -1" in out
    assert main(["critical", "rn-ads", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["critical_points"][0]["topological_charge"]["charge"] == -1
    assert doc["topological_charge"]["total"] == -1


# -- landscape and first passage ---------------------------------------------------------------
def test_hawking_page_landscape():
    # Schwarzschild-AdS at the Hawking-Page point, L = 1 (P = 3/(8 pi)), T_E = 1/pi: derive
    # G_L = M - T_E S, its extrema, G_L(1) = 0, the barrier 2/27 and G_L'' = -1, +1
    r = sp.symbols("r", positive=True)
    M = r / 2 * (1 + 8 * pi * sp.Rational(3, 8) / pi * r**2 / 3)   # P = 3/(8 pi): L = 1
    G = M - (1 / pi) * (pi * r**2)                                   # T_E = 1/pi, S = pi r^2
    ext = sorted(sp.solve(sp.diff(G, r), r))
    assert ext == [sp.Rational(1, 3), 1]
    assert G.subs(r, 1) == 0 and G.subs(r, sp.Rational(1, 3)) == sp.Rational(2, 27)
    assert [sp.diff(G, r, 2).subs(r, e) for e in ext] == [-1, 1]
    ls = free_energy_landscape(bind("schwarzschild-ads"), 1 / math.pi, 3 / (8 * math.pi))
    assert ls.converged
    edge, bar, well = ls.extrema
    assert edge.edge and edge.kind == "well" and edge.x == 0.0
    assert (bar.kind, well.kind) == ("barrier", "well")
    assert bar.x == pytest.approx(1 / 3, rel=1e-13) and well.x == pytest.approx(1, rel=1e-13)
    assert abs(well.G_L) < 1e-13 and bar.G_L == pytest.approx(2 / 27, rel=1e-13)
    assert bar.curvature == pytest.approx(-1, rel=1e-12)
    assert well.curvature == pytest.approx(1, rel=1e-12)


def test_mfpt_of_free_diffusion_both_ways():
    # G_L = 0 (free diffusion, reflecting at 0, absorbing at L): <t> = (L^2 - x0^2)/(2D),
    # derived with sympy from the backward equation D t'' = -1, t'(0) = 0, t(L) = 0
    x, x0, L, D = sp.symbols("x x0 L D", positive=True)
    t = sp.Function("t")
    sol = sp.dsolve(D * t(x).diff(x, 2) + 1, t(x),
                    ics={t(x).diff(x).subs(x, 0): 0, t(L): 0}).rhs
    exact = float(sol.subs({x: 0.3, L: 1, D: 0.5}))
    assert exact == pytest.approx((1 - 0.09) / 1.0)
    G = lambda y: np.zeros_like(np.asarray(y, float))  # noqa: E731
    assert math.exp(mfpt_integral(G, 0.5, 0.0, 0.3, 1.0)) == pytest.approx(exact, rel=1e-8)
    # the time-dependent solution (cells of h = 0.7/(j + 1/2) from the target, j = 34)
    h = 0.7 / 34.5
    n = int(1.0 / h)
    res = solve_fokker_planck(G, 0.5, 1.0, 1.0, h, n, 34)
    wall = 1.0 - n * h
    exact_wall = ((1 - wall) ** 2 - (0.3 - wall) ** 2) / (2 * 0.5)
    assert res[3] == pytest.approx(exact_wall, rel=2e-3)       # O(h^2) before Richardson


def test_first_passage_agrees_both_ways_and_with_kramers():
    # Li, Zhang & Wang, JHEP 10 (2020) 090, arXiv:2008.00495: Fokker-Planck kinetics of the
    # small/large transition of charged AdS at coexistence; the double integral and the
    # time-dependent solution must agree, and Kramers' rate applies for a high barrier
    th = bind("rn-ads", Q=1.0)
    P = 0.2 / (96 * math.pi)
    (tr,) = [t for t in analyze_isobar(th, P).transitions if t.kind == "first-order"]
    fp = first_passage(th, tr.T, P, start="small", target="well", n_cells=200)
    assert fp.converged and fp.relative_difference < 1e-4
    assert fp.barrier_height > 10 and fp.kramers_time is not None
    assert fp.kramers_time == pytest.approx(fp.mfpt_integral, rel=0.15)
    assert "zeta" in fp.time_unit
    # near P_c the barrier is low: no Kramers rate, a warning instead
    P = 0.7 / (96 * math.pi)
    (tr,) = [t for t in analyze_isobar(th, P).transitions if t.kind == "first-order"]
    fp = first_passage(th, tr.T, P, n_cells=200)
    assert fp.converged and fp.kramers_rate is None
    assert any("too low for Kramers" in w for w in fp.warnings)


# -- reverse isoperimetric ratio ---------------------------------------------------------------
def test_kerr_ads_reverse_isoperimetric_ratio():
    # Cvetic, Gibbons, Kubiznak & Pope, PRD 84 (2011) 024037, arXiv:1012.2888: R > 1 for
    # every rotating Kerr-AdS state, R = 1 in the static limit
    rot = isoperimetric_survey(bind("kerr-ads", J=1.0))
    assert rot.n_states > 20 and rot.R_min > 1 and not rot.super_entropic
    static = bind("kerr-ads", J=0.0)
    S = np.geomspace(0.1, 100, 50)
    assert np.allclose(isoperimetric_ratio(static, S, 0.01), 1.0, rtol=1e-13, atol=0)
    # and R = 1 for every static spherical family in r (A = Omega r^(d-2))
    assert isoperimetric_survey(bind("gauss-bonnet-ads")).R_max == pytest.approx(1, abs=1e-12)


def test_super_entropic_states_flagged_in_show(capsys, tmp_path):
    # an invented toy (no paper): the P-term of M halved, so V = (2 pi/3) r^3 and
    # R = (1/2)^(1/3) < 1 at every state: super-entropic (Hennigar, Kubiznak & Mann,
    # PRL 115 (2015) 031101)
    f = tmp_path / "toy_small_volume.py"
    f.write_text(
        "from bhchem.declare import Family\n"
        "from bhchem.declare.symbols import P, pi, r\n"
        "FAMILY = Family(name='toy-small-volume', summary='toy: V halved', reference='none',\n"
        "    dimension=4, parameters=(), enthalpy=r / 2 + 2 * pi * P * r**3 / 3,\n"
        "    entropy=pi * r**2)\n")
    assert main(["show", "toy-small-volume", "--family-file", str(f)]) == 0
    out = capsys.readouterr().out
    assert "SUPER-ENTROPIC" in out
    assert main(["show", "toy-small-volume", "--family-file", str(f), "--json"]) == 0
    iso = json.loads(capsys.readouterr().out)["isoperimetric"]
    assert iso["super_entropic"] is True
    assert iso["R_min"] == pytest.approx(0.5 ** (1 / 3), rel=1e-12)
    # and on the T-r figure: every drawn state is marked (none for charged AdS)
    from bhchem import load_family_file
    from bhchem.analysis.figure_data import tr_curves
    from bhchem.present.plots import plot_tr
    (fam,) = load_family_file(f)
    data = tr_curves(bind(fam), pressures=[0.01])
    n = sum(len(b.curve) for iso_ in data.isobars for b in iso_)
    assert len(data.super_entropic) == n > 0
    assert "super_entropic" in plot_tr(data).data
    assert len(tr_curves(bind("rn-ads", Q=1.0), pressures=[0.002]).super_entropic) == 0


# -- command line ------------------------------------------------------------------------------
def test_topology_and_landscape_cli(capsys, tmp_path):
    assert main(["topology", "rn-ads", "-p", "Q=1", "--tau", "30", "-o",
                 str(tmp_path / "tau.png")]) == 0
    out = capsys.readouterr().out
    assert "W^{1+}" in out and "generation" in out and "charge -1 (conventional" in out
    assert (tmp_path / "tau.png").stat().st_size > 0
    assert main(["topology", "schwarzschild-ads", "--pressure", "0", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["class"] == "W^{1-}" and doc["W"] == -1
    assert main(["landscape", "rn-ads", "-p", "Q=1", "--pressure", "0.5Pc", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    fp = doc["first_passage"]
    assert fp["converged"] and "zeta" in fp["time_unit"]
    assert [e["kind"] for e in doc["extrema"]] == ["well", "barrier", "well"]


@pytest.mark.parametrize("argv", [
    ["topology", "rn-ads", "--tau", "-1"],
    ["topology", "rn-ads", "--tau", "nan"],
    ["landscape", "rn-ads", "--temperature", "0"],
    ["landscape", "rn-ads", "--pressure", "-1"],
    ["landscape", "rn-ads", "--target", "nowhere"],
])
def test_bad_input_is_one_line(argv, capsys):
    code = main(argv)
    err = capsys.readouterr().err
    assert code == 2
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_report_topology_section():
    # the report bundle's issue-16 part (``bhchem report --topology``), without the bundle
    from bhchem.present.report_text import report_md
    from bhchem.workflows.report import topology_results
    doc, figures = topology_results(bind("rn-ads", Q=1.0))
    assert doc["topology"]["class"] == "W^{1+}" and doc["landscape"]["first_passage"]["converged"]
    assert [n for n, _, _ in figures] == ["tau", "landscape", "first-passage"]
    fake = {"family": {"name": "rn-ads", "summary": "", "reference": ""}, "parameters": {},
            "provenance": {"version": "0", "date": "today"}, "convention": {},
            "quantities": {}, "equation_of_state": {}, "first_law": {"message": ""},
            "smarr": {"message": ""}, "critical": {"message": "", "critical_points": []},
            "phases": {"structure": "", "graph": {"distinct_phases": 1}, "message": "",
                       "lines": [], "triple_points": [], "warnings": []}, **doc}
    md = report_md(fake, [], 6)
    assert "## Thermodynamic topology" in md and "W^{1+}" in md


@pytest.mark.parametrize("argv", [
    ["topology", "rn-ads", "--pressure", "1e-300"],
    ["landscape", "rn-ads", "--pressure", "1e300", "--temperature", "1"],
])
def test_unrepresentable_pressures_are_refused(argv, capsys):
    assert main(argv) == 2
    assert "decades from the family's scale" in capsys.readouterr().err


def test_huge_barrier_gives_logarithms_not_inf(capsys):
    # Schwarzschild-AdS at P = 1e-6: the Hawking-Page barrier is ~3e4 T_E; <t> ~ 10^12067
    # is beyond double precision: its log10 is given, never inf
    assert main(["landscape", "schwarzschild-ads", "--pressure", "1e-6", "--json"]) == 0
    fp = json.loads(capsys.readouterr().out)["first_passage"]
    assert fp["mfpt_integral"] is None and fp["kramers_time"] is None
    assert 12000 < fp["log10_mfpt"] < 12200
    assert any("beyond double precision" in w for w in fp["warnings"])


def test_results_have_short_reprs_and_strict_json():
    from bhchem.present.serialize import strict_loads, to_json
    th = bind("rn-ads", Q=1.0)
    P = 0.5 / (96 * math.pi)
    results = [thermodynamic_topology(th, P), free_energy_landscape(th, 0.0328, P),
               first_passage(th, 0.0328, P, n_cells=100), isoperimetric_survey(th)]
    for res in results:
        text = repr(res)
        assert len(text) < 200 and "\n" not in text and text.startswith(type(res).__name__)
        strict_loads(to_json(res.to_dict()))


def test_fixed_potential_ensemble_has_the_schwarzschild_topology():
    """At fixed Phi < 1 the charged AdS hole's Gibbs energy is G = M - T S - Phi Q with
    M - Phi Q = (1 - Phi^2) r/2 + 4 pi P r^3/3 (Q = Phi r), so T = (1 - Phi^2 + 8 pi P r^2)/(4 pi r):
    Schwarzschild-AdS with 1 -> 1 - Phi^2 (the fixed-Phi equation of state of Kubiznak & Mann,
    JHEP 07 (2012) 033).  Its topology is therefore Schwarzschild-AdS's (Wei, Liu & Mann, PRL
    129 (2022) 191101): W = 0, small branch -1, large +1, annihilation at
    r = sqrt((1 - Phi^2)/(8 pi P)).  The off-shell F of the derived family is M - Phi Q - S/tau."""
    Phi, P = 0.5, 0.002
    th = bind("rn-ads", Phi_Q=Phi)
    res = thermodynamic_topology(th, P)
    assert res.W == 0
    assert [b.winding for b in res.branches] == [-1, 1]
    (ev,) = res.events
    assert ev.x == pytest.approx(math.sqrt((1 - Phi**2) / (8 * math.pi * P)), rel=1e-10)
