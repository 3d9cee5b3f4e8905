r"""Holographic heat engines: closed cycles in the P-V plane of a black hole family.

A cycle is given by its corners (P_i, V_i) in the P-V plane, V the thermodynamic
volume (dM/dP)_S.  Each side joins two consecutive corners along one kind of
path, detected from the corners (relative tolerance ``KIND_TOLERANCE``):

* isobar (P_a = P_b), isochore (V_a = V_b), isotherm (T_a = T_b),
  adiabat (S_a = S_b), in that order of precedence.  For families with
  C_V = 0 identically (every static black hole: S and V are functions of the
  same variable) an isochore *is* an adiabat, and is reported as both.
* A side that is none of these is an error (its path is not determined).

Along a side, in the (x, P) coordinates of the family (subscripts are partial
derivatives), the path is parametrised by log x (isobar, isotherm) or by P
(isochore, adiabat), the constraint solved by Newton's method at every node:

.. math::

    \text{isotherm: } \frac{dP}{dx} = -\frac{T_x}{T_P},\quad
    \text{isochore: } \frac{dx}{dP} = -\frac{V_P}{V_x},\quad
    \text{adiabat: } \frac{dx}{dP} = -\frac{S_P}{S_x},

and the work and heat are line integrals, by composite Gauss-Legendre quadrature
split at every sign change of the heat integrand:

.. math::

    W = \oint P\,dV,\qquad Q_{\rm in} = \int_{T\,dS>0} T\,dS,\qquad
    Q_{\rm out} = -\int_{T\,dS<0} T\,dS,\qquad \eta = \frac{W}{Q_{\rm in}}.

The first law closes the cycle, W = Q_in - Q_out (reported as a residual), since
dM = T dS + V dP and M returns to its value.  Exact side values are reported
beside the integrals: on an isobar the heat is the enthalpy change,
Q = \int C_P dT = M_b - M_a (dM = T dS at fixed P), and the work P (V_b - V_a);
on an isotherm Q = T (S_b - S_a); on an adiabat Q = 0.

The Carnot efficiency between the extreme temperatures of the cycle,
eta_C = 1 - T_cold/T_hot, bounds eta (second law).

For a rectangle and C_V = 0 the efficiency is exact in terms of the enthalpy at
the corners (Johnson, Entropy 18 (2016) 120, arXiv:1602.02838): with corners
1 (top-left), 2 (top-right), 3 (bottom-right), 4 (bottom-left), traversed
1 -> 2 -> 3 -> 4 (clockwise, an engine), heat enters on the top isobar and leaves
on the bottom one, none flows on the isochores, so

.. math::

    \eta = 1 - \frac{M_3 - M_4}{M_2 - M_1},\qquad W = (P_1 - P_4)(V_2 - V_1).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from bhchem.core.results import Result
from bhchem.core.compiled import Thermodynamics
from bhchem.errors import BhchemError, StateDomainError
from bhchem.numerics import bracketed_root, brentq, isotherm_pressure, minimize_scalar
from bhchem.analysis.isobar import state_range
from bhchem.analysis.response import cv_vanishes

#: relative tolerance for detecting a side's kind from its corners
KIND_TOLERANCE = 1e-9
KINDS = ("isobar", "isochore", "isotherm", "adiabat")

_GL_X, _GL_W = np.polynomial.legendre.leggauss(24)


class CycleError(BhchemError):
    """A cycle that cannot be analysed (a side of no known kind, a corner with no state)."""


# -- states --------------------------------------------------------------------------------------
def _volume_pieces(th: Thermodynamics, xs, ok, P: float, shown: int = 3) -> str:
    """'; physical volumes at this pressure: [a, b] and [c, d]' (one interval per connected
    piece of the physical domain on the grid, at most ``shown`` listed), or '; no physical
    state at this pressure'."""
    if not np.any(ok):
        return "; no physical state at this pressure"
    edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(np.int8), [0]])))
    pieces = []
    for a, b in zip(edges[::2], edges[1::2]):
        Vs = th.V(xs[a:b], P)
        pieces.append(f"[{np.nanmin(Vs):.6g}, {np.nanmax(Vs):.6g}]")
    more = f" and {len(pieces) - shown} more" if len(pieces) > shown else ""
    return f"; physical volumes at this pressure: {' and '.join(pieces[:shown])}{more}"


