"""The phase diagram agrees with its own isobars (issue 19), over every bundled family.

Property (hypothesis): at any pressure P of the diagram's range, the transitions the isobar
analysis (:func:`bhchem.analysis.isobar.analyze_isobar`) finds at P are exactly the lines of the
diagram whose pressure interval contains P: the same kinds, the same phases and the same
temperatures to 1e-10, each line being solved at P from its own equations
(:func:`bhchem.analysis.phases.line_transition_at`: coexistence, spinodal or Hawking-Page condition),
not interpolated.  Besides: every line end is explained (critical, triple or terminal point,
domain edge, range end; never an unexplained end or a warning), and each line's points reach
its ends.

One diagram per family, at parameters that show its richest structure (named beside each);
hypothesis draws the pressures.  CI profile: 12 pressures per family; the long profile
(BHCHEM_HYPOTHESIS_PROFILE=long) at least 10^4.
"""
import math
import os

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bhchem import StateDomainError, bind
from bhchem.analysis.isobar import analyze_isobar
from bhchem.analysis.phases import diagram_transitions_at, phase_diagram
from bhchem.declare.registry import available_families
from session_share import shared

LONG = os.environ.get("BHCHEM_HYPOTHESIS_PROFILE") == "long"

#: (parameters, pressure range or None for the default) per family
CASES = {
    # reentrant window, issue 19 (Gunasekaran, Kubiznak & Mann 2012)
    "born-infeld-ads": ({"b": 0.42, "Q": 1.0}, None),
    # triple point (Wei & Liu, PRD 90 (2014) 044057; see test_family_analyses)
    "gauss-bonnet-ads": ({"d": 6, "k": 1, "alpha": 1 / 6, "Q": 0.38}, (0.012, 0.08)),
    "kerr-ads": ({}, None),
    "kerr-newman-ads": ({}, None),
    # hyperbolic: a first-order line from a terminal point at T = 0 to a critical point, a
    # second one from another critical point to the range end
    "lovelock3-ads": ({"d": 7, "k": -1, "alpha2": 1.0, "alpha3": 2.5, "Q": 0.3}, None),
    "rn-ads": ({}, None),
    "schwarzschild-ads": ({"d": 5}, None),
    "vdw-fluid": ({}, None),
}
#: the bundled families (entry points of this distribution), not user files other tests load
FAMILIES = sorted(name for name, fam in available_families().items()
                  if fam.source and "/models/" in fam.source.replace("\\", "/"))
EXPLAINED = {"critical point", "triple point", "terminal point", "domain edge", "range end"}
_cache = {}

def structure_warnings(pd) -> list:
    """The diagram's warnings about its structure (an unexplained line end, a window the
    isobars cannot resolve), apart from residuals above their promised bounds, which are
    reported separately (near a critical or terminal end the Clausius-Clapeyron finite
    difference is ill-conditioned, and the diagram says so)."""
    return [w for w in pd.warnings if "above its promised bound" not in w]



def test_every_bundled_family_has_a_case():
    assert set(CASES) == set(FAMILIES)


def _diagram(name):
    """The family's binding and diagram; the diagram is computed once per test session (the
    two tests of a family may run in different xdist workers: session_share)."""
    if name not in _cache:
        params, rng = CASES[name]
        th = bind(name, **params)
        pd = shared(f"phase-diagram-consistency-{name}",
                    lambda: phase_diagram(th, pressure_range=rng, n_dense=8))
        _cache[name] = th, pd
    return _cache[name]


@pytest.mark.parametrize("name", FAMILIES)
@pytest.mark.slow
def test_isobars_are_the_lines_that_cross_them(name):
    th, pd = _diagram(name)
    lo, hi = pd.pressure_range

    @settings(max_examples=max(12, 10_000) if LONG else 12, deadline=None,
              suppress_health_check=[HealthCheck.too_slow])
    @given(st.floats(0.0, 1.0))
    def prop(u):
        P = min(max(lo * (hi / lo) ** u, lo), hi)
        try:
            iso = [t for t in analyze_isobar(th, P).transitions if t.kind != "second-order"]
        except StateDomainError:
            iso = []
        lines = diagram_transitions_at(th, pd, P)
        assert [(t.kind, t.from_phase, t.to_phase) for t in iso] == \
            [(d["kind"], d["from"], d["to"]) for d in lines], P
        for t, d in zip(iso, lines):
            assert d["T"] is not None and abs(d["T"] - t.T) <= 1e-10 * t.T, (P, t, d)
    prop()


@pytest.mark.parametrize("name", FAMILIES)
@pytest.mark.slow
def test_every_line_end_is_explained_and_reached(name):
    th, pd = _diagram(name)
    assert not structure_warnings(pd), pd.warnings
    lo, hi = pd.pressure_range
    for line in pd.lines:
        for side in ("low", "high"):
            e = line.ends[side]
            assert e["type"] in EXPLAINED, (line.kind, e)
            if e["type"] == "terminal point":
                assert e.get("branch") or e.get("partners")
            if e["type"] == "domain edge":
                assert e.get("condition")
            if e["type"] == "range end":
                assert e["P"] == (lo if side == "low" else hi)
        # the points run from one end to the other, both included
        (T0, P0), (T1, P1) = line.points[0], line.points[-1]
        assert P0 == line.ends["low"]["P"] and P1 == line.ends["high"]["P"]
        assert T0 == pytest.approx(line.ends["low"]["T"], rel=1e-12)
        assert T1 == pytest.approx(line.ends["high"]["T"], rel=1e-12)
        assert all(a[1] <= b[1] for a, b in zip(line.points[:-1], line.points[1:]))
    for tp in pd.triple_points:
        assert tp.residual <= 1e-12
    ends_at = [(line.ends[s]["type"], line.ends[s]["P"]) for line in pd.lines for s in ("low", "high")]
    assert all(math.isfinite(P) for _, P in ends_at)
