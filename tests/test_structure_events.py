"""Structure events (issue 17, part B): thresholds along a coupling located by continuation
and Newton on each event's own system, checked against papers and against mpmath solutions of
the same conditions written here from the papers' formulas.

Normalisation (Born-Infeld): Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110,
arXiv:1208.6251 (GKM), whose b (maximal field strength) and Q (charge, f ~ Q^2/r^2 as
b -> infinity) the bundled born-infeld-ads family uses unchanged; only bQ matters.
"""
import math

import mpmath as mp
import pytest
import sympy as sp

from bhchem.analysis.structure_events import structure_events
from bhchem.workflows.atlas import parse_grid, scan

mp.mp.dps = 30


def _bi_T(r, P, b, Q=1):
    """GKM Sec. 4: T = (1 + 8 pi P r^2 + 2 b^2 r^2 (1 - sqrt(1 + Q^2/(b^2 r^4)))) / (4 pi r)."""
    sqrt, pi = (sp.sqrt, sp.pi) if isinstance(r, sp.Basic) else (mp.sqrt, mp.pi)
    return (1 + 8 * pi * P * r**2 + 2 * b**2 * r**2
            - 2 * b * sqrt(b**2 * r**4 + Q**2)) / (4 * pi * r)


_r, _P, _b = sp.symbols("r P b", positive=True)


def _d(f, k):
    """d^k T / dr^k, exact (sympy), evaluated by mpmath."""
    return sp.lambdify((_r, _P, _b), sp.diff(f(_r, _P, _b, sp.Integer(1)), _r, k), "mpmath")


def _assert_converged(e, tol=1e-11):
    assert e.converged and max(e.residuals.values()) <= tol, e.residuals


def test_born_infeld_two_critical_points_appear_at_one_over_sqrt8():
    """GKM: two critical points appear at bQ = 1/sqrt(8).  The event is the fold of the
    critical branch (T_r = T_rr = T_rrr = 0); mpmath solves that system at 30 digits from the
    formula above and gives 1/sqrt(8); the event agrees to 1e-12 (found from two samples)."""
    T1, T2, T3 = _d(_bi_T, 1), _d(_bi_T, 2), _d(_bi_T, 3)
    r, P, b = mp.findroot(lambda r, P, b: [T1(r, P, b), T2(r, P, b), T3(r, P, b)],
                          (1.7, 0.004, 0.35))
    assert abs(b - 1 / mp.sqrt(8)) < 1e-25
    ev = structure_events("born-infeld-ads", "b", (0.34, 0.37), n_samples=2, Q=1.0)
    (e,) = ev.events
    assert ev.converged and ev.counts == (0, 2)
    assert e.kind == "critical-count"
    assert abs(e.value - 1 / math.sqrt(8)) <= 1e-12 / math.sqrt(8)
    assert list(e.scale_free.values()) == [pytest.approx(e.value, rel=1e-15)]  # bQ, Q = 1
    _assert_converged(e)
    assert "T_xxx = 0" in e.message and f"x = {float(r):.6g}"[:8] in e.message


def test_born_infeld_reentrant_window_upper_edge_is_one_half():
    """GKM (from memory): the reentrant phase transition disappears at bQ = 1/2, where the
    small-r behaviour of T changes (T -> +inf below, -inf above).  The event's equation,
    lim_{r->0} r T = (1 - 2bQ)/(4 pi) = 0, is solved exactly (1/2) and by Newton (1e-10)."""
    ev = structure_events("born-infeld-ads", "b", (0.48, 0.52), n_samples=2, Q=1.0)
    (e,) = ev.events
    assert e.kind == "small-state-asymptote" and e.exact == "1/2"
    assert abs(e.value - 0.5) <= 1e-10 * 0.5
    _assert_converged(e)
    assert mp.limit(lambda r: r * _bi_T(r, 0.001, e.value), 0) == pytest.approx(0, abs=1e-14)


