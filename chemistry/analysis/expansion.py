r"""Joule-Thomson expansion: isenthalps, the Joule-Thomson coefficient, the inversion curve.

In the extended phase space M is the enthalpy, so a throttling (Joule-Thomson)
expansion of a black hole at fixed charges keeps M fixed.  Its temperature change
with pressure is the Joule-Thomson coefficient, derived here for any family by
Jacobians in the (x, P) coordinates (subscripts are partial derivatives):

.. math::

    \mu = \left(\frac{\partial T}{\partial P}\right)_M
        = \frac{\partial(T, M)/\partial(x, P)}{\partial(P, M)/\partial(x, P)}
        = \frac{T_P M_x - T_x M_P}{M_x}.

Since dM = T dS + V dP this equals V (T alpha_P - 1)/C_P (checked in the tests).
mu > 0: the hole cools as the pressure drops; mu < 0: it heats.  The *inversion
curve* is mu = 0, i.e. T_P M_x = T_x M_P (equivalently T (dV/dT)_P = V); each
isenthalp T(P) at fixed M has its maximum on it.

Method.  Inversion states: at each pressure of a grid that includes P = 0 (the
low-pressure end; the functions are regular there), every sign change in x of
N = T_P M_x - T_x M_P over the physical states on a logarithmic grid, refined by
Brent's method.  The minimum inversion temperature T_i,min is the smallest
inversion temperature on the curve, refined by a bounded scalar minimisation in P
when it lies inside the range, or the exact P = 0 root when it sits at the
low-pressure end (as for charged AdS in any d).  Isenthalps: at each pressure the
state with M(x, P) = M is the root of a monotone function on the physical domain
(M_x = T S_x >= 0 there), found by Brent's method.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from bhchem.core.compiled import Thermodynamics
from bhchem.errors import BhchemError


def joule_thomson_coefficient(th: Thermodynamics, x, P) -> np.ndarray:
    r"""mu = (dT/dP)_M = (T_P M_x - T_x M_P)/M_x at states (x, P) (arrays broadcast)."""
    with np.errstate(all="ignore"):
        Mx = th.d("M", "x", x, P)
        return (th.d("T", "P", x, P) * Mx - th.d("T", "x", x, P) * th.d("M", "P", x, P)) / Mx


def _inversion_function(th: Thermodynamics, x, P) -> np.ndarray:
    """N / (|T_P M_x| + |T_x M_P|): the numerator of mu, normalised (sign changes only)."""
    with np.errstate(all="ignore"):
        a = th.d("T", "P", x, P) * th.d("M", "x", x, P)
        b = th.d("T", "x", x, P) * th.d("M", "P", x, P)
        return (a - b) / (np.abs(a) + np.abs(b))


def _x_grid(th: Thermodynamics, P_pos: float, n: int = 3000) -> np.ndarray:
    from bhchem.analysis.isobar import state_range
    lo, hi = state_range(th, P_pos)
    return np.geomspace(lo, hi, n)


def _roots_in_x(f, xs, values, ok):
    """Brent-refined roots of the scalar function f(x) at the sign changes of ``values``."""
    good = ok & np.isfinite(values)
    s = np.sign(values)
    idx = np.nonzero(good[1:] & good[:-1] & (s[1:] * s[:-1] < 0))[0]
    out = []
    for i in idx:
        try:
            u = brentq(lambda u: f(math.exp(u)), math.log(xs[i]), math.log(xs[i + 1]),
                       xtol=1e-15, rtol=1e-15, maxiter=200)
        except ValueError:
            continue
        out.append(math.exp(u))
    return out


def inversion_states(th: Thermodynamics, P: float, xs=None) -> list:
    """[(x, T)] of every inversion state (mu = 0) at pressure P >= 0."""
    if xs is None:
        xs = _x_grid(th, P if P > 0 else th.typical_pressure() * 1e-3)
    vals = _inversion_function(th, xs, P)
    ok = th.physical(xs, P)
    f = lambda x: float(_inversion_function(th, np.array([x]), P)[0])  # noqa: E731
    return [(x, float(th.T(x, P))) for x in _roots_in_x(f, xs, vals, ok)]


@dataclass(frozen=True)
class InversionCurve:
    """The inversion curve mu = 0 in the T-P plane.

    Attributes
    ----------
    T, P, x : ndarray
        Inversion states, ordered along the curve (by the state variable x).
    T_min : float or None
        Minimum inversion temperature (None when the curve is empty).
    P_at_min, x_at_min : float or None
    at_low_pressure_end : bool
        T_min is attained at the P = 0 end of the curve.
    T_c : float or None
        Critical temperature used for the ratio (the lowest-pressure physical critical
        point); None when the family has none.
    ratio_to_Tc : float or None
        T_min / T_c.
    pressure_range : (float, float)
    """

    T: np.ndarray
    P: np.ndarray
    x: np.ndarray
    T_min: float | None
    P_at_min: float | None
    x_at_min: float | None
    at_low_pressure_end: bool
    T_c: float | None
    ratio_to_Tc: float | None
    pressure_range: tuple
    notes: tuple = field(default_factory=tuple)

    def points(self) -> list:
        return [[float(t), float(p)] for t, p in zip(self.T, self.P)]


def _critical_point(th):
    from bhchem.analysis.critical import find_critical_points
    cps = find_critical_points(th).physical
    return cps[0] if cps else None


def inversion_curve(th: Thermodynamics, pressure_max: float | None = None, n_P: int = 160,
                    critical_point=None) -> InversionCurve:
    """The inversion curve for P in [0, pressure_max] and its minimum temperature.

    Parameters
    ----------
    th : Thermodynamics
    pressure_max : float, optional
        Default: 10 P_c when the family has a critical point, else 100 times its
        typical pressure.
    n_P : int
        Pressures on the grid (0, then logarithmically spaced up to ``pressure_max``).
    critical_point : CriticalPoint, optional
        The point whose T_c normalises T_min (default: the lowest-pressure physical one).
    """
    cp = critical_point if critical_point is not None else _critical_point(th)
    P_ref = cp.P if cp is not None else th.typical_pressure()
    Pmax = float(pressure_max) if pressure_max is not None else (10 * P_ref if cp else 100 * P_ref)
    if not (np.isfinite(Pmax) and Pmax > 0):
        raise BhchemError(f"the inversion curve needs a positive maximum pressure, not {pressure_max}")
    Ps = _pressure_grid(Pmax, n_P)
    # one state grid covering every pressure of the range
    g_lo, g_hi = _x_grid(th, Pmax, 2), _x_grid(th, Pmax * 1e-6, 2)
    xs = np.geomspace(min(g_lo[0], g_hi[0]), max(g_lo[-1], g_hi[-1]), 4000)
    rows = []
    for P in Ps:
        for x, T in inversion_states(th, float(P), xs):
            rows.append((x, T, float(P)))
    notes = []
    if not rows:
        notes.append("no inversion state in the pressure range: mu keeps one sign "
                     "(no cooling-heating transition)")
        return InversionCurve(np.array([]), np.array([]), np.array([]), None, None, None,
                              False, cp.T if cp else None, None, (0.0, Pmax), tuple(notes))
    rows.sort()
    x_arr = np.array([r[0] for r in rows])
    T_arr = np.array([r[1] for r in rows])
    P_arr = np.array([r[2] for r in rows])
    k = int(np.argmin(T_arr))
    T_min, P_min, x_min = float(T_arr[k]), float(P_arr[k]), float(x_arr[k])
    at_end = P_min == 0.0
    if not at_end:
        T_min, P_min, x_min = _refine_minimum(th, x_min, P_min, Ps)
    ratio = T_min / cp.T if cp is not None else None
    if cp is None:
        notes.append("no physical critical point: the ratio T_i,min/T_c is undefined")
    return InversionCurve(T=T_arr, P=P_arr, x=x_arr, T_min=T_min, P_at_min=P_min,
                          x_at_min=x_min, at_low_pressure_end=at_end,
                          T_c=cp.T if cp else None, ratio_to_Tc=ratio,
                          pressure_range=(0.0, Pmax), notes=tuple(notes))


def _refine_minimum(th, x0, P0, Ps):
    """Minimise the inversion temperature T_i(P) near (x0, P0) (x followed by Brent)."""
    j = int(np.searchsorted(Ps, P0))
    a, b = Ps[max(j - 1, 0)], Ps[min(j + 1, len(Ps) - 1)]

    def Ti(P):
        f = lambda x: float(_inversion_function(th, np.array([x]), P)[0])  # noqa: E731
        lo, hi = x0 / 1.5, x0 * 1.5
        try:
            x = brentq(f, lo, hi, xtol=1e-15 * x0, rtol=1e-15)
        except ValueError:
            return float("inf"), x0
        return float(th.T(x, P)), x

    res = minimize_scalar(lambda P: Ti(P)[0], bounds=(a, b), method="bounded",
                          options={"xatol": 1e-13 * max(b, 1e-300)})
    T, x = Ti(res.x)
    return T, float(res.x), x


@dataclass(frozen=True)
class Isenthalp:
    """The curve T(P) at fixed enthalpy M.

    Attributes
    ----------
    M : float
    T, P, x : ndarray
        States of the isenthalp (P increasing), physical states only.
    T_max, P_at_T_max : float or None
        The maximum of T(P): an inversion point (mu = 0) unless it sits at an end.
    mu_at_max : float or None
        mu evaluated there (zero up to the refinement; a check).
    P_end : float or None
        Where the isenthalp ends inside the pressure range (no physical state with
        enthalpy M at higher P: the end is extremal, T -> 0); None if it runs through.
    """

    M: float
    T: np.ndarray
    P: np.ndarray
    x: np.ndarray
    T_max: float | None
    P_at_T_max: float | None
    mu_at_max: float | None
    P_end: float | None = None

    def points(self) -> list:
        return [[float(t), float(p)] for t, p in zip(self.T, self.P)]


def _physical_edge(th, P, x_in, x_out):
    """The edge of the physical domain between x_in (physical) and x_out (not), by
    geometric bisection to relative 1e-15 (returns the physical side)."""
    a, b = x_in, x_out
    for _ in range(200):
        m = math.sqrt(a * b)
        if bool(th.physical(m, P)):
            a = m
        else:
            b = m
        if abs(b - a) <= 1e-15 * a:
            break
    return a


def _state_at_enthalpy(th, M: float, P: float, xs) -> float | None:
    """The physical state with M(x, P) = M (M is monotone there: M_x = T S_x >= 0).  A root
    between the edge of the physical domain (extremality, T = 0) and the first physical
    grid point is bracketed with the refined edge."""
    with np.errstate(all="ignore"):
        vals = th.M(xs, P) - M
    ok = th.physical(xs, P)
    f = lambda x: float(th.M(x, P)) - M  # noqa: E731
    roots = _roots_in_x(f, xs, vals, ok)
    edges = np.nonzero(ok[1:] != ok[:-1])[0]
    for i in edges:
        x_in, x_out = (xs[i + 1], xs[i]) if ok[i + 1] else (xs[i], xs[i + 1])
        fi = f(x_in)
        if not (np.isfinite(fi) and fi > 0):
            continue  # M grows away from the edge: no root between the edge and x_in
        xe = _physical_edge(th, P, x_in, x_out)
        fe = f(xe)
        if np.isfinite(fe) and np.isfinite(fi) and fe * fi < 0:
            lo, hi = sorted((xe, x_in))
            roots.append(brentq(f, lo, hi, xtol=1e-15 * hi, rtol=1e-15, maxiter=200))
        elif fe == 0.0:
            roots.append(xe)
    roots = sorted(r for r in roots if bool(th.physical(r, P)))
    return roots[0] if roots else None


def isenthalp(th: Thermodynamics, M: float, pressures) -> Isenthalp:
    """The isenthalp M at the given pressures (>= 0); pressures where no physical state
    has enthalpy M (beyond extremality, T < 0) are left out."""
    if not (np.isfinite(M) and M > 0):
        raise BhchemError(f"an isenthalp needs a positive mass (enthalpy) M, not {M}")
    Ps = np.sort(np.asarray(pressures, float))
    Ppos = Ps[Ps > 0]
    g_lo = _x_grid(th, float(Ppos[-1]) if Ppos.size else th.typical_pressure(), 2)
    g_hi = _x_grid(th, float(Ppos[0]) if Ppos.size else th.typical_pressure(), 2)
    xs = np.geomspace(min(g_lo[0], g_hi[0]), max(g_lo[-1], g_hi[-1]), 3000)
    rows = []
    last_in = None
    P_end = None
    for P in Ps:
        x = _state_at_enthalpy(th, M, float(P), xs)
        if x is not None:
            rows.append((float(P), x, float(th.T(x, P))))
            last_in = float(P)
        elif last_in is not None and rows and rows[-1][0] == last_in:
            # the isenthalp ends between last_in and P (at extremality, T -> 0): locate the
            # end by bisection and approach it geometrically so the curve reaches T ~ 0
            tail = _approach_end(th, M, last_in, float(P), xs)
            rows += tail
            if tail:
                P_end = tail[-1][0]
    rows.sort()
    if not rows:
        return Isenthalp(float(M), np.array([]), np.array([]), np.array([]), None, None, None)
    P_arr = np.array([r[0] for r in rows])
    x_arr = np.array([r[1] for r in rows])
    T_arr = np.array([r[2] for r in rows])
    k = int(np.argmax(T_arr))
    T_max = P_max = mu_max = None
    if 0 < k < len(P_arr) - 1:
        # the maximum is where mu = (dT/dP)_M changes sign: Brent's method on mu(P)
        near = x_arr[k] * np.geomspace(0.5, 2.0, 200)

        def mu_of(P):
            x = _state_at_enthalpy(th, M, P, near)
            return float(joule_thomson_coefficient(th, x, P)) if x is not None else float("nan")

        a, b = P_arr[k - 1], P_arr[k + 1]
        try:
            P_max = float(brentq(mu_of, a, b, xtol=1e-15 * b, rtol=1e-15))
        except ValueError:
            P_max = float(P_arr[k])
        x = _state_at_enthalpy(th, M, P_max, near)
        T_max = float(th.T(x, P_max))
        mu_max = float(joule_thomson_coefficient(th, x, P_max))
    return Isenthalp(float(M), T_arr, P_arr, x_arr, T_max, P_max, mu_max, P_end)


def _approach_end(th, M, P_in, P_out, xs, n: int = 24) -> list:
    """States of the isenthalp between its last grid pressure P_in and the end P_end
    (where no physical state has enthalpy M any more), found by bisection."""
    lo, hi = P_in, P_out
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if _state_at_enthalpy(th, M, mid, xs) is not None:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-13 * hi:
            break
    out = []
    gap = lo - P_in
    if gap <= 0:
        return out
    for s in np.geomspace(1e-9, 1.0, n)[::-1][1:]:
        P = lo - s * gap
        x = _state_at_enthalpy(th, M, P, xs)
        if x is not None:
            out.append((float(P), x, float(th.T(x, P))))
    x = _state_at_enthalpy(th, M, lo, xs)
    if x is not None:
        out.append((float(lo), x, float(th.T(x, lo))))
    return out


@dataclass(frozen=True)
class ExpansionResult:
    """Result of :func:`joule_thomson_expansion`."""

    family: str
    parameters: dict
    inversion: InversionCurve
    isenthalps: tuple
    masses_default: bool
    notes: tuple = field(default_factory=tuple)


def _reference_pressure(th: Thermodynamics) -> float:
    cp = _critical_point(th)
    return cp.P if cp is not None else th.typical_pressure()


def _inversion_masses(th: Thermodynamics, P_ref: float, top: float = 300.0) -> list:
    """[(P, M_i)] along the inversion curve: P = 0, then doubling from 1e-3 P_ref while
    inversion states exist, up to ``top`` P_ref (the first inversion state at each P)."""
    rows = []
    st = inversion_states(th, 0.0)
    if st:
        rows.append((0.0, float(th.M(st[0][0], 0.0))))
    P = 1e-3 * P_ref
    while P <= top * P_ref:
        st = inversion_states(th, P)
        if not st:
            if rows:
                break
        else:
            rows.append((P, float(th.M(st[0][0], P))))
        P *= 2.0
    return rows


def default_masses(th: Thermodynamics) -> list:
    """Masses whose isenthalps meet the inversion curve at evenly spread pressures: the
    enthalpies of the inversion states at 0.08, 0.25, 0.5 and 0.85 of P_top, the top of the
    inversion curve (at most 300 P_c, or where the curve ends, e.g. at the bound on P of
    Gauss-Bonnet gravity).  Without an inversion curve: 1.25 to 2 times the enthalpy of the
    critical (else a typical) state."""
    rows = _inversion_masses(th, _reference_pressure(th))
    if len(rows) >= 2:
        P_top = rows[-1][0]
        out = []
        for f in (0.08, 0.25, 0.5, 0.85):
            st = inversion_states(th, f * P_top)
            if st:
                out.append(float(th.M(st[0][0], f * P_top)))
        if len(out) >= 2:
            return out
    cp = _critical_point(th)
    M0 = float(th.M(cp.x, cp.P)) if cp is not None else \
        float(th.M(th.typical_state(), th.typical_pressure()))
    return [f * M0 for f in (1.25, 1.5, 1.75, 2.0)]


def inversion_pressure_of_mass(th: Thermodynamics, M: float, P_start: float) -> float | None:
    """The pressure at which the isenthalp M meets the inversion curve (its maximum), by
    following the enthalpy of the inversion states M_i(P) upward from ``P_start``
    (geometric steps, then Brent's method in log P); None if not found."""
    def Mi(P):
        st = inversion_states(th, P)
        return float(th.M(st[0][0], P)) - M if st else float("nan")

    lo = P_start
    f_lo = Mi(lo)
    if not np.isfinite(f_lo) or f_lo > 0:
        return None
    for _ in range(60):
        hi = lo * 2.0
        f_hi = Mi(hi)
        if not np.isfinite(f_hi):
            return None
        if f_hi > 0:
            u = brentq(lambda u: Mi(math.exp(u)), math.log(lo), math.log(hi), xtol=1e-12)
            return math.exp(u)
        lo = hi
    return None


def joule_thomson_expansion(th: Thermodynamics, masses=None, pressure_max: float | None = None,
                            n_P: int = 160) -> ExpansionResult:
    """Inversion curve, its minimum temperature and ratio to T_c, and isenthalps.

    Parameters
    ----------
    th : Thermodynamics
    masses : sequence of float, optional
        Enthalpies of the isenthalps (default: :func:`default_masses`).
    pressure_max : float, optional
        Top of the pressure range of both the inversion curve and the isenthalps.
        Default: 1.6 times the largest pressure at which an isenthalp meets the
        inversion curve (so each isenthalp's maximum and part of its falling side
        show); 10 P_c when no isenthalp meets it.
    n_P : int
        Pressures on the grid (P = 0, then half logarithmically and half linearly spaced).
    """
    default = masses is None
    masses = default_masses(th) if default else [float(m) for m in masses]
    for m in masses:
        if not (np.isfinite(m) and m > 0):
            raise BhchemError(f"masses must be positive and finite, not {m}")
    cp = _critical_point(th)
    if pressure_max is None:
        P_ref = (cp.P if cp is not None else th.typical_pressure()) * 1e-3
        tops = [inversion_pressure_of_mass(th, m, P_ref) for m in masses]
        tops = [p for p in tops if p is not None]
        pressure_max = 1.6 * max(tops) if tops else None
    inv = inversion_curve(th, pressure_max, n_P, critical_point=cp)
    Pmax = inv.pressure_range[1]
    Ps = _pressure_grid(Pmax, n_P)
    curves = [isenthalp(th, M, Ps) for M in masses]
    notes = list(inv.notes)
    for c in curves:
        if c.T.size == 0:
            notes.append(f"no physical state with M = {c.M:g} in the pressure range")
        elif c.T_max is None:
            notes.append(f"the isenthalp M = {c.M:g} has no maximum inside the pressure range")
    return ExpansionResult(family=th.family.name, parameters=dict(th.values), inversion=inv,
                           isenthalps=tuple(curves), masses_default=default, notes=tuple(notes))


def _pressure_grid(Pmax: float, n: int) -> np.ndarray:
    half = max(n // 2, 2)
    return np.unique(np.concatenate([[0.0], np.geomspace(Pmax * 1e-6, Pmax, half),
                                     np.linspace(0.0, Pmax, half)[1:]]))


def expansion_json(res: ExpansionResult) -> dict:
    """The JSON document of ``bhchem expansion`` (keys exactly as documented)."""
    inv = res.inversion
    return {"inversion": {"points": inv.points(), "T_min": inv.T_min,
                          "ratio_to_Tc": inv.ratio_to_Tc},
            "isenthalps": [{"M": c.M, "points": c.points()} for c in res.isenthalps]}


def expansion_text(res: ExpansionResult) -> str:
    inv = res.inversion
    params = ", ".join(f"{k} = {v:g}" for k, v in res.parameters.items())
    out = [f"{res.family} ({params}): Joule-Thomson expansion at fixed M (the enthalpy)",
           "  mu = (dT/dP)_M = (T_P M_x - T_x M_P)/M_x; inversion curve mu = 0"]
    if inv.T_min is None:
        out.append("  no inversion curve in the pressure range")
    else:
        where = "at the P -> 0 end" if inv.at_low_pressure_end else f"at P = {inv.P_at_min:.10g}"
        out.append(f"  inversion curve: {len(inv.T)} points, P in [0, {inv.pressure_range[1]:.6g}]")
        out.append(f"  minimum inversion temperature T_i,min = {inv.T_min:.12g} ({where})")
        if inv.ratio_to_Tc is not None:
            out.append(f"  T_c = {inv.T_c:.12g};  T_i,min / T_c = {inv.ratio_to_Tc:.12g}")
    for c in res.isenthalps:
        if c.T.size == 0:
            out.append(f"  isenthalp M = {c.M:.6g}: no physical state in range")
            continue
        s = f"  isenthalp M = {c.M:.6g}: {len(c.T)} points"
        if c.T_max is not None:
            s += f", maximum T = {c.T_max:.8g} at P = {c.P_at_T_max:.8g} (mu there {c.mu_at_max:.1e})"
        out.append(s)
    for n in res.notes:
        out.append(f"  note: {n}")
    return "\n".join(out)


# -- figure -------------------------------------------------------------------------------------
def plot_expansion(res: ExpansionResult, th: Thermodynamics):
    """Isenthalps and the inversion curve in the T-P plane (left), and the low-pressure
    end of the inversion curve in units of the critical point, with T_i,min (right).
    Returns a PlotResult."""
    from bhchem.present.plots import PALETTE, EmptyFigureError, PlotResult, _styled, _title
    inv = res.inversion
    data = {}
    if inv.T.size == 0 and not any(c.T.size for c in res.isenthalps):
        raise EmptyFigureError("nothing to plot: no inversion state and no isenthalp in range")
    with _styled() as plt:
        fig, (ax, az) = plt.subplots(1, 2, figsize=(8.6, 3.7),
                                     gridspec_kw={"width_ratios": [1.45, 1.0]})
        Pshow = inv.pressure_range[1]
        Tmax_seen = 0.0
        for i, c in enumerate(res.isenthalps):
            if c.T.size == 0:
                continue
            color = PALETTE[(i + 1) % len(PALETTE)]
            ax.plot(c.P, c.T, "-", color=color, lw=1.3, label=f"$M={c.M:.4g}$")
            data[f"isenthalp_{i}"] = np.column_stack([c.P, c.T])
            Tmax_seen = max(Tmax_seen, float(np.max(c.T)))
            if c.T_max is not None:
                ax.plot([c.P_at_T_max], [c.T_max], "o", ms=3, color=color, zorder=6)
        if inv.T.size:
            ax.plot(inv.P, inv.T, "-", color="black", lw=2.0, label="inversion curve")
            data["inversion"] = np.column_stack([inv.P, inv.T])
            Tmax_seen = max(Tmax_seen, float(np.max(inv.T)))
        ax.set_xlim(0, Pshow)
        ax.set_ylim(0, 1.4 * Tmax_seen if Tmax_seen > 0 else None)  # room for the legend
        ax.set_xlabel(r"pressure $P$")
        ax.set_ylabel(r"temperature $T$")
        ax.set_title("isenthalps and the inversion curve $\\mu = 0$")
        ax.legend(loc="upper left", fontsize=7.5, ncol=2)
        # right: the low-pressure end, in units of the critical point when there is one
        if inv.T.size:
            Tu = inv.T_c if inv.T_c else 1.0
            cp = _critical_point(th) if inv.T_c else None
            Pu = cp.P if cp is not None else 1.0
            m = inv.P <= (10 * Pu if cp is not None else 0.1 * Pshow)
            az.plot(inv.P[m] / Pu, inv.T[m] / Tu, "-", color="black", lw=2.0)
            if inv.T_min is not None:
                az.plot([inv.P_at_min / Pu], [inv.T_min / Tu], "o", color=PALETTE[1], ms=5,
                        zorder=5, label=r"$T_{i,\min}$")
                az.axhline(inv.T_min / Tu, color=PALETTE[1], lw=0.7, ls=":")
            if cp is not None:
                az.axhline(1.0, color=PALETTE[0], lw=0.8, ls="--", label=r"$T_c$")
                az.plot([1.0], [1.0], "s", ms=4, color=PALETTE[0], label="critical point")
                txt = rf"$T_{{i,\min}}/T_c = {inv.ratio_to_Tc:.6g}$"
                az.text(0.97, 0.06, txt, transform=az.transAxes, ha="right", fontsize=8.5)
            az.set_xlim(0, None)
            az.set_ylim(0, max(1.25, 1.1 * float(np.max(inv.T[m] / Tu))))
            az.set_xlabel(r"$P/P_c$" if cp is not None else r"$P$")
            az.set_ylabel(r"$T/T_c$" if cp is not None else r"$T$")
            az.set_title("low-pressure end of the inversion curve")
            az.legend(loc="center right", fontsize=7.5)
        else:
            az.set_visible(False)
        side = _cooling_side(th, res)
        note = "dots: maxima of the isenthalps (they lie on the inversion curve)"
        if side is not None:
            note = (f"$\\mu>0$ (cooling on expansion) {side} the inversion curve, $\\mu<0$ "
                    f"(heating) {'below' if side == 'above' else 'above'} it; " + note)
        fig.suptitle(_title(th, ": Joule-Thomson expansion at fixed M"), y=1.0)
        fig.text(0.5, -0.02, note, ha="center", va="top", fontsize=8, color="#404040")
        fig.tight_layout()
    return PlotResult(fig, "expansion", data, list(res.notes))


def _cooling_side(th, res) -> str | None:
    """'above' or 'below': on which side of the inversion curve (in T at fixed P) mu > 0,
    read off the rising part of the first isenthalp that has a maximum."""
    inv = res.inversion
    for c in res.isenthalps:
        if c.P_at_T_max is None or inv.T.size < 2:
            continue
        P = 0.5 * c.P_at_T_max
        rising = c.P < c.P_at_T_max
        if np.sum(rising) < 2:
            continue
        T = float(np.interp(P, c.P[rising], c.T[rising]))
        order = np.argsort(inv.P)
        Ti = float(np.interp(P, inv.P[order], inv.T[order]))
        x = c.x[rising][int(np.argmin(np.abs(c.P[rising] - P)))]
        mu = float(joule_thomson_coefficient(th, x, float(c.P[rising][int(np.argmin(np.abs(c.P[rising] - P)))])))
        above = T > Ti
        return ("above" if above else "below") if mu > 0 else ("below" if above else "above")
    return None
