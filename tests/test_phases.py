"""Isobars, coexistence lines, phase diagrams and the phase graph."""
import json
import math

import mpmath as mp
import numpy as np
import pytest

from bhchem import bind
from bhchem.cli.main import main
from bhchem.analysis.coexistence import coexistence_near_critical
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.isobar import analyze_isobar
from bhchem.analysis.phases import (distinct_phases, phase_diagram, same_structure,
                              supercritical_connection)

PC_RN = 1 / (96 * math.pi)
TC_RN = math.sqrt(6) / (18 * math.pi)


@pytest.fixture(scope="module")
def rn_diagram():
    return phase_diagram(bind("rn-ads", Q=1.0))


@pytest.fixture(scope="module")
def schw_diagram():
    return phase_diagram(bind("schwarzschild-ads"))


# -- isobars ---------------------------------------------------------------------------
def test_rn_isobar_below_critical():
    """Kubiznak & Mann 2012: below P_c the isobar has small/unstable/large branches and one
    first-order small -> large transition; latent heat L = T Delta S."""
    th = bind("rn-ads", Q=1.0)
    res = analyze_isobar(th, 0.5 * PC_RN)
    assert [b.stable for b in res.branches] == [True, False, True]
    assert [b.label for b in res.branches][0::2] == ["small", "large"]
    (t,) = res.transitions
    assert t.kind == "first-order" and (t.from_phase, t.to_phase) == ("small", "large")
    s1, s2 = t.states
    assert t.latent_heat == pytest.approx(t.T * (s2.S - s1.S), rel=1e-14)
    assert abs(s1.G - s2.G) <= 1e-14 * abs(s1.G)
    assert t.delta_v == pytest.approx(s2.v - s1.v, rel=1e-14) and t.delta_v > 0
    # the closed-form coexistence temperature (see test_rn_coexistence_closed_form)
    assert t.T == pytest.approx(TC_RN * math.sqrt(0.5 * (3 - math.sqrt(0.5)) / 2), rel=1e-12)


def test_rn_isobar_above_and_at_critical():
    th = bind("rn-ads", Q=1.0)
    assert analyze_isobar(th, 2 * PC_RN).transitions == ()
    cps = find_critical_points(th).physical
    res = analyze_isobar(th, cps[0].P, critical_points=cps)
    assert [t.kind for t in res.transitions] == ["second-order"]
    assert res.transitions[0].T == pytest.approx(TC_RN, rel=1e-12)


@pytest.mark.parametrize("L", [0.7, 2.0])
def test_schwarzschild_isobar_hawking_page(L):
    """Hawking & Page 1983: thermal AdS below T = 1/(pi L), the large black hole above."""
    th = bind("schwarzschild-ads")
    res = analyze_isobar(th, 3 / (8 * math.pi * L**2))
    (t,) = res.transitions
    assert t.kind == "hawking-page" and t.T == pytest.approx(1 / (math.pi * L), rel=1e-12)
    assert res.phase_at(0.5 / (math.pi * L)) == "thermal AdS"
    assert res.phase_at(2 / (math.pi * L)) == "large"


def test_no_black_hole_pressure_is_refused():
    from bhchem import StateDomainError
    with pytest.raises(StateDomainError, match="not positive"):
        analyze_isobar(bind("rn-ads"), -1.0)


# -- coexistence lines -------------------------------------------------------------------
@pytest.mark.parametrize("d", [4, 5, 7])
def test_hawking_page_line(d, schw_diagram):
    """Hawking-Page line T_HP = (d-2)/(2 pi L) with L^2 = (d-1)(d-2)/(16 pi P); in 4D
    T = sqrt(8P/(3 pi)) (Hawking & Page 1983; Kubiznak, Mann & Teo, CQG 34 (2017) 063001)."""
    pd = schw_diagram if d == 4 else phase_diagram(bind("schwarzschild-ads", d=d))
    (line,) = pd.lines
    assert line.kind == "hawking-page" and set(line.between) == {"thermal AdS", "large"}
    assert len(line.points) >= 50
    for T, P in line.points:
        L = math.sqrt((d - 1) * (d - 2) / (16 * math.pi * P))
        assert T == pytest.approx((d - 2) / (2 * math.pi * L), rel=1e-12)
        if d == 4:
            assert T == pytest.approx(math.sqrt(8 * P / (3 * math.pi)), rel=1e-12)
    assert pd.structure == "hawking-page"
    assert distinct_phases(pd.graph) == 2


