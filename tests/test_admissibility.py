"""Admissibility as named conditions (issue 20): declaration, selection, exclusion reports,
and the published hyperbolic Lovelock structures under the thermodynamic conditions.

Sources
-------
* Dolan, Kostouki, Kubiznak & Mann, CQG 31 (2014) 242001, arXiv:1407.4783 (DKKM14):
  isolated critical point of fine-tuned hyperbolic Lovelock holes, "two swallowtails emerge,
  giving rise to two first-order phase transitions between small and large black holes"
  (abstract); exponents (alpha, beta, gamma, delta) = (0, 1, 2, 3).
* The conditions the papers impose could not be read from their text (the search tools
  reach only the abstracts); the set under which the structures are reproduced is named
  ``thermodynamic`` and stated as such, not as the papers' own.
"""
from __future__ import annotations

import math
import textwrap

import mpmath as mp
import numpy as np
import pytest

import bhchem
from bhchem import analyze_isobar, bind, find_critical_points, phase_diagram
from bhchem.analysis.admissibility import excluded_states
from bhchem.declare import Family, Parameter
from bhchem.declare.conditions import Condition, ConditionSet
from bhchem.declare.declarative import load_declarative
from bhchem.declare.symbols import parameter_symbol, pi, r
from bhchem.errors import InvalidArgumentError, MalformedFamilyError

FINE = dict(d=7, k=-1, alpha2=1.0, alpha3=2.0, Q=0.0)   # alpha~3 = alpha~2^2/3, alpha~2 = 12
A2 = 12.0                                                # alpha~2 = (d-3)(d-4) alpha2
P_C = 30 / (48 * math.pi * A2)                           # (d-1)(d-2)/(48 pi alpha~2), DKKM14
T_C = 1 / (2 * math.pi * math.sqrt(A2))


# -- one excluded state for every named condition of the bundled families -----------------
# (family, parameters, P, x, condition): the condition fails at that state; 'alone' when
# every other condition holds there
EXCLUDED = [
    ("gauss-bonnet-ads", dict(d=5, k=-1, alpha=0.5, Q=0.0), 0.05, 2.0, "positive-entropy", True),
    ("rn-ads", dict(Q=1.0), 0.002, 0.5, "nonnegative-temperature", True),
    ("gauss-bonnet-ads", dict(d=5, k=-1, alpha=0.5, Q=0.0), 0.01, 1.0, "horizon-on-gb-branch",
     False),
    ("gauss-bonnet-ads", dict(d=5, k=1, alpha=0.5, Q=1.0), 0.07, 2.0, "ads-vacuum-exists", True),
    ("lovelock3-ads", dict(d=7, k=-1, alpha2=1.75 / 12, alpha3=1 / 24, Q=0.0), 0.05, 1.3,
     "horizon-on-einstein-branch", False),
    ("lovelock3-ads", FINE, 0.02, 5.0, "regular-exterior", True),
    ("vdw-fluid", {}, 0.01, 0.02, "volume-above-excluded", False),
]


@pytest.mark.parametrize("family,params,P,x,name,alone", EXCLUDED,
                         ids=[e[4] for e in EXCLUDED])
def test_each_named_condition_excludes_a_state(family, params, P, x, name, alone):
    th = bind(family, **params)
    assert name in th.admissibility.active
    assert not th.condition_holds(name, x, P)
    assert not th.physical(x, P)
    others = [c.name for c in th.active_conditions if c.name != name]
    if alone:
        assert all(th.condition_holds(o, x, P) for o in others)
        assert th.with_conditions(without=name).physical(x, P)
    rep = excluded_states(th, P)
    hit = [rg for rg in rep.ranges if rg.condition == name and rg.x_min <= x <= rg.x_max]
    assert hit, rep.message


