"""Families from the metric function (issue 15): the metric route, the first-law diagnosis,
the comparison of routes and the photon-sphere order parameters.  Each check names its
source; exact results are derived here with sympy."""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import sympy as sp

import bhchem
from bhchem import bind, check_first_law, derive, find_critical_points, get_family
from bhchem.analysis.metric_route import (compare_routes, diagnose_metric, photon_sphere,
                                          photon_sphere_jumps)
from bhchem.core.metric import metric_route_agrees
from bhchem.core.sampling import physical_sample
from bhchem.declare import Domain, Parameter, from_metric, registry
from bhchem.declare.symbols import omega
from bhchem.errors import MalformedFamilyError

ROOT = Path(__file__).resolve().parents[1]
BARDEEN_AREA = ROOT / "examples" / "families" / "bardeen_area_law.py"
BARDEEN_TOML = ROOT / "examples" / "families" / "bardeen_first_law.toml"

r, M, L, m = sp.symbols("r M L m", positive=True)


def _by_name(expr, **symbols):
    return expr.xreplace({s: symbols[s.name] for s in expr.free_symbols if s.name in symbols})


# -- the metric reproduces the bundled families (Gunasekaran, Kubiznak & Mann, JHEP 11
#    (2012) 110, arXiv:1208.6251, Sec. 3: f = 1 - m/r^(d-3) + q^2/r^(2(d-3)) + r^2/L^2) -------
@pytest.mark.parametrize("name, d", [("rn-ads", 4), ("rn-ads", 5),
                                     ("schwarzschild-ads", 4), ("schwarzschild-ads", 5)])
def test_bundled_metric_reproduces_M_and_T_symbolically(name, d):
    agree = metric_route_agrees(derive(get_family(name), d=d))
    assert agree.enthalpy is True and agree.temperature is True, agree.differences
    assert agree.how == {"M": "symbolic", "T": "symbolic"}


def test_gauss_bonnet_metric_reproduces_M_and_T():
    """Metric of Cai, Cao, Li & Yang, JHEP 09 (2013) 005 (as in models/gauss_bonnet_ads.py),
    d = 5, k = 1.  (For k = -1, sqrt((r^2 - 2 alpha~)^2) has the sign of the GB-branch
    condition, a state condition, and the comparison of T is numerical, as for Born-Infeld.)"""
    th = bind("gauss-bonnet-ads", d=5, k=1, alpha=0.1, Q=1.0)
    agree = metric_route_agrees(th.derivation)
    assert agree.holds, agree.differences
    assert agree.how == {"M": "symbolic", "T": "symbolic"}


def test_rn_from_its_metric_is_the_bundled_family_in_4d():
    """f = 1 - 2M/r + Q^2/r^2 + r^2/L^2 (Kubiznak & Mann, JHEP 07 (2012) 033): from_metric
    gives M = r/2 (1 + 8 pi P r^2/3 + Q^2/r^2) and T = f'(r+)/4pi exactly."""
    Q = sp.Symbol("Q", real=True)
    fam = from_metric(name="rn-metric", summary="RN-AdS from its metric",
                      reference="Kubiznak & Mann, JHEP 07 (2012) 033",
                      parameters=(Parameter("Q", 1.0, length_dimension=1,
                                            domain=Domain.nonnegative()),),
                      f=1 - 2 * M / r + Q**2 / r**2 + r**2 / L**2)
    bundled = derive(get_family("rn-ads"), d=4)
    mine = derive(fam)
    for q in ("M", "T", "S", "V", "Phi_Q"):
        assert sp.simplify(mine.quantities[q] - bundled.quantities[q]) == 0, q
    assert fam.metric is not None and "area law" in fam.conventions["entropy"]