def test_born_infeld_lower_edge_of_one_critical_point_window():
    """Between bQ = 1/sqrt(8) and 1/2 the lower critical point reaches P = 0 at b1 and the
    structure turns from two critical points + reentrance to one + reentrance.  The event
    (continuation + Newton on x T_x = x^2 T_xx = 0 at P = 0) agrees with mpmath's 30-digit
    solution of T_r = T_rr = 0 at P = 0 (formula above) to 1e-12.  The second way: the full
    diagram's own critical search (its count of critical points makes the structure
    signature) sees two critical points 5e-9 below the event and one 5e-9 above, so the two
    ways agree to 1e-8 (the search keeps the explicit spinodal's extrema at any P > 0; the
    lower point sits at P ~ 5e-10 there).  Bisection of the full diagrams themselves (24
    diagrams, about 3 min) is in benchmarks/bench_structure_map.py: 1.8e-10 from the event."""
    from bhchem.analysis.critical import find_critical_points
    T1, T2 = _d(_bi_T, 1), _d(_bi_T, 2)
    r, b = mp.findroot(lambda r, b: [T1(r, 0, b), T2(r, 0, b)], (1.0, 0.42))
    ev = structure_events("born-infeld-ads", "b", (0.41, 0.44), n_samples=2, Q=1.0)
    (e,) = ev.events
    assert ev.counts == (2, 1)
    assert e.kind == "critical-pressure-zero"
    assert abs(e.value - float(b)) <= 1e-12 * float(b)
    _assert_converged(e)
    below = find_critical_points("born-infeld-ads", b=e.value - 5e-9, Q=1.0).physical
    above = find_critical_points("born-infeld-ads", b=e.value + 5e-9, Q=1.0).physical
    assert len(below) == 2 and len(above) == 1
    assert 0 < min(cp.P for cp in below) < 1e-9


def test_events_do_not_depend_on_the_detector_sampling():
    """An event is the root of its own system, not a bracket: with 2 or 4 samples the
    located value is the same to 1e-13."""
    a = structure_events("born-infeld-ads", "b", (0.41, 0.44), n_samples=2, Q=1.0).events
    b = structure_events("born-infeld-ads", "b", (0.40, 0.45), n_samples=4, Q=1.0).events
    assert len(a) == len(b) == 1 and abs(a[0].value - b[0].value) <= 1e-13


@pytest.mark.parametrize("family, coupling, interval, fixed", [
    ("gauss-bonnet-ads", "Q", (0.1, 0.8), dict(d=6, k=1, alpha=1 / 6)),
    ("lovelock3-ads", "alpha3", (0.1, 5.0), dict(d=7, k=-1, alpha2=1.0, Q=0.2)),
    ("euler-heisenberg-ads", "a", (0.2, 6.0), dict(Q=1.0)),
])
def test_wide_intervals_give_the_same_events_from_any_sampling(family, coupling, interval,
                                                               fixed):
    """Wide intervals with several events, from 5 and from 9 detector samples: the same
    events, every one converged, nothing unexplained.  Before: GB d = 6 missed the upper
    triple-point end (0.4075) from some samplings (the other branch's state is born on the
    critical isotherm between two path points, already past the crossing); hyperbolic Lovelock with Q = 0.2 reported
    non-converged 'folds' at 3.597 and 13.1 (outside the interval) where a continuation had
    stopped near the exact threshold 1.99999975; Euler-Heisenberg missed a = 16/27 when the
    P = 0 minimum moved by more than 0.5 in log r between samples.  The values themselves
    are checked against papers and derivations in the tests above (Wei & Liu's window;
    16/27, 16/7, 32/7)."""
    if family == "euler-heisenberg-ads":
        family = _eh_family()
    runs = [structure_events(family, coupling, interval, n_samples=n, **fixed)
            for n in (5, 9)]
    for r in runs:
        assert r.converged and r.unexplained == (), r.message
    a, b = ([(e.kind, e.value) for e in r.events] for r in runs)
    assert [k for k, _ in a] == [k for k, _ in b] and len(a) >= 2
    for (_, va), (_, vb) in zip(a, b):
        assert abs(va - vb) <= 1e-11 * abs(va)
    if coupling == "a":
        assert [v for _, v in a] == pytest.approx([16 / 27, 16 / 7, 32 / 7], rel=1e-14)