def test_every_declared_condition_of_a_bundled_family_is_named_with_reason_and_source():
    names = set()
    for fam in bhchem.available_families().values():
        for rec in fam.condition_records():
            assert rec["reason"].strip() and rec["reference"].strip(), (fam.name, rec)
            assert not rec["name"].startswith("condition-"), (fam.name, rec["name"])
            names.add(rec["name"])
    tested = {e[4] for e in EXCLUDED}
    # the Kerr conditions are implied by the fundamental relation (its docstring): they
    # never exclude a state, see the next test
    assert names - tested == {"rotation-below-ads-radius", "real-horizon-radius"}


def test_kerr_conditions_never_bind():
    th = bind("kerr-newman-ads", J=0.3, Q=0.2)
    S = np.geomspace(0.01, 1e4, 4000)[:, None]
    P = np.geomspace(1e-5, 1.0, 40)[None, :]
    finite = np.isfinite(th.M(S, P))
    for name in ("rotation-below-ads-radius", "real-horizon-radius"):
        assert np.all(th.condition_holds(name, S, P)[finite])


# -- selection ---------------------------------------------------------------------------
def test_selection_is_recorded_and_changes_only_what_it_says():
    th = bind("lovelock3-ads", **FINE)
    assert th.admissibility.is_default and th.admissibility.set_name == "default"
    thermo = bind("lovelock3-ads", conditions="thermodynamic", **FINE)
    without = bind("lovelock3-ads", without="regular-exterior", **FINE)
    assert thermo.admissibility.active == without.admissibility.active == (
        "positive-entropy", "nonnegative-temperature", "horizon-on-einstein-branch")
    assert without.admissibility.removed == ("regular-exterior",)
    assert "without regular-exterior" in repr(without)
    x, P = 5.0, 0.02  # a large hole above P_c: a naked singularity outside its horizon
    assert not th.physical(x, P) and thermo.physical(x, P)
    assert th.with_conditions("thermodynamic").admissibility == thermo.admissibility
    assert find_critical_points(thermo).admissibility["set"] == "thermodynamic"


@pytest.mark.parametrize("kwargs,words", [
    (dict(conditions="papers"), "no condition set 'papers'; known sets: default, thermodynamic"),
    (dict(without="regular"), "no condition 'regular'"),
    (dict(conditions=3), "must be the name of a condition set"),
])
def test_unknown_selection_is_one_line(kwargs, words):
    with pytest.raises(InvalidArgumentError) as exc:
        bind("lovelock3-ads", **FINE, **kwargs)
    assert words in str(exc.value) and "\n" not in str(exc.value)


