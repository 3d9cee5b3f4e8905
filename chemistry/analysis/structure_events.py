"""Structure events along one coupling, located by continuation and Newton.

The phase structure of a family changes at isolated values of a coupling c (the other
parameters fixed).  This module finds those values from the objects whose change makes the
structure change, continued in c, and solves each event's own equation by Newton on an
extended system (never by bisection between grid points):

*critical points* (x T_x = 0, x^2 T_xx = 0; :mod:`bhchem.analysis.critical`) are found by a
full search at a few sample couplings and continued between them (natural-parameter
continuation with step control: a predictor from the last two points, Newton in
(log x, P), the step halved when Newton fails or jumps).  A continued point stops

- at a **fold** of the critical branch (two critical points merge and disappear,
  kind ``critical-count``): Newton on the extended system in (log x, P, c)

  .. math:: \\frac{x T_x}{T} = 0, \\quad \\frac{x^2 T_{xx}}{T} = 0, \\quad
            \\det \\frac{\\partial (x T_x, x^2 T_{xx})/T}{\\partial(\\log x, P)} = 0,

  at a critical point the determinant is -x^4 T_xP T_xxx / T^2, so the fold is
  T_x = T_xx = T_xxx = 0 (two critical points merge) or T_x = T_xx = T_xP = 0;
- where its **pressure or temperature crosses zero** (``critical-pressure-zero``: x T_x = x^2
  T_xx = 0 at P = 0 in (log x, c); ``critical-temperature-zero``: T = x T_x = x^2 T_xx = 0
  in (log x, P, c), scaled by a fixed temperature);

*a critical point meeting another first-order line*: along the critical isotherm T = T_c
every other locally stable state x_1 has Delta G = G(x_1) - G(x_c); where Delta G changes
sign the critical point leaves (or joins) the lowest-G branch, and a triple point of the
swallowtail it ends appears or disappears there.  Newton on (log x_1, log x_c, P, c):

.. math:: T(x_1) = T(x_c), \\quad G(x_1) = G(x_c), \\quad x_c T_x(x_c) = 0, \\quad
          x_c^2 T_{xx}(x_c) = 0

(kind ``critical-leaves-preferred``; the structure map renames it ``triple-point`` when the
structure signatures on its two sides differ in a triple point);

*a critical point crossing the boundary of a declared state condition*
(``critical-leaves-domain``): where the continued point leaves the physical domain, the
atom lhs < rhs of the condition that fails there gives g = lhs - rhs, and Newton solves
x T_x = x^2 T_xx = g = 0 in (log x, P, c);

*the Hawking--Page line of a background phase meeting a first-order line*
(``hawking-page-meets-first-order``, families that declare ``G_background``): along a
continued critical point, where G(x_c) - G_bg(P_c) changes sign the background's line passes
through the critical point and the triple point (background, small, large) where it cuts the
first-order line appears or disappears; Newton on x T_x = x^2 T_xx = G - G_bg = 0 in
(log x, P, c);

*the small-state asymptote*: where the leading coefficient lim_{x -> 0} x T(x, P) changes
sign (sympy limit, root by Newton, exact by sympy where it can), the small-x end of every
isotherm turns from T -> +inf to T -> -inf: a branch appears at the small end and with it
the lines that end on that branch (e.g. a zeroth-order line whose window closes at P -> 0).
Kind ``small-state-asymptote``.

*a zeroth-order line opening from P = 0* (kind ``zeroth-order``, system ``end-zero``):
where a local minimum of the lowest isotherm T(x, P = 0) changes sign (minima tracked
between the samples; a sign change through a pole of T is told apart by shrinking the
bracket), the isotherms at small P split around a gap of T < 0; the smaller branch's end
and the larger branch's minimum are the two terminal points of a zeroth-order line, and
they meet at P = 0, T = 0 on the event.  Newton on (4 pi x T, 4 pi x^2 T_x) = 0 at P = 0 in
(log x, c); exact (a root of the resultant of T's numerator and its x-derivative) where
that numerator is a polynomial with rational coefficients.  The same two terminal points
meeting at a finite pressure (two branch ends x1 < x2 at equal T and equal G) is not
searched, because with one extremum of the isotherm between the two ends it cannot happen:
along the isotherm dG = -S dT, so for two minima G(x2) - G(x1) = int (S_desc - S_asc) dT
over [T1, T_max] > 0 (the descending side has the larger states), and for two maxima
G(x2) - G(x1) < 0 likewise; the window [P_gibbs, P_ends] then closes only where the pair of
ends itself is born or dies -- at P = 0 (Euler--Heisenberg, this event) or into a fold of
the critical points (Born--Infeld at bQ = 1/sqrt(8), Euler--Heisenberg at a = 32 Q^2/7),
both located above.  Pairs with three or more extrema between (two critical points'
worth of isotherm) can change the sign of G(x2) - G(x1): in charged Gauss--Bonnet d = 6,
alpha = 1/6, Q in (0.39, 0.42) they do, but no such pair is on the globally preferred
branch there, and no bundled family was found where one is.

*In two couplings*, :func:`trace_event_curve` continues an event's extended system (recorded
on the event as ``system`` and ``unknowns``) in a second coupling by pseudo-arclength
continuation: the tangent is the null vector of the n x (n+1) Jacobian, the corrector Newton
on the system plus the arclength plane, so turning points in either coupling are followed;
each point carries its residual and the curve ends exactly on the edges of the box.

Each event carries its residuals (the extended system at the solution, relative), a
``converged`` flag (Newton step and residual below tolerance) and the method.  What the
detector cannot explain is listed, not dropped: a change in the number of physical critical
points between two samples that no continued point accounts for is in ``unexplained``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np
import sympy as sp

from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.critical_polynomial import NoPolynomialFormError, polynomial_thresholds
from bhchem.analysis.events import EventCurve, StructureEvent
from bhchem.core.compiled import bind
from bhchem.core.results import Result
from bhchem.errors import BhchemError

#: Newton on an extended system stops when the step is below this (relative to the unknowns)
STEP_TOLERANCE = 1e-14
#: ... or when the last step was below this and the residual below tolerance
ACCEPT_STEP = 1e-12
#: an event is converged when its largest relative residual is below this
EVENT_RESIDUAL_TOLERANCE = 1e-11
#: the kinds that change the number of physical critical points
_COUNT_KINDS = ("critical-count", "critical-pressure-zero", "critical-temperature-zero",
                "isolated-critical-point", "critical-leaves-domain")
#: default number of full critical-point searches along the interval (the detector)
N_SAMPLES = 13


@dataclass(frozen=True, repr=False)
class StructureEvents(Result):
    """The events along one coupling (see the module docstring).

    Attributes
    ----------
    family, coupling : str
    interval : tuple of float
    fixed : dict
        The other parameters.
    events : tuple of StructureEvent
        Sorted by value.
    samples : tuple of float
        The couplings of the full critical-point searches (the detector).
    counts : tuple of int
        Physical critical points at each sample.
    unexplained : tuple of dict
        Changes seen by the detector that no event accounts for (bracket and what changed).
    converged : bool
        Every event converged and nothing is unexplained.
    message : str
    """

    family: str
    coupling: str
    interval: tuple
    fixed: dict
    events: tuple
    samples: tuple
    counts: tuple
    unexplained: tuple = ()
    converged: bool = True
    message: str = ""

    def summary(self) -> str:
        kinds = ", ".join(e.summary() for e in self.events) or "no events"
        return f"{self.family} along {self.coupling}: {kinds}"


# -- the numeric model with the coupling free ---------------------------------------------------
class CouplingModel:
    """Compiled T, G and their derivatives as functions of (x, P, c), c the coupling
    (the other parameters fixed): ``model(name, x, P, c)``."""

    def __init__(self, family, coupling, fixed, c0):
        self.family, self.coupling, self.fixed = family, coupling, dict(fixed)
        th = bind(family, **{**fixed, coupling: c0})
        self.th = th
        names = [s.name for s in th.derivation.parameters]
        if coupling not in names:
            raise BhchemError(f"{coupling!r} is not a continuous parameter of "
                              f"{th.family.name} ({', '.join(names)})")
        self.i = names.index(coupling)
        self.base = list(th.parameter_values)
        cd = th.compiled
        self.f = {"T": cd.function("T"), "G": cd.function("G"), "S": cd.function("S"),
                  "M": cd.function("M")}
        for w in ("x", "xx", "xxx", "xP", "xxP"):
            self.f["T" + w] = cd.derivative("T", w)
        if th.has("G_background"):
            self.f["G_background"] = cd.function("G_background")

    def __call__(self, name, x, P, c):
        p = list(self.base)
        p[self.i] = c
        with np.errstate(all="ignore"):
            return float(self.f[name](float(x), float(P), *p))

    def binding(self, c):
        return bind(self.family, **{**self.fixed, self.coupling: float(c)})

    def critical(self, u, P, c, scale=None):
        x = math.exp(u)
        T = self("T", x, P, c) if scale is None else scale
        return np.array([x * self("Tx", x, P, c) / T, x * x * self("Txx", x, P, c) / T])

    def fold(self, u, P, c):
        x = math.exp(u)
        T, Tx, Txx = self("T", x, P, c), self("Tx", x, P, c), self("Txx", x, P, c)
        Txxx, TxP, TxxP = self("Txxx", x, P, c), self("TxP", x, P, c), self("TxxP", x, P, c)
        a11, a12 = (x * Tx + x * x * Txx) / T, x * TxP / T
        a21, a22 = (2 * x * x * Txx + x**3 * Txxx) / T, x * x * TxxP / T
        return np.array([x * Tx / T, x * x * Txx / T, a11 * a22 - a12 * a21])

    def physical(self, x, P, c) -> bool:
        if not (P > 0 and self("T", x, P, c) > 0):
            return False
        th = self.binding(c)
        return all(bool(th.condition_holds(cn.name, x, P)) for cn in th.active_conditions)


def newton(F, z0, max_iter: int = 60, max_step=None):
    """Newton on F(z) = 0 with a central-difference Jacobian.

    Returns (z, residual, converged): converged when the last step is below
    STEP_TOLERANCE (or, where the difference Jacobian's noise stalls the steps there, below
    ACCEPT_STEP) relative to z and the residual (max |F|) below EVENT_RESIDUAL_TOLERANCE.
    ``max_step`` damps a step (max norm).
    """
    z = np.array(z0, float)
    n = len(z)
    small = False
    for _ in range(max_iter):
        f = F(z)
        if not np.all(np.isfinite(f)):
            return z, math.inf, False
        J = np.empty((len(f), n))
        for j in range(n):
            h = 1e-7 * max(1.0, abs(z[j]))
            e = np.zeros(n)
            e[j] = h
            J[:, j] = (F(z + e) - F(z - e)) / (2 * h)
        if not np.all(np.isfinite(J)):
            return z, math.inf, False
        try:
            dz = np.linalg.solve(J, -f)
        except np.linalg.LinAlgError:
            dz = np.linalg.lstsq(J, -f, rcond=None)[0]
        m = float(np.max(np.abs(dz)))
        if max_step is not None and m > max_step:
            dz *= max_step / m
        z = z + dz
        if m <= STEP_TOLERANCE * (1 + float(np.max(np.abs(z)))):
            small = True
            break
    f = F(z)
    res = float(np.max(np.abs(f))) if np.all(np.isfinite(f)) else math.inf
    # the step test: below STEP_TOLERANCE, or (where the difference Jacobian's noise keeps
    # the last steps near 1e-13) below ACCEPT_STEP: the error after a Newton step is far
    # below the step, and 1e-12 keeps a factor 100 on the 1e-10 the events promise
    small = small or m <= ACCEPT_STEP * (1 + float(np.max(np.abs(z))))
    return z, res, bool(small and res <= EVENT_RESIDUAL_TOLERANCE) or res <= 1e-15


# -- continuation of one critical point ----------------------------------------------------------
@dataclass
class _Path:
    points: list = field(default_factory=list)  # (c, u, P)
    stop: str = "reached"  # reached | fold | pressure | temperature | domain


def _solve_critical(model, c, u, P, scale=None):
    z, res, ok = newton(lambda z: model.critical(z[0], z[1], c, scale), [u, P], max_iter=30,
                        max_step=0.3)
    return z, res


def continue_critical(model, c0, c1, u0, P0, n_steps: int = 8, min_step_rel: float = 1e-7):
    """Natural-parameter continuation of one critical point from c0 to c1 with step control.

    Returns a :class:`_Path`; ``stop`` says why it ended before c1 (a fold: Newton no longer
    converges however small the step; a crossing of P = 0, T = 0 or the physical domain
    inside the last step).
    """
    path = _Path([(c0, u0, P0)])
    span = c1 - c0
    h = span / n_steps
    hmin = abs(span) * min_step_rel
    c, u, P = c0, u0, P0
    while (c1 - c) * np.sign(span) > 0:
        if abs(h) > abs(c1 - c):
            h = c1 - c
        if len(path.points) >= 2:
            (ca, ua, Pa), (cb, ub, Pb) = path.points[-2], path.points[-1]
            s = h / (cb - ca)
            ug, Pg = ub + s * (ub - ua), Pb + s * (Pb - Pa)
        else:
            ug, Pg = u, P
        z, res = _solve_critical(model, c + h, ug, Pg)
        good = res < 1e-12 and abs(z[0] - u) < 0.25 and abs(z[1] - P) < 0.5 * max(abs(P), P0)
        if good:
            x, Pn, cn = math.exp(z[0]), z[1], c + h
            Tn = model("T", x, Pn, cn)
            if Pn <= 0:
                path.stop = "pressure"
            elif Tn <= 0:
                path.stop = "temperature"
            elif not model.physical(x, Pn, cn):
                path.stop = "domain"
            if path.stop != "reached":
                path.points.append((cn, z[0], Pn))  # the point beyond (a seed)
                return path
            c, u, P = cn, z[0], Pn
            path.points.append((c, u, P))
            h *= 1.5
            if abs(h) > abs(span) / n_steps:
                h = span / n_steps
        else:
            h /= 2
            if abs(h) < hmin:
                path.stop = "fold"
                return path
    return path


# -- event systems ------------------------------------------------------------------------------
def _event(kind, model, c, residuals, ok, method, message, scale_free=None, system="",
           unknowns=()):
    return StructureEvent(kind=kind, coupling=model.coupling, value=float(c),
                          fixed=dict(model.fixed), residuals=residuals, converged=bool(ok),
                          method=method, message=message, scale_free=scale_free or {},
                          system=system, unknowns=tuple(float(v) for v in unknowns))


def _scale_free(model, c):
    """The coupling as a scale-free combination (e.g. b*Q^1 for Born-Infeld)."""
    th = model.binding(c)
    dims = th.derivation.length_dimensions
    n = dims.get(model.coupling, 0)
    ref = next(((nm, m) for nm, m in dims.items()
                if nm != model.coupling and m != 0 and th.values[nm] != 0), None)
    if not n or ref is None:
        return {}
    ell = abs(float(th.values[ref[0]])) ** (1.0 / ref[1])
    return {f"{model.coupling}/{ref[0]}^({n}/{ref[1]})": float(c) / ell ** n}


def solve_fold(model, c, u, P):
    """Where two critical points merge: Newton on (x T_x, x^2 T_xx, det J)/T in (log x, P, c)."""
    z, res, ok = newton(lambda z: model.fold(z[0], z[1], z[2]), [u, P, c], max_step=0.2)
    u, P, c = z
    f = model.fold(u, P, c)
    x = math.exp(u)
    resid = {"x T_x / T": abs(f[0]), "x^2 T_xx / T": abs(f[1]), "det / T^2": abs(f[2])}
    txxx = x**3 * model("Txxx", x, P, c) / model("T", x, P, c)
    msg = (f"two critical points merge at x = {x:.12g}, P = {P:.12g} "
           f"(x^3 T_xxx / T = {txxx:.3g}: "
           f"{'T_x = T_xx = T_xxx = 0' if abs(txxx) < 1e-8 else 'T_x = T_xx = T_xP = 0'})")
    return _event("critical-count", model, c, resid, ok and P > 0,
                  "continuation + Newton on the fold system (x T_x, x^2 T_xx, det J)", msg,
                  _scale_free(model, c), "fold", z), (u, P)


def _symbolic_T(model):
    """(T, state symbol, P symbol, coupling symbol) with the other parameters substituted
    exactly (cached on the model)."""
    if getattr(model, "_sym", None) is None:
        der = model.th.derivation
        csym = next(s for s in der.parameters if s.name == model.coupling)
        Psym = next(a for a in der.arguments if a.name == "P")
        subs = {s: sp.nsimplify(model.th.values[s.name]) for s in der.parameters
                if s.name != model.coupling}
        model._sym = (der.quantities["T"].subs(subs), der.state, Psym, csym)
    return model._sym


def solve_isolated(model, c, u):
    """Two critical points merging where T is 0/0: a double root x of T's denominator D
    (D = D_x = 0 in (log x, c)) at which the numerator N vanishes too (fixes P).

    Near such a point T is the ratio of two small numbers and the fold system cannot be
    solved in double precision; this system is regular.  The classic case is the isolated
    critical point of hyperbolic third-order Lovelock black holes (Dolan, Kostouki, Kubiznak
    & Mann, CQG 31 (2014) 242001).  Returns None when T has no such denominator.
    """
    T, xs, Psym, csym = _symbolic_T(model)
    num, den = sp.fraction(sp.together(T))
    den = sp.Mul(*[f for f in sp.Mul.make_args(sp.factor_terms(den)) if f.has(xs)])
    if den.has(Psym) or not den.has(csym) or not num.has(Psym):
        return None
    D = sp.lambdify((xs, csym), den, "math")
    Dx = sp.lambdify((xs, csym), xs * sp.diff(den, xs), "math")
    Dn = sp.lambdify((xs, csym), sum(abs(t) for t in sp.Add.make_args(sp.expand(den))),
                     "math")

    def F(z):
        x = math.exp(z[0])
        n = Dn(x, z[1])
        return np.array([D(x, z[1]) / n, Dx(x, z[1]) / n])
    try:
        z, res, ok = newton(F, [u, c], max_step=0.2)
    except (ValueError, OverflowError, ZeroDivisionError):
        return None
    x, cv = math.exp(z[0]), float(z[1])
    Nf = sp.lambdify((xs, Psym, csym), num, "math")
    Nn = sp.lambdify((xs, Psym, csym), sum(abs(t) for t in sp.Add.make_args(sp.expand(num))),
                     "math")
    zp, resp, okp = newton(lambda w: np.array([Nf(x, w[0], cv) / Nn(x, w[0], cv)]),
                           [0.0], max_iter=60)
    P = float(zp[0])
    exact = None
    try:
        for sol in sp.solve([den, sp.diff(den, xs)], [xs, csym], dict=True):
            v = sol.get(csym)
            if v is not None and v.is_real and abs(float(v) - cv) <= 1e-9 * max(1, abs(cv)):
                exact, cv = str(sp.nsimplify(v)), float(v)
                break
    except Exception:  # no closed form: the Newton root stands
        pass
    f = F([math.log(x), cv])
    # T stays finite through the merge only if the numerator has the double root too
    # (N = N_x = 0): otherwise T has a pole there and no critical point merges (e.g. charged
    # Lovelock, where the charge term spoils the numerator's double root)
    Nx = sp.lambdify((xs, Psym, csym), xs * sp.diff(num, xs), "math")
    resid = {"D / |D|": abs(f[0]), "x D_x / |D|": abs(f[1]),
             "N / |N|": abs(Nf(x, P, cv) / Nn(x, P, cv)),
             "x N_x / |N|": abs(Nx(x, P, cv) / Nn(x, P, cv))}
    ev = _event("isolated-critical-point", model, cv, resid,
                ok and okp and P > 0 and max(resid.values()) <= EVENT_RESIDUAL_TOLERANCE,
                "continuation + Newton on the double root of T's denominator (D, D_x) and "
                "the numerator (P)",
                f"two critical points merge at x = {x:.12g}, P = {P:.12g}, a double root of "
                f"T's denominator where the numerator vanishes too (T = 0/0: an isolated "
                f"critical point)", _scale_free(model, cv), "isolated", (math.log(x), cv))
    return replace(ev, exact=exact)


def solve_pressure_infinite(model, c, u):
    """A critical point runs off to P -> infinity: with B(x) = lim_{P->inf} T/P (sympy),
    x B_x = x^2 B_xx = 0 in (log x, c) (T is linear in P for the families at hand; then the
    critical conditions at large P are those of B).  Returns None when the limit is not a
    finite function of x."""
    T, xs, Psym, csym = _symbolic_T(model)
    try:
        B = sp.limit(T / Psym, Psym, sp.oo)
    except Exception:  # sympy cannot take the limit: no event of this kind is claimed
        return None
    if B == 0 or not B.is_finite and B.is_finite is not None or not B.has(xs):
        return None
    Bf = sp.lambdify((xs, csym), B, "math")
    B1 = sp.lambdify((xs, csym), xs * sp.diff(B, xs), "math")
    B2 = sp.lambdify((xs, csym), xs**2 * sp.diff(B, xs, 2), "math")

    def F(z):
        x = math.exp(z[0])
        b = Bf(x, z[1])
        return np.array([B1(x, z[1]) / b, B2(x, z[1]) / b])
    try:
        z, res, ok = newton(F, [u, c], max_step=0.2)
    except (ValueError, OverflowError, ZeroDivisionError):
        return None
    f = F(z)
    return _event("critical-count", model, z[1],
                  {"x B_x / B": abs(f[0]), "x^2 B_xx / B": abs(f[1])}, ok,
                  "continuation + Newton on the P -> infinity limit B = T/P: "
                  "(x B_x, x^2 B_xx) = 0",
                  f"a critical point runs off to P -> infinity at x = {math.exp(z[0]):.12g} "
                  f"(and comes back at negative P)", _scale_free(model, z[1]))


def solve_pressure_zero(model, c, u, level=0.0):
    """A critical point reaches P = level (0: the event): x T_x = x^2 T_xx = 0 at P = level
    in (log x, c)."""
    z, res, ok = newton(lambda z: model.critical(z[0], level, z[1]), [u, c], max_step=0.2)
    f = model.critical(z[0], level, z[1])
    x = math.exp(z[0])
    return _event("critical-pressure-zero", model, z[1],
                  {"x T_x / T": abs(f[0]), "x^2 T_xx / T": abs(f[1])}, ok,
                  "continuation + Newton on (x T_x, x^2 T_xx) = 0 at P = 0",
                  f"a critical point reaches P = 0 at x = {x:.12g}, "
                  f"T = {model('T', x, 0.0, z[1]):.12g}", _scale_free(model, z[1]),
                  "pressure-zero" if level == 0.0 else "", z)


def solve_temperature_zero(model, c, u, P, T_ref):
    def F(z):
        x = math.exp(z[0])
        return np.array([model("T", x, z[1], z[2]) / T_ref,
                         *model.critical(z[0], z[1], z[2], scale=T_ref)])
    z, res, ok = newton(F, [u, P, c], max_step=0.2)
    f = F(z)
    return _event("critical-temperature-zero", model, z[2],
                  {"T / T_ref": abs(f[0]), "x T_x / T_ref": abs(f[1]),
                   "x^2 T_xx / T_ref": abs(f[2])}, ok,
                  "continuation + Newton on (T, x T_x, x^2 T_xx) = 0",
                  f"a critical point reaches T = 0 at x = {math.exp(z[0]):.12g}, P = {z[1]:.12g}",
                  _scale_free(model, z[2]))


def _condition_boundary(model, inside, outside):
    """The boundary function g (g = 0 on the boundary) of the declared state condition that
    holds at ``inside`` and fails at ``outside`` (each (c, log x, P)): for an atom
    ``lhs < rhs`` (or >, <=, >=) of the condition's relation (an And/Or is split into its
    atoms), g = lhs - rhs, with the other parameters substituted exactly.  Returns
    (condition label, atom text, g as a function of (x, P, c)) or None."""
    der = model.th.derivation
    xs = der.state
    Psym = next(a for a in der.arguments if a.name == "P")
    csym = next(s for s in der.parameters if s.name == model.coupling)
    subs = {s: sp.nsimplify(model.th.values[s.name]) for s in der.parameters
            if s.name != model.coupling}
    (ci, ui, Pi), (co, uo, Po) = inside, outside
    th_in, th_out = model.binding(ci), model.binding(co)
    for cond in model.th.active_conditions:
        if not (bool(th_in.condition_holds(cond.name, math.exp(ui), Pi))
                and not bool(th_out.condition_holds(cond.name, math.exp(uo), Po))):
            continue
        atoms = [a for a in sp.preorder_traversal(cond.relation)
                 if isinstance(a, (sp.StrictLessThan, sp.LessThan, sp.StrictGreaterThan,
                                   sp.GreaterThan))]
        for atom in atoms:
            g_expr = (atom.lhs - atom.rhs).subs(subs)
            g = sp.lambdify((xs, Psym, csym), g_expr, "math")
            try:
                gi = g(math.exp(ui), Pi, ci)
                go = g(math.exp(uo), Po, co)
            except (ValueError, ZeroDivisionError, OverflowError, TypeError):
                continue
            holds_i = bool(atom.func(gi, 0)) if math.isfinite(gi) else False
            holds_o = bool(atom.func(go, 0)) if math.isfinite(go) else True
            if holds_i and not holds_o and gi * go <= 0:
                return cond.label(), sp.sstr(atom), g, (abs(gi) + abs(go)) or 1.0
    return None


def solve_domain_exit(model, inside, outside):
    """A critical point crossing the boundary of a declared state condition: Newton in
    (log x, P, c) on

    .. math:: \\frac{x T_x}{T} = 0, \\quad \\frac{x^2 T_{xx}}{T} = 0, \\quad
              g(x, P, c) = 0,

    g = lhs - rhs of the condition's atom that holds on one side and fails on the other
    (:func:`_condition_boundary`), scaled by its size at the two continuation points.
    ``inside`` and ``outside`` are the last continued point inside the domain and the one
    beyond, each (c, log x, P).  Returns None when no atom of a declared condition changes
    sign between them."""
    found = _condition_boundary(model, inside, outside)
    if found is None:
        return None
    label, atom, g, gscale = found
    (ci, ui, Pi), (co, uo, Po) = inside, outside
    gi, go = g(math.exp(ui), Pi, ci), g(math.exp(uo), Po, co)
    w = gi / (gi - go) if gi != go else 0.5

    def F(z):
        return np.array([*model.critical(z[0], z[1], z[2]),
                         g(math.exp(z[0]), z[1], z[2]) / gscale])
    try:
        z, res, ok = newton(F, [ui + w * (uo - ui), Pi + w * (Po - Pi), ci + w * (co - ci)],
                            max_step=0.2)
        f = F(z)
    except (ValueError, ZeroDivisionError, OverflowError):
        return None
    x = math.exp(z[0])
    return _event("critical-leaves-domain", model, z[2],
                  {"x T_x / T": abs(f[0]), "x^2 T_xx / T": abs(f[1]),
                   "g / g_scale": abs(f[2])}, ok and z[1] > 0,
                  "continuation + Newton on (x T_x, x^2 T_xx, g) = 0, g = 0 the boundary of "
                  "a declared state condition",
                  f"a critical point at x = {x:.12g}, P = {z[1]:.12g} crosses the boundary "
                  f"{atom} of the condition {label}", _scale_free(model, z[2]))


def _other_states(model, c, xc, P, T):
    """Other locally stable states on the critical isotherm T(x, P) = T (roots on a log grid,
    polished by Newton): list of log x."""
    xs = xc * np.geomspace(1e-3, 1e3, 1201)
    p = list(model.base)
    p[model.i] = c
    with np.errstate(all="ignore"):
        g = model.f["T"](xs, P, *p) - T
    out = []
    for k in np.nonzero(np.isfinite(g[:-1]) & np.isfinite(g[1:]) & (g[:-1] * g[1:] < 0))[0]:
        if abs(math.log(xs[k] / xc)) < 0.05:
            continue
        z, res, _ = newton(lambda z: np.array([model("T", math.exp(z[0]), P, c) / T - 1]),
                           [math.log(math.sqrt(xs[k] * xs[k + 1]))], max_iter=40, max_step=0.1)
        x1 = math.exp(z[0])
        if res < 1e-12 and abs(math.log(x1 / xc)) > 0.01 and model("Tx", x1, P, c) > 0 \
                and model.physical(x1, P, c):
            out.append(z[0])
    return out


def _delta_G(model, u1, xc, P, c):
    x1 = math.exp(u1)
    G1, Gc = model("G", x1, P, c), model("G", xc, P, c)
    scale = abs(Gc) + abs(model("T", xc, P, c) * model("S", xc, P, c))
    return (G1 - Gc) / scale


def solve_critical_on_line(model, c, u1, uc, P):
    """A critical point on another first-order line: Newton in (log x1, log xc, P, c) on
    T(x1) = T(xc), G(x1) = G(xc), x T_x(xc) = 0, x^2 T_xx(xc) = 0 (T, G relative)."""
    x0 = math.exp(uc)
    g_scale = abs(model("G", x0, P, c)) + abs(model("T", x0, P, c) * model("S", x0, P, c))

    def F(z):
        x1, xc = math.exp(z[0]), math.exp(z[1])
        Tc = model("T", xc, z[2], z[3])
        return np.array([model("T", x1, z[2], z[3]) / Tc - 1,
                         (model("G", x1, z[2], z[3]) - model("G", xc, z[2], z[3])) / g_scale,
                         *model.critical(z[1], z[2], z[3])])
    z, res, ok = newton(F, [u1, uc, P, c], max_step=0.1)
    f = F(z)
    x1, xc = math.exp(z[0]), math.exp(z[1])
    return _event("critical-leaves-preferred", model, z[3],
                  {"T1/Tc - 1": abs(f[0]), "(G1 - Gc)/G_scale": abs(f[1]),
                   "x T_x / T": abs(f[2]), "x^2 T_xx / T": abs(f[3])}, ok,
                  "continuation + Newton on (T1 - Tc, G1 - Gc, x T_x, x^2 T_xx)",
                  f"the critical point at x = {xc:.12g}, P = {z[2]:.12g} lies on the "
                  f"first-order line through the state x = {x1:.12g} (equal T and G)",
                  _scale_free(model, z[3]), "on-line", z)


# -- the small-state asymptote -------------------------------------------------------------------
def small_state_events(model, lo, hi, samples):
    """Roots in [lo, hi] of a(c) = lim_{x -> 0} x T(x, P) (sympy), by Newton (exact where
    sympy solves a(c) = 0)."""
    der = model.th.derivation
    xs = der.state
    csym = next(s for s in der.parameters if s.name == model.coupling)
    subs = {s: sp.nsimplify(model.th.values[s.name]) for s in der.parameters
            if s.name != model.coupling}
    expr = der.quantities["T"].subs(subs)
    try:
        a = sp.limit(xs * expr, xs, 0, "+")
    except Exception:  # sympy cannot take the limit: no event of this kind is claimed
        return [], ["small-state asymptote: sympy could not take lim x -> 0 of x T"]
    if not a.is_finite or not a.has(csym) or a.has(sp.Symbol("P")) or a.free_symbols - {csym}:
        return [], []
    fa = sp.lambdify(csym, a, "math")
    da = sp.lambdify(csym, sp.diff(a, csym), "math")
    vals = [fa(float(s)) for s in samples]
    out = []
    for s0, s1, v0, v1 in zip(samples[:-1], samples[1:], vals[:-1], vals[1:]):
        if not (v0 * v1 < 0 or v1 == 0):
            continue
        c = 0.5 * (s0 + s1)
        for _ in range(60):
            step = fa(c) / da(c)
            c -= step
            if abs(step) <= 1e-16 * abs(c):
                break
        exact = None
        try:
            sols = [r for r in sp.solve(sp.Eq(a, 0), csym) if r.is_real
                    and abs(float(r) - c) <= 1e-9 * max(1.0, abs(c))]
            if sols:
                exact = str(sp.nsimplify(sols[0]))
                c = float(sols[0])
        except Exception:  # no closed form: the Newton root stands
            pass
        ev = StructureEvent(
            kind="small-state-asymptote", coupling=model.coupling, value=float(c),
            fixed=dict(model.fixed), exact=exact, scale_free=_scale_free(model, c),
            residuals={"lim x T (relative)": abs(fa(c)) / (abs(fa(s0)) + abs(fa(s1)))},
            converged=True, method="sympy limit lim_{x->0} x T + Newton",
            message=f"lim x->0 x T = {sp.sstr(sp.nsimplify(a))} changes sign: the small end "
                    f"of every isotherm turns from T -> {'+' if v0 > 0 else '-'}inf to "
                    f"T -> {'-' if v0 > 0 else '+'}inf")
        out.append(ev)
    return out, []


# -- a zeroth-order line opening from P = 0 -----------------------------------------------------
#: points of the log grid (1e-4 .. 1e4 times the typical state) on which the P = 0 isotherm's
#: minima are bracketed
_END_GRID = 2401


def _zero_pressure_minima(model, c, x_typ):
    """Local minima of the P = 0 isotherm T(x, 0) in x (sign changes of T_x on a log grid,
    polished by Newton): list of (log x, 4 pi x T), the temperature in units of 1/(4 pi x)."""
    xs = x_typ * np.geomspace(1e-4, 1e4, _END_GRID)
    p = list(model.base)
    p[model.i] = c
    with np.errstate(all="ignore"):
        Tx = model.f["Tx"](xs, 0.0, *p)
    out = []
    for k in np.nonzero(np.isfinite(Tx[:-1]) & np.isfinite(Tx[1:])
                        & (Tx[:-1] < 0) & (Tx[1:] > 0))[0]:
        m = _min_at(model, c, math.log(math.sqrt(xs[k] * xs[k + 1])))
        if m is not None:
            out.append(m[1:])
    return out


def _end_zero_system(model):
    """F(log x, c) = (4 pi x T, 4 pi x^2 T_x) at P = 0 (temperatures in units of 1/(4 pi x),
    the natural temperature of a state of size x)."""
    def F(z):
        x = math.exp(z[0])
        return np.array([4 * math.pi * x * model("T", x, 0.0, z[1]),
                         4 * math.pi * x * x * model("Tx", x, 0.0, z[1])])
    return F


def _end_zero_exact(model, value):
    """The exact coupling of a double zero of T(x, 0) in x, where T's numerator at P = 0 is a
    polynomial in x with rational coefficients: a root of the resultant of the numerator and
    its x-derivative (sympy), the one within 1e-9 of ``value``; None otherwise."""
    _, xs, Psym, csym = _symbolic_T(model)
    der = model.th.derivation
    # the other parameters exactly as typed (0.3 -> 3/10, a grid's 0.8421052631578947 stays
    # that decimal), so that the exact value belongs to the parameters of the run
    typed = {s: sp.Rational(repr(float(model.th.values[s.name]))) for s in der.parameters
             if s.name != model.coupling}
    try:
        T = der.quantities["T"].subs(typed)
        num = sp.numer(sp.together(T.subs(Psym, 0)))
        num = sp.Mul(*[f for f in sp.Mul.make_args(sp.factor_terms(num)) if f.has(xs)])
        if not num.is_polynomial(xs, csym):
            return None
        res = sp.Poly(sp.resultant(num, sp.diff(num, xs), xs), csym)
        if not (res.domain.is_ZZ or res.domain.is_QQ) or res.degree() < 1:
            return None
        for f, _ in res.factor_list()[1]:
            for r in f.real_roots():
                if abs(float(r) - value) <= 1e-9 * max(1.0, abs(value)):
                    return r
    except (sp.PolynomialError, NotImplementedError, ValueError, TypeError):
        return None
    return None


def solve_end_zero(model, c, u):
    """The end of a branch of the P = 0 isotherm touches T = 0: Newton in (log x, c) on

    .. math:: 4\\pi x\\,T(x, 0) = 0, \\quad 4\\pi x^2\\,T_x(x, 0) = 0

    (a double zero of T(x, 0): a minimum of the lowest isotherm reaching T = 0).  On the side
    where that minimum is negative, every isotherm at small enough P has a gap of T < 0
    between a smaller and a larger branch; the smaller branch's end and the larger
    branch's minimum are the two terminal points of a zeroth-order line (reentrance when the
    smaller branch is preferred) which meet at P = 0, T = 0 on the event.  Kind
    ``zeroth-order``, system ``end-zero``."""
    F = _end_zero_system(model)
    try:
        z, res, ok = newton(F, [u, c], max_step=0.2)
    except (ValueError, OverflowError, ZeroDivisionError):
        return None
    f = F(z)
    x = math.exp(z[0])
    curv = 4 * math.pi * x**3 * model("Txx", x, 0.0, z[1])
    exact = _end_zero_exact(model, float(z[1])) if ok else None
    value = float(exact) if exact is not None else z[1]
    ev = _event("zeroth-order", model, value,
                {"4 pi x T": abs(f[0]), "4 pi x^2 T_x": abs(f[1])}, ok and curv > 0,
                "continuation + Newton on (T, x T_x) = 0 at P = 0 (a double zero of the "
                "lowest isotherm)" + ("; exact: a root of the resultant of T's numerator "
                                      "and its x-derivative" if exact is not None else ""),
                f"a minimum of the P = 0 isotherm touches T = 0 at x = {x:.12g} "
                f"(4 pi x^3 T_xx = {curv:.3g}): on the side where it dips below zero the "
                f"low-pressure isotherms split, and the two terminal points of a zeroth-order "
                f"line (the smaller branch's end, the larger branch's minimum) meet at "
                f"P = 0, T = 0", _scale_free(model, value), "end-zero", z)
    return replace(ev, exact=str(exact)) if exact is not None else ev


def zero_pressure_end_events(model, samples) -> list:
    """Along the samples: every local minimum of T(x, 0) at each sample is followed to the
    neighbouring samples on both sides (natural continuation, :func:`_follow_min`); where
    its temperature changes sign between two path points, :func:`solve_end_zero`."""
    x_typ = model.th.typical_state()
    mins = [_zero_pressure_minima(model, float(c), x_typ) for c in samples]
    out = []
    for k in range(len(samples) - 1):
        for a, b, start in ((samples[k], samples[k + 1], mins[k]),
                            (samples[k + 1], samples[k], mins[k + 1])):
            for u0, t0 in start:
                path = _follow_min(model, float(a), float(b), u0, t0)
                for p0, p1 in zip(path[:-1], path[1:]):
                    if not (p0[2] * p1[2] < 0 or p1[2] == 0):
                        continue
                    seed = _end_zero_bracket(model, p0, p1)
                    if seed is not None:    # None: through a pole of T, not through zero
                        ev = solve_end_zero(model, *seed)
                        if ev is not None:
                            out.append(ev)
                    break
    return out


def _min_at(model, c, u):
    """The minimum of T(x, 0) near log x = u at coupling c: (c, log x, 4 pi x T) or None."""
    z, res, _ = newton(lambda z: np.array([4 * math.pi * math.exp(2 * z[0])
                                           * model("Tx", math.exp(z[0]), 0.0, c)]),
                       [u], max_iter=40, max_step=0.1)
    if not res < 1e-12:
        return None
    x = math.exp(z[0])
    return c, float(z[0]), 4 * math.pi * x * model("T", x, 0.0, c)


def _follow_min(model, c0, c1, u0, t0, n_steps: int = 8, min_step_rel: float = 1e-7):
    """Natural continuation of a minimum of T(x, 0) from c0 towards c1 (step halved when
    Newton fails or the minimum jumps by more than 0.25 in log x): the path
    [(c, log x, 4 pi x T)], ending early where the minimum is lost."""
    path = [(c0, u0, t0)]
    span = c1 - c0
    h = span / n_steps
    c, u = c0, u0
    while (c1 - c) * np.sign(span) > 0:
        if abs(h) > abs(c1 - c):
            h = c1 - c
        m = _min_at(model, c + h, u)
        if m is not None and abs(m[1] - u) < 0.25:
            path.append(m)
            c, u = m[0], m[1]
            h = min(abs(h) * 1.5, abs(span) / n_steps) * np.sign(span)
        else:
            h /= 2
            if abs(h) < abs(span) * min_step_rel:
                break
    return path


def _end_zero_bracket(model, a, b, max_halvings: int = 60):
    """Shrink a sign change of a tracked minimum of T(x, 0) ((c, log x, 4 pi x T) at each
    end) until the temperature at both ends is below 1e-8 (a zero: returns (c, log x) to
    seed Newton) or the bracket is below 1e-14 relative while it is not (the sign changes
    through a pole of T, as across the double root of the denominator of hyperbolic
    Lovelock: returns None), or the minimum is lost (None)."""
    for _ in range(max_halvings):
        if abs(a[2]) < 1e-8 and abs(b[2]) < 1e-8:
            w = a[2] / (a[2] - b[2]) if a[2] != b[2] else 0.5
            return a[0] + w * (b[0] - a[0]), a[1] + w * (b[1] - a[1])
        if abs(b[0] - a[0]) <= 1e-14 * max(1.0, abs(a[0])):
            return None
        m = _min_at(model, 0.5 * (a[0] + b[0]), 0.5 * (a[1] + b[1]))
        if m is None or abs(m[1] - a[1]) > 0.5:
            return None
        if m[2] == 0:
            return m[0], m[1]
        if (m[2] < 0) == (a[2] < 0):
            a = m
        else:
            b = m
    return None


# -- the detector and the whole ------------------------------------------------------------------
def _physical_points(family, coupling, c, fixed):
    s = find_critical_points(family, **{**fixed, coupling: float(c)})
    return [(math.log(cp.x), cp.P, cp.T) for cp in s.physical if cp.kind == "standard"]


def _same(a, b, rel=1e-8):
    return a.kind == b.kind and abs(a.value - b.value) <= rel * max(1.0, abs(a.value))


def structure_events(family, coupling: str, interval, n_samples: int = N_SAMPLES,
                     **fixed) -> StructureEvents:
    """Every structure event of ``family`` along ``coupling`` in ``interval``.

    Parameters
    ----------
    family : str or Family
    coupling : str
        The parameter that moves.
    interval : (float, float)
    n_samples : int
        Full critical-point searches along the interval (the detector); continuation
        covers the values between them.
    **fixed
        The other parameters.

    Returns
    -------
    StructureEvents
        Events sorted by value, each located by Newton on its own system (see the module
        docstring), with residuals and ``converged``.

    Examples
    --------
    Born-Infeld-AdS at Q = 1: two critical points appear at bQ = 1/sqrt(8) (Gunasekaran,
    Kubiznak & Mann, JHEP 11 (2012) 110).

    >>> ev = structure_events("born-infeld-ads", "b", (0.34, 0.37), n_samples=2, Q=1.0)
    >>> e = ev.events[0]
    >>> e.kind, abs(e.value - 8 ** -0.5) < 1e-12
    ('critical-count', True)
    """
    lo, hi = (float(v) for v in interval)
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise BhchemError(f"interval {interval!r}: need two finite numbers, low < high")
    samples = np.linspace(lo, hi, max(int(n_samples), 2))
    model = CouplingModel(family, coupling, fixed, lo)
    pts = [_physical_points(family, coupling, c, fixed) for c in samples]
    events, notes = [], []

    def add(ev):
        if not (lo <= ev.value <= hi):
            if not ev.converged:    # Newton wandered off: a change we could not locate
                notes.append({"bracket": [lo, hi],
                              "what": f"{ev.kind}: Newton did not converge and left the "
                                      f"interval (stopped at {ev.value:.6g}): {ev.message}"})
            return
        if not any(_same(ev, e) for e in events):
            events.append(ev)

    for k in range(len(samples) - 1):
        for (a, b, sa) in ((samples[k], samples[k + 1], pts[k]),
                           (samples[k + 1], samples[k], pts[k + 1])):
            for (u, P, T) in sa:
                path = continue_critical(model, a, b, u, P)
                cs, us, Ps = path.points[-1]
                if path.stop == "fold":
                    ev = solve_fold(model, cs, us, Ps)[0]
                    if not ev.converged and Ps > P:  # running off to P -> infinity?
                        inf = solve_pressure_infinite(model, cs, us)
                        ev = inf if inf is not None and inf.converged else ev
                    if not ev.converged:  # T may be 0/0 where the two points merge
                        iso = solve_isolated(model, cs, us)
                        ev = iso if iso is not None and iso.converged else ev
                    gap = sorted((cs, b))       # where the path did not get to
                    if ev.converged or gap[0] <= ev.value <= gap[1]:
                        add(ev)
                    else:                       # Newton wandered off: not an event there
                        notes.append({"bracket": [float(gap[0]), float(gap[1])],
                                      "what": "a continued critical point stops (a fold?) "
                                              "and Newton on the fold system did not "
                                              "converge in the bracket",
                                      "count_change": True})
                elif path.stop == "pressure":
                    cl, ul, Pl = path.points[-2]
                    add(solve_pressure_zero(model, cl - Pl * (cs - cl) / (Ps - Pl), ul))
                elif path.stop == "temperature":
                    cl, ul, Pl = path.points[-2]
                    add(solve_temperature_zero(model, cl, ul, Pl, T))
                elif path.stop == "domain":
                    ev = solve_domain_exit(model, path.points[-2], path.points[-1])
                    if ev is not None:
                        add(ev)
                    if ev is None or not ev.converged:
                        notes.append({"bracket": sorted([path.points[-2][0], cs]),
                                      "what": "a critical point leaves the physical domain "
                                              "(a state condition): "
                                              + ("no boundary equation found" if ev is None
                                                 else "Newton did not converge")})
                # a critical point crossing another first-order line along this path, or
                # the Hawking-Page line of a background phase
                if a < b:
                    _line_crossings(model, path, add)
                    _background_crossings(model, path, add)
    for ev in small_state_events(model, lo, hi, samples)[0]:
        add(ev)
    for ev in zero_pressure_end_events(model, samples):
        add(ev)
    notes_poly = _merge_polynomial(family, coupling, (lo, hi), fixed, events)
    events.sort(key=lambda e: e.value)
    # a stopped continuation is explained by a converged change of the count in its bracket
    # (e.g. the exact threshold of the critical polynomial next to an isolated point)
    unexplained = [
        {k: v for k, v in n.items() if k != "count_change"} for n in notes
        if not (n.get("count_change") and any(
            e.converged and e.kind in _COUNT_KINDS
            and n["bracket"][0] <= e.value <= n["bracket"][1] for e in events))]
    for k in range(len(samples) - 1):
        n0, n1 = len(pts[k]), len(pts[k + 1])
        inside = [e for e in events if samples[k] <= e.value <= samples[k + 1]
                  and e.kind in _COUNT_KINDS]
        if n0 != n1 and not inside:
            unexplained.append({"bracket": [float(samples[k]), float(samples[k + 1])],
                                "what": f"{n0} -> {n1} physical critical points, no event "
                                        f"found between the samples"})
    ok = all(e.converged for e in events) and not unexplained
    msg = (f"{len(events)} events; every one converged" if ok else
           f"{len(events)} events; {sum(not e.converged for e in events)} not converged, "
           f"{len(unexplained)} unexplained changes") + notes_poly
    return StructureEvents(family=model.th.family.name, coupling=coupling, interval=(lo, hi),
                           fixed=dict(fixed), events=tuple(events),
                           samples=tuple(float(s) for s in samples),
                           counts=tuple(len(p) for p in pts), unexplained=tuple(unexplained),
                           converged=ok, message=msg)


def _merge_polynomial(family, coupling, interval, fixed, events) -> str:
    """Exact thresholds from the critical polynomial
    (:func:`bhchem.analysis.critical_polynomial.polynomial_thresholds`), where the family has
    one.  An exact threshold at the value of one of ours (to 1e-9, whatever its kind: the
    polynomial names an isolated critical point also as a change of the count) lends it its
    ``exact`` text; one we did not find is added as it is.  A family without a polynomial
    form, or a failure of that producer, is said in the message (our events stand)."""
    try:
        exact = polynomial_thresholds(family, coupling, interval, **fixed)
    except NoPolynomialFormError as exc:
        return f"; no critical-polynomial thresholds ({exc})"
    except (BhchemError, ValueError, NotImplementedError, ArithmeticError) as exc:
        return f"; the critical-polynomial thresholds failed ({type(exc).__name__}: {exc})"
    added = 0
    for ev in exact:
        match = [k for k, e in enumerate(events)
                 if abs(ev.value - e.value) <= 1e-9 * max(1.0, abs(ev.value))]
        if match:
            k = match[0]
            if events[k].exact is None and ev.exact:
                events[k] = replace(events[k], exact=ev.exact)
        elif interval[0] <= ev.value <= interval[1]:
            events.append(ev)
            added += 1
    return f"; {len(exact)} critical-polynomial thresholds ({added} added)" if exact else ""


def _line_crossings(model, path, add):
    """Along a continued critical point: where Delta G to another stable state on its
    isotherm changes sign, solve the critical-point-on-line system.

    A state of another branch can appear on the critical isotherm between two path points
    (the isotherm touches T_c at one of its minima) already on the other side of the
    crossing, or vanish there: then the interval is halved (the critical point re-solved at
    each midpoint) until the state's first (last) appearance is bracketed to 1e-10 of the
    coupling, and its Delta G there is compared (GB d = 6: a crossing at alpha = 1/6,
    Q = 0.4075 was missed with path points 0.005 apart)."""
    pts = [p for p in path.points if p[2] > 0]
    if path.stop != "reached":
        pts = pts[:-1]
    if len(pts) < 2:
        return

    def states(c, u, P):
        xc = math.exp(u)
        T = model("T", xc, P, c)
        return [(u1, _delta_G(model, u1, xc, P, c)) for u1 in _other_states(model, c, xc, P, T)]

    def crossing(a, b, da, db):
        """a, b = (c, u, P, u1); a sign change of Delta G between them: solve."""
        w = da / (da - db)
        add(solve_critical_on_line(model, a[0] + w * (b[0] - a[0]), a[3] + w * (b[3] - a[3]),
                                   a[1] + w * (b[1] - a[1]), a[2] + w * (b[2] - a[2])))

    prev = None
    for (c, u, P) in pts:
        cur = states(c, u, P)
        if prev is not None:
            pc, pu, pP, pcur = prev
            for u1, d1 in cur:
                match = [(u0, d0) for u0, d0 in pcur if abs(u0 - u1) < 0.3]
                if match and match[0][1] * d1 < 0:
                    u0, d0 = match[0]
                    crossing((pc, pu, pP, u0), (c, u, P, u1), d0, d1)
                elif not match:            # born between the two points
                    edge = _appearance(model, (pc, pu, pP), (c, u, P), u1, d1, states)
                    if edge is not None and edge[1] * d1 < 0:
                        crossing((*edge[0], edge[2]), (c, u, P, u1), edge[1], d1)
            for u0, d0 in pcur:
                if not any(abs(u0 - u1) < 0.3 for u1, _ in cur):   # gone between them
                    edge = _appearance(model, (c, u, P), (pc, pu, pP), u0, d0, states)
                    if edge is not None and edge[1] * d0 < 0:
                        crossing((pc, pu, pP, u0), (*edge[0], edge[2]), d0, edge[1])
        prev = (c, u, P, cur)


def _appearance(model, absent, present, u_state, d_state, states, rel: float = 1e-10):
    """Halve [absent, present] (each (c, log x_c, P) of the critical point; the other state,
    at log x = ``u_state`` with Delta G = ``d_state``, exists at ``present`` only) until it
    is below ``rel`` of the coupling: ((c, u, P), Delta G, log x1) at the point nearest the
    state's appearance where it exists, or None when the critical point is lost."""
    a, b, ub, db = absent, present, u_state, d_state
    for _ in range(60):
        if abs(b[0] - a[0]) <= rel * max(1.0, abs(b[0])):
            break
        cm = 0.5 * (a[0] + b[0])
        z, res = _solve_critical(model, cm, 0.5 * (a[1] + b[1]), 0.5 * (a[2] + b[2]))
        if not res < 1e-12:
            return None
        m = (cm, float(z[0]), float(z[1]))
        near = [(u1, d1) for u1, d1 in states(*m) if abs(u1 - ub) < 0.3]
        if near:
            b, (ub, db) = m, near[0]
        else:
            a = m
    return b, db, ub


