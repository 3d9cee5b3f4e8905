"""Shared numerical kernels of the analyses (one implementation, one tolerance each).

* :func:`isotherm_pressure` -- P(x) on an isotherm T(x, P) = T, vectorised Newton;
* :func:`bracketed_root` -- Brent's method on [a, b] that answers "no root here" (None)
  instead of raising when the ends do not bracket;
* :func:`sign_change_brackets` and :func:`bracketed_roots` -- "sample a scalar function on a
  grid, bracket every sign change, refine by Brent's method", which the analyses need for
  spinodals, inversion points, states at a given volume and transition temperatures.

A bracket whose ends do not differ in sign (a NaN, a touching zero) is skipped, never an
exception: the callers report "no root here" in their own words.  Work is bounded by
counts (Newton steps, Brent iterations), never by time.
"""
from __future__ import annotations

import math
from typing import Callable

import numpy as np

def brentq(f, a, b, **kwargs):
    """:func:`scipy.optimize.brentq` (imported on first use: ``scipy.optimize`` costs about
    0.25 s of start-up that commands which solve nothing, such as ``bhchem show``, skip)."""
    from scipy.optimize import brentq as scipy_brentq  # lazy: start-up cost, see docstring
    return scipy_brentq(f, a, b, **kwargs)


def minimize_scalar(fun, **kwargs):
    """:func:`scipy.optimize.minimize_scalar`, imported on first use (see :func:`brentq`)."""
    from scipy.optimize import minimize_scalar as scipy_min  # lazy: start-up cost, see brentq
    return scipy_min(fun, **kwargs)


#: Newton steps of :func:`isotherm_pressure` (quadratic convergence needs < 10 from a
#: reasonable guess; one step when T is linear in P)
ISOTHERM_NEWTON_STEPS = 80
#: relative step at which the isotherm Newton stops
ISOTHERM_STEP_RTOL = 1e-15
#: relative |T(x, P) - T| / T accepted as converged
ISOTHERM_RESIDUAL_RTOL = 1e-11


def isotherm_pressure(th, x, T: float, P_guess, *, allow_negative: bool = False) -> np.ndarray:
    """The pressure P(x) on the isotherm ``T`` at states ``x``.

    Solves T(x, P) = T for P by vectorised Newton, dP = -(T(x, P) - T) / T_P(x, P); when T
    is linear in P (every family of the form T = T0(x) + P T1(x)) one step is exact.

    Parameters
    ----------
    th : Thermodynamics
    x : array_like
        States (the family's state variable).
    T : float
        The isotherm's temperature.
    P_guess : float or array_like
        Starting pressure (broadcast to ``x``).
    allow_negative : bool
        Follow the isotherm into P <= 0 (for drawing P-v isotherms); by default a step
        that would cross zero is halved instead, and only P > 0 is returned.

    Returns
    -------
    numpy.ndarray
        P with the shape of ``x``; NaN where Newton neither settled (last step within
        1e-15 of P) nor reached |T(x, P) - T| <= 1e-11 T within its step budget, and
        where P <= 0 unless ``allow_negative``.
    """
    x = np.asarray(x, float)
    P = np.broadcast_to(np.asarray(P_guess, float), x.shape).astype(float).copy()
    settled = np.zeros(x.shape, bool)
    with np.errstate(all="ignore"):
        for _ in range(ISOTHERM_NEWTON_STEPS):
            step = (th.T(x, P) - T) / th.d("T", "P", x, P)
            finite = np.isfinite(step)
            step = np.where(finite, step, 0.0)
            P_new = P - step
            if not allow_negative:
                P_new = np.where(P_new > 0, P_new, 0.5 * P)
            settled = finite & (np.abs(P_new - P) <= ISOTHERM_STEP_RTOL * np.abs(P_new))
            P = P_new
            if np.all(settled):
                break
        # converged: Newton's own step has settled to rounding, or the residual is small
        # (near an isolated critical point T(x, P) is 0/0-like and its rounding error
        # exceeds the residual bound although P is exact to the last digits)
        ok = settled | (np.abs(th.T(x, P) - T) <= ISOTHERM_RESIDUAL_RTOL * abs(T))
        if not allow_negative:
            ok &= P > 0
    return np.where(ok, P, np.nan)


def sign_change_brackets(grid, values) -> list[tuple[float, float]]:
    """Consecutive grid intervals over which finite ``values`` change sign.

    An exact zero at a grid point is returned as the degenerate bracket (g, g).
    """
    g = np.asarray(grid, float)
    f = np.asarray(values, float)
    out = []
    finite = np.isfinite(f)
    for i in range(len(g) - 1):
        if not (finite[i] and finite[i + 1]):
            continue
        if f[i] == 0.0:
            out.append((float(g[i]), float(g[i])))
        elif f[i] * f[i + 1] < 0:
            out.append((float(g[i]), float(g[i + 1])))
    if len(g) and finite[-1] and f[-1] == 0.0:
        out.append((float(g[-1]), float(g[-1])))
    return out