# -- Gauss-Bonnet: the first-law entropy is the Wald entropy (Cai, PRD 65 (2002) 084014) ------
@pytest.mark.parametrize("d", [5, 6])
def test_gauss_bonnet_area_law_fails_and_first_law_entropy_is_wald(d):
    """Uncharged GB-AdS, f = 1 + r^2/(2a)(1 - sqrt(1 + 4 a m/r^(d-1) - 4a/L^2)) with
    a = alpha~ = (d-3)(d-4) alpha, M = (d-2) Omega m/(16 pi).  Cai 2002: the entropy is
    S = (Omega r+^(d-2)/4)(1 + 2(d-2) a/((d-4) r+^2)), not A/4."""
    a = sp.Symbol("a", positive=True)
    common = dict(summary="GB-AdS from its metric", reference="Cai, PRD 65 (2002) 084014",
                  dimension=d, mass="m", enthalpy=(d - 2) * omega(d) * m / (16 * sp.pi),
                  parameters=(Parameter("a", 0.1, length_dimension=2,
                                        domain=Domain.positive()),),
                  f=1 + r**2 / (2 * a) * (1 - sp.sqrt(1 + 4 * a * m / r**(d - 1)
                                                      - 4 * a / L**2)),
                  conditions=(sp.Symbol("P") * a < sp.Rational((d - 1) * (d - 2), 64) / sp.pi,))
    area = from_metric(name=f"gb{d}-area", entropy="area", **common)
    first = from_metric(name=f"gb{d}-first-law", entropy="first-law", **common)
    wald = omega(d) * r**(d - 2) / 4 * (1 + 2 * (d - 2) * a / ((d - 4) * r**2))
    S = _by_name(first.entropy, r=r, a=a)
    # equal up to a constant: the r-derivative of the difference vanishes identically
    assert sp.simplify(sp.diff(S - wald, r)) == 0
    # the area law fails the first law: T_metric - (dM/dr)/(dA/4 dr) is not zero (symbolic;
    # the engine's numerical verdict on an area-law metric family is tested on Bardeen below)
    Pp = sp.Symbol("P", positive=True)
    Ma, Ta, Sa = (_by_name(e, r=r, a=a, P=Pp) for e in (area.enthalpy, area.temperature,
                                                        area.entropy))
    mismatch = sp.simplify(Ta - sp.diff(Ma, r) / sp.diff(Sa, r))
    assert mismatch != 0 and abs(float(mismatch.subs({r: 1, a: sp.Rational(1, 10),
                                                      Pp: sp.Rational(1, 100)}))) > 1e-3


# -- Bardeen-AdS (Tzikas, Phys. Lett. B 788 (2019) 219) ----------------------------------------
@pytest.fixture(scope="module")
def bardeen():
    with registry.registry_scope():
        (area,) = bhchem.load_family_file(BARDEEN_AREA)
        (first,) = bhchem.load_family_file(BARDEEN_TOML)
        yield bind(area, g=1.0), bind(first, g=1.0)


def test_bardeen_area_law_failure_is_reported(bardeen):
    """About 17 % at g = 1, r+ = 3, P = 0.001 (issue 15); exactly (1 + g^2/r^2)^(3/2) - 1,
    derived here: (dM/dS)_P / T_metric = (dM/dr)/(2 pi r) / (-(dM/dm)/(df/dm) ... ) =
    ((r^2 + g^2)/r^2)^(3/2) for f = 1 - 2 M r^2/(r^2 + g^2)^(3/2) + r^2/L^2."""
    area, _ = bardeen
    diag = diagnose_metric(area, example=(3.0, 0.001))
    exact = float((1 + sp.Rational(1, 9))**sp.Rational(3, 2) - 1)
    assert diag.holds is False
    assert abs(diag.example_state["relative_difference"] - exact) < 1e-12
    assert abs(exact - 0.17) < 0.005
    assert diag.max_relative_difference >= exact
    assert "asinh" in diag.consistent_entropy and "C = 0" in diag.consistent_entropy
    assert any("length dimension" in x and "g" in x for x in diag.remedies)
    assert check_first_law(area).holds is False


def test_bardeen_first_law_entropy_and_critical_point(bardeen):
    """Critical point (P_c, V_c, T_c) ~ (0.0012/g^2, 287.44 g^3, 0.0251/g) (Tzikas 2019,
    values as quoted in issue 15); it depends only on T, so the area-law pair with the
    metric's T (bardeen-area-law) has the same one."""
    area, first = bardeen
    assert check_first_law(first).holds is True
    g, rr = sp.symbols("g r", positive=True)
    S = _by_name(first.family.entropy, g=g, r=rr)
    # S' = 2 pi (r^2 + g^2)^(3/2)/r^2 (= -4 pi (dM/dm)/(df/dm) at the horizon)
    assert sp.simplify(sp.diff(S, rr) - 2 * sp.pi * (rr**2 + g**2)**sp.Rational(3, 2) / rr**2) == 0
    for th in (first, area):
        (cp,) = [c for c in find_critical_points(th).physical if c.kind == "standard"]
        V_c = float(th.V(cp.x, cp.P)) if th is first else \
            float(4 * math.pi / 3 * (cp.x**2 + 1)**1.5)  # V = dM/dP of the metric route
        assert abs(cp.P - 0.0012) < 0.00005 and abs(cp.T - 0.0251) < 0.00005
        assert abs(V_c - 287.44) < 0.01