def state_at(th: Thermodynamics, P: float, V: float) -> float:
    """The state variable x of the physical state with pressure P and volume V.

    Raises
    ------
    StateDomainError
        When no physical state (or more than one) has this P and V.
    """
    if not (np.isfinite(P) and P > 0 and np.isfinite(V) and V > 0):
        raise StateDomainError(f"corner (P, V) = ({P:g}, {V:g}): P and V must be positive")
    lo, hi = state_range(th, P)
    xs = np.geomspace(lo, hi, 6000)
    with np.errstate(all="ignore"):
        F = th.V(xs, P) / V - 1
    ok = th.physical(xs, P) & np.isfinite(F)
    s = np.sign(F)
    idx = np.nonzero(ok[1:] & ok[:-1] & (s[1:] * s[:-1] < 0))[0]
    roots = []
    for i in idx:  # a cell whose ends disagree with the grid's signs is "no root here"
        u = bracketed_root(lambda u: float(th.V(math.exp(u), P)) / V - 1, math.log(xs[i]),
                           math.log(xs[i + 1]), xtol=1e-15)
        if u is not None:
            roots.append(math.exp(u))
    exact = [x for x in roots if bool(th.physical(x, P))]
    if not exact:
        raise StateDomainError(f"no physical {th.family.name} state has P = {P:g} and "
                               f"V = {V:g}{_volume_pieces(th, xs, ok, P)}")
    if len(exact) > 1:
        raise StateDomainError(f"{len(exact)} physical states have P = {P:g}, V = {V:g} "
                               f"({th.derivation.state.name} = "
                               f"{', '.join(f'{x:.6g}' for x in exact)}): the corner is ambiguous")
    return exact[0]


def _solve_x(th, quantity: str, target, P, x0, max_iter: int = 60):
    """x with quantity(x, P) = target (vectorised Newton in log x from x0)."""
    x = np.asarray(x0, float).copy()
    P = np.asarray(P, float)
    with np.errstate(all="ignore"):
        for _ in range(max_iter):
            F = th.quantity(quantity, x, P) - target
            Fu = th.d(quantity, "x", x, P) * x
            step = np.clip(F / Fu, -0.5, 0.5)
            step = np.where(np.isfinite(step), step, 0.0)
            x = x * np.exp(-step)
            if np.all(np.abs(step) < 1e-15):
                break
        ok = np.abs(th.quantity(quantity, x, P) - target) <= 1e-12 * np.abs(target)
    return np.where(ok, x, np.nan)


def _solve_P(th, T, x, P0):
    """P with T(x, P) = T (the shared Newton of :func:`bhchem.numerics.isotherm_pressure`;
    NaN where it does not converge to a positive pressure)."""
    return isotherm_pressure(th, x, T, P0)


# -- sides -------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Corner:
    """A corner of the cycle: (P, V) as given, and its state."""

    index: int
    P: float
    V: float
    x: float
    T: float
    S: float
    M: float


@dataclass(frozen=True)
class Side:
    """One side of the cycle, from corner ``start`` to corner ``end``.

    Attributes
    ----------
    kind : str
        'isobar', 'isochore', 'isotherm' or 'adiabat'.
    also : tuple of str
        Other kinds the side also is (an isochore of a C_V = 0 family is an adiabat).
    work, heat, heat_in, heat_out : float
        Integrals of P dV and T dS along the side (heat_in/out: the positive part and
        minus the negative part of T dS).
    exact_work, exact_heat : float or None
        Closed forms where they exist (isobar: P dV and M_b - M_a; isochore: 0 and, for
        C_V = 0, 0; isotherm: T (S_b - S_a); adiabat: 0).
    T_min, T_max : float
        Extreme temperatures along the side.
    unstable : bool
        The path passes states with C_P < 0 or kappa_T < 0 (locally unstable).
    P_path, V_path, T_path : ndarray
        Sampled path (for figures).
    """

    start: int
    end: int
    kind: str
    also: tuple
    work: float
    heat: float
    heat_in: float
    heat_out: float
    exact_work: float | None
    exact_heat: float | None
    T_min: float
    T_max: float
    unstable: bool
    P_path: np.ndarray
    V_path: np.ndarray
    T_path: np.ndarray