def test_rn_line_ends_at_critical_point(rn_diagram):
    (line,) = rn_diagram.lines
    assert line.kind == "first-order"
    assert line.ends["high"]["type"] == "critical point"
    assert line.ends["high"]["T"] == pytest.approx(TC_RN, rel=1e-12)
    assert line.ends["high"]["P"] == pytest.approx(PC_RN, rel=1e-12)
    assert line.ends["low"]["type"] == "range end"
    c = line.checks
    assert c["max_residual_T"] <= 1e-12 and c["max_residual_G"] <= 1e-12
    assert c["max_equal_area_residual"] <= 1e-10
    assert c["max_clapeyron_residual"] <= 1e-10


def test_rn_coexistence_closed_form(rn_diagram):
    """4D charged AdS coexistence curve in reduced variables, T/T_c = sqrt(p (3 - sqrt p)/2),
    p = P/P_c (from memory: Spallucci & Smailagic, PLB 723 (2013) 436); it is confirmed
    independently below against a 50-digit mpmath solve.  Every point of the traced line,
    down to 1 - T/T_c ~ 1e-10, within 1e-12 relative."""
    (line,) = rn_diagram.lines
    worst, closest = 0.0, 1.0
    for T, P in line.points:
        p = P / PC_RN
        ref = TC_RN * math.sqrt(p * (3 - math.sqrt(p)) / 2)
        worst = max(worst, abs(T - ref) / TC_RN)
        closest = min(closest, 1 - T / TC_RN) if T < TC_RN else closest
    assert worst <= 1e-12
    assert closest <= 1e-8


@pytest.mark.parametrize("frac", [0.01, 0.3, 0.9])
def test_rn_coexistence_against_mpmath(frac):
    """Independent reference: equal T and G solved with mpmath at 50 digits."""
    mp.mp.dps = 50
    P = mp.mpf(frac) * PC_RN
    T = lambda r: 2 * P * r + 1 / (4 * mp.pi * r) - 1 / (4 * mp.pi * r**3)  # noqa: E731
    G = lambda r: r / 4 - 2 * mp.pi * P * r**3 / 3 + 3 / (4 * r)  # noqa: E731
    th = bind("rn-ads", Q=1.0)
    t = analyze_isobar(th, float(P)).transitions[0]
    r1, r2 = mp.findroot(lambda a, b: [T(a) - T(b), G(a) - G(b)],
                         (mp.mpf(t.states[0].x), mp.mpf(t.states[1].x)))
    assert t.T == pytest.approx(float(T(r1)), rel=1e-13)
    assert t.states[0].x == pytest.approx(float(r1), rel=1e-10)


def test_near_critical_accuracy():
    """|Delta T / T_c| <= 1e-12 down to 1 - T/T_c ~ 1e-8 (closed form above)."""
    th = bind("rn-ads", Q=1.0)
    cp = find_critical_points(th).points[0]
    for s in (1e-4, 1e-6, 1e-8, 2.7e-8):
        P = PC_RN * (1 - s)
        T, x1, x2 = coexistence_near_critical(th, cp.x, cp.P, P)
        p = P / PC_RN
        assert abs(T - TC_RN * math.sqrt(p * (3 - math.sqrt(p)) / 2)) / TC_RN <= 1e-12


def test_beta_from_coexisting_volumes(rn_diagram):
    """Kubiznak & Mann 2012: beta = 1/2 from |v2 - v1| ~ |1 - T/T_c|^beta along the line."""
    (line,) = rn_diagram.lines
    pts = [p for p in line.coexistence if 1e-7 < 1 - p.T / TC_RN < 1e-3]
    tau = np.array([1 - p.T / TC_RN for p in pts])
    dv = np.array([p.delta_v for p in pts])
    slope = np.polyfit(np.log(tau), np.log(dv), 1)[0]
    assert slope == pytest.approx(0.5, abs=2e-3)