def test_cli_selection_and_errors(capsys):
    from bhchem.cli.main import main
    assert main(["show", "lovelock3-ads", "-p", "d=7,k=-1,alpha2=1,alpha3=2,Q=0",
                 "--without", "regular-exterior"]) == 0
    out = capsys.readouterr().out
    assert "- regular-exterior:" in out and "* horizon-on-einstein-branch:" in out
    assert "thermodynamic: positive-entropy, nonnegative-temperature" in out
    code = main(["isobar", "rn-ads", "--pressure", "0.002", "--conditions", "nope"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "no condition set 'nope'" in err


def test_names_and_sets_are_validated():
    Q = parameter_symbol("Q")
    base = dict(name="toy-rn", summary="toy", reference="toy", dimension=4,
                parameters=(Parameter("Q", 1.0, length_dimension=1),),
                enthalpy=r / 2 * (1 + 8 * pi * r**2 / 3 + Q**2 / r**2), entropy=pi * r**2)
    with pytest.raises(MalformedFamilyError, match="kebab-case"):
        Family(**base, conditions=(Condition("Bad Name", r > 1, "why"),))
    with pytest.raises(MalformedFamilyError, match="declared twice"):
        Family(**base, conditions=(Condition("positive-entropy", r > 1, "why"),))
    with pytest.raises(MalformedFamilyError, match="unknown condition 'outside'"):
        Family(**base, conditions=(Condition("outside-core", r > 1, "why"),),
               condition_sets=(ConditionSet("mine", ("outside",)),))
    fam = Family(**base, conditions=(r > 1,))  # a bare relation still works, named for it
    assert fam.condition_names == ("positive-entropy", "nonnegative-temperature", "condition-1")


def test_toml_named_conditions_and_sets(tmp_path):
    text = textwrap.dedent('''
        name = "toy-core"
        summary = "toy"
        reference = "toy"
        dimension = 4
        [parameters.b]
        default = 0.5
        length_dimension = 1
        domain = "> 0"
        [expressions]
        M = "r/2*(1 + 8*pi*P*r^2/3)"
        S = "pi*r^2"
        conditions = [{name = "outside-core", relation = "r > b", reason = "outside the core", reference = "invented"}, "r > b/2"]
        [condition_sets.core-only]
        members = ["outside-core"]
        description = "only the core"
        reference = "invented"
        ''')
    path = tmp_path / "toy_core.toml"
    path.write_text(text)
    (fam,) = load_declarative(path)
    assert fam.condition_names == ("positive-entropy", "nonnegative-temperature",
                                   "outside-core", "condition-2")
    th = bind(fam, conditions="core-only")
    assert th.admissibility.active == ("outside-core",)
    bad = text.replace('members = ["outside-core"]', 'members = ["inside"]')
    path.write_text(bad)
    with pytest.raises(MalformedFamilyError, match="unknown condition 'inside'"):
        load_declarative(path)


# -- exclusion reports -----------------------------------------------------------------------
def test_isobar_reports_what_the_default_conditions_exclude():
    th = bind("lovelock3-ads", **FINE)
    res = analyze_isobar(th, 0.02)
    (rg,) = res.excluded.ranges
    assert rg.condition == "regular-exterior"
    # the edge is r+ = sqrt(alpha~2), where the condition's margin vanishes cubically
    # (alpha~3 (g* - g_h)^3): double precision resolves it to ~1e-5 relative
    assert rg.x_min == pytest.approx(math.sqrt(A2), rel=1e-4) and rg.at_range_end[1]
    assert rg.T_unbounded == "above"
    assert res.admissibility["set"] == "default"


# -- the physics of the default exclusion, checked independently --------------------------
def _branch_singularity_outside(rp: float, P: float) -> bool:
    """Solve Upsilon(g) = m / r^6 for g(r), r >= r+, on the real branch through g(r+) = -1/r+^2
    (fine-tuned d = 7, k = -1: Upsilon(g) = a0 + g + a2 g^2 + a2^2 g^3 / 3, monotonic) and
    report whether g crosses g* = -1/a2, where Upsilon'(g) = (1 + a2 g)^2 vanishes and
    dg/dr diverges (FKMS14's metric; written here from the Lovelock polynomial)."""
    a0 = 16 * math.pi * P / 30
    ups = lambda g: a0 + g + A2 * g**2 + A2**2 * g**3 / 3  # noqa: E731
    m = rp**6 * ups(-1 / rp**2)
    gstar = -1 / A2
    rs = np.geomspace(rp, 1e4 * rp, 4000)
    gs = []
    for rr in rs:  # Upsilon is monotonic: one real root, found by bisection
        lo, hi = -1e3, 1e3
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            lo, hi = (mid, hi) if ups(mid) < m / rr**6 else (lo, mid)
        gs.append(0.5 * (lo + hi))
    gs = np.array(gs)
    return bool(np.any(np.diff(np.sign(gs - gstar)) != 0))


@pytest.mark.parametrize("rp,P", [(5.0, 0.02), (3.0, 0.02), (2.0, 0.012), (6.0, 0.012)])
def test_regular_exterior_is_exactly_no_branch_singularity_outside_the_horizon(rp, P):
    th = bind("lovelock3-ads", **FINE)
    assert th.condition_holds("regular-exterior", rp, P) == \
        (not _branch_singularity_outside(rp, P))


# -- DKKM14 under the thermodynamic conditions ---------------------------------------------
def _transition_independent(P: float, x_small: float, x_large: float):
    """Equal T and equal G on the two branches, at 40 digits (mpmath; M, S and T written here
    from the Lovelock polynomial, DKKM14/FKMS14, fine-tuned d = 7, k = -1, Q = 0; the common
    factor Omega_5 of M and S cancels in the conditions)."""
    mp.mp.dps = 40
    a2, a3 = mp.mpf(12), mp.mpf(48)
    P = mp.mpf(P)

    def M(x):
        return 5 / (16 * mp.pi) * (16 * mp.pi * P * x**6 / 30 - x**4 + a2 * x**2 - a3)

    def S(x):
        return x**5 / 4 * (1 - 10 * a2 / (3 * x**2) + 15 * a3 / x**4)

    def T(x):
        return mp.diff(M, x) / mp.diff(S, x)

    def eqs(x1, x2):
        return [T(x1) - T(x2), (M(x1) - T(x1) * S(x1)) - (M(x2) - T(x2) * S(x2))]
    x1, x2 = mp.findroot(eqs, (mp.mpf(x_small), mp.mpf(x_large)))
    return float(T(x1)), float(x1), float(x2)


@pytest.mark.slow
def test_dkkm_two_first_order_lines_end_at_the_isolated_critical_point():
    th = bind("lovelock3-ads", conditions="thermodynamic", **FINE)
    (cp,) = find_critical_points(th).physical
    assert cp.kind == "isolated"
    assert cp.P == pytest.approx(P_C, rel=1e-12) and cp.T == pytest.approx(T_C, rel=1e-12)
    pd = phase_diagram(th)
    assert pd.admissibility["set"] == "thermodynamic"
    first = [ln for ln in pd.lines if ln.kind == "first-order"]
    assert len(first) == 2
    below = [ln for ln in first if ln.ends["high"]["type"] == "critical point"]
    above = [ln for ln in first if ln.ends["low"]["type"] == "critical point"]
    assert len(below) == len(above) == 1
    assert below[0].ends["high"]["P"] == pytest.approx(P_C, rel=1e-10)
    assert above[0].ends["low"]["P"] == pytest.approx(P_C, rel=1e-10)
    # the lower line meets T = 0 (explained, not left 'unexplained')
    assert below[0].ends["low"]["type"] == "zero temperature"
    # transition temperatures on both lines against an independent 40-digit solution
    for P in (0.016, 0.02, 0.03):
        (t,) = [t for t in analyze_isobar(th, P).transitions if t.kind == "first-order"]
        xs = sorted(s.x for s in t.states)
        T_ind, x1, x2 = _transition_independent(P, *xs)
        assert t.T == pytest.approx(T_ind, rel=1e-10)
        assert xs == pytest.approx([x1, x2], rel=1e-9)
        assert xs[0] < math.sqrt(A2) < xs[1]  # small and large straddle the singular radius
    # under the default conditions the same couplings have no transition on either side
    # (the phase diagram shows no line at all: the observation, README)
    default = bind("lovelock3-ads", **FINE)
    for P in (0.016, 0.02, 0.03):
        assert not analyze_isobar(default, P).transitions


def test_dkkm_exponents_under_the_thermodynamic_conditions():
    from bhchem import critical_exponents
    th = bind("lovelock3-ads", conditions="thermodynamic", **FINE)
    (cp,) = find_critical_points(th).physical
    ex = critical_exponents(th, cp)
    assert ex.exact == {"alpha": "0", "beta": "1", "gamma": "2", "delta": "3"}


def test_cli_json_carries_the_selection_and_the_exclusions(capsys):
    import json
    from bhchem.cli.main import main
    assert main(["isobar", "lovelock3-ads", "-p", "d=7,k=-1,alpha2=1,alpha3=2,Q=0",
                 "--pressure", "0.02", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["admissibility"]["set"] == "default"
    assert [e["condition"] for e in doc["excluded"]] == ["regular-exterior"]
    assert main(["isobar", "lovelock3-ads", "-p", "d=7,k=-1,alpha2=1,alpha3=2,Q=0",
                 "--pressure", "0.02", "--conditions", "thermodynamic", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["admissibility"]["dropped"] == ["regular-exterior"]
    assert [t["kind"] for t in doc["transitions"]] == ["first-order"]


def test_scan_records_and_applies_the_selection(tmp_path):
    from bhchem.workflows.atlas import parse_grid, scan
    with pytest.raises(InvalidArgumentError, match="no condition 'nope'"):
        scan("schwarzschild-ads", [parse_grid("d=4:5:2")], {}, str(tmp_path / "a"),
             without=("nope",))
    doc = scan("schwarzschild-ads", [parse_grid("d=4:5:2")], {}, str(tmp_path / "b"),
               without=("positive-entropy",), refine=0)
    assert doc["conditions"]["removed"] == ["positive-entropy"]
    import json
    manifest = json.loads((tmp_path / "b" / "manifest.json").read_text())
    assert manifest["conditions"]["active"] == ["nonnegative-temperature"]


# -- FKMS14's multiple reentrance under the thermodynamic conditions ------------------------
FKMS = dict(d=7, k=-1, alpha2=0.2, alpha3=1 / 24, Q=0.0)   # alpha~2 = 2.4, alpha~3 = 1
P_FKMS = 0.0616


def test_fkms_multiple_reentrant_isobar_small_large_small_large():
    """Frassino, Kubiznak, Mann & Simovic, JHEP 09 (2014) 080, arXiv:1406.7015 (abstract):
    "for fixed pressure the small/large/small/large black hole phase transition occurs as the
    temperature of the system increases".  Found here for hyperbolic d = 7, alpha = alpha~2 /
    sqrt(alpha~3) = 2.4 (the couplings and pressure are ours: the papers' figures could not be
    read), in a narrow window around P = 0.0616, under the ``thermodynamic`` set.  The first
    step is zeroth order onto the large branch's end, where S = 0 exactly (r+ = sqrt(5)); the
    other two are first order.  Checked against an independent 40-digit solution (mpmath; M, S,
    T written here from the Lovelock polynomial)."""
    th = bind("lovelock3-ads", conditions="thermodynamic", **FKMS)
    res = analyze_isobar(th, P_FKMS)
    assert [ph for _, _, ph in res.preferred] == ["small", "large", "small", "large"]
    kinds = [t.kind for t in res.transitions]
    assert kinds == ["zeroth-order", "first-order", "first-order"]

    mp.mp.dps = 40
    a2, a3, P = mp.mpf("2.4"), mp.mpf(1), mp.mpf(P_FKMS)

    def M(x):
        return 5 / (16 * mp.pi) * (16 * mp.pi * P * x**6 / 30 - x**4 + a2 * x**2 - a3)

    def S(x):
        return x**5 / 4 * (1 - 10 * a2 / (3 * x**2) + 15 * a3 / x**4)

    def T(x):
        return (16 * mp.pi * P * x**6 / 5 - 4 * x**4 + 2 * a2 * x**2) / (
            4 * mp.pi * x * (x**4 - 2 * a2 * x**2 + 3 * a3))

    def G(x):
        return M(x) - T(x) * S(x)
    # zeroth order: the large branch starts where S = 0, r+^2 = 5 (roots of
    # x^2 - (10/3) a2 x + 15 a3 = 0 with x = r^2: 3 and 5)
    assert abs(S(mp.sqrt(5))) < mp.mpf(10) ** -35
    zeroth = res.transitions[0]
    assert zeroth.T == pytest.approx(float(T(mp.sqrt(5))), rel=1e-10)
    assert max(s.x for s in zeroth.states) == pytest.approx(math.sqrt(5), rel=1e-10)
    for t in res.transitions[1:]:
        xs = sorted(s.x for s in t.states)
        x1, x2 = mp.findroot(lambda u, w: [T(u) - T(w), G(u) - G(w)],
                             (mp.mpf(xs[0]), mp.mpf(xs[1])))
        assert t.T == pytest.approx(float(T(x1)), rel=1e-10)
        assert xs == pytest.approx([float(x1), float(x2)], rel=1e-9)
    # the default conditions exclude every small state here (a naked singularity outside
    # the horizon): one phase, no transition
    default = analyze_isobar(bind("lovelock3-ads", **FKMS), P_FKMS)
    assert not default.transitions
    assert {r.condition for r in default.excluded.ranges} >= {"regular-exterior"}
