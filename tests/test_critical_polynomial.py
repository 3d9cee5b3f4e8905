"""The critical polynomial and its exact thresholds (issue 17, part A).

Checked against: the Euler-Heisenberg-AdS cubic and its thresholds a/Q^2 = 32/7, 16/7, derived
with sympy in tests/test_atlas.py (reused here); the Born-Infeld-AdS threshold bQ = 1/sqrt(8)
(Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251, Sec. 4) and the engine's
independent scanned critical search; the third-order Lovelock isolated critical point on
alpha~3 = alpha~2^2/3 (Dolan, Kostouki, Kubiznak & Mann, CQG 31 (2014) 242001,
arXiv:1407.4783), re-derived here from the Lovelock polynomial.
"""
import io
import json
import math
from contextlib import redirect_stdout

import pytest
import sympy as sp

from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.critical_polynomial import (NoPolynomialFormError, critical_points_over,
                                                 critical_polynomial,
                                                 polynomial_threshold_curves,
                                                 polynomial_thresholds)
from bhchem.cli.main import main
from bhchem.declare.registry import load_family_file
from bhchem.errors import BhchemError
from test_atlas import EH_FILE, _eh_counts, _eh_critical_polynomial, _eh_thresholds


def _eh():
    return load_family_file(EH_FILE)[0]


def test_eh_polynomial_is_the_derived_cubic():
    """The engine's polynomial in y = (r/Q)^2 and a (for a/Q^2) is the cubic
    y^3 - 24 Q^2 y^2 + 448 a Q^4 in v^2 = 4 r^2 derived in test_atlas, up to a constant."""
    poly = critical_polynomial(_eh(), Q=1.0, a=0.1)
    assert poly.available and poly.variable == "r^2"
    assert poly.scale_free == {"y": "(r/Q)^2", "a": "a/Q^2"}
    y, a = sp.symbols("y a")
    engine = sp.sympify(poly.expression, locals={"y": y, "a": a})
    _, cubic, _, _, (Y, A, Q) = _eh_critical_polynomial()
    derived = cubic.subs({Y: 4 * y, A: a, Q: 1})          # v^2 = 4 r^2, Q = 1
    ratio = sp.cancel(derived / engine)
    assert ratio.is_number and ratio != 0
    assert sp.factor(poly.factored, extension=None) == sp.factor(engine)


def test_eh_thresholds_are_exact():
    """Over a in [0, 6] at Q = 1: P_c of the smaller root crosses 0 at 16/7 (1 -> 2 physical
    critical points) and the two roots merge at 32/7 (2 -> 0), as derived in test_atlas; the
    root through y = 0 at a = 0 (an unphysical P_c < 0 root) is not an event."""
    events = polynomial_thresholds(_eh(), "a", (0.0, 6.0), Q=1.0)
    merge, appear = _eh_thresholds()
    assert [(e.kind, e.exact) for e in events] == [
        ("critical-pressure-zero", str(appear)), ("critical-count", str(merge))]
    assert (appear, merge) == (sp.Rational(16, 7), sp.Rational(32, 7))
    for e, exact in zip(events, (appear, merge)):
        assert abs(e.value - float(exact)) <= 1e-15 * float(exact)
        assert e.converged and e.residuals["value - exact"] <= 2.3e-16
        assert e.residuals["F(value)"] <= 1e-15
        assert e.scale_free == {"a/Q^2": pytest.approx(float(exact), rel=1e-15)}
        below, above = _eh_counts(e.value - 1e-3)[1], _eh_counts(e.value + 1e-3)[1]
        assert f"{below} -> {above} physical" in e.message