def side_kind(th: Thermodynamics, a: Corner, b: Corner, tol: float = KIND_TOLERANCE):
    """(kind, also) of the side a -> b, or raise CycleError when it is none of the kinds."""
    same = {
        "isobar": abs(a.P - b.P) <= tol * max(abs(a.P), abs(b.P)),
        "isochore": abs(a.V - b.V) <= tol * max(abs(a.V), abs(b.V)),
        "isotherm": abs(a.T - b.T) <= tol * max(abs(a.T), abs(b.T)),
        "adiabat": abs(a.S - b.S) <= tol * max(abs(a.S), abs(b.S)),
    }
    if same["isobar"] and same["isochore"]:
        raise CycleError(f"corners {a.index} and {b.index} coincide (same P and V)")
    kinds = [k for k in KINDS if same[k]]
    if not kinds:
        raise CycleError(
            f"side {a.index}->{b.index} is none of isobar, isochore, isotherm, adiabat: "
            f"P {a.P:.10g} -> {b.P:.10g}, V {a.V:.10g} -> {b.V:.10g}, "
            f"T {a.T:.10g} -> {b.T:.10g}, S {a.S:.10g} -> {b.S:.10g} "
            f"(relative tolerance {tol:g}); give corners joined by one of these paths")
    return kinds[0], tuple(kinds[1:])


def _path(th, kind, a: Corner, b: Corner):
    """A function s -> (P, x, dP/ds, dx/ds) on s in [0, 1] for the side a -> b."""
    if kind in ("isobar", "isotherm"):
        ua, ub = math.log(a.x), math.log(b.x)

        def f(s):
            s = np.asarray(s, float)
            x = np.exp(ua + s * (ub - ua))
            dxds = x * (ub - ua)
            if kind == "isobar":
                P = np.full(s.shape, a.P)
                dPds = np.zeros(s.shape)
            else:
                P0 = np.exp(math.log(a.P) + s * (math.log(b.P) - math.log(a.P)))
                P = _solve_P(th, a.T, x, P0)
                dPds = -th.d("T", "x", x, P) / th.d("T", "P", x, P) * dxds
            return P, x, dPds, dxds
        return f

    def f(s):  # isochore or adiabat: parametrised by P
        s = np.asarray(s, float)
        P = a.P + s * (b.P - a.P)
        dPds = np.full(s.shape, b.P - a.P)
        x0 = np.exp(math.log(a.x) + s * (math.log(b.x) - math.log(a.x)))
        if kind == "isochore":
            x = _solve_x(th, "V", a.V, P, x0)
            dxds = -th.d("V", "P", x, P) / th.d("V", "x", x, P) * dPds
        else:
            x = _solve_x(th, "S", a.S, P, x0)
            dxds = -th.d("S", "P", x, P) / th.d("S", "x", x, P) * dPds
        return P, x, dPds, dxds
    return f


def _integrands(th, path, s):
    P, x, dPds, dxds = path(s)
    with np.errstate(all="ignore"):
        dV = th.d("V", "x", x, P) * dxds + th.d("V", "P", x, P) * dPds
        dS = th.d("S", "x", x, P) * dxds + th.d("S", "P", x, P) * dPds
        T = th.T(x, P)
    return P * dV, T * dS, T, P, x


def _gauss(fun, a, b, panels: int = 8):
    edges = np.linspace(a, b, panels + 1)
    nodes = (0.5 * (edges[1:, None] - edges[:-1, None]) * _GL_X[None, :]
             + 0.5 * (edges[1:, None] + edges[:-1, None])).ravel()
    w = (0.5 * (edges[1:, None] - edges[:-1, None]) * _GL_W[None, :]).ravel()
    vals = fun(nodes)
    return [float(np.dot(w, v)) for v in vals]