def _vdw_reference_saturation(t, v_liquid, v_gas):
    """Reduced vdW saturation pressure at reduced temperature t: Maxwell's equal-area
    construction on P = 8t/(3v-1) - 3/v^2 solved with mpmath at 40 digits (the
    starting volumes only seed the root finder)."""
    mp.mp.dps = 40
    t = mp.mpf(t)
    Pf = lambda v: 8 * t / (3 * v - 1) - 3 / v**2  # noqa: E731
    F = lambda v: -mp.mpf(8) / 3 * t * mp.log(3 * v - 1) - 3 / v  # free energy per particle (reduced)
    vl, vg = mp.findroot(lambda a, b: [Pf(a) - Pf(b), (F(a) - F(b)) + Pf(a) * (a - b)],
                         (mp.mpf(v_liquid), mp.mpf(v_gas)))
    return float(Pf(vl))


@pytest.mark.parametrize("t", [0.6, 0.8, 0.9, 0.95, 0.99])
def test_vdw_saturation_pressure(t):
    """van der Waals saturation pressure against an independent 40-digit Maxwell construction;
    at t = 0.9 the reduced pressure is 0.647 (from memory, textbook tables)."""
    th = bind("vdw-fluid", a=1.0, b=1.0)
    Tc, Pc = 8 / 27, 1 / 27
    # find the isobar whose transition is at T = t Tc (bisection in P on the tool's result)
    lo, hi = 0.01 * Pc, 0.9999 * Pc
    for _ in range(60):
        mid = math.sqrt(lo * hi)
        tr = analyze_isobar(th, mid).transitions[0]
        lo, hi = (mid, hi) if tr.T < t * Tc else (lo, mid)
    ref = _vdw_reference_saturation(t, tr.states[0].v / 3, tr.states[1].v / 3)
    assert lo / Pc == pytest.approx(ref, rel=1e-10)
    if t == 0.9:
        assert ref == pytest.approx(0.647, abs=1e-3)


# -- the phase graph ------------------------------------------------------------------------
def test_graph_queries(rn_diagram, schw_diagram):
    g = rn_diagram.graph
    assert supercritical_connection(g, "small", "large")
    assert distinct_phases(g) == 1
    assert rn_diagram.structure == "vdw-like"
    assert not supercritical_connection(schw_diagram.graph, "thermal AdS", "large")
    vdw = phase_diagram(bind("vdw-fluid"))
    assert vdw.structure == "vdw-like"
    assert same_structure(rn_diagram.graph, phase_diagram(bind("rn-ads", Q=3.0, d=6)).graph)
    assert not same_structure(rn_diagram.graph, schw_diagram.graph)