def _background_dG(model, u, P, c):
    """(G - G_background)/scale at the state (log x, P), scale = |G| + |T S| + |G_bg|."""
    x = math.exp(u)
    G, Gb = model("G", x, P, c), model("G_background", x, P, c)
    return (G - Gb) / (abs(G) + abs(model("T", x, P, c) * model("S", x, P, c)) + abs(Gb))


def solve_critical_on_background_line(model, c, u, P):
    """The Hawking--Page line of the background phase passes through a critical point:
    Newton in (log x, P, c) on

    .. math:: \\frac{x T_x}{T} = 0, \\quad \\frac{x^2 T_{xx}}{T} = 0, \\quad
              \\frac{G(x, P) - G_{bg}(P)}{|G| + |T S| + |G_{bg}|} = 0.

    On one side the background's line G = G_bg cuts the first-order line that ends at the
    critical point (a triple point: background, small and large black hole); on the other it
    passes above the critical point and misses it."""
    x0 = math.exp(u)
    scale = abs(model("G", x0, P, c)) + abs(model("T", x0, P, c) * model("S", x0, P, c)) \
        + abs(model("G_background", x0, P, c))

    def F(z):
        x = math.exp(z[0])
        return np.array([*model.critical(z[0], z[1], z[2]),
                         (model("G", x, z[1], z[2]) - model("G_background", x, z[1], z[2]))
                         / scale])
    z, res, ok = newton(F, [u, P, c], max_step=0.2)
    f = F(z)
    x = math.exp(z[0])
    name = model.th.family.background_name
    return _event("hawking-page-meets-first-order", model, z[2],
                  {"x T_x / T": abs(f[0]), "x^2 T_xx / T": abs(f[1]),
                   "(G - G_bg)/G_scale": abs(f[2])}, ok and z[1] > 0,
                  "continuation + Newton on (x T_x, x^2 T_xx, G - G_background) = 0",
                  f"the Hawking-Page line of {name} passes through the critical point at "
                  f"x = {x:.12g}, P = {z[1]:.12g}, T = {model('T', x, z[1], z[2]):.12g}",
                  _scale_free(model, z[2]), "background", z)