@pytest.mark.parametrize("lo, hi, theirs", [(0.35, 0.365, 0.1705), (0.40, 0.415, 0.1946)])
def test_charged_gauss_bonnet_6d_triple_point_window_ends(lo, hi, theirs):
    """Wei & Liu, PRD 90 (2014) 044057, arXiv:1402.2837: in d = 6 with alpha~ = 1 a triple
    point exists for their charge in (0.1705, 0.1946).  Mapping (as in
    tests/test_family_analyses.py): alpha~ = 1 is our alpha = 1/6, their charge is
    3 Q/(2 pi) in our normalisation.  Each end of the window is the event where a critical
    point lies on another first-order line (the swallowtail's triple point shrinks into it);
    in their normalisation the ends agree with their 4-digit values to 1.1e-4 (the lower end
    is 0.17040, printed as 0.1705)."""
    ev = structure_events("gauss-bonnet-ads", "Q", (lo, hi), n_samples=2, d=6, k=1,
                          alpha=1 / 6)
    (e,) = ev.events
    assert e.kind == "critical-leaves-preferred"
    _assert_converged(e)
    assert abs(3 * e.value / (2 * math.pi) - theirs) <= 1.1e-4


def test_atlas_from_events_born_infeld(tmp_path):
    """The 1D map from the events (replaces the per-point bisection tests of the atlas, which
    located 1/sqrt(8) and 1/2 to 1e-3 from full diagrams): 19 values of bQ in [0.345, 0.525]
    (Q = 1).  Full diagrams only for the four interval representatives (the check sample is
    tested below); the structures between the events are GKM's four cases: none,
    two critical points + reentrance, one critical point + reentrance, van der Waals."""
    doc = scan("born-infeld-ads", [parse_grid("b=0.345:0.525:19")], {"Q": 1.0}, tmp_path / "e",
               checks=0)
    assert doc["method"] == "events" and doc["diagrams_computed"] == 4
    ev = doc["events"]
    assert [e["kind"] for e in ev] == ["critical-count", "critical-pressure-zero",
                                       "small-state-asymptote"]
    assert all(e["converged"] for e in ev)
    assert abs(ev[0]["value"] - 1 / math.sqrt(8)) <= 1e-12 and ev[2]["value"] == 0.5
    structures = ["no-transition", "multiple-critical-points+reentrant+vdw-like",
                  "reentrant+vdw-like", "vdw-like"]
    assert [e["below"] for e in ev] == structures[:3]
    assert [e["above"] for e in ev] == structures[1:]
    cuts = [e["value"] for e in ev]
    for r in doc["rows"]:
        k = sum(r["b"] > c for c in cuts)
        assert r["structure"] == structures[k] and r["n_critical"] == [0, 2, 1, 1][k]
    assert sum(not r["from_interval"] for r in doc["rows"]) == 4
    assert [b["between"] for b in doc["boundaries"]] == [list(p) for p in
                                                           zip(structures, structures[1:])]
    assert (tmp_path / "e" / "atlas.png").stat().st_size > 1000