# -- CLI ----------------------------------------------------------------------------------------
def test_cli_isobar_json(capsys):
    assert main(["isobar", "rn-ads", "-p", "Q=1", "--pressure", "0.5Pc", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["pressure"] == pytest.approx(0.5 * PC_RN, rel=1e-14)
    for key in ("pressure", "branches", "transitions"):
        assert key in doc
    (t,) = doc["transitions"]
    assert set(t) >= {"kind", "T", "from", "to", "states", "latent_heat", "delta_G"}
    assert set(t["states"][0]) >= {"r", "v", "S", "G"}


def test_cli_phases_json(capsys):
    assert main(["phases", "rn-ads", "-p", "Q=1", "--json", "--pressure-range", "0.1Pc", "2Pc"]) == 0
    doc = json.loads(capsys.readouterr().out)
    for key in ("lines", "critical_points", "triple_points", "graph", "structure"):
        assert key in doc
    (line,) = doc["lines"]
    assert set(line) >= {"kind", "between", "points", "ends"}
    assert doc["structure"] == "vdw-like"
    assert set(doc["graph"]) >= {"nodes", "edges"}


@pytest.mark.parametrize("argv, match", [
    (["isobar", "rn-ads", "--pressure", "-1"], "positive"),
    (["isobar", "rn-ads", "--pressure", "abc"], "must look like"),
    (["isobar", "schwarzschild-ads", "--pressure", "0.5Pc"], "has none"),
    (["phases", "rn-ads", "--pressure-range", "2Pc", "1Pc"], "P1 < P2"),
])
def test_cli_bad_pressures(capsys, argv, match):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert match in err and err.count("\n") == 1


# -- issue 19: windows narrower than a grid cell, precise inversions -------------------------------
def test_branch_inversion_is_precise_on_long_branches():
    """The state at temperature T on a monotone branch: T(x) = T to 1e-14 relative (measured
    ~2e-16) even on the large branch, which runs to the end of the search range (x ~ 2.5e5;
    an absolute x tolerance scaled by that end left |T(x) - T|/T ~ 5e-12)."""
    from bhchem.analysis.isobar import branch_state_at, find_branches
    th = bind("born-infeld-ads", b=0.42, Q=1.0)
    P = 0.0026
    (large,) = [b for b in find_branches(th, P) if b.label == "large"]
    assert large.x_max > 1e4 * large.x_min
    for T in np.linspace(large.T_min * 1.0001, 0.06, 40):
        x = branch_state_at(th, P, large, T)
        assert abs(float(th.T(x, P)) - T) <= 1e-14 * T


def test_isobar_resolves_a_window_narrower_than_its_grid():
    """Wei & Liu, PRD 90 (2014) 044057: charged GB in d = 6 (alpha~ = 1, their charge in the
    triple-point window; see test_family_analyses) has a triple point.  Exact consequence:
    just above the triple pressure the intermediate phase is preferred on a temperature window
    that shrinks linearly to zero at the triple point, between a small/intermediate and an
    intermediate/large first-order transition, each with equal T and G; just below, one
    small/large transition.  At 1 + 1e-7 times the triple pressure that window is ~1e-9 of T
    wide, far inside one cell of the isobar's temperature grid: it must still be found."""
    from bhchem.analysis.phases import refine_triple_point
    th = bind("gauss-bonnet-ads", d=6, k=1, alpha=1 / 6, Q=0.38)
    si, il = analyze_isobar(th, 0.0196).transitions  # all three phases take part here
    xs = [si.states[0].x, si.states[1].x, il.states[1].x]
    Pt, x1, x2, x3, res = refine_triple_point(th, 0.0196, xs)
    assert res <= 1e-12
    Tt = float(th.T(x1, Pt))
    below = analyze_isobar(th, Pt * (1 - 1e-7)).transitions
    assert [(t.kind, t.from_phase, t.to_phase) for t in below] == \
        [("first-order", "small", "large")]
    above = analyze_isobar(th, Pt * (1 + 1e-7)).transitions
    assert [(t.kind, t.from_phase, t.to_phase) for t in above] == \
        [("first-order", "small", "intermediate"), ("first-order", "intermediate", "large")]
    lo, hi = above
    assert 0 < hi.T - lo.T < 1e-8 * Tt
    assert abs(lo.T - Tt) < 1e-7 * Tt
    for t in above:
        a, b = t.states
        assert abs(a.G - b.G) <= 1e-13 * (abs(a.G) + abs(b.G))
        assert t.residual <= 1e-12


def test_no_transition_at_zero_temperature():
    """Exact: a state with T < 0 is not physical (the family requires T >= 0), so the walk of
    the preferred phase starts at T = 0 and no transition sits at T <= 0.  Third-order
    Lovelock, k = -1 (Frassino, Kubiznak, Mann & Simovic 2014 for the family): on this isobar
    the large branch's lower spinodal dips to T = -6e-7 between grid points of the physical
    mask, and the small branch starts at the extremal T = 0 (located to 1e-14 in r, so T there
    is round-off of 0); a 'zeroth-order transition' at T ~ 1e-16 was reported."""
    th = bind("lovelock3-ads", d=7, k=-1, alpha2=1.0, alpha3=2.5, Q=0.3)
    res = analyze_isobar(th, 0.01657859)
    assert all(t.T > 0 for t in res.transitions)
    assert res.preferred[0][0] == 0.0 and res.preferred[0][2] == "small"
    assert [t.kind for t in res.transitions] == ["first-order"]


def test_unphysical_critical_point_with_negative_pressure_does_not_break_the_diagram():
    """Euler-Heisenberg-AdS (user file), Q = 1, a = 0.5: the critical cubic
    y^3 - 24 y^2 + 448 a = 0 (y = v^2; derived in tests/test_atlas.py) has a root whose P_c < 0.
    That unphysical point must not enter the event scan (it crashed with a math domain error)."""
    from pathlib import Path

    from bhchem import load_family_file
    from bhchem.declare import registry
    path = Path(__file__).resolve().parents[1] / "examples" / "families" / "euler_heisenberg_ads.toml"
    with registry.registry_scope():
        (fam,) = load_family_file(path)
        th = bind(fam, Q=1.0, a=0.5)
        assert any(cp.P < 0 for cp in find_critical_points(th).points)
        pd = phase_diagram(th)
        assert pd.structure == "vdw-like" and len(pd.lines) == 1
        assert pd.lines[0].ends["high"]["type"] == "critical point"