def _background_crossings(model, path, add):
    """Along a continued critical point: where G - G_background changes sign, solve
    :func:`solve_critical_on_background_line` (families with a background phase only)."""
    if "G_background" not in model.f:
        return
    pts = [p for p in path.points if p[2] > 0]
    if path.stop != "reached":
        pts = pts[:-1]
    vals = [(c, u, P, _background_dG(model, u, P, c)) for (c, u, P) in pts]
    for (c0, u0, P0, g0), (c1, u1, P1, g1) in zip(vals[:-1], vals[1:]):
        if g0 * g1 < 0 or g1 == 0:
            w = g0 / (g0 - g1)
            add(solve_critical_on_background_line(model, c0 + w * (c1 - c0),
                                                  u0 + w * (u1 - u0), P0 + w * (P1 - P0)))


# -- an event continued in a second coupling ------------------------------------------------------
#: the extended systems that can be continued in a second coupling (StructureEvent.system)
CONTINUABLE = ("fold", "pressure-zero", "on-line", "background", "isolated", "end-zero")


def _event_function(model, ev, j2):
    """The event's extended system F(z) (z = ``ev.unknowns``, the coupling last) with the
    second coupling read from ``model.base[j2]`` at each call; None for a system that is not
    continuable."""
    z0 = ev.unknowns
    if ev.system == "fold":
        return lambda z: model.fold(z[0], z[1], z[2])
    if ev.system == "pressure-zero":
        return lambda z: model.critical(z[0], 0.0, z[1])
    if ev.system == "on-line":
        x0, P0, c0 = math.exp(z0[1]), z0[2], z0[3]
        gs = abs(model("G", x0, P0, c0)) + abs(model("T", x0, P0, c0) * model("S", x0, P0, c0))

        def F(z):
            x1, xc = math.exp(z[0]), math.exp(z[1])
            Tc = model("T", xc, z[2], z[3])
            return np.array([model("T", x1, z[2], z[3]) / Tc - 1,
                             (model("G", x1, z[2], z[3]) - model("G", xc, z[2], z[3])) / gs,
                             *model.critical(z[1], z[2], z[3])])
        return F
    if ev.system == "background":
        x0, P0, c0 = math.exp(z0[0]), z0[1], z0[2]
        gs = abs(model("G", x0, P0, c0)) + abs(model("T", x0, P0, c0) * model("S", x0, P0, c0)) \
            + abs(model("G_background", x0, P0, c0))

        def F(z):
            x = math.exp(z[0])
            return np.array([*model.critical(z[0], z[1], z[2]),
                             (model("G", x, z[1], z[2]) - model("G_background", x, z[1], z[2]))
                             / gs])
        return F
    if ev.system == "end-zero":
        return _end_zero_system(model)
    if ev.system == "isolated":
        der = model.th.derivation
        xs = der.state
        csym, c2sym = der.parameters[model.i], der.parameters[j2]
        subs = {s: sp.nsimplify(model.th.values[s.name]) for s in der.parameters
                if s not in (csym, c2sym)}
        T = der.quantities["T"].subs(subs)
        _, den = sp.fraction(sp.together(T))
        den = sp.Mul(*[f for f in sp.Mul.make_args(sp.factor_terms(den)) if f.has(xs)])
        args = (xs, csym, c2sym)
        D = sp.lambdify(args, den, "math")
        Dx = sp.lambdify(args, xs * sp.diff(den, xs), "math")
        Dn = sp.lambdify(args, sum(abs(t) for t in sp.Add.make_args(sp.expand(den))), "math")

        def F(z):
            x, c2 = math.exp(z[0]), model.base[j2]
            n = Dn(x, z[1], c2)
            return np.array([D(x, z[1], c2) / n, Dx(x, z[1], c2) / n])
        return F
    return None