def test_atlas_check_sample_reports_disagreements(tmp_path, monkeypatch):
    """A check point whose own diagram disagrees with its interval is reported in ``checks``
    and through ``notify`` (never hidden).  The per-point analysis is replaced by a stand-in
    that puts a false change of structure at b = 0.36 (no event there); the events are real."""
    import bhchem.workflows.atlas as atlas

    def fake(family_name, family_file, params, admissible=(None, ())):
        b = params["b"]
        n = 0 if b < 1 / math.sqrt(8) else 2
        s = "none" if b < 1 / math.sqrt(8) else ("two" if b < 0.36 else "false-change")
        return {"error": "", "n_critical": n, "structure": s}

    monkeypatch.setattr(atlas, "analyse_point", fake)
    said = []
    doc = scan("born-infeld-ads", [parse_grid("b=0.34:0.37:31")], {"Q": 1.0}, tmp_path / "c",
               checks=8, notify=said.append)
    (e,) = doc["events"]
    assert e["kind"] == "critical-count" and e["below"] == "none"
    chk = doc["checks"]
    checked = {c["index"] for c in chk["points"]}
    rep = next(r for r in doc["rows"] if not r["from_interval"] and r["b"] > e["value"]
               and r["index"] not in checked)
    assert chk["sample"] == 8 and chk["seed"] == 17 and len(chk["points"]) == 8
    bad = {c["index"] for c in chk["points"] if not c["agree"]}
    # exactly the check points on the other side of the false change from their interval's
    # representative disagree
    want = {c["index"] for c in chk["points"]
            if c["b"] > e["value"] and (c["b"] < 0.36) != (rep["b"] < 0.36)}
    assert bad == want and chk["disagreements"] == len(bad) > 0
    assert len([s for s in said if "atlas check disagrees" in s]) == len(bad)


def test_lovelock_isolated_critical_point_event():
    """Dolan, Kostouki, Kubiznak & Mann, CQG 31 (2014) 242001: hyperbolic (k = -1) third-order
    Lovelock in d = 7 has an isolated critical point at alpha~3 = alpha~2^2/3, at
    r_c = sqrt(alpha~2), P_c = (d-1)(d-2)/(48 pi alpha~2) (alpha~2 = (d-3)(d-4) alpha2,
    alpha~3 = (d-3)(d-4)(d-5)(d-6) alpha3).  Along alpha3 (alpha2 = 1) two critical points are
    born there; T is 0/0 at the merge, and the event is the double root of T's denominator,
    exact: alpha3 = 2.  It is the only event: a minimum of T(r, P = 0) changes sign in the
    interval through that pole, not through zero (no 'zeroth-order' candidate; one used to
    be reported, not converged, at alpha3 = 13.95)."""
    d, a2 = 7, 1.0
    at2 = (d - 3) * (d - 4) * a2
    ev = structure_events("lovelock3-ads", "alpha3", (1.9, 2.2), n_samples=2, d=d, k=-1,
                          alpha2=a2, Q=0.0)
    (e,) = ev.events
    assert ev.converged and ev.counts == (0, 2)
    assert e.kind == "isolated-critical-point" and e.exact == "2"
    at3 = (d - 3) * (d - 4) * (d - 5) * (d - 6) * e.value
    assert abs(at3 - at2**2 / 3) <= 1e-12 * at3
    _assert_converged(e)
    assert f"x = {math.sqrt(at2):.12g}" in e.message
    assert f"P = {(d - 1) * (d - 2) / (48 * math.pi * at2):.12g}" in e.message