def test_born_infeld_threshold_one_over_sqrt8():
    """GKM 2012 Sec. 4: critical points exist only for bQ > 1/sqrt(8) (from memory); here two
    appear there (Q = 1), exact sqrt(2)/4, and the engine's scanned search (no polynomial)
    agrees on the count below (none)."""
    events = polynomial_thresholds("born-infeld-ads", "b", (0.3, 0.6), Q=1.0)
    # two events: the pair appears (critical-count; the resultant with T_c shares the factor
    # 8 b^2 - 1 but no critical point crosses T = 0 there, so it is not reported), and the
    # one of lower P_c crosses P = 0 at bQ = sqrt(3 + 2 sqrt(3))/6 = 0.4237 (GKM 2012 give
    # this upper end of the two-critical-point window; from memory)
    assert [e.kind for e in events] == ["critical-count", "critical-pressure-zero"]
    upper = sp.sqrt(3 + 2 * sp.sqrt(3)) / 6
    assert sp.simplify(sp.sympify(events[1].exact) - upper) == 0
    assert abs(events[1].value - float(upper)) <= 1e-15 * float(upper)
    assert "2 -> 1 physical" in events[1].message
    (ev,) = [e for e in events if e.kind == "critical-count"]
    assert ev.exact == "sqrt(2)/4"
    assert abs(ev.value - 1 / math.sqrt(8)) <= 1e-12 / math.sqrt(8)
    assert ev.scale_free == {"Q*b": pytest.approx(1 / math.sqrt(8), rel=1e-15)}
    assert "0 -> 2 physical" in ev.message
    # below: none (the 2 above are checked at b = 0.4 in the next test)
    assert find_critical_points("born-infeld-ads", Q=1.0, b=0.34).physical == ()


def test_born_infeld_rationalised_roots_are_the_critical_points():
    """The rationalised polynomial's genuine roots at bQ = 0.4 are the critical radii of the
    scanned search (independent: folds of T(r) refined by Newton)."""
    poly = critical_polynomial("born-infeld-ads", Q=1.0, b=0.4)
    assert poly.available and poly.rationalised and poly.variable == "r^4"
    y, Q = sp.symbols("y Q")
    expr = sp.sympify(poly.expression, locals={"y": y, "Q": Q})
    # scale-free: y stands for (r b)^4 and Q for Q b; at b = 0.4, Q = 1: Q -> 0.4
    roots = sorted(float(r) for r in sp.Poly(expr.subs(Q, sp.Rational(2, 5)), y).real_roots()
                   if r > 0)
    search = find_critical_points("born-infeld-ads", Q=1.0, b=0.4).physical
    found = [cp.r for cp in search]
    assert len(found) == 2
    for r_c in found:
        assert min(abs((r_c * 0.4) ** 4 / yr - 1) for yr in roots) <= 1e-9
    # the vectorised path (batched companion roots + Newton) gives the same points
    over = critical_points_over("born-infeld-ads", "b", [0.34, 0.4], Q=1.0)
    assert over.converged and over.counts().tolist() == [0, 2] and over.unresolved == ()
    for (T, P, x), cp in zip(over.points[1], search):
        assert (T, P, x) == pytest.approx((cp.T, cp.P, cp.x), rel=1e-12)
    assert max(over.residuals[1]) <= 1e-12


def test_lovelock_isolated_critical_point_curve():
    """Third-order Lovelock, d = 7, k = -1, Q = 0: Upsilon'(g) = 1 + 2 a2 g + 3 a3 g^2 (tilde
    couplings) is a perfect square when a3 = a2^2/3 (DKKM14: the isolated critical point);
    with a2 = (d-3)(d-4) alpha2, a3 = (d-3)(d-4)(d-5)(d-6) alpha3 (the family's bare
    couplings) that is a curve in (alpha2, alpha3), derived here; the traced curve is it."""
    g, t2, t3, al2, al3 = sp.symbols("g t2 t3 alpha2 alpha3")
    disc = sp.discriminant(1 + 2 * t2 * g + 3 * t3 * g**2, g)
    (t3_iso,) = sp.solve(disc, t3)
    assert t3_iso == t2**2 / 3
    d = 7
    relation = sp.expand((d - 3) * (d - 4) * (d - 5) * (d - 6) * al3
                         - t3_iso.subs(t2, (d - 3) * (d - 4) * al2))
    curves = polynomial_threshold_curves("lovelock3-ads", ("alpha2", "alpha3"),
                                         ((0.1, 1.0), (0.0, 2.5)), n=21, Q=0.0, d=7, k=-1)
    iso = [c for c in curves if c.kind == "isolated-critical-point"]
    assert len(iso) == 1
    (curve,) = iso
    eq = sp.sympify(curve.equation.split("=")[0], locals={"alpha2": al2, "alpha3": al3})
    assert sp.cancel(eq / relation).is_number
    assert len(curve.points) == 21 and curve.converged
    for a2, a3 in curve.points:
        assert abs(float(relation.subs({al2: a2, al3: a3}))) <= 1e-12 * (1 + a3)