def test_compare_routes_bardeen(bardeen):
    area, first = bardeen
    cmp = compare_routes(first)
    assert cmp.converged
    assert abs(cmp.metric.P_c - 0.0012) < 0.00005 and abs(cmp.metric.T_c - 0.0251) < 0.00005
    # the area route (T = dM/dS with S = pi r^2) has another critical point
    assert cmp.shifts["P_c"] > 0.5 and cmp.shifts["T_c"] > 0.2
    assert cmp.metric.T_coexistence_half < cmp.metric.T_c
    assert cmp.area.T_coexistence_half < cmp.area.T_c
    assert set(cmp.to_dict()["shifts"]) == {"P_c", "T_c", "V_c", "T_coexistence_half"}


# -- photon sphere ----------------------------------------------------------------------------
def test_rn_photon_sphere_at_critical_point_is_2_plus_sqrt6():
    """4D RN-AdS, Q = 1, critical point r_c = sqrt(6), P_c = 1/(96 pi) (Kubiznak & Mann 2012):
    2f = r f' gives r^2 - 3 M r + 2 Q^2 = 0 (L drops out), so r_ps = 2 + sqrt(6), derived."""
    rc, Pc = sp.sqrt(6), 1 / (96 * sp.pi)
    Mc = rc / 2 * (1 + 8 * sp.pi * Pc * rc**2 / 3 + 1 / rc**2)
    f = 1 - 2 * Mc / r + 1 / r**2 + r**2 * 8 * sp.pi * Pc / 3
    roots = [x for x in sp.solve(sp.simplify(2 * f - r * sp.diff(f, r)), r) if x.is_positive]
    r_ps = max(roots)
    assert sp.simplify(r_ps - (2 + sp.sqrt(6))) == 0
    th = bind("rn-ads", Q=1.0)
    (cp,) = find_critical_points(th).physical
    ps = photon_sphere(th, cp.x, cp.P)
    assert ps.converged == (True,)
    assert abs(ps.r_ps[0] - float(r_ps)) < 1e-13 * float(r_ps)
    u = float(r_ps / sp.sqrt(f.subs(r, r_ps)))
    assert abs(ps.u_ps[0] - u) < 1e-12 * u


def test_schwarzschild_ads_lyapunov_exponent():
    """lambda^2 = f (2f - r^2 f'')/(2 r^2) at r_ps (Cardoso et al., PRD 79 (2009) 064016):
    for f = 1 - 2M/r + r^2/L^2, r_ps = 3M and lambda^2 = 1/(27 M^2) + 1/L^2 (derived here;
    L -> infinity gives Cardoso et al.'s 1/(3 sqrt(3) M))."""
    f = 1 - 2 * M / r + r**2 / L**2
    (rps,) = sp.solve(2 * f - r * sp.diff(f, r), r)
    lam2 = sp.simplify((f * (2 * f - r**2 * sp.diff(f, r, 2)) / (2 * r**2)).subs(r, rps))
    assert rps == 3 * M and sp.simplify(lam2 - 1 / (27 * M**2) - 1 / L**2) == 0
    assert sp.limit(sp.sqrt(lam2), L, sp.oo) == 1 / (3 * sp.sqrt(3) * M)
    th = bind("schwarzschild-ads", d=4)
    x, P = np.array([0.5, 1.0, 4.0]), np.array([0.01, 0.001, 0.02])
    ps = photon_sphere(th, x, P)
    Mv = th.M(x, P)
    L2 = 3 / (8 * np.pi * P)
    assert all(ps.converged)
    assert np.allclose(ps.r_ps, 3 * Mv, rtol=1e-13)
    assert np.allclose(np.array(ps.lyapunov)**2, 1 / (27 * Mv**2) + 1 / L2, rtol=1e-12)