def bracketed_root(f, a: float, b: float, xtol: float | None = None, rtol: float = 1e-15,
                   maxiter: int = 200) -> float | None:
    """Root of the scalar function f in [a, b] by Brent's method, or None: "no root here".

    The end values are evaluated here with the same function Brent's method uses, so a sign
    test made on other evaluations (a vectorised grid, a transformed variable) can never make
    the solver raise.  An end where f is exactly zero is returned as the root.  None when f is
    not finite at an end, has the same sign at both ends, or the iteration (at most
    ``maxiter`` steps) does not converge.
    """
    fa, fb = float(f(a)), float(f(b))
    if not (math.isfinite(fa) and math.isfinite(fb)):
        return None
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0) == (fb > 0):
        return None
    if xtol is None:
        xtol = 1e-15 * max(abs(a), abs(b), 1e-300)
    root, info = brentq(f, a, b, xtol=xtol, rtol=rtol, maxiter=maxiter, full_output=True,
                        disp=False)
    return float(root) if info.converged and math.isfinite(root) else None


def bracketed_roots(f: Callable[[float], float], grid, *, log: bool = False,
                    xtol: float = 1e-15, rtol: float = 1e-15, maxiter: int = 200,
                    values=None) -> list[float]:
    """Every root of the scalar ``f`` bracketed by a sign change on ``grid``.

    Parameters
    ----------
    f : callable
        Scalar function of one float (NaN where undefined).
    grid : array_like
        Increasing sample points (positive when ``log``).
    log : bool
        Refine in u = log(x) (for variables that span decades, such as r+ or P).
    xtol : float
        Absolute tolerance relative to the bracket's upper end (scaled: ``xtol * |b|``).
    rtol, maxiter : float, int
        Passed to :func:`scipy.optimize.brentq` (a count, never a time).
    values : array_like, optional
        f on ``grid`` when the caller already has it (vectorised sampling).

    Returns
    -------
    list of float
        The roots, increasing.  A bracket that fails to refine is skipped.
    """
    grid = np.asarray(grid, float)
    if values is None:
        values = np.array([f(float(g)) for g in grid], float)
    roots = []
    for a, b in sign_change_brackets(grid, values):
        if a == b:
            roots.append(a)
            continue
        if log:
            u = bracketed_root(lambda u: f(math.exp(u)), math.log(a), math.log(b),
                               xtol=xtol * max(1.0, abs(math.log(b))), rtol=rtol,
                               maxiter=maxiter)
            root = None if u is None else math.exp(u)
        else:
            root = bracketed_root(f, a, b, xtol=xtol * max(abs(a), abs(b)), rtol=rtol,
                                  maxiter=maxiter)
        if root is not None:  # None: the ends did not bracket after all (NaN, no change)
            roots.append(root)
    return sorted(roots)


def state_range(th, P: float) -> tuple[float, float]:
    """Range of the state variable to search at pressure P (from the family's scales);
    ``th`` is a :class:`~bhchem.core.compiled.Thermodynamics`.

    Covers six decades either side of the family's own length scale and of the AdS
    length at this pressure (x ~ L for r, L^(d-2) for an entropy state variable).
    """
    x0 = th.typical_state()
    P0 = th.typical_pressure()
    power = (th.derivation.dimension - 2) if th.derivation.state.name == "S" else 1.0
    if not th.family.gravitational:
        power = 0.0
    xP = x0 * (P0 / P) ** (power / 2) if power else x0
    lo, hi = min(x0, xP), max(x0, xP)
    return lo * 1e-4, hi * 1e5


def true_runs(mask) -> list[tuple[int, int]]:
    """The maximal runs of True in a boolean sequence, as inclusive index pairs (i, j).

    >>> true_runs([False, True, True, False, True])
    [(1, 2), (4, 4)]
    """
    mask = np.asarray(mask, dtype=bool)
    # a run starts where the mask steps up and ends where it steps down (padded with False)
    steps = np.diff(np.concatenate(([False], mask, [False])).astype(np.int8))
    starts = np.flatnonzero(steps == 1)
    ends = np.flatnonzero(steps == -1) - 1
    return [(int(i), int(j)) for i, j in zip(starts, ends)]


def spinodal_pressure(th, x, P0, iters: int = 60, rtol: float = 1e-15) -> np.ndarray:
    """P on the spinodal T_x(x, P) = 0 at every x (vectorised Newton in P from P0; ``th``
    a :class:`~bhchem.core.compiled.Thermodynamics`).  Stops after ``iters`` steps or when
    every step is below ``rtol`` relative; a step that is not finite is not taken."""
    x = np.asarray(x, float)
    P = np.broadcast_to(np.asarray(P0, float), x.shape).copy()
    with np.errstate(all="ignore"):
        for _ in range(iters):
            f = th.d("T", "x", x, P)
            fp = th.d("T", "xP", x, P)
            step = np.where(np.isfinite(f / fp), f / fp, 0.0)
            P = P - step
            if np.all(np.abs(step) <= rtol * np.abs(P)):
                break
    return P