def test_atlas_2d_event_curves_and_cells(tmp_path, monkeypatch):
    """2D map from events: Born-Infeld over (b, Q).  The 1D fold event along b, continued in
    Q by pseudo-arclength, traces the curve bQ = 1/sqrt(8) (GKM) from edge to edge of the Q
    range; the cut grid graph has two cells, one diagram each (the
    per-point analysis is a cheap stand-in classifying by bQ, so that the test checks the
    cells and the report, not the diagrams, which the 1D test covers).  Events are the
    default method for it (6 x 3 points, both couplings continuous and linear)."""
    import bhchem.workflows.atlas as atlas

    def fake(family_name, family_file, params, admissible=(None, ())):
        two = params["b"] * params["Q"] > 1 / math.sqrt(8)
        return {"error": "", "n_critical": 2 if two else 0,
                "structure": "two" if two else "none"}

    monkeypatch.setattr(atlas, "analyse_point", fake)
    doc = scan("born-infeld-ads", [parse_grid("b=0.3:0.4:6"), parse_grid("Q=0.95:1.05:3")],
               {}, tmp_path / "m", checks=4)
    assert doc["method"] == "events"      # the default for a linear 2D grid of >= 16 points
    (curve,) = [c for c in doc["event_curves"] if c["kind"] == "critical-count"]
    assert curve["converged"] and "pseudo-arclength" in curve["method"]
    assert len(curve["points"]) > 2 and max(curve["residuals"]) <= 1e-11
    assert [p[1] for p in (curve["points"][0], curve["points"][-1])] == [0.95, 1.05]
    for b, Q in curve["points"]:
        assert abs(b * Q - 1 / math.sqrt(8)) <= 1e-12
    assert doc["checks"]["cells"] == 2 and doc["diagrams_computed"] == 2 + 4
    assert doc["checks"]["disagreements"] == 0
    for r in doc["rows"]:
        assert r["structure"] == ("two" if r["b"] * r["Q"] > 1 / math.sqrt(8) else "none")
    assert (tmp_path / "m" / "atlas.png").stat().st_size > 1000


def test_cli_scan_events_on_a_discrete_axis_is_refused(capsys, tmp_path):
    from bhchem.cli.main import main
    code = main(["scan", "schwarzschild-ads", "--grid", "d=4:7:4", "--method", "events",
                 "-o", str(tmp_path / "x")])
    err = capsys.readouterr().err
    assert code == 2 and "d is discrete" in err and len(err.strip().splitlines()) == 1


_TIGHT_HALO = '''name = "tight-halo-rn-ads"
summary = "toy: charged AdS black hole whose halo term must stay below a quarter of the charge term"
reference = "invented for the structure-event tests (no paper)"

[dimension]
default = 4
minimum = 4
maximum = 4
description = "spacetime dimension"

[parameters.Q]
default = 1.0
length_dimension = "1"
domain = ">= 0"
description = "electric charge"

[parameters.mu]
default = 0.1
length_dimension = "3"
description = "halo coupling"

[expressions]
M = "r/2 * (1 + 8*pi*P*r^2/3 + Q^2/r^2 + mu/r^3)"
S = "pi*r^2"
conditions = [{name = "halo-below-charge", relation = "4*mu < Q^2*r", reason = "toy: the halo term stays below a quarter of the charge term at the horizon", reference = "invented"}]
'''


def test_critical_point_leaving_the_domain_through_a_declared_condition(tmp_path):
    """A family of our own invention (the haloed charged AdS toy of examples/families with a
    declared condition 4 mu < Q^2 r): T = (1 + 8 pi P r^2 - Q^2/r^2 - 2 mu/r^3)/(4 pi r) from
    the first law; its one critical point leaves the physical domain where r_c = 4 mu/Q^2.
    Derived here with sympy (Q = 1): T_r = T_rr = 0 with mu = r/4 gives r = sqrt(11),
    mu = sqrt(11)/4; the event (Newton on x T_x, x^2 T_xx and the boundary 4 mu - Q^2 r)
    agrees to 1e-13, and the detector has nothing unexplained."""
    from bhchem.declare.registry import load_family_file
    r, P, mu = sp.symbols("r P mu", positive=True)
    T = (1 + 8 * sp.pi * P * r**2 - 1 / r**2 - 2 * mu / r**3) / (4 * sp.pi * r)
    on = {mu: r / 4}
    sols = sp.solve([sp.diff(T, r).subs(on), sp.diff(T, r, 2).subs(on)], [r, P], dict=True)
    (sol,) = [s for s in sols if s[r].is_positive and s[P].is_positive]
    mu_exact = sp.nsimplify(sol[r] / 4)
    assert mu_exact == sp.sqrt(11) / 4
    path = tmp_path / "tight_halo.toml"
    path.write_text(_TIGHT_HALO)
    fam = load_family_file(path)[0]
    ev = structure_events(fam, "mu", (0.5, 1.0), n_samples=2, Q=1.0)
    (e,) = ev.events
    assert ev.converged and not ev.unexplained and ev.counts == (1, 0)
    assert e.kind == "critical-leaves-domain" and "halo-below-charge" in e.message
    assert abs(e.value - float(mu_exact)) <= 1e-13
    assert f"P = {float(sol[P]):.10g}"[:14] in e.message
    _assert_converged(e, 1e-13)