def test_photon_sphere_jump_exponent_is_one_half():
    """Delta r_ps ~ (1 - T/T_c)^(1/2) along the 4D RN-AdS coexistence line (Wei & Liu,
    PRD 97 (2018) 104027, arXiv:1711.01522): fitted within 0.01; the same from a line of a
    phase diagram (its own coexistence points; here a line built from a coexistence curve)."""
    from bhchem.analysis.phases import PhaseLine
    th = bind("rn-ads", Q=1.0)
    jumps = photon_sphere_jumps(th)
    assert jumps.converged
    assert abs(jumps.exponent - 0.5) < 0.01 and jumps.exponent_error < 0.01
    (cp,) = find_critical_points(th).physical
    curve = bhchem.coexistence_curve(th, cp.P * np.linspace(0.1, 0.9, 9), critical_point=cp)
    line = PhaseLine(kind="first-order", between=("small", "large"), points=[], ends={},
                     coexistence=list(curve.points), critical_point=cp)
    on_line = photon_sphere_jumps(th, line=line)
    assert on_line.converged and abs(on_line.exponent - 0.5) < 0.01
    assert on_line.message.startswith("first-order line small/large")
    dr = np.array(jumps.delta_r_ps)
    dl = np.array(jumps.delta_lyapunov)
    # the larger black hole has the larger photon sphere and the smaller Lyapunov exponent;
    # both jumps shrink to zero towards the critical point
    assert np.all(dr > 0) and np.all(dl < 0)
    assert abs(dr[-1]) < 1e-2 * abs(dr[0]) and abs(dl[-1]) < 1e-2 * abs(dl[0])


# -- declarations: h, several roots, faults ---------------------------------------------------
def test_second_metric_function_h():
    """-g_tt = N^2 F, 1/g_rr = F/N^2 with F the Schwarzschild-AdS function: the surface
    gravity sqrt(f' h')/(4 pi) = F'/(4 pi) is N-independent (derived by hand from the formula
    of issue 15), so M and T are those of schwarzschild-ads in 4D."""
    N = sp.Symbol("N", positive=True)
    F = 1 - 2 * M / r + r**2 / L**2
    fam = from_metric(name="rescaled-sads", summary="s", reference="textbook", f=N**2 * F,
                      h=F / N**2, parameters=(Parameter("N", 2.0, domain=Domain.positive()),))
    sads = get_family("schwarzschild-ads")
    Pp, rr = sp.symbols("P r", positive=True)
    for mine, theirs in ((fam.enthalpy, sads.enthalpy), (fam.temperature, sads.temperature)):
        diff = _by_name(mine, r=rr, P=Pp) - _by_name(theirs, r=rr, P=Pp, d=4)
        assert sp.simplify(diff.subs(sp.Symbol("d", integer=True, positive=True), 4)) == 0
    assert "sqrt(f'(r+) h'(r+))" in fam.conventions["temperature"]
    with pytest.raises(MalformedFamilyError, match="h does not vanish"):
        from_metric(name="bad-h", summary="s", reference="r", f=F, h=1 + r**2 / L**2)


def test_several_roots_for_the_mass_parameter():
    """f = 1 - 2M/r + a M^2/r^3 + r^2/L^2 is quadratic in M: two roots, both real and positive
    at the reference state, so the declaration must say which: by index, or by the stated
    asymptotics (the root that tends to Schwarzschild-AdS, M -> r/2 (1 + r^2/L^2), as a -> 0;
    derived by hand: the other root diverges like 2 r^2/a)."""
    a = sp.Symbol("a", positive=True)
    common = dict(summary="s", reference="toy", f=1 - 2 * M / r + a * M**2 / r**3 + r**2 / L**2,
                  parameters=(Parameter("a", 0.1, length_dimension=2,
                                        domain=Domain.positive()),))
    with pytest.raises(MalformedFamilyError, match="root=INDEX"):
        from_metric(name="two-roots", **common)
    fam = from_metric(name="two-roots-a", asymptotics="a -> 0: r/2*(1 + r**2/L**2)", **common)
    assert "stated asymptotics" in fam.conventions["mass_root"]
    rr, Pp, aa = sp.symbols("r P a", positive=True)
    M_kept = _by_name(fam.enthalpy, r=rr, P=Pp, a=aa)
    assert sp.simplify(sp.limit(M_kept, aa, 0) - rr / 2 * (1 + 8 * sp.pi * Pp * rr**2 / 3)) == 0
    other = from_metric(name="two-roots-b", root=1 - int(fam.conventions["mass_root"].split(
        "kept root ")[1][0]), **common)
    assert "chosen with root=" in other.conventions["mass_root"]
    assert sp.limit(_by_name(other.enthalpy, r=rr, P=Pp, a=aa) * aa, aa, 0) == 2 * rr**2


