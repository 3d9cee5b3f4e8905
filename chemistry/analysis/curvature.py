r"""Ruppeiner geometry: the thermodynamic curvature scalar and the normalised curvature R_N.

Metric.  The Ruppeiner line element (fluctuations of internal energy U = M - P V and
volume at fixed charges), written in any coordinates, is

.. math::

    dl^2 = \frac{1}{T}\left(dT\,dS - dP\,dV\right)
         = \frac{C_V}{T^2}\,dT^2 - \frac{(\partial_V P)_T}{T}\,dV^2
         \quad\text{in } (T, V).

In the family's (x, P) coordinates (subscripts: partial derivatives) its components are

.. math::

    g_{xx} = \frac{T_x S_x}{T},\quad
    g_{xP} = \frac{T_x S_P + T_P S_x - V_x}{2T},\quad
    g_{PP} = \frac{T_P S_P - V_P}{T},

and the curvature scalar follows from Brioschi's formula for the Gaussian curvature K
of a 2D metric.  Sign convention (Ruppeiner, Rev. Mod. Phys. 67 (1995) 605, and the
black hole microstructure literature): **R = -2K**, so that the 2-sphere has R < 0, the
ideal gas R = 0, and R < 0 (R > 0) signals dominant attractive (repulsive) interactions.

C_V = 0.  For static black holes S and V are functions of one variable, the metric is
degenerate (g_xP = g_PP = 0 by the Maxwell relation T_P S_x = V_x) and R diverges like
1/C_V.  Wei, Liu & Mann, PRL 123 (2019) 071103, arXiv:1906.10840 (WLM) treat C_V in the
(T, V) form above as a small constant and define the normalised curvature
R_N = R C_V in the limit C_V -> 0.  For the diagonal metric diag(c/T^2, -P_V/T) with c
constant the curvature is *exactly* proportional to 1/c: with b = -P_V/T,
K = -(T/(2 c sqrt(b))) d/dT (T b_T / sqrt(b)) (the V-derivative term vanishes since
g_TT does not depend on V), which gives the closed form

.. math::

    R_N = \lim_{C_V\to 0} R\,C_V
        = \frac{P_V^2 - T^2 P_{TV}^2 + 2T^2 P_V\,P_{TTV}}{2 P_V^2},

with P_V = (dP/dV)_T, P_TV = d^2P/dTdV, P_TTV = d^3P/dT^2dV.  (The exact printed
form of WLM's equation was not reachable for verification; this expression is derived
here.  For P linear in T, P = T a(V) - b(V), it reduces to
R_N = s (s - 2T) / (2 (T - s)^2) with s = b'/a' the spinodal temperature at that V, so
R_N changes sign at T = s/2, half the spinodal temperature, as WLM report (from
memory).)  The (T, V) derivatives are taken in the (x, P) coordinates with

.. math::

    \partial_T\big|_V = \frac{V_P\,\partial_x - V_x\,\partial_P}{J},\quad
    \partial_V\big|_T = \frac{T_x\,\partial_P - T_P\,\partial_x}{J},\quad
    J = T_x V_P - T_P V_x,

symbolically, then compiled.  For families with C_V != 0 this module reports R itself
and R_N = R C_V (WLM's definition).

Critical behaviour.  Along the coexisting branches below the critical point
R_N (1 - T/T_c)^2 -> -1/8 for both branches, and along the critical isochore above it
R_N (T/T_c - 1)^2 -> -1/2 (mean-field; reported for charged AdS in any d by Hosseini
Mansoori, Rafiee & Wei, arXiv:2007.03255, abstract verified; WLM for d = 4).  The
approach is slow, R_N t^2 = A + B |t|^(1/2) + C |t| + ..., so the amplitude A is
*fitted* over a range of t, not read at one point.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import sympy as sp

from bhchem.core.results import Result
from bhchem.core.identity_cache import MISSING, IdentityCache
from bhchem.declare import symbols as sy
from bhchem.core.compiled import Thermodynamics, compile_expression
from bhchem.analysis.critical import loop_side
from bhchem.errors import BhchemError
from bhchem.analysis.coexistence import coexistence_near_critical
from bhchem.analysis.critical import find_critical_points
from bhchem.numerics import isotherm_pressure, spinodal_pressure
from bhchem.analysis.response import cv_vanishes, isotherm_guess
from bhchem.analysis.coexistence_line import coexistence_curve

CONVENTION = {
    "sign": "R = -2K (K the Gaussian curvature of the Ruppeiner metric): the 2-sphere has "
            "R < 0, the ideal gas R = 0; R < 0 attractive, R > 0 repulsive "
            "(Ruppeiner, RMP 67 (1995) 605; Wei, Liu & Mann, PRL 123 (2019) 071103)",
    "metric": "dl^2 = (dT dS - dP dV)/T = (C_V/T^2) dT^2 - ((dP/dV)_T/T) dV^2",
    "normalised": "R_N = R C_V; for C_V = 0 families the limit C_V -> 0 at constant C_V: "
                  "R_N = [P_V^2 - T^2 P_TV^2 + 2 T^2 P_V P_TTV] / (2 P_V^2)",
    "amplitude": "critical amplitude A = lim R_N (1 - T/T_c)^2 along each coexisting "
                 "branch, fitted as R_N t^2 = A + B t^(1/2) + C t + D t^(3/2) + E t^2 over "
                 "fit_range of t = 1 - T/T_c (T the coexistence temperature)",
}

#: compiled curvature expressions kept, by derivation (identity); the oldest dropped beyond 64
_EXPRESSIONS = IdentityCache(64)


def _expressions(th: Thermodynamics) -> dict:
    """Symbolic R_N (C_V = 0) or R (C_V != 0) of the derivation, compiled (cached)."""
    der = th.derivation
    hit = _EXPRESSIONS.get(der)
    if hit is not MISSING:
        return hit
    x, P = der.state, sy.P
    q = der.quantities
    T, S, V = q["T"], q["S"], q["V"]
    out = {}
    if cv_vanishes(th):
        Tx, TP, Vx, VP = (sp.diff(T, x), sp.diff(T, P), sp.diff(V, x), sp.diff(V, P))
        J = Tx * VP - TP * Vx

        def D_T(g):
            return (VP * sp.diff(g, x) - Vx * sp.diff(g, P)) / J

        P_V = Tx / J                  # D_V applied to P itself: (T_x * 1 - T_P * 0)/J
        P_TV = D_T(P_V)
        P_TTV = D_T(P_TV)
        RN = (P_V**2 - T**2 * P_TV**2 + 2 * T**2 * P_V * P_TTV) / (2 * P_V**2)
        out["R_N"] = compile_expression(der.arguments, RN)
    else:
        Tx, TP = sp.diff(T, x), sp.diff(T, P)
        Sx, SP = sp.diff(S, x), sp.diff(S, P)
        Vx, VP = sp.diff(V, x), sp.diff(V, P)
        E = Tx * Sx / T
        F = (Tx * SP + TP * Sx - Vx) / (2 * T)
        G = (TP * SP - VP) / T
        parts = {"E": E, "F": F, "G": G,
                 "Eu": sp.diff(E, x), "Ev": sp.diff(E, P), "Fu": sp.diff(F, x),
                 "Fv": sp.diff(F, P), "Gu": sp.diff(G, x), "Gv": sp.diff(G, P),
                 "Evv": sp.diff(E, P, 2), "Fuv": sp.diff(F, x, P), "Guu": sp.diff(G, x, 2)}
        # each part compiled on its own: one Brioschi expression would be huge
        out["metric"] = {k: compile_expression(der.arguments, e) for k, e in parts.items()}
    return _EXPRESSIONS.put(der, out)


def _call(th, f, x, P):
    with np.errstate(all="ignore"):
        return np.asarray(f(np.asarray(x, float), np.asarray(P, float), *th.parameter_values),
                          dtype=float)


def ruppeiner_scalar(th: Thermodynamics, x, P) -> np.ndarray:
    """The Ruppeiner curvature scalar R (convention R = -2K) at states (x, P).

    Raises
    ------
    BhchemError
        For families with C_V = 0 identically (the metric is degenerate and R infinite);
        use :func:`normalised_curvature`.
    """
    if cv_vanishes(th):
        raise BhchemError(f"{th.family.name}: C_V = 0 identically, so the Ruppeiner metric is "
                          f"degenerate and R diverges; use the normalised curvature R_N")
    f = _expressions(th)["metric"]
    g = {k: _call(th, fk, x, P) for k, fk in f.items()}
    return _brioschi_R(g)


def _brioschi_R(g: dict) -> np.ndarray:
    """R = -2K from the metric components and their derivatives (Brioschi's formula)."""
    E, F, G = g["E"], g["F"], g["G"]
    a11 = -g["Evv"] / 2 + g["Fuv"] - g["Guu"] / 2
    a12, a13 = g["Eu"] / 2, g["Fu"] - g["Ev"] / 2
    a21, a31 = g["Fv"] - g["Gu"] / 2, g["Gv"] / 2
    det1 = (a11 * (E * G - F * F) - a12 * (a21 * G - F * a31) + a13 * (a21 * F - E * a31))
    b12, b13 = g["Ev"] / 2, g["Gu"] / 2
    det2 = -b12 * (b12 * G - F * b13) + b13 * (b12 * F - E * b13)
    with np.errstate(all="ignore"):
        K = (det1 - det2) / (E * G - F * F) ** 2
    return -2.0 * K


def normalised_curvature(th: Thermodynamics, x, P) -> np.ndarray:
    """R_N at states (x, P): the C_V -> 0 limit of R C_V for C_V = 0 families, else R C_V."""
    e = _expressions(th)
    if "R_N" in e:
        return _call(th, e["R_N"], x, P)
    return ruppeiner_scalar(th, x, P) * th.quantity("C_V", x, P)


# -- critical amplitude -------------------------------------------------------------------------
@dataclass(frozen=True)
class AmplitudeFit:
    """Fit R_N t^2 = A + B t^(1/2) + C t + D t^(3/2) + E t^2 along one coexisting branch."""

    branch: str
    amplitude: float
    coefficients: tuple
    t: np.ndarray
    values: np.ndarray
    max_residual: float


@dataclass(frozen=True, repr=False)
class CriticalAmplitude(Result):
    """Critical amplitudes of R_N along the coexisting branches below T_c.

    Attributes
    ----------
    small, large : AmplitudeFit
    fit_range : (float, float)
        Range of t = 1 - T/T_c used in the fit.
    critical_point : CriticalPoint
    """

    small: AmplitudeFit
    large: AmplitudeFit
    fit_range: tuple
    critical_point: object


def critical_amplitude(th: Thermodynamics, cp=None, t_range=(1e-5, 1e-2), n: int = 40,
                       max_residual: float = 1e-6) -> CriticalAmplitude:
    """Fit the approach of R_N (1 - T/T_c)^2 along both coexisting branches.

    The coexisting states come from the near-critical solver of
    :mod:`bhchem.analysis.coexistence` at pressures just off P_c on the side where the
    isobars have a loop; t = 1 - T/T_c with T the coexistence temperature.  Below
    t ~ 1e-5 the coexisting states are limited by double precision (the error of
    R_N t^2 grows like eps/t^(3/2): ~4e-8 at t = 1e-5, ~5e-6 at 1e-6), so the default
    range starts there; five terms of the expansion keep the truncation error below
    that noise up to t = 1e-2 for charged AdS (measured |A + 1/8| ~ 5e-9).  When the fit
    residual exceeds ``max_residual`` (larger higher-order terms, e.g. near another
    critical point) the top of the range is halved until it does not; the range used
    and the residuals are reported.
    """
    if cp is None:
        cps = [c for c in find_critical_points(th).physical if c.kind == "standard"]
        if not cps:
            raise BhchemError(f"{th.family.name} has no standard critical point at these "
                              f"parameters: no critical amplitude")
        cp = cps[0]
    side = loop_side(th, cp)
    rows = []
    # pressures whose coexistence temperatures cover t_range (t ~ |1 - P/P_c| up to O(1))
    for eps in np.geomspace(t_range[0] * 0.2, t_range[1] * 5, 4 * n):
        P = cp.P * (1 + side * eps)
        res = coexistence_near_critical(th, cp.x, cp.P, P)
        if res is None:
            continue
        T, x1, x2 = res
        t = 1 - T / cp.T
        if not (t_range[0] <= t <= t_range[1]):
            continue
        rn = normalised_curvature(th, np.array([x1, x2]), P)
        rows.append((t, float(rn[0]) * t * t, float(rn[1]) * t * t))
    if len(rows) < 8:
        raise BhchemError(f"{th.family.name}: too few coexistence states near the critical "
                          f"point for a fit ({len(rows)})")
    rows.sort()
    t_all = np.array([r[0] for r in rows])
    t_hi = t_range[1]
    while True:
        sel = t_all <= t_hi
        t = t_all[sel]
        fits = []
        for k, name in ((1, "small"), (2, "large")):
            y = np.array([r[k] for r in rows])[sel]
            A = np.column_stack([t ** (kk / 2) for kk in range(5)])
            coef, *_ = np.linalg.lstsq(A, y, rcond=None)
            resid = float(np.max(np.abs(A @ coef - y)))
            fits.append(AmplitudeFit(name, float(coef[0]), tuple(float(c) for c in coef), t, y,
                                     resid))
        # shrink the range while the five-term expansion does not fit to the noise level
        if max(f.max_residual for f in fits) <= max_residual or t_hi / t_range[0] < 60 \
                or np.sum(t_all <= t_hi / 2) < 12:
            break
        t_hi /= 2
    return CriticalAmplitude(small=fits[0], large=fits[1],
                             fit_range=(float(t[0]), float(t[-1])), critical_point=cp)


def isochore_amplitude(th: Thermodynamics, cp, t_range=(1e-5, 1e-2), n: int = 40) -> float:
    """Fitted lim R_N (T/T_c - 1)^2 along the critical isochore above T_c (x = x_c fixed,
    P from T(x_c, P) = T); mean field: -1/2."""
    ts = np.geomspace(*t_range, n)
    ys = []
    for t in ts:
        P = float(isotherm_pressure(th, np.array([cp.x]), cp.T * (1 + t), cp.P)[0])
        ys.append(float(normalised_curvature(th, np.array([cp.x]), P)[0]) * t * t)
    A = np.column_stack([ts ** (k / 2) for k in range(5)])
    coef, *_ = np.linalg.lstsq(A, np.array(ys), rcond=None)
    return float(coef[0])


# -- sign map -------------------------------------------------------------------------------------
@dataclass(repr=False)
class CurvatureMap(Result):
    """R_N on a grid of the T-v plane, with the coexistence and spinodal curves.

    Attributes
    ----------
    v, T : ndarray (1D)
        Grid axes (v the specific volume, or the state variable when the family has none).
    R_N : ndarray (len(T), len(v))
        NaN where no physical state with P > 0 exists.
    coexistence : ndarray (k, 3)
        Rows (T, v_small, v_large).
    spinodal : ndarray (m, 2)
        Rows (v, T) of the spinodal curve (T_x = 0).
    critical_point : CriticalPoint or None
    """

    v: np.ndarray
    T: np.ndarray
    R_N: np.ndarray
    coexistence: np.ndarray
    spinodal: np.ndarray
    critical_point: object
    amplitude: CriticalAmplitude | None = None
    notes: list = field(default_factory=list)


def _v_of(th, x, P):
    return th.v(x, P) if th.has("v") else np.asarray(x, float)


def spinodal_curve(th: Thermodynamics, xs) -> np.ndarray:
    """Rows (x, P, T) of states with T_x = 0 (Newton in P at each x), P > 0 only."""
    P = spinodal_pressure(th, xs, isotherm_guess(th), 60, 1e-14)
    with np.errstate(all="ignore"):
        T = th.T(xs, P)
        ok = (P > 0) & np.isfinite(T) & (np.abs(th.d("T", "x", xs, P) * xs) <= 1e-10 * np.abs(T))
        ok &= th.physical(xs, np.where(P > 0, P, 1.0))
    return np.column_stack([xs[ok], P[ok], T[ok]])


def curvature_map(th: Thermodynamics, nx: int = 260, nT: int = 220, with_amplitude: bool = True) -> CurvatureMap:
    """R_N over the T-v plane around the critical point (or the family's typical state)."""
    cps = [c for c in find_critical_points(th).physical if c.kind == "standard"]
    cp = cps[0] if cps else None
    notes = []
    if cp is not None:
        x0, T0, P0 = cp.x, cp.T, cp.P
    else:
        x0, P0 = th.typical_state(), th.typical_pressure()
        T0 = float(th.T(x0, P0))
        notes.append("no standard critical point: the map is centred on the family's typical state")
    span = 12.0 if th.derivation.state.name == "S" else 3.5
    xs = x0 * np.geomspace(1 / span, span, nx)
    Ts = T0 * np.linspace(0.05, 2.0, nT)
    X, TT = np.meshgrid(xs, Ts)
    P = np.empty_like(X)
    for i, T in enumerate(Ts):
        P[i] = isotherm_pressure(th, xs, T, P0)
    ok = np.isfinite(P) & (P > 0)
    ok &= th.physical(X, np.where(ok, P, 1.0))
    R = np.where(ok, normalised_curvature(th, X, np.where(ok, P, 1.0)), np.nan)
    v = _v_of(th, xs, P0)
    sp_rows = spinodal_curve(th, xs)
    spin = np.column_stack([_v_of(th, sp_rows[:, 0], sp_rows[:, 1]), sp_rows[:, 2]]) \
        if len(sp_rows) else np.zeros((0, 2))
    coex = np.zeros((0, 3))
    amp = None
    if cp is not None:
        coex = _coexistence_rows(th, cp)
        if with_amplitude:
            amp = critical_amplitude(th, cp)
    return CurvatureMap(v=v, T=Ts, R_N=R, coexistence=coex, spinodal=spin, critical_point=cp,
                        amplitude=amp, notes=notes)


def _coexistence_rows(th, cp, n: int = 60) -> np.ndarray:
    side = loop_side(th, cp)
    eps = np.unique(np.concatenate([np.geomspace(1e-6, 0.995, n), np.linspace(0.02, 0.995, n)]))
    Ps = cp.P * (1 + side * eps)
    Ps = Ps[Ps > 0]
    curve = coexistence_curve(th, Ps, critical_point=cp)
    rows = [(p.T, float(_v_of(th, p.x1, p.P)), float(_v_of(th, p.x2, p.P))) for p in curve.points]
    rows.append((cp.T, float(_v_of(th, cp.x, cp.P)), float(_v_of(th, cp.x, cp.P))))
    return np.array(sorted(rows))


# The text and JSON of ``bhchem curvature`` live in bhchem.present.analysis_text, the sign
# map figure in bhchem.present.analysis_plots.