def _integrate_side(th, kind, a: Corner, b: Corner):
    path = _path(th, kind, a, b)
    s_scan = np.linspace(0.0, 1.0, 401)
    dW, dQ, T, P, x = _integrands(th, path, s_scan)
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(P)) and np.all(np.isfinite(dQ))):
        raise CycleError(f"the {kind} from corner {a.index} to {b.index} leaves the domain "
                         f"where it can be followed (no state on part of the path)")
    phys = th.physical(x, P)
    if not np.all(phys):
        raise CycleError(f"the {kind} from corner {a.index} to {b.index} passes unphysical "
                         f"states (e.g. T < 0 or a violated condition of {th.family.name})")
    # split at sign changes of the heat integrand
    scale = np.max(np.abs(dQ)) + 1e-300
    q = np.where(np.abs(dQ) <= 1e-13 * scale, 0.0, dQ)
    breaks = [0.0]
    sg = np.sign(q)
    for i in np.nonzero(sg[1:] * sg[:-1] < 0)[0]:
        g = lambda s: float(_integrands(th, path, np.array([s]))[1][0])  # noqa: E731
        try:
            breaks.append(brentq(g, s_scan[i], s_scan[i + 1], xtol=1e-15, rtol=1e-15))
        except ValueError:
            continue
    breaks.append(1.0)
    W = Qin = Qout = 0.0
    for lo, hi in zip(breaks[:-1], breaks[1:]):
        if hi <= lo:
            continue
        w_part, q_part = _gauss(lambda s: _integrands(th, path, s)[:2], lo, hi)
        W += w_part
        if q_part >= 0:
            Qin += q_part
        else:
            Qout -= q_part
    # extreme temperatures along the side (refined when interior)
    Tmin, Tmax = float(np.min(T)), float(np.max(T))
    for sign, k in ((1.0, int(np.argmin(T))), (-1.0, int(np.argmax(T)))):
        if 0 < k < len(s_scan) - 1:
            res = minimize_scalar(lambda s: sign * float(_integrands(th, path, np.array([s]))[2][0]),
                                  bounds=(s_scan[k - 1], s_scan[k + 1]), method="bounded",
                                  options={"xatol": 1e-12})
            val = sign * res.fun
            Tmin, Tmax = (min(Tmin, val), Tmax) if sign > 0 else (Tmin, max(Tmax, val))
    with np.errstate(all="ignore"):
        CP = th.quantity("C_P", x, P)
        kT = th.quantity("kappa_T", x, P)
    unstable = bool(np.any(CP < 0) or np.any(kT < 0))
    V_path = th.V(x, P)
    return W, Qin, Qout, Tmin, Tmax, unstable, P, V_path, T


def _exact(th, kind, also, a: Corner, b: Corner):
    if kind == "isobar":
        return a.P * (b.V - a.V), b.M - a.M
    if kind == "isochore":
        return 0.0, (0.0 if ("adiabat" in also or cv_vanishes(th)) else None)
    if kind == "isotherm":
        return None, a.T * (b.S - a.S)
    return None, 0.0  # adiabat


# -- the cycle ------------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class EngineResult(Result):
    """A heat engine cycle, analysed.

    Attributes
    ----------
    corners : tuple of Corner
    sides : tuple of Side
    work, heat_in, heat_out, efficiency : float
        W = closed integral of P dV, Q_in, Q_out, eta = W / Q_in.
    carnot : float
        1 - T_cold / T_hot.
    T_hot, T_cold : float
        Extreme temperatures on the cycle.
    direction : str
        'clockwise' (an engine, W > 0) or 'counter-clockwise' (W < 0: a refrigerator).
    first_law_residual : float
        |W - (Q_in - Q_out)| / Q_in.
    exact : dict or None
        Johnson's rectangle formula for C_V = 0 families (labels, M at the corners,
        efficiency, heat_in, heat_out, work, and its difference from the integral).
    notes : tuple of str
    """

    family: str
    parameters: dict
    corners: tuple
    sides: tuple
    work: float
    heat_in: float
    heat_out: float
    efficiency: float
    carnot: float
    T_hot: float
    T_cold: float
    direction: str
    first_law_residual: float
    exact: dict | None
    notes: tuple = field(default_factory=tuple)