def test_lovelock_isolated_threshold_is_exact_at_a_grid_coupling():
    """At a coupling typed as a long decimal (point 16 of a 30-point grid on [0.6, 1.4])
    the isolated critical point sits at alpha3 = 2 alpha2^2 (DKKM14, as derived in the test
    above), a rational: the reported exact value must be that rational (it used to be
    "simplified" into a radical 2e-17 away, whose symbolic gcd then ran for minutes and
    found no isolated point)."""
    a2 = 1.0413793103448274
    events = polynomial_thresholds("lovelock3-ads", "alpha3", (0.5, 4.0), d=7, k=-1, Q=0.0,
                                   alpha2=a2)
    iso = [e for e in events if e.kind == "isolated-critical-point"]
    assert len(iso) == 1
    want = 2 * sp.Rational(repr(a2)) ** 2
    assert sp.Rational(iso[0].exact) == want
    assert iso[0].value == float(want)
    for e in events:        # every exact value is the root it stands for (50 digits)
        if e.exact is not None:
            assert abs(sp.N(sp.sympify(e.exact), 50) - e.value) <= 1e-15 * e.value


def test_family_without_polynomial_form(tmp_path):
    """T with an exponential: an honest 'no polynomial form', from the API and the CLI."""
    path = tmp_path / "cloud.toml"
    path.write_text('name = "exp-cloud"\nsummary = "invented test family"\n'
                    'reference = "none (test)"\n[dimension]\ndefault = 4\nminimum = 4\n'
                    'maximum = 4\n'
                    '[parameters.g]\ndefault = 0.5\nlength_dimension = "1"\ndomain = "> 0"\n'
                    '[expressions]\nM = "r/2*(1 + 8*pi*P*r^2/3 + g*exp(-r/g)/r)"\n'
                    'S = "pi*r^2"\n')
    fam = load_family_file(path)[0]
    poly = critical_polynomial(fam)
    assert not poly.available and poly.message.startswith("no polynomial form")
    assert poly.to_dict()["expression"] is None
    with pytest.raises(NoPolynomialFormError, match="no polynomial form"):
        polynomial_thresholds(fam, "g", (0.1, 1.0))
    assert issubclass(NoPolynomialFormError, BhchemError)


def test_cli_critical_shows_the_polynomial():
    buf = io.StringIO()
    with redirect_stdout(buf):
        assert main(["critical", "rn-ads", "-p", "Q=1"]) == 0
    line = [ln for ln in buf.getvalue().splitlines() if "critical polynomial" in ln]
    # rn-ads: y = (r/Q)^2 = 6, r_c = sqrt(6) Q (Kubiznak & Mann, JHEP 07 (2012) 033)
    assert line == ["  critical polynomial in r^2: y - 6 = 0 (y stands for (r/Q)^2)"]
    buf = io.StringIO()
    with redirect_stdout(buf):
        assert main(["critical", "rn-ads", "-p", "Q=1", "--json"]) == 0
    doc = json.loads(buf.getvalue())["critical_polynomial"]
    assert doc["variable"] == "r^2" and doc["expression"] == "y - 6"
    assert doc["factors"] == [["y - 6", 1]] and doc["scale_free"] == {"y": "(r/Q)^2"}


def test_bad_arguments():
    with pytest.raises(BhchemError, match="no parameter 'nope'"):
        polynomial_thresholds("rn-ads", "nope", (0.1, 1.0))
    with pytest.raises(BhchemError, match="not a continuous parameter"):
        polynomial_thresholds("rn-ads", "d", (4, 6))
    with pytest.raises(BhchemError, match="lo < hi"):
        polynomial_thresholds("rn-ads", "Q", (1.0, 0.1))