_SOLITON = '''name = "soliton-rn-ads"
summary = "toy: charged AdS black hole competing with a horizonless phase of Gibbs energy sigma"
reference = "invented for the structure-event tests (no paper)"

[dimension]
default = 4
minimum = 4
maximum = 4
description = "spacetime dimension"

[parameters.Q]
default = 1.0
length_dimension = "1"
domain = ">= 0"
description = "electric charge"

[parameters.sigma]
default = 1.0
length_dimension = "1"
domain = "> 0"
description = "Gibbs energy of the competing horizonless phase"

[expressions]
M = "r/2 * (1 + 8*pi*P*r^2/3 + Q^2/r^2)"
S = "pi*r^2"
G_background = "sigma"
'''


def test_hawking_page_line_through_the_critical_point(tmp_path):
    """No bundled family declares a background phase except schwarzschild-ads (no critical
    point), so the solver is checked on a family of our own invention: charged AdS (fixed
    charge) competing with a horizonless phase of constant Gibbs energy sigma.  The event is
    where the background's line G = sigma passes through the critical point (the triple point
    background/small/large where it cuts the first-order line appears or disappears).
    Derived here with sympy from M and S: T_r = T_rr = 0 at r = sqrt(6) Q, P = 1/(96 pi Q^2),
    where G = M - T S = sqrt(6) Q/3; G = sigma = 1 gives Q = sqrt(6)/2.  The event agrees to
    1e-13."""
    from bhchem.declare.registry import load_family_file
    r, P, Q = sp.symbols("r P Q", positive=True)
    M = r / 2 * (1 + 8 * sp.pi * P * r**2 / 3 + Q**2 / r**2)
    S = sp.pi * r**2
    T = sp.diff(M, r) / sp.diff(S, r)
    (cp,) = sp.solve([sp.diff(T, r), sp.diff(T, r, 2)], [r, P], dict=True)
    G_c = sp.simplify((M - T * S).subs(cp))
    (Q_star,) = sp.solve(sp.Eq(G_c, 1), Q)
    assert Q_star == sp.sqrt(6) / 2
    path = tmp_path / "soliton.toml"
    path.write_text(_SOLITON)
    fam = load_family_file(path)[0]
    ev = structure_events(fam, "Q", (1.0, 1.5), n_samples=2, sigma=1.0)
    (e,) = ev.events
    assert ev.converged and not ev.unexplained
    assert e.kind == "hawking-page-meets-first-order"
    assert abs(e.value - float(Q_star)) <= 1e-13
    assert f"x = {float(cp[r].subs(Q, Q_star)):.10g}" in e.message
    _assert_converged(e, 1e-13)


def test_lovelock_isolated_critical_point_curve_by_continuation():
    """The isolated-critical-point event of hyperbolic third-order Lovelock (d = 7, Q = 0)
    continued in alpha2 by pseudo-arclength: every point lies on Dolan, Kostouki, Kubiznak &
    Mann's curve alpha~3 = alpha~2^2/3 (CQG 31 (2014) 242001; alpha~2 = 12 alpha2,
    alpha~3 = 24 alpha3 here, so alpha3 = 2 alpha2^2) to 1e-14 relative, and the curve ends
    exactly on the edges of the box (alpha2 = 0.6 and alpha3 = 4, where it leaves through the
    top of the alpha3 range before alpha2 reaches 1.5)."""
    from bhchem.analysis.structure_events import trace_event_curve
    (e,) = structure_events("lovelock3-ads", "alpha3", (1.9, 2.2), n_samples=2, d=7, k=-1,
                            alpha2=1.0, Q=0.0).events
    c = trace_event_curve("lovelock3-ads", e, "alpha2", (0.6, 1.5), box=(0.5, 4.0))
    assert c.converged and max(c.residuals) <= 1e-11 and len(c.points) > 10
    a3, a2 = c.points[:, 0], c.points[:, 1]
    assert max(abs(a3 / (2 * a2**2) - 1)) <= 1e-14
    assert a2[0] == 0.6 and a3[-1] == 4.0 and a2[-1] == pytest.approx(2 ** -0.5 * 2, rel=1e-14)