def analyze_cycle(th: Thermodynamics, corners) -> EngineResult:
    """Work, heats, efficiency and Carnot bound of the cycle through ``corners``.

    Parameters
    ----------
    th : Thermodynamics
    corners : sequence of (P, V)
        At least three corners, in the order of traversal; the cycle closes from the
        last back to the first (a repeated first corner at the end is dropped).

    Raises
    ------
    CycleError, StateDomainError
        A side of no known kind, a corner with no (or no unique) physical state, a
        side that leaves the physical domain.
    """
    pts = [(float(p), float(v)) for p, v in corners]
    if len(pts) >= 2 and pts[0] == pts[-1]:
        pts = pts[:-1]
    if len(pts) < 3:
        raise CycleError(f"a cycle needs at least three corners, got {len(pts)}")
    cs = []
    for i, (P, V) in enumerate(pts, start=1):
        x = state_at(th, P, V)
        cs.append(Corner(i, P, V, x, float(th.T(x, P)), float(th.S(x, P)), float(th.M(x, P))))
    sides = []
    notes = []
    for a, b in zip(cs, cs[1:] + cs[:1]):
        kind, also = side_kind(th, a, b)
        W, Qin, Qout, Tmin, Tmax, unstable, Pp, Vp, Tp = _integrate_side(th, kind, a, b)
        ew, eq = _exact(th, kind, also, a, b)
        sides.append(Side(a.index, b.index, kind, also, W, Qin - Qout, Qin, Qout, ew, eq,
                          Tmin, Tmax, unstable, Pp, Vp, Tp))
        if unstable:
            notes.append(f"side {a.index}->{b.index} ({kind}) passes locally unstable states "
                         f"(C_P < 0 or kappa_T < 0)")
    W = sum(s.work for s in sides)
    Qin = sum(s.heat_in for s in sides)
    Qout = sum(s.heat_out for s in sides)
    T_hot = max(s.T_max for s in sides)
    T_cold = min(s.T_min for s in sides)
    eta = W / Qin if Qin > 0 else float("nan")
    direction = "clockwise" if W > 0 else "counter-clockwise"
    if W <= 0:
        notes.append("the cycle runs counter-clockwise in the P-V plane (W < 0): a refrigerator; "
                     "list the corners clockwise for an engine")
    resid = abs(W - (Qin - Qout)) / (abs(Qin) + 1e-300)
    exact = _rectangle_formula(th, cs, sides, eta) if W > 0 else None
    if exact is None and len(cs) == 4 and all(s.kind in ("isobar", "isochore") for s in sides) \
            and not cv_vanishes(th):
        notes.append("C_V != 0 for this family: heat flows on the isochores too, so Johnson's "
                     "corner-mass formula does not apply; the efficiency is from the integrals")
    return EngineResult(family=th.family.name, parameters=dict(th.values), corners=tuple(cs),
                        sides=tuple(sides), work=W, heat_in=Qin, heat_out=Qout, efficiency=eta,
                        carnot=1.0 - T_cold / T_hot, T_hot=T_hot, T_cold=T_cold,
                        direction=direction, first_law_residual=resid, exact=exact,
                        notes=tuple(notes))


def _rectangle_formula(th, cs, sides, eta_numeric):
    """Johnson's exact efficiency for a clockwise rectangle of a C_V = 0 family."""
    if len(cs) != 4 or not cv_vanishes(th):
        return None
    if [s.kind for s in sides] not in (["isobar", "isochore"] * 2, ["isochore", "isobar"] * 2):
        return None
    Ps = sorted({c.P for c in cs})
    Vs = sorted({c.V for c in cs})
    if len(Ps) != 2 or len(Vs) != 2:
        return None
    at = {(c.P, c.V): c for c in cs}
    c1, c2 = at[(Ps[1], Vs[0])], at[(Ps[1], Vs[1])]      # top-left, top-right
    c3, c4 = at[(Ps[0], Vs[1])], at[(Ps[0], Vs[0])]      # bottom-right, bottom-left
    Q_H = c2.M - c1.M
    Q_C = c3.M - c4.M
    eta = 1.0 - Q_C / Q_H
    return {"formula": "eta = 1 - (M3 - M4)/(M2 - M1) (Johnson, Entropy 18 (2016) 120)",
            "labels": {"1": "top-left", "2": "top-right", "3": "bottom-right",
                       "4": "bottom-left"},
            "corners": {"1": c1.index, "2": c2.index, "3": c3.index, "4": c4.index},
            "M": {"1": c1.M, "2": c2.M, "3": c3.M, "4": c4.M},
            "efficiency": eta, "heat_in": Q_H, "heat_out": Q_C,
            "work": (c1.P - c4.P) * (c2.V - c1.V),
            "difference_from_integral": abs(eta - eta_numeric)}


# Parsing the --cycle text lives in bhchem.cli.analyses (parse_cycle), the text and JSON
# in bhchem.present.analysis_text, the figure in bhchem.present.analysis_plots.
