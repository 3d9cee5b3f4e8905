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
isenthalp T(P) at fixed M has its extrema on it.

Method.  Inversion states: at each pressure of a grid that includes P = 0 (the
low-pressure end; the functions are regular there), every sign change in x of
N = T_P M_x - T_x M_P over the physical states on a logarithmic grid, refined by
Brent's method.  The pressure range stops where the family's declared state
conditions stop holding (e.g. 32 pi P alpha < 3 for 4D Gauss-Bonnet gravity).
Ordered by x, the states are joined into *branches*: two neighbours are joined when
the curve between them stays inside the range and the physical domain (probed at
states between them), and a branch ends where the pressure turns, so that each branch
gives one inversion temperature per pressure.  Each branch reports its ends (P = 0,
the top of the range, a pressure maximum, the edge of the physical domain with the
failing condition, ...) and its own minimum: the exact P = 0 root when the minimum
sits at the P = 0 end, a bounded minimisation in P when it lies inside, or a one-line
reason when T_i keeps falling toward another end (e.g. a coupling-dominated branch of
Euler-Heisenberg-AdS that starts at extremality, T_i -> 0).  The minimum inversion
temperature T_i,min is the minimum of the branch that reaches P = 0 (Okcu & Aydiner,
EPJC 77 (2017) 24, arXiv:1611.06327: T_i,min/T_c = 1/2 for 4D charged AdS).
Isenthalps: at each pressure the state with M(x, P) = M is the root of a monotone
function on each connected piece of the physical domain (M_x = T S_x >= 0 there),
found by Brent's method and followed continuously on one piece.  Every bracketing solve
goes through :func:`bracketed_root`: a bracket that does not bracket is "no root here".
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from bhchem.core.results import Result
from bhchem.core.compiled import Thermodynamics
from bhchem.errors import BhchemError
from bhchem.numerics import bracketed_root, minimize_scalar
from bhchem.analysis.isobar import state_range
from bhchem.analysis.critical import find_critical_points


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
    lo, hi = state_range(th, P_pos)
    return np.geomspace(lo, hi, n)


def _roots_in_x(f, xs, values, ok):
    """Brent-refined roots of the scalar function f(x) at the sign changes of ``values``
    (solved in u = ln x; a cell that does not bracket after all is skipped)."""
    good = ok & np.isfinite(values)
    s = np.sign(values)
    idx = np.nonzero(good[1:] & good[:-1] & (s[1:] * s[:-1] < 0))[0]
    out = []
    for i in idx:
        u = bracketed_root(lambda u: f(math.exp(u)), math.log(xs[i]), math.log(xs[i + 1]),
                           xtol=1e-15)
        if u is not None:
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


#: kinds of branch ends (``InversionBranch.ends``); an edge of the physical domain carries the
#: failing condition in brackets, e.g. "edge of the physical domain (T >= 0 fails beyond)"
END_ZERO_PRESSURE = "P = 0"
END_TOP = "top of the pressure range"
END_PRESSURE_MAX = "pressure maximum of the curve"
END_PRESSURE_MIN = "pressure minimum of the curve"
END_EDGE = "edge of the physical domain"
END_GRID = "end of the state grid"
END_TOWARD_ZERO = "approach to P -> 0 (no state at P = 0)"
END_GAP = "gap in the computed curve"


@dataclass(frozen=True)
class InversionBranch:
    """One branch of the inversion curve: a connected piece along which the inversion
    pressure is monotone in the state variable, so that at each pressure in its range it
    gives one inversion temperature.

    Attributes
    ----------
    T, P, x : ndarray
        Its inversion states, ordered by x.
    ends : (str, str)
        What ends it at its smallest and its largest x (one of the ``END_*`` kinds: P = 0,
        the top of the pressure range, a pressure maximum or minimum where it joins the next
        branch, the edge of the physical domain with the failing condition, ...).
    reaches_zero_pressure : bool
        It has an inversion state at P = 0.
    T_min, P_at_min, x_at_min : float or None
        Its minimum inversion temperature: the exact P = 0 root when the minimum sits at the
        P = 0 end, the refined stationary minimum when it lies inside; None when T_i keeps
        falling toward another end (then ``why_no_minimum`` says why, in one line).
    minimum_at : str
        "P = 0 end", "inside" or "" (no minimum).
    residual : float or None
        |N|/(|T_P M_x| + |T_x M_P|) at the minimum (N = T_P M_x - T_x M_P, zero on the curve).
    converged : bool
        The minimum is the exact P = 0 root or a converged refinement (False: the grid
        minimum, ``why_no_minimum`` says the refinement failed).
    why_no_minimum : str or None
    """

    T: np.ndarray
    P: np.ndarray
    x: np.ndarray
    ends: tuple
    reaches_zero_pressure: bool
    T_min: float | None
    P_at_min: float | None
    x_at_min: float | None
    minimum_at: str
    residual: float | None
    converged: bool
    why_no_minimum: str | None

    def points(self) -> list:
        return [[float(t), float(p)] for t, p in zip(self.T, self.P)]