def test_a_curved_event_line_is_traced_once_in_a_2d_map(tmp_path, monkeypatch):
    """Third-order Lovelock, d = 7, k = -1, Q = 0 over (alpha3, alpha2): every row's isolated
    critical point lies on the one curve alpha3 = 2 alpha2^2 (alpha~3 = alpha~2^2/3, Dolan et
    al. 2014), so the map traces it once (each row event used to start a new copy: the
    polyline of a curved line misses the curve by up to L^2 kappa / 8 between its points).
    The per-point analysis is a stand-in: this checks the curves, not the diagrams."""
    import bhchem.workflows.atlas as atlas

    def fake(family_name, family_file, params, admissible=(None, ())):
        return {"error": "", "n_critical": 0, "structure": "stand-in"}

    monkeypatch.setattr(atlas, "analyse_point", fake)
    doc = scan("lovelock3-ads", [parse_grid("alpha3=1.5:2.5:16"), parse_grid("alpha2=0.95:1.05:2")],
               {"d": 7, "k": -1, "Q": 0.0}, tmp_path / "l", method="events", checks=0)
    iso = [c for c in doc["event_curves"] if c["kind"] == "isolated-critical-point"]
    assert len(iso) == 1 and iso[0]["converged"]
    for a3, a2 in iso[0]["points"]:
        assert abs(a3 / (2 * a2 ** 2) - 1) <= 1e-12


def _eh_family():
    """The Euler-Heisenberg-AdS example family (examples/families/euler_heisenberg_ads.toml)."""
    from bhchem.declare.registry import load_family_file
    from test_atlas import EH_FILE
    return load_family_file(EH_FILE)[0]


def _eh_sympy():
    """Euler-Heisenberg-AdS from its metric function (form of Magos & Breton, PRD 102 (2020)
    084011, from memory; the same as examples/families/euler_heisenberg_ads.toml):
    f = 1 - 2M/r + r^2/L^2 + Q^2/r^2 - a Q^4/(20 r^6), T = f'(r+)/(4 pi) with M from
    f(r+) = 0, 8 pi P = 3/L^2, G = M - T S, S = pi r^2."""
    r, M, L, Q, a, P = sp.symbols("r M L Q a P", positive=True)
    f = 1 - 2 * M / r + r**2 / L**2 + Q**2 / r**2 - a * Q**4 / (20 * r**6)
    Msol = sp.solve(f, M)[0]
    ell = sp.sqrt(3 / (8 * sp.pi * P))
    T = sp.simplify((sp.diff(f, r).subs(M, Msol) / (4 * sp.pi)).subs(L, ell))
    G = (Msol - T * sp.pi * r**2).subs(L, ell)
    return (r, P, a, Q), T, G