def test_several_roots_in_a_toml_file(tmp_path):
    text = ('name = "two-roots-file"\nsummary = "toy"\nreference = "toy"\n'
            '[parameters.a]\ndefault = 0.1\nlength_dimension = 2\ndomain = "> 0"\n'
            '[metric]\nf = "1 - 2*M/r + a*M^2/r^3 + r^2/L^2"\n'
            'asymptotics = "a -> 0: r/2*(1 + r^2/L^2)"\n')
    path = tmp_path / "two.toml"
    path.write_text(text)
    with registry.registry_scope():
        (fam,) = bhchem.load_family_file(path)
        assert "stated asymptotics" in fam.conventions["mass_root"]
        path.write_text(text.replace("a -> 0", "a -> 7"))
        with pytest.raises(MalformedFamilyError, match=r"line 8: metric: .*'NAME -> 0'"):
            bhchem.load_family_file(path)


def test_metric_declaration_faults(tmp_path):
    with pytest.raises(MalformedFamilyError, match="AdS radius"):
        from_metric(name="no-l", summary="s", reference="r", f=1 - 2 * M / r)
    with pytest.raises(MalformedFamilyError, match="mass parameter"):
        from_metric(name="no-m", summary="s", reference="r", f=1 + r**2 / L**2)
    with pytest.raises(MalformedFamilyError, match="d must have a value"):
        from_metric(name="any-d", summary="s", reference="r", entropy="first-law",
                    dimension=Parameter("d", 4, domain=Domain.integers(4, 8)),
                    f=1 - m / r**(sp.Symbol("d") - 3) + r**2 / L**2, mass="m")
    bad = tmp_path / "bad.toml"
    bad.write_text(BARDEEN_TOML.read_text() + '\n[expressions]\nS = "pi*r^2"\n')
    with registry.registry_scope(), pytest.raises(MalformedFamilyError,
                                                  match=r"expressions\.S.*metric"):
        bhchem.load_family_file(bad)
    missing = tmp_path / "missing.toml"
    missing.write_text(BARDEEN_TOML.read_text().replace('f = "1 - 2*M', 'ff = "1 - 2*M'))
    with registry.registry_scope(), pytest.raises(MalformedFamilyError, match="ff"):
        bhchem.load_family_file(missing)


