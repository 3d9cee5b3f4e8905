r"""Coexistence of two black hole phases at fixed pressure, and first-order lines.

At fixed P two states x_1 < x_2 coexist when

.. math:: T(x_1, P) = T(x_2, P), \qquad G(x_1, P) = G(x_2, P).

Solver.  Newton's method in (log x_1, log x_2) with the exact Jacobian, which
uses dG = -S dT at fixed P (so G_x = -S T_x):

.. math:: J = \begin{pmatrix} T_x(x_1) & -T_x(x_2) \\ -S_1 T_x(x_1) & S_2 T_x(x_2)\end{pmatrix},
          \qquad \det J = T_x(x_1) T_x(x_2) (S_2 - S_1),

vectorised over many pressures at once.  Conditioning near a critical point: the
coexistence temperature is pinned between the two spinodal temperatures, whose
gap closes like |1 - P/P_c|^(3/2); the near-critical bracketing solver
(:func:`coexistence_near_critical`) predicts the spinodals from the local
expansion T_x ~ T_xP dP + T_xxx (x - x_m)^2 / 2 about the inflection x_m, finds
them by Brent's method, and solves G_2(T) = G_1(T) between them, so T stays good
to ~1e-15 relative however close to the critical point (x_1, x_2 themselves are
good to ~eps / |1 - P/P_c|^(3/2), which is intrinsic to double precision).

Checks reported at every point: equal T, P and G; Maxwell's equal-area law in
the P-V plane (V the thermodynamic volume conjugate to P; it follows from
G_2 - G_1 = \int V dP = 0 on the isotherm; in the P-v plane it holds only when v
is proportional to V, e.g. for a fluid); the Clausius-Clapeyron slope
dP/dT = Delta S / Delta V against the slope of the computed line; latent heat
L = T Delta S; Delta v.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass, replace

import numpy as np

from bhchem.core.results import Result
from bhchem.core.compiled import Thermodynamics
from bhchem.numerics import brentq, isotherm_pressure


@dataclass(frozen=True, repr=False)
class CoexistencePoint(Result):
    """Two coexisting states at one pressure, with their checks."""

    P: float
    T: float
    x1: float
    x2: float
    v1: float | None
    v2: float | None
    S1: float
    S2: float
    G: float
    latent_heat: float
    delta_v: float | None
    residual_T: float
    residual_G: float
    equal_area_residual: float | None = None
    clapeyron_residual: float | None = None

    def to_dict(self) -> dict:
        return asdict(self)


# -- vectorised Newton ----------------------------------------------------------------
def coexistence_newton(th: Thermodynamics, P, x1, x2, max_iter: int = 40):
    """Solve T(x1) = T(x2), G(x1) = G(x2) at each pressure (arrays broadcast).

    Returns
    -------
    x1, x2 : arrays
    converged : bool array
        |Delta T|/T and |Delta G|/(|G| + T S) below 1e-13, and x1 < x2 distinct.
    """
    P = np.asarray(P, float)
    u1, u2 = np.log(np.asarray(x1, float)) + 0 * P, np.log(np.asarray(x2, float)) + 0 * P
    for _ in range(max_iter):
        a, b = np.exp(u1), np.exp(u2)
        T1, T2 = th.T(a, P), th.T(b, P)
        Tx1, Tx2 = th.d("T", "x", a, P) * a, th.d("T", "x", b, P) * b  # d/d log x
        S1, S2 = th.S(a, P), th.S(b, P)
        G1, G2 = th.G(a, P), th.G(b, P)
        F1 = T1 - T2
        F2 = G1 - G2
        # J in (u1, u2): dF1 = Tx1 du1 - Tx2 du2 ; dF2 = -S1 Tx1 du1 + S2 Tx2 du2
        det = Tx1 * Tx2 * (S2 - S1)
        with np.errstate(all="ignore"):
            du1 = -(S2 * Tx2 * F1 + Tx2 * F2) / det
            du2 = -(S1 * Tx1 * F1 + Tx1 * F2) / det
        du1 = np.nan_to_num(du1)
        du2 = np.nan_to_num(du2)
        lim = np.maximum(np.abs(du1), np.abs(du2))
        scale = np.where(lim > 0.2, 0.2 / np.where(lim > 0, lim, 1), 1.0)
        u1, u2 = u1 + scale * du1, u2 + scale * du2
        if np.all(lim < 1e-15):
            break
    a, b = np.exp(u1), np.exp(u2)
    T1, T2 = th.T(a, P), th.T(b, P)
    G1, G2 = th.G(a, P), th.G(b, P)
    rT = np.abs(T1 - T2) / np.abs(T1)
    rG = np.abs(G1 - G2) / (np.abs(th.M(a, P)) + np.abs(th.M(b, P)) + np.abs(T1 * th.S(a, P))
                            + np.abs(T2 * th.S(b, P)) + 1e-300)
    # a coexisting pair is two distinct, locally stable states (the trivial solution
    # x1 = x2 and pairs on unstable branches also solve the equations)
    with np.errstate(all="ignore"):
        stable = (th.quantity("C_P", a, P) > 0) & (th.quantity("C_P", b, P) > 0)
    ok = (rT < 1e-13) & (rG < 1e-13) & (b > a * (1 + 1e-6)) & np.isfinite(rT) & stable
    return a, b, ok


# -- near a critical point --------------------------------------------------------------
def coexistence_near_critical(th: Thermodynamics, x_c: float, P_c: float, P: float):
    """(T, x1, x2) on the isobar P close to a critical point (x_c, P_c), or None.

    See the module docstring for why this stays accurate as the states merge.
    """
    dP = P - P_c
    # inflection of the isobar near x_c: T_xx(x_m, P) = 0 (Newton from x_c)
    x_m = x_c
    for _ in range(50):
        Txx = float(th.d("T", "xx", x_m, P))
        Txxx = float(th.d("T", "xxx", x_m, P))
        if Txxx == 0:
            break
        step = Txx / Txxx
        x_m -= step
        if abs(step) < 1e-16 * x_m:
            break
    TxP = float(th.d("T", "xP", x_c, P_c))
    Txxx = float(th.d("T", "xxx", x_c, P_c))
    w2 = -2 * TxP * dP / Txxx
    if not (w2 > 0):
        return None
    w = math.sqrt(w2)
    fx = lambda z: float(th.d("T", "x", z, P))  # noqa: E731

    def bracket(lo, hi):
        for _ in range(40):
            if fx(lo) * fx(hi) < 0:
                return lo, hi
            lo, hi = x_m - 1.5 * (x_m - lo), x_m + 1.5 * (hi - x_m)
        return None

    left = None
    k = 3.0
    while left is None and k < 100:
        lo = x_m - k * w
        if lo <= 0:
            return None
        if fx(lo) * fx(x_m) < 0 and fx(x_m + k * w) * fx(x_m) < 0:
            left = (lo, x_m)
            right = (x_m, x_m + k * w)
        k *= 1.7
    if left is None:
        return None
    xa = brentq(fx, *left, xtol=1e-16 * x_m, rtol=1e-15)
    xb = brentq(fx, *right, xtol=1e-16 * x_m, rtol=1e-15)
    Ta, Tb = float(th.T(xa, P)), float(th.T(xb, P))
    far_lo, far_hi = x_m - 4 * (x_m - xa), x_m + 4 * (xb - x_m)

    def root(T, lo, hi):
        f = lambda z: float(th.T(z, P)) - T  # noqa: E731
        return brentq(f, lo, hi, xtol=1e-16 * x_m, rtol=1e-15)

    def dG(T):
        x1 = root(T, far_lo, xa)
        x2 = root(T, xb, far_hi)
        return float(th.G(x2, P) - th.G(x1, P)), x1, x2

    Tlo, Thi = min(Ta, Tb), max(Ta, Tb)
    try:
        g_lo, g_hi = dG(Tlo)[0], dG(Thi)[0]
        if g_lo * g_hi > 0:
            T = Tlo if abs(g_lo) < abs(g_hi) else Thi
        else:
            T = brentq(lambda t: dG(t)[0], Tlo, Thi, xtol=1e-17 * Thi, rtol=1e-15)
    except ValueError:
        return None
    _, x1, x2 = dG(T)
    return T, x1, x2


# -- checks -------------------------------------------------------------------------------
_GL_X, _GL_W = np.polynomial.legendre.leggauss(64)


def equal_area_residual(th: Thermodynamics, T: float, P: float, x1: float, x2: float) -> float:
    """|int P dV - P (V2 - V1)| / (P |V2 - V1|) along the isotherm.

    V is the thermodynamic volume; along the isotherm V = V(x, P(x)).  Composite
    Gauss-Legendre in log x (8 panels x 64 nodes), since x2/x1 can span decades.
    """
    edges = np.linspace(math.log(x1), math.log(x2), 9)
    area = 0.0
    for ua, ub in zip(edges[:-1], edges[1:]):
        us = 0.5 * (ub - ua) * _GL_X + 0.5 * (ua + ub)
        xs = np.exp(us)
        Ps = isotherm_pressure(th, xs, T, P, allow_negative=True)
        # dV/dx along the isotherm = V_x + V_P dP/dx, with dP/dx = -T_x / T_P
        Vx = th.d("V", "x", xs, Ps)
        VP = th.d("V", "P", xs, Ps)
        dPdx = -th.d("T", "x", xs, Ps) / th.d("T", "P", xs, Ps)
        integrand = Ps * (Vx + VP * dPdx) * xs
        area += 0.5 * (ub - ua) * float(np.dot(_GL_W, integrand))
    dV = float(th.V(x2, P) - th.V(x1, P))
    return abs(area - P * dV) / (abs(P * dV) + 1e-300)


def clapeyron_residual(th: Thermodynamics, P: float, T: float, x1: float, x2: float,
                       step: float = 1e-3) -> float:
    """|dP/dT - Delta S/Delta V| / |Delta S/Delta V|, with dP/dT of the computed line from
    four nearby solves (Richardson-extrapolated central differences, error O(h^4)) at
    h = ``step`` P.  Near the end of a line (where a branch stops at its spinodal, the line
    T(P) has a (P - P_end)^(3/2) term) the step must be a small fraction of the distance to
    the end; :func:`make_point` takes it as ``clapeyron_step``."""
    h = step * P
    Ps = np.array([P - h, P + h, P - h / 2, P + h / 2])
    a, b, ok = coexistence_newton(th, Ps, np.full(4, x1), np.full(4, x2))
    if not np.all(ok):
        return float("nan")
    Tl = th.T(a, Ps)
    d1 = (Tl[1] - Tl[0]) / (2 * h)
    d2 = (Tl[3] - Tl[2]) / h
    slope = 1.0 / ((4 * d2 - d1) / 3)
    dS = float(th.S(x2, P) - th.S(x1, P))
    dV = float(th.V(x2, P) - th.V(x1, P))
    ref = dS / dV
    return abs(slope - ref) / abs(ref)


def make_point(th: Thermodynamics, P: float, x1: float, x2: float, checks: bool = True,
               clapeyron_step: float = 1e-3) -> CoexistencePoint:
    """Assemble a checked coexistence point from a solved pair (``clapeyron_step``: the
    relative pressure step of the Clausius-Clapeyron check, see :func:`clapeyron_residual`;
    None: no Clapeyron check, e.g. where no step both stays on the line and beats round-off)."""
    T1, T2 = float(th.T(x1, P)), float(th.T(x2, P))
    G1, G2 = float(th.G(x1, P)), float(th.G(x2, P))
    S1, S2 = float(th.S(x1, P)), float(th.S(x2, P))
    v1 = float(th.v(x1, P)) if th.has("v") else None
    v2 = float(th.v(x2, P)) if th.has("v") else None
    T = 0.5 * (T1 + T2)
    pt = CoexistencePoint(
        P=float(P), T=T, x1=float(x1), x2=float(x2), v1=v1, v2=v2, S1=S1, S2=S2,
        G=0.5 * (G1 + G2), latent_heat=T * (S2 - S1),
        delta_v=None if v1 is None else v2 - v1,
        residual_T=abs(T1 - T2) / abs(T),
        # relative to the terms G = M - T S is computed from (both states)
        residual_G=abs(G1 - G2) / (abs(float(th.M(x1, P))) + abs(float(th.M(x2, P)))
                                   + abs(T * S1) + abs(T * S2) + 1e-300))
    if checks:
        pt = replace(pt, equal_area_residual=equal_area_residual(th, T, P, x1, x2))
        if clapeyron_step is not None:
            pt = replace(pt, clapeyron_residual=clapeyron_residual(th, P, T, x1, x2,
                                                                   clapeyron_step))
    return pt