@dataclass(frozen=True, repr=False)
class InversionCurve(Result):
    """The inversion curve mu = 0 in the T-P plane, branch by branch.

    The minimum inversion temperature is a property of the branch that reaches P -> 0
    (for charged AdS the whole curve; Okcu & Aydiner, EPJC 77 (2017) 24): the headline
    ``T_min`` is that branch's minimum.  Other branches (e.g. a coupling-dominated branch at
    high pressure that starts at extremality, T_i -> 0) are reported separately.

    Attributes
    ----------
    T, P, x : ndarray
        All inversion states, ordered by the state variable x.
    branches : tuple of InversionBranch
        The same states split into branches (ordered by x).
    headline : int or None
        Index of the branch that gives ``T_min`` (reaches P = 0; the lowest minimum if several).
    T_min : float or None
        Minimum inversion temperature of that branch; None with ``why_no_T_min`` otherwise.
    P_at_min, x_at_min : float or None
    at_low_pressure_end : bool
        T_min is attained at the P = 0 end of its branch.
    T_c : float or None
        Critical temperature used for the ratio (the lowest-pressure physical critical
        point); None when the family has none.
    ratio_to_Tc : float or None
        T_min / T_c.
    pressure_range : (float, float)
        [0, P_max], inside the declared conditions of the family.
    why_no_T_min : str or None
        One line, when T_min is None.
    residual : float or None
        Residual of the inversion condition at the minimum (see InversionBranch).
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
    branches: tuple = field(default_factory=tuple)
    headline: int | None = None
    why_no_T_min: str | None = None
    residual: float | None = None

    def points(self) -> list:
        return [[float(t), float(p)] for t, p in zip(self.T, self.P)]


def _critical_point(th):
    cps = find_critical_points(th).physical
    return cps[0] if cps else None


def _failing_conditions(th: Thermodynamics, x, P) -> list:
    """Labels of the state conditions that fail at every state (x, P) given (arrays
    broadcast; 'finite T, S, G' first)."""
    x = np.asarray(x, dtype=float)
    P = np.asarray(P, dtype=float)
    out = []
    with np.errstate(all="ignore"):
        finite = np.ones(np.broadcast_shapes(x.shape, P.shape), dtype=bool)
        for q in ("T", "S", "G"):
            finite &= np.isfinite(th.quantity(q, x, P))
        if not np.any(finite):
            out.append("finite T, S, G")
        for c in th.active_conditions:
            if not np.any(th.condition_holds(c.name, x, P)):
                out.append(c.label())
    return out


def physical_pressure_limit(th: Thermodynamics, P_max: float, xs,
                            max_iter: int = 200) -> tuple[float | None, str | None]:
    """The largest pressure <= P_max at which some state of the grid ``xs`` is physical.

    Declared state conditions may bound the pressure (e.g. 32 pi P alpha < 3, a real AdS
    vacuum of 4D Gauss-Bonnet gravity).  When P_max itself has physical states it is returned
    unchanged; otherwise the limit is found by halving P_max (at most 60 times) and then
    bisecting (at most ``max_iter`` steps, to 1e-14 relative), and returned on its physical
    side, with a one-line reason naming the conditions that fail above it.

    Returns
    -------
    (P_lim, reason) : (float, None) when P_max is fine; (float, str) when cut;
        (None, str) when no pressure in (0, P_max] has a physical state on the grid.
    """
    def some(P):
        return bool(np.any(th.physical(xs, P)))

    if some(P_max):
        return float(P_max), None
    lo = None
    for k in range(1, 61):
        P = P_max * 0.5 ** k
        if some(P):
            lo = P
            break
    if lo is None:
        return None, (f"no physical state at any pressure in (0, {P_max:.6g}] on the state grid")
    hi = min(2.0 * lo, P_max)
    for _ in range(max_iter):
        mid = 0.5 * (lo + hi)
        if some(mid):
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-14 * hi:
            break
    failing = _failing_conditions(th, xs, hi)
    names = ", ".join(failing) if failing else "the physical-state conditions together"
    return lo, (f"the pressure range stops at P = {lo:.10g} (asked {P_max:.6g}): above it no "
                f"state satisfies {names}")


def _probe_link(th, Ps, a, b, n_probe: int = 5, n_window: int = 41):
    """How two inversion states a, b that are consecutive in x are related.

    Between them the curve crosses no grid pressure (it would have left a state there), so
    if it joins them inside the range it stays within two grid steps of their pressures.
    At ``n_probe`` states between them, N is sampled over that pressure window: a sign change
    at physical states at every probe joins them.  Returns ('joined', P at the middle probe)
    or ('gap', kind).
    """
    n = len(Ps)
    j_lo = max(min(a[3], b[3]) - 2, 0)
    j_hi = min(max(a[3], b[3]) + 2, n - 1)
    Pw = np.linspace(Ps[j_lo], Ps[j_hi], n_window)
    xm = np.geomspace(a[0], b[0], n_probe + 2)[1:-1]
    X, PP = np.meshgrid(xm, Pw, indexing="ij")
    vals = _inversion_function(th, X, PP)
    phys = th.physical(X, PP)
    ok = phys & np.isfinite(vals)
    s = np.sign(vals)
    change = ok[:, 1:] & ok[:, :-1] & (s[:, 1:] * s[:, :-1] <= 0)
    found = np.any(change, axis=1)
    if np.all(found):
        mid = n_probe // 2
        k = int(np.argmax(change[mid]))
        return "joined", float(0.5 * (Pw[k] + Pw[k + 1]))
    bad = int(np.argmin(found))
    if not np.all(phys[bad]):
        fails = _failing_conditions(th, xm[bad], float(Pw[int(np.argmin(phys[bad]))]))
        return "gap", _edge_kind(fails)
    if j_hi == n - 1:
        return "gap", END_TOP
    return "gap", END_GAP


def _edge_kind(failing) -> str:
    return f"{END_EDGE} ({', '.join(failing)} fails beyond)" if failing else END_EDGE


def _outer_end(th, xs, Ps, rows, side: int) -> str:
    """Kind of an end of the whole set of inversion states, with no state beyond it in x.

    ``rows`` are the states of its branch (by x), ``side`` -1 for the low-x end, +1 for the
    high-x end.  The edge of the physical domain when the states beyond it at its pressure
    (within a factor 2 in x) become unphysical, or when the curve continued one grid pressure
    further (the branch's trend in P) has its root among unphysical states (as at extremality,
    where T and T_x vanish together and T_i -> 0); else the end of the state grid when the
    end is within a factor 2 of it, else a gap not followed."""
    end = rows[0] if side < 0 else rows[-1]
    x, _, P, j = end
    if j == 1 and len(rows) >= 2 and P < (rows[1] if side < 0 else rows[-2])[2]:
        # at the lowest positive grid pressure and still falling, with no state at P = 0:
        # the branch runs off toward P -> 0 (e.g. to x -> infinity)
        return END_TOWARD_ZERO
    near = (xs < x) & (xs >= x / 2) if side < 0 else (xs > x) & (xs <= 2 * x)
    beyond = xs[near][::-1] if side < 0 else xs[near]
    if beyond.size:
        phys = th.physical(beyond, P)
        if not np.all(phys):
            return _edge_kind(_failing_conditions(th, float(beyond[int(np.argmin(phys))]), P))
    if len(rows) >= 2:
        inner = rows[1] if side < 0 else rows[-2]
        trend = np.sign(P - inner[2])  # P keeps changing this way beyond the end
        j2 = j + int(trend)
        if trend != 0 and 0 <= j2 < len(Ps):
            cand = xs[(xs >= x / 2) & (xs <= 2 * x)]
            vals = _inversion_function(th, cand, Ps[j2])
            s = np.sign(vals)
            idx = np.nonzero(np.isfinite(vals[1:]) & np.isfinite(vals[:-1])
                             & (s[1:] * s[:-1] < 0))[0]
            if idx.size:
                i = int(idx[np.argmin(np.abs(np.log(cand[idx] / x)))])
                xr = math.sqrt(cand[i] * cand[i + 1])
                if not bool(th.physical(xr, Ps[j2])):
                    return _edge_kind(_failing_conditions(th, xr, Ps[j2]))
    if (side < 0 and x <= 2 * xs[0]) or (side > 0 and x >= xs[-1] / 2):
        return END_GRID
    return END_GAP


def _split_branches(th, rows, Ps, xs) -> list:
    """[(row indices, (low-x end kind, high-x end kind))]: rows (sorted by x) split where
    consecutive states are not joined inside the range (a gap) and where the pressure turns
    (a pressure maximum or minimum: the branches share the turning state, or meet between two
    states at the same grid pressure)."""
    n = len(Ps)
    out = []
    start_kind = None  # the outer ends are read off below, once the branch is known
    cur = [0]
    for i in range(len(rows) - 1):
        a, b = rows[i], rows[i + 1]
        link, info = _probe_link(th, Ps, a, b)
        if link == "gap":
            out.append((cur, (start_kind, info)))
            cur, start_kind = [i + 1], info
            continue
        if a[2] == b[2]:  # joined between two states at one grid pressure: a turning point
            kind = END_PRESSURE_MAX if info > a[2] else END_PRESSURE_MIN
            out.append((cur, (start_kind, kind)))
            cur, start_kind = [i + 1], kind
            continue
        if len(cur) >= 2:
            prev = rows[cur[-1]][2] - rows[cur[-2]][2]
            step = b[2] - a[2]
            if prev * step < 0:  # turning exactly at state i: both branches share it
                kind = END_PRESSURE_MAX if prev > 0 else END_PRESSURE_MIN
                out.append((cur, (start_kind, kind)))
                cur, start_kind = [i], kind
        cur.append(i + 1)
    out.append((cur, (start_kind, None)))
    first, last = out[0], out[-1]
    out[0] = (first[0], (_outer_end(th, xs, Ps, [rows[i] for i in first[0]], -1), first[1][1]))
    last = out[-1]
    out[-1] = (last[0], (last[1][0], _outer_end(th, xs, Ps, [rows[i] for i in last[0]], +1)))

    def fix(kind, row):  # what the state itself says overrides the probe's reading
        if row[2] == 0.0:
            return END_ZERO_PRESSURE
        if row[3] == n - 1 and kind not in (END_PRESSURE_MAX, END_PRESSURE_MIN):
            return END_TOP
        return kind

    return [(idx, (fix(k0, rows[idx[0]]), fix(k1, rows[idx[-1]]))) for idx, (k0, k1) in out]


def _branch_minimum(th, x, T, P, ends, max_iter: int = 500):
    """(T_min, P_at_min, x_at_min, minimum_at, residual, converged, why) of one branch."""
    def resid(xv, Pv):
        return float(abs(_inversion_function(th, np.array([xv]), Pv)[0]))

    k = int(np.argmin(T))
    if P[k] == 0.0:
        return float(T[k]), 0.0, float(x[k]), "P = 0 end", resid(x[k], 0.0), True, None
    if k == 0 or k == len(T) - 1:
        end = ends[0] if k == 0 else ends[1]
        return (None, None, None, "", None, False,
                f"T_i falls toward its end at the {end}, x = {x[k]:.6g}, P = {P[k]:.6g}, "
                f"T = {T[k]:.6g}: no minimum on this branch")
    # a stationary minimum inside: P is monotone along the branch, so the state at each P
    # between the two neighbours is bracketed by their x; minimise T_i(P) there (bounded)
    Pa, Pb = sorted((float(P[k - 1]), float(P[k + 1])))
    xa, xb = sorted((float(x[k - 1]), float(x[k + 1])))
    failed = []

    def x_at(Pv):
        f = lambda u: float(_inversion_function(th, np.array([math.exp(u)]), Pv)[0])  # noqa: E731
        u = bracketed_root(f, math.log(xa), math.log(xb), xtol=1e-15)
        return None if u is None else math.exp(u)

    def Ti(Pv):
        xv = x_at(Pv)
        if xv is None or not bool(th.physical(xv, Pv)):
            failed.append(Pv)
            return float(T[k])
        return float(th.T(xv, Pv))

    res = minimize_scalar(Ti, bounds=(Pa, Pb), method="bounded",
                          options={"xatol": 1e-14 * Pb, "maxiter": max_iter})
    xv = x_at(float(res.x)) if not failed else None
    if failed or not res.success or xv is None or float(th.T(xv, res.x)) > T[k] * (1 + 1e-12):
        return (float(T[k]), float(P[k]), float(x[k]), "inside", resid(x[k], P[k]), False,
                "the minimum inside the branch could not be refined (no root bracketed near it); "
                "the grid value is given")
    Tm = float(th.T(xv, res.x))
    return Tm, float(res.x), xv, "inside", resid(xv, float(res.x)), True, None


def _x_grid_for_range(th, P_max: float, n: int = 4000) -> np.ndarray:
    """One state grid covering every pressure in (0, P_max]."""
    g_lo, g_hi = _x_grid(th, P_max, 2), _x_grid(th, P_max * 1e-6, 2)
    return np.geomspace(min(g_lo[0], g_hi[0]), max(g_lo[-1], g_hi[-1]), n)


def inversion_curve(th: Thermodynamics, pressure_max: float | None = None, n_P: int = 160,
                    critical_point=None) -> InversionCurve:
    r"""The inversion curve (mu = 0, i.e. T_P M_x = T_x M_P) for P in [0, pressure_max],
    branch by branch, and the minimum inversion temperature of the branch reaching P -> 0.

    Parameters
    ----------
    th : Thermodynamics
    pressure_max : float, optional
        Default: 10 P_c when the family has a critical point, else 100 times its
        typical pressure.  Cut where the declared state conditions stop holding (a note
        says so).
    n_P : int
        Pressures on the grid (0, then logarithmically and linearly spaced up to the top).
    critical_point : CriticalPoint, optional
        The point whose T_c normalises T_min (default: the lowest-pressure physical one).

    Notes
    -----
    States at each grid pressure are the sign changes of N in x, refined by Brent's
    method.  Ordered by x they are joined into branches (consecutive states are joined
    when the curve between them stays inside the range and the physical domain) and split
    where the pressure turns, so each branch gives one inversion temperature per pressure.
    The headline T_i,min is the minimum of the branch that reaches P = 0 (Okcu & Aydiner,
    EPJC 77 (2017) 24: T_i,min at P_i = 0, T_i,min/T_c = 1/2 for 4D charged AdS).
    """
    cp = critical_point if critical_point is not None else _critical_point(th)
    T_c = cp.T if cp is not None else None
    P_ref = cp.P if cp is not None else th.typical_pressure()
    Pmax = float(pressure_max) if pressure_max is not None else (10 * P_ref if cp else 100 * P_ref)
    if not (np.isfinite(Pmax) and Pmax > 0):
        raise BhchemError(f"the inversion curve needs a positive maximum pressure, not {pressure_max}")
    notes = []
    xs = _x_grid_for_range(th, Pmax)
    P_lim, why_cut = physical_pressure_limit(th, Pmax, xs)

    def empty(why, P_top):
        return InversionCurve(np.array([]), np.array([]), np.array([]), None, None, None,
                              False, T_c, None, (0.0, P_top), tuple(notes), (), None, why)

    if P_lim is None:
        notes.append(why_cut)
        return empty(f"no inversion curve: {why_cut}", Pmax)
    if why_cut:
        notes.append(why_cut)
        Pmax = P_lim
        xs = _x_grid_for_range(th, Pmax)
    Ps = _pressure_grid(Pmax, n_P)
    rows = []
    for j, P in enumerate(Ps):
        for x, T in inversion_states(th, float(P), xs):
            rows.append((x, T, float(P), j))
    if cp is None:
        notes.append("no physical critical point: the ratio T_i,min/T_c is undefined")
    if not rows:
        notes.insert(0, "no inversion state in the pressure range: mu keeps one sign "
                        "(no cooling-heating transition)")
        return empty("no inversion state in the pressure range", Pmax)
    rows.sort()
    x_arr = np.array([r[0] for r in rows])
    T_arr = np.array([r[1] for r in rows])
    P_arr = np.array([r[2] for r in rows])
    branches = []
    for idx, ends in _split_branches(th, rows, Ps, xs):
        bx, bT, bP = x_arr[idx], T_arr[idx], P_arr[idx]
        Tm, Pm, xm, where, res, conv, why = _branch_minimum(th, bx, bT, bP, ends)
        branches.append(InversionBranch(T=bT, P=bP, x=bx, ends=ends,
                                        reaches_zero_pressure=bool(np.any(bP == 0.0)),
                                        T_min=Tm, P_at_min=Pm, x_at_min=xm, minimum_at=where,
                                        residual=res, converged=conv, why_no_minimum=why))
    zero = [i for i, b in enumerate(branches) if b.reaches_zero_pressure]
    with_min = [i for i in zero if branches[i].T_min is not None]
    head = min(with_min, key=lambda i: branches[i].T_min) if with_min else None
    if head is None:
        toward = [i for i, b in enumerate(branches) if END_TOWARD_ZERO in b.ends]
        if not zero and toward:
            b = branches[toward[0]]
            k = int(np.argmin(b.P))
            why = (f"no inversion state at P = 0: branch {toward[0] + 1} runs toward P -> 0 "
                   f"without reaching it (at its lowest pressure {b.P[k]:.3g}: x = {b.x[k]:.3g}, "
                   f"T_i = {b.T[k]:.3g}), so T_i,min is not attained")
        elif not zero:
            why = (f"no branch of the inversion curve reaches P = 0 in [0, {Pmax:.6g}] "
                   f"(T_i,min belongs to the branch that reaches P -> 0); see the branches")
        else:
            why = f"the branch that reaches P = 0 has no minimum: {branches[zero[0]].why_no_minimum}"
        return InversionCurve(T_arr, P_arr, x_arr, None, None, None, False, T_c, None,
                              (0.0, Pmax), tuple(notes), tuple(branches), None, why)
    b = branches[head]
    if not b.converged:
        notes.append(f"branch {head + 1}: {b.why_no_minimum}")
    return InversionCurve(T=T_arr, P=P_arr, x=x_arr, T_min=b.T_min, P_at_min=b.P_at_min,
                          x_at_min=b.x_at_min, at_low_pressure_end=b.minimum_at == "P = 0 end",
                          T_c=T_c, ratio_to_Tc=b.T_min / T_c if T_c else None,
                          pressure_range=(0.0, Pmax), notes=tuple(notes),
                          branches=tuple(branches), headline=head, why_no_T_min=None,
                          residual=b.residual)


def headline_branch(inv: InversionCurve) -> InversionBranch | None:
    """The branch of ``inv`` that reaches P = 0 and gives T_i,min (None if there is none)."""
    if inv.headline is not None:
        return inv.branches[inv.headline]
    zero = [b for b in inv.branches if b.reaches_zero_pressure]
    return zero[0] if zero else None


def branch_state_at(th: Thermodynamics, branch: InversionBranch, P: float) -> float | None:
    """The inversion state x of ``branch`` at pressure P (None outside its pressure range):
    the branch is monotone in P, so x lies between the two branch states around P."""
    order = np.argsort(branch.P)
    Pb, xb = branch.P[order], branch.x[order]
    if not (Pb[0] <= P <= Pb[-1]):
        return None
    j = int(np.searchsorted(Pb, P))
    if Pb[min(j, len(Pb) - 1)] == P:
        return float(xb[min(j, len(Pb) - 1)])
    xa, xc = sorted((float(xb[j - 1]), float(xb[j])))
    f = lambda u: float(_inversion_function(th, np.array([math.exp(u)]), P)[0])  # noqa: E731
    u = bracketed_root(f, math.log(xa), math.log(xc), xtol=1e-15)
    return None if u is None else math.exp(u)


@dataclass(frozen=True)
class Isenthalp:
    """The curve T(P) at fixed enthalpy M.

    Attributes
    ----------
    M : float
    T, P, x : ndarray
        States of the isenthalp (P increasing), physical states only.
    T_max, P_at_T_max : float or None
        The highest interior local maximum of T(P): an inversion point (mu = 0, the sign of
        mu turns from + to -); None when T(P) has no interior maximum.
    mu_at_max : float or None
        mu evaluated there (zero up to the refinement; a check).
    P_end : float or None
        Where the isenthalp ends inside the pressure range (no physical state with
        enthalpy M at higher P: the end is extremal, T -> 0); None if it runs through.
    local_only : bool
        T(P) rises higher than T_max toward an end of the range (e.g. past a local minimum
        on another branch of the inversion curve): T_max is a local maximum only.
    """

    M: float
    T: np.ndarray
    P: np.ndarray
    x: np.ndarray
    T_max: float | None
    P_at_T_max: float | None
    mu_at_max: float | None
    P_end: float | None = None
    local_only: bool = False

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


def _connected(th, P: float, x1: float, x2: float, n: int = 400) -> bool:
    """x1 and x2 lie on one connected piece of the physical domain at pressure P (checked
    on n geometric points between them)."""
    return bool(np.all(th.physical(np.geomspace(x1, x2, n), P)))


def _state_at_enthalpy(th, M: float, P: float, xs, near: float | None = None,
                       connected_to: float | None = None) -> float | None:
    """The physical state with M(x, P) = M.  M is monotone on each connected piece of the
    physical domain (M_x = T S_x >= 0 there), so each piece holds at most one such state;
    when several pieces do (e.g. Euler-Heisenberg-AdS has physical states at tiny r as well),
    the one nearest to ``near`` in ln x is returned, else the one at the largest x (the piece
    of large black holes).  With ``connected_to``, only a state on the same piece as that
    state counts (an isenthalp is followed continuously; it does not jump between pieces).
    A root between the edge of the physical domain (extremality, T = 0) and the first
    physical grid point is bracketed with the refined edge."""
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
        lo, hi = sorted((xe, x_in))
        root = bracketed_root(f, lo, hi, xtol=1e-15 * hi)
        if root is not None:
            roots.append(root)
    roots = sorted(r for r in roots if bool(th.physical(r, P)))
    if connected_to is not None:
        roots = [r for r in roots if _connected(th, P, r, connected_to)]
    if not roots:
        return None
    if near is None:
        return roots[-1]
    return min(roots, key=lambda r: abs(math.log(r / near)))


def _check_enthalpy(th: Thermodynamics, M: float) -> None:
    """An enthalpy must be finite.  Its sign is free: a fluid's H = U + PV may be negative,
    and so may the mass of a hyperbolic (k = -1) AdS black hole; a value no physical state
    has simply gives an empty isenthalp (with a note)."""
    if not np.isfinite(M):
        raise BhchemError(f"masses (enthalpies) must be finite numbers, not {M}")


def isenthalp(th: Thermodynamics, M: float, pressures, x_near: float | None = None) -> Isenthalp:
    """The isenthalp M at the given pressures (>= 0); pressures where no physical state
    has enthalpy M (beyond extremality, T < 0, or outside a declared condition) are left out.

    When several physical states share M at one pressure (disconnected pieces of the physical
    domain), the isenthalp is followed continuously: from the state nearest to ``x_near``
    (default: the one at the largest x), then at each pressure the state nearest to the
    previous one.
    """
    _check_enthalpy(th, M)
    Ps = np.sort(np.asarray(pressures, float))
    Ppos = Ps[Ps > 0]
    g_lo = _x_grid(th, float(Ppos[-1]) if Ppos.size else th.typical_pressure(), 2)
    g_hi = _x_grid(th, float(Ppos[0]) if Ppos.size else th.typical_pressure(), 2)
    xs = np.geomspace(min(g_lo[0], g_hi[0]), max(g_lo[-1], g_hi[-1]), 3000)
    rows = []
    P_end = None
    prev = None
    for P in Ps:
        x = _state_at_enthalpy(th, M, float(P), xs, x_near if prev is None else prev, prev)
        if x is not None:
            rows.append((float(P), x, float(th.T(x, P))))
            prev = x
        elif rows:
            # the isenthalp ends between the last pressure and P (at extremality, T -> 0, or
            # where its piece of the physical domain ends): locate the end by bisection and
            # approach it geometrically; it is not continued past its end
            tail = _approach_end(th, M, rows[-1][0], float(P), xs, prev)
            rows += tail
            if tail:
                P_end = tail[-1][0]
            break
    rows.sort()
    if not rows:
        return Isenthalp(float(M), np.array([]), np.array([]), np.array([]), None, None, None)
    P_arr = np.array([r[0] for r in rows])
    x_arr = np.array([r[1] for r in rows])
    T_arr = np.array([r[2] for r in rows])
    # interior local maxima of T(P) (mu changes sign from + to -); the highest one is reported
    dT = np.diff(T_arr)
    peaks = [i for i in range(1, len(T_arr) - 1) if dT[i - 1] > 0 and dT[i] < 0]
    k = max(peaks, key=lambda i: T_arr[i]) if peaks else -1
    T_max = P_max = mu_max = None
    local_only = bool(peaks) and T_arr[k] < float(np.max(T_arr))
    if peaks:
        # the maximum is where mu = (dT/dP)_M changes sign: Brent's method on mu(P)
        near = x_arr[k] * np.geomspace(0.5, 2.0, 200)

        def mu_of(P):
            x = _state_at_enthalpy(th, M, P, near, x_arr[k])
            return float(joule_thomson_coefficient(th, x, P)) if x is not None else float("nan")

        a, b = float(P_arr[k - 1]), float(P_arr[k + 1])
        P_max = bracketed_root(mu_of, a, b, xtol=1e-15 * b)
        if P_max is None:  # no sign change bracketed: the grid maximum
            P_max = float(P_arr[k])
        x = _state_at_enthalpy(th, M, P_max, near, x_arr[k])
        if x is None:
            T_max = P_max = mu_max = None
        else:
            T_max = float(th.T(x, P_max))
            mu_max = float(joule_thomson_coefficient(th, x, P_max))
    return Isenthalp(float(M), T_arr, P_arr, x_arr, T_max, P_max, mu_max, P_end,
                     local_only and T_max is not None)


def _approach_end(th, M, P_in, P_out, xs, near=None, n: int = 24) -> list:
    """States of the isenthalp between its last grid pressure P_in and the end P_end
    (where no physical state on the piece of the physical domain of ``near``, its last
    state, has enthalpy M any more), found by bisection (at most 60 steps)."""
    lo, hi = P_in, P_out
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if _state_at_enthalpy(th, M, mid, xs, near, near) is not None:
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
        x = _state_at_enthalpy(th, M, P, xs, near, near)
        if x is not None:
            out.append((float(P), x, float(th.T(x, P))))
    x = _state_at_enthalpy(th, M, lo, xs, near, near)
    if x is not None:
        out.append((float(lo), x, float(th.T(x, lo))))
    return out


@dataclass(frozen=True, repr=False)
class ExpansionResult(Result):
    """Result of :func:`joule_thomson_expansion`."""

    family: str
    parameters: dict
    inversion: InversionCurve
    isenthalps: tuple
    masses_default: bool
    notes: tuple = field(default_factory=tuple)
    #: P_c of the critical point that normalises T_i,min (None without one)
    critical_pressure: float | None = None
    #: 'above' or 'below': on which side of the inversion curve (in T at fixed P) the
    #: expansion cools (mu > 0), read off an isenthalp (None when no isenthalp shows it)
    cooling_side: str | None = None


def _reference_pressure(th: Thermodynamics) -> float:
    cp = _critical_point(th)
    return cp.P if cp is not None else th.typical_pressure()


def _survey_branch(th: Thermodynamics, cp, top: float = 300.0) -> InversionBranch | None:
    """The branch of the inversion curve over [0, top P_ref] (P_ref = P_c, else the typical
    pressure) on which default isenthalps are placed: the one reaching P = 0, else the one
    spanning the widest pressure range; None without an inversion curve."""
    P_ref = cp.P if cp is not None else th.typical_pressure()
    inv = inversion_curve(th, top * P_ref, n_P=80, critical_point=cp)
    b = headline_branch(inv)
    if b is None and inv.branches:
        b = max(inv.branches, key=lambda c: float(np.ptp(c.P)))
    return b if b is not None and len(b.P) >= 2 else None


def _masses_on(th: Thermodynamics, branch: InversionBranch | None, cp) -> list:
    out = []
    if branch is not None:
        P_lo, P_top = float(branch.P.min()), float(branch.P.max())
        for f in (0.08, 0.25, 0.5, 0.85):
            P = P_lo + f * (P_top - P_lo)
            x = branch_state_at(th, branch, P)
            if x is not None:
                out.append(float(th.M(x, P)))
        if len(out) >= 2:
            return out
    M0 = float(th.M(cp.x, cp.P)) if cp is not None else \
        float(th.M(th.typical_state(), th.typical_pressure()))
    return [f * M0 for f in (1.25, 1.5, 1.75, 2.0)]


def default_masses(th: Thermodynamics) -> list:
    """Masses whose isenthalps meet the inversion curve at evenly spread pressures: the
    enthalpies of the inversion states at 0.08, 0.25, 0.5 and 0.85 of the pressure span of
    the branch that reaches P = 0 (surveyed up to 300 P_c, or to where the branch turns or
    the declared conditions end the range, e.g. the bound on P of Gauss-Bonnet gravity).
    Without an inversion curve: 1.25 to 2 times the enthalpy of the critical (else a
    typical) state."""
    cp = _critical_point(th)
    return _masses_on(th, _survey_branch(th, cp), cp)


def inversion_pressure_of_mass(th: Thermodynamics, M: float,
                               branch: InversionBranch) -> float | None:
    """The pressure at which the isenthalp M meets ``branch`` of the inversion curve (where
    that isenthalp has its maximum): the first sign change of M_i(P) - M along the branch,
    M_i the enthalpy of its inversion state at P, refined by Brent's method in P (the state
    followed between the two branch states around it).  None: the isenthalp does not meet
    the branch (or no root is bracketed)."""
    order = np.argsort(branch.P)
    Pb, xb = branch.P[order], branch.x[order]
    with np.errstate(all="ignore"):
        g = th.M(xb, Pb) - M
    idx = np.nonzero(np.isfinite(g[1:]) & np.isfinite(g[:-1]) & (np.sign(g[1:]) != np.sign(g[:-1])))[0]
    if idx.size == 0:
        return None
    k = int(idx[0])

    def gP(P):
        x = branch_state_at(th, branch, P)
        return float(th.M(x, P)) - M if x is not None else float("nan")

    return bracketed_root(gP, float(Pb[k]), float(Pb[k + 1]), xtol=1e-13 * float(Pb[k + 1]))


def joule_thomson_expansion(th: Thermodynamics, masses=None, pressure_max: float | None = None,
                            n_P: int = 160) -> ExpansionResult:
    """Inversion curve (branch by branch), its minimum temperature and ratio to T_c, and
    isenthalps.

    Parameters
    ----------
    th : Thermodynamics
    masses : sequence of float, optional
        Enthalpies of the isenthalps (default: :func:`default_masses`).
    pressure_max : float, optional
        Top of the pressure range of both the inversion curve and the isenthalps.
        Default: 1.6 times the largest pressure at which an isenthalp meets the branch of
        the inversion curve that reaches P = 0 (so each isenthalp's maximum and part of its
        falling side show); 10 P_c when no isenthalp meets it.  Either way the range is
        cut where the family's declared conditions stop holding (a note says so).
    n_P : int
        Pressures on the grid (P = 0, then half logarithmically and half linearly spaced).
    """
    default = masses is None
    cp = _critical_point(th)
    survey = _survey_branch(th, cp) if (default or pressure_max is None) else None
    masses = _masses_on(th, survey, cp) if default else [float(m) for m in masses]
    for m in masses:
        _check_enthalpy(th, m)
    if pressure_max is None and survey is not None:
        tops = [inversion_pressure_of_mass(th, m, survey) for m in masses]
        tops = [p for p in tops if p is not None]
        pressure_max = 1.6 * max(tops) if tops else None
    inv = inversion_curve(th, pressure_max, n_P, critical_point=cp)
    Pmax = inv.pressure_range[1]
    Ps = _pressure_grid(Pmax, n_P)
    # follow each isenthalp on the piece of the physical domain where it meets the branch
    # that reaches P = 0 (when it does)
    head = headline_branch(inv)
    curves = []
    for M in masses:
        P_meet = inversion_pressure_of_mass(th, M, head) if head is not None else None
        x_meet = branch_state_at(th, head, P_meet) if P_meet is not None else None
        curves.append(isenthalp(th, M, Ps, x_near=x_meet))
    notes = list(inv.notes)
    for c in curves:
        if c.T.size == 0:
            notes.append(f"no physical state with M = {c.M:g} in the pressure range")
        elif c.T_max is None:
            notes.append(f"the isenthalp M = {c.M:g} has no maximum inside the pressure range")
    res = ExpansionResult(family=th.family.name, parameters=dict(th.values), inversion=inv,
                          isenthalps=tuple(curves), masses_default=default, notes=tuple(notes))
    cp = _critical_point(th) if inv.T_c else None
    return replace(res, critical_pressure=cp.P if cp is not None else None,
                   cooling_side=cooling_side(th, res))


def _pressure_grid(Pmax: float, n: int) -> np.ndarray:
    half = max(n // 2, 2)
    return np.unique(np.concatenate([[0.0], np.geomspace(Pmax * 1e-6, Pmax, half),
                                     np.linspace(0.0, Pmax, half)[1:]]))


def cooling_side(th, res) -> str | None:
    """'above' or 'below': on which side of the inversion curve (in T at fixed P) mu > 0,
    read off the rising part of the first isenthalp that has a maximum."""
    inv = res.inversion
    b = headline_branch(inv) or (inv.branches[0] if inv.branches else None)
    for c in res.isenthalps:
        if c.P_at_T_max is None or b is None or b.T.size < 2:
            continue
        P = 0.5 * c.P_at_T_max
        rising = c.P < c.P_at_T_max
        if np.sum(rising) < 2:
            continue
        T = float(np.interp(P, c.P[rising], c.T[rising]))
        order = np.argsort(b.P)
        Ti = float(np.interp(P, b.P[order], b.T[order]))
        x = c.x[rising][int(np.argmin(np.abs(c.P[rising] - P)))]
        mu = float(joule_thomson_coefficient(th, x, float(c.P[rising][int(np.argmin(np.abs(c.P[rising] - P)))])))
        above = T > Ti
        return ("above" if above else "below") if mu > 0 else ("below" if above else "above")
    return None
