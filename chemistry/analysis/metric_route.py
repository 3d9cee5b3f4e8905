r"""What the metric adds: the first-law diagnosis of a metric family, a comparison of the two
routes to its thermodynamics, and the photon-sphere order parameters with their jumps.

Diagnosis (:func:`diagnose_metric`).  T from the surface gravity (the metric) against
(dM/dS)_P for the family's entropy, over random physical states: the largest relative
difference |(dM/dS)_P - T_metric| / T_metric, the state where it occurs, the value at the
family's typical state (an example), the first-law-consistent entropy
S = \int (dM/dr+)/T dr+ (with its integration constant) and what else could restore the
first law.

Routes (:func:`compare_routes`).  *metric*: T from the surface gravity with the
first-law-consistent entropy; *area*: the area law with T = (dM/dS)_P.  For each: the
critical point (P_c, T_c, V_c) and the coexistence temperature at 0.5 P_c (of that route's
own P_c), and how they move between the routes.

Photon sphere (:func:`photon_sphere`, :func:`photon_sphere_jumps`).  r_ps (2f = r f'),
u_ps = r_ps/sqrt(f) and the Lyapunov exponent lambda (Cardoso et al., PRD 79 (2009)
064016) at any states; along a first-order coexistence line the jumps
Delta r_ps, Delta u_ps, Delta lambda between the coexisting black holes, and the exponent of
Delta r_ps ~ (1 - T/T_c)^delta, fitted close to the critical point (1/2 expected: Wei & Liu,
PRD 97 (2018) 104027, arXiv:1711.01522).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np
import sympy as sp

from bhchem.analysis.coexistence_line import coexistence_curve
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.isobar import analyze_isobar
from bhchem.core.checks import TOLERANCE
from bhchem.core.compiled import Thermodynamics, bind
from bhchem.core.metric import derive_metric
from bhchem.core.results import Result
from bhchem.core.sampling import physical_sample
from bhchem.declare import symbols as sy
from bhchem.declare.metric import first_law_integrand, with_route
from bhchem.errors import MalformedFamilyError
from bhchem.numerics import bracketed_root

#: offsets s of the radial grid rho = r+ (1 + s) on which 2f - rho f' is sampled
_GRID = np.geomspace(1e-9, 1e8, 500)


# -- photon sphere --------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class PhotonSphere(Result):
    """Photon-sphere quantities at states (x, P).

    Attributes
    ----------
    x, P : tuple of float
    r_ps : tuple of float
        Innermost root of 2f - rho f' outside the horizon (NaN when none: converged False).
    u_ps : tuple of float
        r_ps / sqrt(f(r_ps)).
    lyapunov : tuple of float
        sqrt(f (2f - r^2 f'')/(2 r^2)) at r_ps (NaN when the orbit is not unstable).
    residual : tuple of float
        |2f - rho f'| / (2|f| + |rho f'|) at r_ps.
    converged : tuple of bool
    message : str
    """

    x: tuple
    P: tuple
    r_ps: tuple
    u_ps: tuple
    lyapunov: tuple
    residual: tuple
    converged: tuple
    message: str


def _metric_functions(th: Thermodynamics):
    md = derive_metric(th.derivation)
    vals = th.parameter_values
    fns = {k: md.function(k) for k in ("f", "photon_condition", "impact_parameter",
                                       "lyapunov_squared", "df")}

    def call(name, rho, x, P):
        with np.errstate(all="ignore"):
            return np.asarray(fns[name](np.asarray(rho, float), np.asarray(x, float),
                                        np.asarray(P, float), *vals), float)
    return call


def photon_sphere(th: Thermodynamics, x, P) -> PhotonSphere:
    """r_ps, u_ps and lambda at the states (x, P) (arrays broadcast).

    The radial grid rho = r+ (1 + s), s from 1e-9 to 1e8 (log-spaced, 500 points), is
    scanned for the first sign change of 2f - rho f' (negative just outside a
    non-extremal horizon); Brent's method refines it.  A state without a sign change, or
    whose root does not refine, is returned with NaN and ``converged`` False.

    Raises
    ------
    MalformedFamilyError
        When the family declares no metric.
    """
    call = _metric_functions(th)
    xs, Ps = np.broadcast_arrays(np.atleast_1d(np.asarray(x, float)),
                                 np.atleast_1d(np.asarray(P, float)))
    xs, Ps = xs.ravel(), Ps.ravel()
    rp = np.asarray(th.quantity("r_plus", xs, Ps), float) if th.has("r_plus") else xs
    rp = np.broadcast_to(rp, xs.shape)
    r_ps, u_ps, lam, res, ok = [], [], [], [], []
    for xi, Pi, ri in zip(xs, Ps, rp):
        grid = ri * (1 + _GRID)
        g = call("photon_condition", grid, xi, Pi)
        root = None
        finite = np.isfinite(g)
        idx = np.nonzero(finite[:-1] & finite[1:] & (np.sign(g[:-1]) * np.sign(g[1:]) < 0))[0]
        if idx.size:
            i = int(idx[0])
            root = bracketed_root(lambda rho: float(call("photon_condition", rho, xi, Pi)),
                                  float(grid[i]), float(grid[i + 1]))
        if root is None:
            r_ps.append(math.nan), u_ps.append(math.nan), lam.append(math.nan)
            res.append(math.nan), ok.append(False)
            continue
        fv = float(call("f", root, xi, Pi))
        dfv = float(call("df", root, xi, Pi))
        resid = abs(2 * fv - root * dfv) / (2 * abs(fv) + abs(root * dfv) + 1e-300)
        l2 = float(call("lyapunov_squared", root, xi, Pi))
        u = root / math.sqrt(fv) if fv > 0 else math.nan
        r_ps.append(root), u_ps.append(u)
        lam.append(math.sqrt(l2) if l2 >= 0 else math.nan)
        res.append(resid)
        ok.append(bool(fv > 0 and l2 >= 0 and resid <= 1e-10))
    n_ok = sum(ok)
    msg = f"photon sphere found at {n_ok} of {len(ok)} states"
    if n_ok < len(ok):
        msg += ("; at the others 2f = r f' has no root outside the horizon on the scanned "
                "range, or the orbit there is not unstable (values NaN, converged False)")
    return PhotonSphere(tuple(map(float, xs)), tuple(map(float, Ps)), tuple(r_ps), tuple(u_ps),
                        tuple(lam), tuple(res), tuple(ok), msg)


# -- the first-law diagnosis -----------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class MetricDiagnosis(Result):
    """T from the metric against (dM/dS)_P for the family's entropy.

    Attributes
    ----------
    holds : bool or None
        The largest relative difference is within the first-law tolerance (1e-9); None
        when no physical state was found.
    max_relative_difference : float
        max |(dM/dS)_P - T_metric| / T_metric over the sampled physical states.
    worst_state, example_state : dict
        Where the largest difference is, and the family's typical state, each with
        x, P, the parameters, T_metric, T_first_law and the relative difference.
    consistent_entropy : str
        S = integral of (dM/dr+)/T dr+ (closed form when sympy finds one), with its
        integration constant; or the integrand when there is no closed form.
    entropy_rule : str
        What the family's entropy is (from its conventions).
    remedies : tuple of str
        What could restore the first law.
    n_points : int
    message : str
    """

    holds: bool | None
    max_relative_difference: float
    worst_state: dict
    example_state: dict
    consistent_entropy: str
    entropy_rule: str
    remedies: tuple
    n_points: int
    message: str


def _state_record(th, T_met, x, P) -> dict:
    Tm = float(T_met(x, P))
    Tf = float(th.quantity("T_derived", x, P))
    return {"x": float(x), "P": float(P), **{k: float(v) for k, v in th.values.items()},
            "T_metric": Tm, "T_first_law": Tf,
            "relative_difference": abs(Tf - Tm) / abs(Tm) if Tm != 0 else math.nan}


def diagnose_metric(th: Thermodynamics, n_points: int = 64, seed: int = 20261202,
                    example=None) -> MetricDiagnosis:
    """Compare T from the surface gravity with (dM/dS)_P (see module docstring).

    ``example``: the state (x, P) reported as the example; default the sampled physical
    state (at the bound parameters) nearest the family's typical state.

    Raises
    ------
    MalformedFamilyError
        When the family declares no metric.
    """
    md = derive_metric(th.derivation)
    x = th.derivation.state
    T_expr = md.solution.temperature.subs(sy.r, x) if x != sy.r else md.solution.temperature
    T_met = th.compile(T_expr)
    fam = th.family
    rule = fam.conventions.get("entropy", "the declared entropy")
    sample = physical_sample(th, n_points, seed=seed)
    worst, worst_state = 0.0, {}
    for bound, xs, Ps in sample.points:
        Tm = T_met if bound is th else bound.compile(T_expr)
        a = np.asarray(Tm(xs, Ps), float)
        b = np.asarray(bound.quantity("T_derived", xs, Ps), float)
        rel = np.abs(b - a) / (np.abs(a) + 1e-300)
        if not np.any(np.isfinite(rel)):
            continue
        i = int(np.nanargmax(rel))
        if rel[i] > worst or not worst_state:
            worst = float(rel[i])
            worst_state = _state_record(bound, Tm, xs[i], Ps[i])
    holds = worst <= TOLERANCE if sample.n_points else None
    if holds or rule.startswith("first-law"):
        consistent = "the family's own entropy" if holds else rule
    else:
        try:
            integrand = first_law_integrand(fam.metric, md.solution,
                                            {sy.d: th.derivation.dimension})
        except MalformedFamilyError:
            integrand = None
        fixed = {p.name: th.values[p.name] for p in fam.discrete_parameters
                 if p.name in th.values}
        consistent = _consistent_entropy_text(fam, integrand, fixed)
    if example is None:
        x0, P0 = th.typical_state(), th.typical_pressure()
        own = [(xs, Ps) for bound, xs, Ps in sample.points if bound is th]
        if own:
            xs, Ps = own[0]
            i = int(np.argmin(np.abs(np.log(xs / x0)) + np.abs(np.log(Ps / P0))))
            example = (xs[i], Ps[i])
        else:
            example = (x0, P0)
    example = _state_record(th, T_met, float(example[0]), float(example[1]))
    dims = [(p.name, p.dimension_at(th.derivation.dimension))
            for p in fam.continuous_parameters]
    dimensionful = [f"{n} ([{n}] = L^{d:g})" for n, d in dims if d != 0]
    remedies = (f"use the first-law-consistent entropy S = {consistent}",)
    if dimensionful:
        remedies += ("promote a coupling with a length dimension to a thermodynamic "
                     f"variable ({', '.join(dimensionful)}): its conjugate potential then "
                     "appears in the first law and, with its length dimension, in the Smarr "
                     "relation; the mass parameter may also not be the enthalpy (a coupling "
                     "that depends on it changes dM)",)
    if sample.n_points == 0:
        return MetricDiagnosis(None, math.nan, {}, example, consistent, rule, remedies, 0,
                               "no physical state found to compare the temperatures at")
    label = _entropy_label(rule)
    if holds:
        msg = (f"T from the surface gravity equals (dM/dS)_P with {label} "
               f"(max relative difference {worst:.1e} at {sample.n_points} physical states)")
    else:
        ex = example
        msg = (f"T from the surface gravity differs from (dM/dS)_P with "
               f"{label}: by up to {100 * worst:.3g}% over {sample.n_points} "
               f"physical states (at x={worst_state['x']:.6g}, P={worst_state['P']:.6g}); "
               f"{100 * ex['relative_difference']:.3g}% at x={ex['x']:.6g}, P={ex['P']:.6g}; "
               f"the first law holds with S = integral of (dM/dr+)/T dr+ = {consistent}")
    return MetricDiagnosis(bool(holds), worst, worst_state, example, consistent, rule,
                           remedies, sample.n_points, msg)


def _entropy_label(rule: str) -> str:
    for key, label in (("area law", "the area law"), ("first-law", "the first-law entropy"),
                       ("stated", "the stated entropy")):
        if rule.startswith(key):
            return label
    return rule


def _consistent_entropy_text(fam, integrand, fixed) -> str:
    try:
        alt = with_route(fam, entropy="first-law", temperature="surface-gravity",
                         suffix="-first-law", fixed=fixed)
        text = alt.conventions["entropy"]
        return text.split("dr+ = ", 1)[1] if "dr+ = " in text else text
    except MalformedFamilyError:
        return (f"integral of {integrand} dr+ (no closed form found)" if integrand is not None
                else "not available")


# -- two routes -------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class RouteResult(Result):
    """One route: its critical point and the coexistence temperature at 0.5 P_c."""

    route: str
    temperature: str
    entropy: str
    P_c: float | None
    T_c: float | None
    V_c: float | None
    x_c: float | None
    T_coexistence_half: float | None
    converged: bool
    message: str


@dataclass(frozen=True, repr=False)
class RouteComparison(Result):
    """The metric route against the area-law route (see module docstring).

    ``shifts``: relative change (area - metric)/metric of P_c, T_c, V_c and of the
    coexistence temperature at 0.5 P_c, None where a route has no value."""

    family: str
    parameters: dict
    metric: RouteResult
    area: RouteResult
    shifts: dict
    converged: bool
    message: str


def _route(th: Thermodynamics, route: str, temperature: str, entropy: str) -> RouteResult:
    search = find_critical_points(th)
    std = [c for c in search.physical if c.kind == "standard" and c.converged]
    if not std:
        return RouteResult(route, temperature, entropy, None, None, None, None, None, False,
                           f"{route} route: no standard physical critical point "
                           f"({search.message if hasattr(search, 'message') else ''})")
    cp = min(std, key=lambda c: c.P)
    V_c = float(th.V(cp.x, cp.P))
    P_half = 0.5 * cp.P
    iso = analyze_isobar(th, P_half, warn=False)
    first = [t for t in iso.transitions if t.kind == "first-order"]
    T_half = min(first, key=lambda t: abs(t.T - cp.T)).T if first else None
    ok = T_half is not None
    msg = (f"{route} route: P_c = {cp.P:.6g}, T_c = {cp.T:.6g}, V_c = {V_c:.6g}"
           + (f"; T_coex(0.5 P_c) = {T_half:.6g}" if ok else
              "; no first-order transition at 0.5 P_c"))
    return RouteResult(route, temperature, entropy, float(cp.P), float(cp.T), V_c, float(cp.x),
                       None if T_half is None else float(T_half), ok, msg)


def compare_routes(th: Thermodynamics) -> RouteComparison:
    """Critical point and coexistence temperature at 0.5 P_c in the two routes of a metric
    family: T from the surface gravity with the first-law-consistent entropy, and the
    area law with T = (dM/dS)_P.

    Raises
    ------
    MalformedFamilyError
        When the family declares no metric, or the first-law entropy has no closed form.
    """
    fam = th.family
    if getattr(fam, "metric", None) is None:
        raise MalformedFamilyError(f"family {fam.name} declares no metric function")
    conv = fam.conventions
    vals = dict(th.values)
    # the routes are built at this binding's structural values (d, k, ...)
    fixed = {p.name: vals[p.name] for p in fam.discrete_parameters if p.name in vals}
    cont = {k: v for k, v in vals.items() if k not in fixed}
    # a family that already is one of the routes is used as it is
    if conv.get("entropy", "").startswith("first-law") and fam.temperature is not None:
        a, th_a = fam, th
    else:
        a = with_route(fam, entropy="first-law", temperature="surface-gravity",
                       suffix="-first-law", fixed=fixed)
        th_a = bind(a, **cont)
    if conv.get("entropy", "").startswith("area law") and fam.temperature is None:
        th_b = th
    else:
        th_b = bind(with_route(fam, entropy="area", temperature="first-law", suffix="-area",
                               fixed=fixed), **cont)
    ra = _route(th_a, "metric", "surface gravity", a.conventions["entropy"])
    rb = _route(th_b, "area", "(dM/dS)_P", "area law")
    shifts = {}
    for key, name in (("P_c", "P_c"), ("T_c", "T_c"), ("V_c", "V_c"),
                      ("T_coexistence_half", "T_coexistence_half")):
        u, v = getattr(ra, key), getattr(rb, key)
        shifts[name] = (v - u) / u if u not in (None, 0) and v is not None else None
    ok = ra.converged and rb.converged
    msg = (f"metric route (surface-gravity T, first-law entropy) vs area route (area law, "
           f"T = dM/dS): " + ", ".join(
               f"{k} {100 * v:+.3g}%" for k, v in shifts.items() if v is not None))
    if not ok:
        msg += "; " + "; ".join(r.message for r in (ra, rb) if not r.converged)
    return RouteComparison(fam.name, dict(vals), ra, rb, shifts, ok, msg)


# -- jumps along coexistence lines -----------------------------------------------------------
@dataclass(frozen=True, repr=False)
class PhotonJumps(Result):
    """Photon-sphere jumps between the coexisting black holes of one first-order line.

    Attributes
    ----------
    critical_point : dict
        T_c, P_c, x_c of the line's critical point.
    P, T : tuple of float
        Coexistence points (increasing P).
    small, large : PhotonSphere
        Photon-sphere quantities of the smaller and the larger black hole.
    delta_r_ps, delta_u_ps, delta_lyapunov : tuple of float
        large minus small.
    exponent : float or None
        delta in Delta r_ps ~ (1 - T/T_c)^delta, a log-log fit over ``fit_range``.
    exponent_error : float or None
        Standard error of the slope plus its drift between the two halves of the range.
    fit_range : tuple
        (t_min, t_max) in t = 1 - T/T_c.
    converged : bool
    message : str
    warnings : tuple
    """

    critical_point: dict
    P: tuple
    T: tuple
    small: PhotonSphere
    large: PhotonSphere
    delta_r_ps: tuple
    delta_u_ps: tuple
    delta_lyapunov: tuple
    exponent: float | None
    exponent_error: float | None
    fit_range: tuple
    converged: bool
    message: str
    warnings: tuple = field(default_factory=tuple)
    family: str = ""
    parameters: dict = field(default_factory=dict)


def _fit(t, y):
    lt, ly = np.log(t), np.log(y)
    A = np.column_stack([lt, np.ones_like(lt)])
    coef, res, *_ = np.linalg.lstsq(A, ly, rcond=None)
    n = lt.size
    resid = ly - A @ coef
    s2 = float(resid @ resid) / max(n - 2, 1)
    cov = s2 * np.linalg.inv(A.T @ A)
    return float(coef[0]), float(math.sqrt(max(cov[0, 0], 0.0)))


def photon_sphere_jumps(th: Thermodynamics, critical_point=None, n_points: int = 40,
                        fraction: float = 0.05, fit_window=(1e-6, 1e-3),
                        n_fit: int = 16, line=None) -> PhotonJumps:
    """Delta r_ps, Delta u_ps, Delta lambda along a first-order line, and the exponent of
    Delta r_ps when the line ends at a critical point.

    Parameters
    ----------
    th : Thermodynamics
    critical_point : CriticalPoint, optional
        Default: the standard physical critical point of lowest pressure at which a
        first-order line ends (tested just below it, at 0.999 P_c), or the line's.
    n_points : int
        Coexistence pressures from ``fraction`` P_c to just below P_c (the line), when no
        ``line`` is given.
    fit_window : (t1, t2)
        Range of 1 - P/P_c where the exponent is fitted (``n_fit`` log-spaced pressures).
    line : PhaseLine, optional
        A first-order line of :func:`bhchem.analysis.phases.phase_diagram`: its own
        coexistence points are used (and near-critical ones added when it ends at a
        critical point).

    Raises
    ------
    MalformedFamilyError
        When the family declares no metric.
    """
    derive_metric(th.derivation)  # refuse a family without a metric first
    who = dict(family=th.family.name, parameters=dict(th.values))
    if line is not None:
        return _line_jumps(th, line, fit_window, n_fit, who)
    cp = critical_point
    if cp is None:
        std = [c for c in find_critical_points(th).physical
               if c.kind == "standard" and c.converged]
        if not std:
            empty = PhotonSphere((), (), (), (), (), (), (), "no states")
            return PhotonJumps({}, (), (), empty, empty, (), (), (), None, None, (), False,
                               "no standard physical critical point: no first-order line "
                               "ending at one", **who)
        ending = [c for c in sorted(std, key=lambda c: c.P)
                  if coexistence_curve(th, [c.P * (1 - 1e-3)], critical_point=c).points]
        cp = ending[0] if ending else min(std, key=lambda c: c.P)
    n_lin = n_points // 2
    s = np.concatenate([np.linspace(fraction, 0.9, n_lin, endpoint=False),
                        1 - np.geomspace(0.1, 1e-4, n_points - n_lin)])
    Ps_line = cp.P * np.sort(s)
    Ps_fit = cp.P * (1 - np.geomspace(fit_window[1], fit_window[0], n_fit))
    curve = coexistence_curve(th, np.concatenate([Ps_line, Ps_fit]), critical_point=cp)
    out = _jumps(th, list(curve.points), cp, fit_window, tuple(curve.warnings),
                 bool(curve.failed_pressures), who)
    if curve.failed_pressures:
        out = replace(out, message=out.message + f"; no coexistence at "
                      f"{len(curve.failed_pressures)} of the requested pressures (from "
                      f"{fraction:g} P_c up; the line may end before: see --all-lines)")
    return out


def _line_jumps(th, line, fit_window, n_fit, who) -> PhotonJumps:
    pts = list(getattr(line, "coexistence", None) or [])
    cp = getattr(line, "critical_point", None)
    warnings, failed = (), False
    if cp is not None:
        Ps_fit = cp.P * (1 - np.geomspace(fit_window[1], fit_window[0], n_fit))
        curve = coexistence_curve(th, Ps_fit, critical_point=cp)
        pts += list(curve.points)
        warnings, failed = tuple(curve.warnings), bool(curve.failed_pressures)
    label = f"{line.kind} line {'/'.join(map(str, line.between))}"
    out = _jumps(th, pts, cp, fit_window, warnings, failed, who)
    return replace(out, message=f"{label}: {out.message}")


def _jumps(th, points, cp, fit_window, warnings, failed, who) -> PhotonJumps:
    pts = sorted((p for p in points if p.x1 is not None and p.x2 is not None),
                 key=lambda p: p.P)
    if not pts:
        empty = PhotonSphere((), (), (), (), (), (), (), "no states")
        return PhotonJumps({}, (), (), empty, empty, (), (), (), None, None, (), False,
                           "no coexistence point found", warnings, **who)
    P = np.array([p.P for p in pts])
    T = np.array([p.T for p in pts])
    x1 = np.array([min(p.x1, p.x2) for p in pts])
    x2 = np.array([max(p.x1, p.x2) for p in pts])
    small, large = photon_sphere(th, x1, P), photon_sphere(th, x2, P)
    dr = np.array(large.r_ps) - np.array(small.r_ps)
    du = np.array(large.u_ps) - np.array(small.u_ps)
    dl = np.array(large.lyapunov) - np.array(small.lyapunov)
    ok = np.array(small.converged) & np.array(large.converged)
    exponent = error = None
    rng: tuple = ()
    if cp is not None:
        t = 1 - T / cp.T
        in_fit = ok & (1 - P / cp.P >= 0.5 * fit_window[0]) \
            & (1 - P / cp.P <= 2 * fit_window[1]) & (t > 0) & (np.abs(dr) > 0)
    else:
        in_fit = np.zeros(P.shape, bool)
    if np.count_nonzero(in_fit) >= 6:
        tt, yy = t[in_fit], np.abs(dr[in_fit])
        exponent, se = _fit(tt, yy)
        h = tt.size // 2
        order = np.argsort(tt)
        lo, _ = _fit(tt[order][:h + 1], yy[order][:h + 1])
        hi, _ = _fit(tt[order][h:], yy[order][h:])
        error = se + abs(hi - lo)
        rng = (float(tt.min()), float(tt.max()))
    conv = bool(ok.all() and (exponent is not None or cp is None) and not failed)
    cpd = {} if cp is None else {"T_c": float(cp.T), "P_c": float(cp.P), "x_c": float(cp.x)}
    msg = f"{int(ok.sum())} of {ok.size} coexistence points with both photon spheres"
    if exponent is not None:
        msg += (f"; Delta r_ps ~ (1 - T/T_c)^{exponent:.4f} (+- {error:.1e}) over "
                f"t = {rng[0]:.1e} .. {rng[1]:.1e}")
    elif cp is not None:
        msg += "; too few points near the critical point to fit the exponent"
    else:
        msg += "; the line ends at no critical point (no exponent)"
    return PhotonJumps(cpd, tuple(map(float, P)), tuple(map(float, T)), small, large,
                       tuple(map(float, dr)), tuple(map(float, du)), tuple(map(float, dl)),
                       exponent, error, rng, conv, msg, warnings, **who)


def diagram_photon_jumps(th: Thermodynamics, diagram) -> tuple:
    """:func:`photon_sphere_jumps` for every first-order line of a phase diagram
    (:func:`bhchem.analysis.phases.phase_diagram`), in the diagram's order."""
    derive_metric(th.derivation)
    return tuple(photon_sphere_jumps(th, line=ln) for ln in diagram.lines
                 if ln.kind == "first-order")