def _jacobian(H, w):
    f = H(w)
    J = np.empty((len(f), len(w)))
    for j in range(len(w)):
        h = 1e-7 * max(1.0, abs(w[j]))
        e = np.zeros(len(w))
        e[j] = h
        J[:, j] = (H(w + e) - H(w - e)) / (2 * h)
    return f, J


def _tangent(J, prev=None):
    t = np.linalg.svd(J)[2][-1]
    if prev is not None and float(t @ prev) < 0:
        t = -t
    return t


def _correct(H, w, fixed_index=None, fixed_value=None, t=None, wp=None, max_iter=12):
    """Newton on H(w) = 0 plus one closing equation: w[fixed_index] = fixed_value, or the
    pseudo-arclength plane t . (w - wp) = 0.  Returns (w, residual, ok)."""
    w = np.array(w, float)
    if fixed_index is not None:
        w[fixed_index] = fixed_value
    for _ in range(max_iter):
        f, J = _jacobian(H, w)
        if not (np.all(np.isfinite(f)) and np.all(np.isfinite(J))):
            return w, math.inf, False
        if fixed_index is not None:
            row = np.zeros(len(w))
            row[fixed_index] = 1.0
            g = w[fixed_index] - fixed_value
        else:
            row, g = t, float(t @ (w - wp))
        A = np.vstack([J, row])
        try:
            dw = np.linalg.solve(A, -np.append(f, g))
        except np.linalg.LinAlgError:
            return w, math.inf, False
        w = w + dw
        if float(np.max(np.abs(dw))) <= 1e-13 * (1 + float(np.max(np.abs(w)))):
            break
    f = H(w)
    res = float(np.max(np.abs(f))) if np.all(np.isfinite(f)) else math.inf
    return w, res, res <= EVENT_RESIDUAL_TOLERANCE