# -- command line -----------------------------------------------------------------------------
def test_cli_metric_text_json_and_figure(tmp_path, capsys):
    from bhchem.cli.main import main
    fig = tmp_path / "jumps.png"
    assert main(["metric", "rn-ads", "-p", "Q=1", "--json", "-o", str(fig)]) == 0
    out = capsys.readouterr()
    doc = json.loads(out.out)
    assert {"diagnosis", "photon_sphere", "jumps", "metric"} <= set(doc)
    assert abs(doc["photon_sphere"]["r_ps"] - (2 + math.sqrt(6))) < 1e-12
    assert abs(doc["jumps"]["exponent"] - 0.5) < 0.01 and doc["diagnosis"]["holds"] is True
    assert fig.stat().st_size > 0 and "wrote" in out.err
    assert main(["metric", "vdw-fluid"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "declares no metric" in err and "Traceback" not in err


def test_born_infeld_metric_reproduces_M_and_T():
    """Metric of Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, Sec. 4 (2F1 term, as in
    models/born_infeld_ads.py): M symbolically; T, declared in the cancellation-free form,
    at random states (sympy does not reduce 1 - sqrt(1+x) + x/(1+sqrt(1+x)) to 0).  Checked
    on the declaration itself (no derivation needed)."""
    from bhchem.declare.metric import solve_horizon
    fam = get_family("born-infeld-ads")
    sol = solve_horizon(fam.metric, {sp.Symbol("d", integer=True, positive=True): 4})
    assert sp.simplify(fam.enthalpy - sol.enthalpy) == 0
    args = sorted(fam.temperature.free_symbols | sol.temperature.free_symbols, key=str)
    assert [a.name for a in args] == ["P", "Q", "b", "r"]
    rng = np.random.default_rng(15)
    f_decl = sp.lambdify(args, fam.temperature, "mpmath")
    # its 2F1 terms cancel; exp_polar (sympy's branch bookkeeping) is exp on the real line
    f_metric = sp.lambdify(args, sol.temperature.replace(sp.exp_polar, sp.exp), "mpmath")
    for pt in 10 ** rng.uniform(-2, 1, (16, len(args))):
        a, b = float(f_decl(*pt)), float(f_metric(*pt))
        assert abs(a - b) <= 1e-12 * abs(a)


# -- the first-law entropy without a closed form: certified quadrature ------------------------
def test_first_law_entropy_by_certified_quadrature(monkeypatch):
    """With sympy's integration budget at zero, Bardeen's first-law entropy comes from the
    quadrature (bhchem.declare.entropy_quadrature); with the reference S(r0 = g) taken from
    the closed form pi[(r^2 - 2g^2) sqrt(r^2+g^2)/r + 3 g^2 asinh(r/g)] (derived here by
    differentiation) the two agree to the certified tolerance, and the engine's first law and
    Smarr relation (Phi_g from the quadrature of d/dg of the integrand) hold."""
    from bhchem import check_smarr
    from bhchem.declare import metric as metric_module
    gg, rr = sp.symbols("g r", positive=True)
    closed = sp.pi * ((rr**2 - 2 * gg**2) * sp.sqrt(rr**2 + gg**2) / rr
                      + 3 * gg**2 * sp.asinh(rr / gg))
    assert sp.simplify(sp.diff(closed, rr) - 2 * sp.pi * (rr**2 + gg**2)**sp.Rational(3, 2)
                       / rr**2) == 0
    monkeypatch.setattr(metric_module, "INTEGRATION_MAX_OPERATIONS", 10)
    g = sp.Symbol("g", positive=True)
    fam = from_metric(name="bardeen-quadrature", summary="s", reference="Tzikas 2019",
                      parameters=(Parameter("g", 1.0, length_dimension=1,
                                            domain=Domain.positive()),),
                      f=1 - 2 * M * r**2 / (r**2 + g**2)**sp.Rational(3, 2) + r**2 / L**2,
                      entropy="first-law", entropy_reference=(g, closed.subs({rr: g, gg: g})))
    assert "certified quadrature" in fam.conventions["entropy"]
    th = bind(fam, g=0.7)
    x = np.array([0.3, 1.0, 4.0, 30.0])
    exact = np.array([float(closed.subs({rr: v, gg: sp.Rational(7, 10)})) for v in x])
    assert np.allclose(th.S(x, 0.01), exact, rtol=1e-12, atol=0)
    assert check_first_law(th).holds is True
    assert check_smarr(th).holds is True
    with pytest.raises(MalformedFamilyError, match="entropy_reference"):
        from_metric(name="bardeen-no-ref", summary="s", reference="r",
                    parameters=(Parameter("g", 1.0, length_dimension=1,
                                          domain=Domain.positive()),),
                    f=1 - 2 * M * r**2 / (r**2 + g**2)**sp.Rational(3, 2) + r**2 / L**2,
                    entropy="first-law")


def test_first_law_route_of_bundled_gauss_bonnet_is_its_wald_entropy():
    """The bundled gauss-bonnet-ads (Wald entropy declared) rebuilt from its metric at
    d = 5, k = 1 with the first-law entropy: S = pi^2 r (r^2 + 12 alpha)/2 (constant 0), the
    Wald entropy Omega r^3/4 (1 + 2(d-2) alpha~/((d-4) r^2)) with alpha~ = 2 alpha (Cai,
    PRD 65 (2002) 084014; Cai, Cao, Li & Yang, JHEP 09 (2013) 005) -- exactly."""
    from bhchem.declare.metric import with_route
    fam = with_route(get_family("gauss-bonnet-ads"), entropy="first-law",
                     temperature="surface-gravity", suffix="-first-law",
                     fixed={"d": 5, "k": 1})
    al, rr = sp.symbols("alpha r", positive=True)
    wald = 2 * sp.pi**2 * rr**3 / 4 * (1 + 2 * 3 * 2 * al / rr**2)
    assert sp.simplify(_by_name(fam.entropy, alpha=al, r=rr) - wald) == 0
    assert fam.dimension == 5 and [p.name for p in fam.parameters] == ["alpha", "Q"]