def test_euler_heisenberg_zeroth_order_window_opens_from_zero_pressure():
    """A zeroth-order line (reentrance) opens from P = 0, T = 0 where the lowest isotherm
    T(r, P = 0) gets a double zero.  Derived here from the metric function: the numerator
    of T at P = 0 is a Q^4 - 4 Q^2 r^4 + 4 r^6, whose double zero is at a = 16 Q^2 / 27,
    r = sqrt(6) Q / 3.  The event is found at that value exactly (a resultant), for two
    charges (a/Q^2 is the scale-free coupling); no critical point changes there, so before
    this event kind the map had no event at all below a = 16/7.  The engine's full phase
    diagrams agree on either side: none at a = 0.55, one zeroth-order line at a = 0.7, whose
    two terminal points are the mpmath solutions (30 digits, from the formulas here) of
    (i) the two branch ends at equal temperature (T_r = 0 at r1 and r2, T(r1) = T(r2)) and
    (ii) the first-order crossing reaching the smaller branch's end (T_r(r1) = 0,
    T(r1) = T(r3), G(r1) = G(r3))."""
    from bhchem.workflows.atlas import analyse_point
    from test_atlas import EH_FILE

    (r, P, a, Q), T, G = _eh_sympy()
    num = sp.factor(sp.numer(sp.together(T.subs(P, 0))))
    assert sp.expand(num - (a * Q**4 - 4 * Q**2 * r**4 + 4 * r**6)) == 0
    (sol,) = sp.solve([num, sp.diff(num, r)], [r, a], dict=True)
    assert sol[a] == 16 * Q**2 / 27 and sol[r] == sp.sqrt(6) * Q / 3
    fam = _eh_family()
    for q in (1, 2):
        want = float(sol[a].subs(Q, q))
        ev = structure_events(fam, "a", (0.7 * want, 1.3 * want), n_samples=3, Q=float(q))
        (e,) = ev.events
        assert ev.converged and e.kind == "zeroth-order" and e.system == "end-zero"
        assert sp.sympify(e.exact) == sol[a].subs(Q, q)
        assert abs(e.value - want) <= 1e-15 * want
        _assert_converged(e, tol=1e-14)
        assert f"x = {float(sol[r].subs(Q, q)):.12g}" in e.message
    below = analyse_point("euler-heisenberg-ads", EH_FILE, {"a": 0.55, "Q": 1.0})
    above = analyse_point("euler-heisenberg-ads", EH_FILE, {"a": 0.7, "Q": 1.0})
    assert "reentrant" not in below["structure"] and "reentrant_P_low" not in below
    assert "reentrant" in above["structure"]
    Tf = sp.lambdify((r, P, a, Q), T, "mpmath")
    Tr = sp.lambdify((r, P, a, Q), sp.diff(T, r), "mpmath")
    Gf = sp.lambdify((r, P, a, Q), G, "mpmath")
    av = mp.mpf("0.7")
    ends = mp.findroot(lambda r1, r2, p: [Tr(r1, p, av, 1), Tr(r2, p, av, 1),
                                          Tf(r1, p, av, 1) - Tf(r2, p, av, 1)],
                       (0.85, 30.0, 9e-5))
    gibbs = mp.findroot(lambda r1, r3, p: [Tr(r1, p, av, 1), Tf(r1, p, av, 1) - Tf(r3, p, av, 1),
                                           Gf(r1, p, av, 1) - Gf(r3, p, av, 1)],
                        (0.857, 25.0, 7e-5))
    assert above["reentrant_P_high"] == pytest.approx(float(ends[2]), rel=1e-10)
    assert above["reentrant_P_low"] == pytest.approx(float(gibbs[2]), rel=1e-10)


def test_euler_heisenberg_zeroth_order_curve_in_two_couplings():
    """The event above continued in Q by pseudo-arclength: the curve a = 16 Q^2 / 27
    (derived in the test above), from edge to edge of the Q range."""
    from bhchem.analysis.structure_events import trace_event_curve

    fam = _eh_family()
    (e,) = structure_events(fam, "a", (0.5, 0.7), n_samples=2, Q=1.0).events
    c = trace_event_curve(fam, e, "Q", (0.8, 1.2), box=(0.3, 0.9))
    assert c.converged and len(c.points) >= 10
    assert c.points[0][1] == pytest.approx(0.8, abs=1e-14)
    assert c.points[-1][1] == pytest.approx(1.2, abs=1e-14)
    for a, q in c.points:
        assert abs(a - 16 * q**2 / 27) <= 1e-12 * a