def trace_event_curve(family, event, second: str, interval2, box=None, n_steps: int = 40,
                      max_points: int = 2000):
    """Continue one event in a second coupling: pseudo-arclength continuation of its extended
    system (the unknowns of the 1D event and the second coupling; turning points in either
    coupling are followed), each point corrected by Newton to the event tolerance.

    Parameters
    ----------
    family : str or Family
    event : StructureEvent
        A 1D event whose ``system`` is in :data:`CONTINUABLE`; its ``fixed`` holds the
        second coupling's value.
    second : str
        The second coupling.
    interval2 : (float, float)
        Range of the second coupling; the curve ends exactly on its edges.
    box : (float, float), optional
        Range of the first coupling; the curve ends exactly on its edges too.
    n_steps : int
        Initial step: the second coupling's range over this.

    Returns
    -------
    EventCurve or None
        Points (first coupling, second coupling) in order along the curve, the largest
        relative residual of the event's system at each; None for an event whose system is
        not continuable.
    """
    if event.system not in CONTINUABLE or not event.unknowns:
        return None
    fixed = dict(event.fixed)
    model = CouplingModel(family, event.coupling, fixed, event.value)
    names = [s.name for s in model.th.derivation.parameters]
    if second not in names:
        raise BhchemError(f"{second!r} is not a continuous parameter of {model.th.family.name}")
    j2 = names.index(second)
    F = _event_function(model, event, j2)

    def H(w):
        model.base[j2] = float(w[-1])
        with np.errstate(all="ignore"):
            return np.asarray(F(w[:-1]), float)
    lo2, hi2 = sorted(float(v) for v in interval2)
    lo1, hi1 = (sorted(float(v) for v in box) if box is not None else (-math.inf, math.inf))
    w0 = np.array([*event.unknowns, float(model.th.values[second])])
    h0 = (hi2 - lo2) / n_steps
    branches = []
    for sense in (1.0, -1.0):
        pts, w, prev = [], w0.copy(), None
        h = h0
        while len(pts) < max_points:
            _, J = _jacobian(H, w)
            t = _tangent(J, prev)
            if prev is None and t[-1] * sense < 0:
                t = -t
            wp = w + h * t
            wn, res, ok = _correct(H, wp, t=t, wp=wp)
            if not ok or float(np.max(np.abs(wn[:-1] - w[:-1]))) > 0.5:
                h /= 2
                if h < h0 * 1e-6:
                    break
                continue
            out2 = not (lo2 <= wn[-1] <= hi2)
            out1 = not (lo1 <= wn[-2] <= hi1)
            if out2 or out1:
                k, v = ((-1, hi2 if wn[-1] > hi2 else lo2) if out2 else
                        (-2, hi1 if wn[-2] > hi1 else lo1))
                we, res, ok = _correct(H, w + (v - w[k]) / (wn[k] - w[k]) * (wn - w),
                                       fixed_index=len(w) + k, fixed_value=v)
                if ok and abs(w[k] - v) > 1e-14 * max(1.0, abs(v)):  # not the seed itself
                    pts.append((we, res))
                break
            pts.append((wn, res))
            prev, w = t, wn
            h = min(h * 1.5, h0)
        branches.append(pts)
    r0 = float(np.max(np.abs(H(w0))))
    chain = branches[1][::-1] + [(w0, r0)] + branches[0]
    points = np.array([[p[-2], p[-1]] for p, _ in chain])
    res = np.array([r for _, r in chain])
    ok = bool(np.all(res <= EVENT_RESIDUAL_TOLERANCE))
    return EventCurve(kind=event.kind, couplings=(event.coupling, second), points=points,
                      residuals=res, converged=ok,
                      method=f"pseudo-arclength continuation of the {event.system} system in "
                             f"({event.coupling}, {second}), Newton on each point",
                      message=f"{len(points)} points from {event.coupling} = "
                              f"{event.value:.12g}, {second} = {w0[-1]:.12g}")
