"""Property-based tests (hypothesis) over every bundled family and random physical parameters.

Profiles (tests/conftest.py): the CI profile runs the number of examples set per property
below, per family (about 100-200 per property across the nine families, fewer for the
expensive isobar property); BHCHEM_HYPOTHESIS_PROFILE=long raises every count to at least
10^4:
    BHCHEM_HYPOTHESIS_PROFILE=long python -m pytest tests/test_properties.py
"""
import math
import os

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from bhchem import StateDomainError, bind
from bhchem.core.checks import check_first_law, check_smarr
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.isobar import analyze_isobar
from bhchem.declare.registry import available_families

LONG = os.environ.get("BHCHEM_HYPOTHESIS_PROFILE") == "long"


def examples(n):
    return settings(max_examples=max(n, 10_000) if LONG else n, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])


FAMILIES = sorted(available_families())


@st.composite
def family_params(draw, name):
    """Random physical parameters: log-uniform around each default within its domain."""
    fam = available_families()[name]
    out = {}
    for p in fam.all_parameters:
        dom = p.domain
        if dom.choices is not None:
            out[p.name] = draw(st.sampled_from(list(dom.choices)))
        elif dom.integer:
            out[p.name] = draw(st.integers(int(dom.lower), int(dom.lower) + 3))
        else:
            base = p.default if p.default != 0 else 0.5
            v = base * 10 ** draw(st.floats(-1.0, 1.0))
            if not dom.contains(v):
                v = p.default
            out[p.name] = v
    return out


@pytest.mark.parametrize("name", FAMILIES)
def test_first_law_and_smarr_hold(name):
    @examples(20)
    @given(family_params(name))
    def prop(params):
        th = bind(name, **params)
        fl = check_first_law(th, n_points=16)
        assume(fl.holds is not None)
        assert fl.holds, (params, fl.message)
        sm = check_smarr(th, n_points=16)
        assert sm.holds in (True, None), (params, sm.message)
    prop()


@pytest.mark.parametrize("name", FAMILIES)
@pytest.mark.slow
def test_critical_point_equations_hold(name):
    @examples(8 if name.startswith("kerr") else 25)
    @given(family_params(name))
    def prop(params):
        s = find_critical_points(name, **params)
        assert s.converged, s.message
        for cp in s.points:
            assert max(cp.residuals.values()) <= 1e-9, (params, cp)
            assert cp.kind in ("standard", "isolated", "degenerate")
    prop()


@pytest.mark.parametrize("name", [f for f in FAMILIES if not f.startswith("kerr")])
@pytest.mark.slow
def test_coexisting_states_have_equal_T_P_G_and_G_is_continuous(name):
    """Every first-order/Hawking-Page transition: equal T and G (P is the isobar's); the
    preferred G(T) is continuous except at reported zeroth-order jumps."""
    @examples(12)
    @given(family_params(name), st.floats(0.05, 1.5))
    def prop(params, frac):
        th = bind(name, **params)
        cps = find_critical_points(th).physical
        P = frac * (cps[0].P if cps else th.typical_pressure())
        try:
            res = analyze_isobar(th, P)
        except StateDomainError:  # e.g. no AdS vacuum at this pressure: a clear refusal
            assume(False)
        for t in res.transitions:
            if t.kind in ("first-order", "hawking-page"):
                assert t.residual <= 1e-12, (params, t)
        # continuity of the preferred G across segment ends
        for (lo1, hi1, ph1), (lo2, hi2, ph2) in zip(res.preferred[:-1], res.preferred[1:]):
            t = next((t for t in res.transitions if abs(t.T - hi1) <= 1e-12 * max(hi1, 1e-300)), None)
            assert t is not None, "a change of the preferred phase without a transition"
            if t.kind != "zeroth-order":
                a, b = t.states
                size = abs(a.G) + abs(b.G) + t.T * (abs(a.S) + abs(b.S))
                assert abs(a.G - b.G) <= 1e-12 * size
    prop()


@examples(100)
@given(st.floats(0.05, 0.95))
def test_clausius_clapeyron_along_the_line(frac):
    """dP/dT = Delta S / Delta V along charged-AdS coexistence (Richardson slope, <= 1e-8)."""
    from bhchem.analysis.coexistence_line import coexistence_curve
    th = bind("rn-ads", Q=1.0)
    cp = find_critical_points(th).points[0]
    curve = coexistence_curve(th, [frac * cp.P], critical_point=cp, checks=True)
    (pt,) = curve.points
    assert pt.clapeyron_residual <= 1e-8
    assert pt.equal_area_residual <= 1e-10


@pytest.mark.parametrize("name, param", [("rn-ads", "Q"), ("born-infeld-ads", "Q"),
                                         ("gauss-bonnet-ads", "alpha"), ("kerr-ads", "J")])
@pytest.mark.slow
def test_scale_invariance(name, param):
    """Results for a rescaled family equal the rescaled results: scale-free critical data
    are unchanged when every dimensionful parameter is rescaled by lambda^n."""
    @examples(8 if name == "kerr-ads" else 40)
    @given(st.floats(-3, 3))
    def prop(log_lam):
        lam = 10.0 ** log_lam
        th = bind(name)
        base = {p: th.values[p] for p in th.values}
        scaled = dict(base)
        for nm, n in th.derivation.length_dimensions.items():
            scaled[nm] = base[nm] * lam**n
        a = find_critical_points(name, **base).physical
        b = find_critical_points(name, **scaled).physical
        assert len(a) == len(b)
        for p, q in zip(a, b):
            for k, v in p.scale_free.items():
                assert q.scale_free[k] == pytest.approx(v, rel=1e-10, abs=1e-300)
    prop()
