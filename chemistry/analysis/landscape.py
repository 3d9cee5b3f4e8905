r"""The free-energy landscape and the kinetics of a transition on it.

Landscape.  At an ensemble temperature T_E and pressure P, with the family's state
variable x as the order parameter (r+ for every family declared in r),

.. math::

    G_L(x) = M(x, P) - T_E\,S(x, P),\qquad
    G_L' = S_x\,(T - T_E),\qquad G_L'' = T_x S_x \ \text{at an extremum},

so its extrema are the on-shell black holes at T = T_E: wells on the locally stable
branches (C_P > 0), barriers on the unstable ones.  An end of the physical domain where
G_L rises inwards is a well at the edge (e.g. r+ -> 0 of Schwarzschild-AdS, where G_L -> 0:
the thermal AdS phase).

Kinetics (Li, Zhang & Wang, JHEP 10 (2020) 090, arXiv:2008.00495, LZW20).  The probability
density rho(x, t) of the order parameter obeys the Fokker-Planck equation

.. math::

    \partial_t\rho = D\,\partial_x\Bigl[e^{-\beta G_L}\,\partial_x\bigl(e^{\beta G_L}\rho\bigr)\Bigr],
    \qquad D = \frac{T_E}{\zeta},\quad \beta = \frac{1}{T_E},

with zeta the friction coefficient.  **Times are in units of zeta** (t/zeta; D = T_E).
Starting in a well at x_0, with a reflecting wall on the far side at x = a and an
absorbing target at x = b, the mean first-passage time is the closed double integral

.. math::

    \langle t\rangle = \frac{1}{D}\int_{x_0}^{b} dy\; e^{\beta G_L(y)}
                       \int_{a}^{y} dz\; e^{-\beta G_L(z)}

(:func:`mfpt_integral`, on a fine grid in log space of the integrands), and it is also
obtained from a **time-dependent solution** (:func:`solve_fokker_planck`): a finite-volume
discretisation that keeps the equilibrium e^{-beta G_L} exact, symmetrised to a tridiagonal
matrix whose eigen-decomposition gives rho(x, t), the survival probability Sigma(t) and the
first-passage-time distribution F(t) = -dSigma/dt at every t; <t> = int Sigma dt is
integrated over a logarithmic time grid, and the two grid sizes N and 2N are Richardson
extrapolated.  The two must agree.

Kramers.  For a high barrier (Delta G/T_E >= KRAMERS_MIN_BARRIER between two interior
wells), the escape rate is k = sqrt(G_L''(well) |G_L''(barrier)|)/(2 pi zeta)
exp(-Delta G/T_E); the first passage to the other well takes ~1/k, to the barrier top
~1/(2k).  Below that barrier, or from a well at the domain edge, Kramers' formula is not
justified and the result says so.

Target.  ``target='barrier'`` absorbs at the barrier top (LZW20's choice: the first time
the state reaches the intermediate, unstable black hole); ``target='well'`` at the
bottom of the other well.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from bhchem.core.results import Result
from bhchem.core.compiled import Thermodynamics
from bhchem.errors import BhchemError
from bhchem.analysis.isobar import branch_state_at, find_branches, state_range
from bhchem.analysis.topology import check_pressure_scale

#: barrier (in units of T_E) from which Kramers' formula is offered
KRAMERS_MIN_BARRIER = 5.0
#: the reflecting wall on the open side of a start well is put where beta (G_L - G_well)
#: reaches this (or at the end of the physical domain, if nearer)
WALL_HEIGHT = 40.0
#: relative agreement required between the double integral and the time-dependent solution
AGREEMENT = 1e-4
#: beyond this beta*Delta G the time-dependent solution's slowest rate is below the
#: resolution of the eigen-decomposition (e^-30 ~ 1e-13 of its fastest rate)
TIME_DEPENDENT_MAX_BARRIER = 25.0
#: longest first-passage time returned as a number (beyond: only its log10)
MAX_EXPONENT = 600.0

CONVENTION = {
    "landscape": "G_L(x) = M(x, P) - T_E S(x, P), x the family's state variable (r+ unless "
                 "stated)",
    "fokker_planck": "d rho/dt = D d/dx [exp(-G_L/T_E) d/dx (exp(G_L/T_E) rho)], "
                     "D = T_E/zeta (Li, Zhang & Wang, JHEP 10 (2020) 090)",
    "time_unit": "zeta, the friction coefficient: every time is t/zeta (D = T_E)",
    "boundaries": "reflecting wall on the far side of the start well, absorbing target "
                  "(the barrier top or the other well's bottom)",
    "kramers": "k = sqrt(G_L''(well) |G_L''(barrier)|)/(2 pi zeta) exp(-Delta G/T_E), for "
               "Delta G/T_E >= 5 between interior wells",
}


@dataclass(frozen=True)
class Extremum:
    """A well or barrier of G_L: its x, r+, G_L and G_L'' (None at an edge)."""

    kind: str           # 'well' | 'barrier'
    x: float
    r: float | None
    G_L: float
    curvature: float | None
    edge: bool = False


@dataclass(frozen=True, repr=False)
class Landscape(Result):
    """G_L(x) at (T_E, P): samples, wells and barriers (sorted by x).

    ``converged``: every interior extremum satisfies |G_L'| <= 1e-10 |S_x T_E| and the
    wells and barriers alternate."""

    family: str
    parameters: dict
    temperature: float
    pressure: float
    state_variable: str
    x: np.ndarray
    G_L: np.ndarray
    extrema: tuple
    converged: bool
    message: str
    convention: dict = field(default_factory=lambda: dict(CONVENTION))

    @property
    def wells(self) -> tuple:
        return tuple(e for e in self.extrema if e.kind == "well")

    @property
    def barriers(self) -> tuple:
        return tuple(e for e in self.extrema if e.kind == "barrier")


def landscape_function(th: Thermodynamics, T_E: float, P: float):
    """G_L(x) = M - T_E S at pressure P, vectorised."""
    return lambda x: th.M(x, P) - T_E * th.S(x, P)


def free_energy_landscape(th: Thermodynamics, T_E: float, P: float, n: int = 600) -> Landscape:
    """The landscape G_L(x) at ensemble temperature T_E and pressure P, its wells and
    barriers.

    Examples
    --------
    Schwarzschild-AdS at the Hawking-Page point (L = 1, T_E = 1/pi): barrier at r+ = 1/3,
    well at r+ = 1 with G_L = 0, and the edge well r+ -> 0 (thermal AdS):

    >>> import math
    >>> from bhchem import bind
    >>> ls = free_energy_landscape(bind("schwarzschild-ads"), 1 / math.pi, 3 / (8 * math.pi))
    >>> [(e.kind, round(e.x, 12)) for e in ls.extrema]
    [('well', 0.0), ('barrier', 0.333333333333), ('well', 1.0)]
    """
    T_E, P = float(T_E), float(P)
    if not (T_E > 0 and math.isfinite(T_E)):
        raise BhchemError(f"ensemble temperature {T_E!r} must be positive and finite")
    if not (P > 0 and math.isfinite(P)):
        raise BhchemError(f"pressure {P!r} must be positive and finite")
    check_pressure_scale(th, P)
    branches = find_branches(th, P, state_range(th, P))
    if not branches:
        raise BhchemError(f"{th.family.name}: no physical state at P = {P:g}")
    G = landscape_function(th, T_E, P)
    ext = []
    ok = True
    for br in branches:
        if not (br.T_min < T_E < br.T_max):
            continue
        x = branch_state_at(th, P, br, T_E)
        if x is None:
            continue
        Sx = float(th.d("S", "x", x, P))
        Tx = float(th.d("T", "x", x, P))
        slope = float(th.d("M", "x", x, P)) - T_E * Sx
        ok &= abs(slope) <= 1e-10 * abs(Sx * T_E)
        r = float(th.quantity("r_plus", x, P)) if th.has("r_plus") else None
        ext.append(Extremum("well" if br.stable else "barrier", float(x), r, float(G(x)),
                            Tx * Sx))
    # the ends of the physical domain: a well where G_L rises inwards
    lo, hi = branches[0], branches[-1]
    notes = []
    for x_end, inward, kind in ((lo.x_min, 1, lo.ends[0]), (hi.x_max, -1, hi.ends[1])):
        slope = float(th.d("M", "x", x_end, P)) - T_E * float(th.d("S", "x", x_end, P))
        if slope * inward > 0 and kind == "range" and inward < 0:
            # falling towards the end of the search range: unbounded, not a well
            notes.append("G_L falls without bound towards large "
                         f"{th.derivation.state.name} (T_E above every black hole there)")
        elif slope * inward > 0:
            # at the small end of the search range the state is the limit x -> 0
            x_at = 0.0 if (kind == "range" and inward > 0) else float(x_end)
            G_end = float(G(x_end))
            r = (float(th.quantity("r_plus", x_end, P)) if th.has("r_plus") else None)
            ext.append(Extremum("well", x_at, 0.0 if x_at == 0.0 else r, G_end, None, True))
    ext.sort(key=lambda e: e.x)
    alternate = all(a.kind != b.kind for a, b in zip(ext[:-1], ext[1:]))
    ok &= alternate
    x_lo = lo.x_min
    x_hi = hi.x_max
    inner = [e.x for e in ext if e.x > 0] or [math.sqrt(x_lo * x_hi)]
    a = max(x_lo, min(inner) / 20)
    b = min(x_hi, max(inner) * 3)
    xs = np.linspace(x_lo if (ext and ext[0].edge) else a, b, n)
    xs = xs[th.physical(xs, P)]
    G_xs = np.asarray(G(xs), float)
    xs, G_xs = xs[np.isfinite(G_xs)], G_xs[np.isfinite(G_xs)]
    if len(ext) >= 2:   # the samples cover the extrema and the walls up to 1.5 x the relief
        Gs = [e.G_L for e in ext if math.isfinite(e.G_L)]
        top, bottom = max(Gs), min(Gs)
        xe = [e.x for e in ext]
        keep = (G_xs <= top + 1.5 * (top - bottom)) | ((xs >= min(xe)) & (xs <= max(xe)))
        if np.any(keep):
            i0, i1 = np.nonzero(keep)[0][[0, -1]]
            xs, G_xs = xs[i0:i1 + 1], G_xs[i0:i1 + 1]
    nw = sum(e.kind == "well" for e in ext)
    nb = len(ext) - nw
    ok &= all(math.isfinite(e.G_L) for e in ext)
    ext = [e for e in ext if math.isfinite(e.G_L)]
    msg = (f"G_L at T_E = {T_E:.6g}, P = {P:.6g}: {nw} well(s), {nb} barrier(s)"
           + "".join(f"; {n}" for n in notes)
           + ("" if alternate else "; WARNING: wells and barriers do not alternate"))
    return Landscape(family=th.family.name, parameters=dict(th.values), temperature=T_E,
                     pressure=P, state_variable=th.derivation.state.name, x=xs,
                     G_L=G_xs, extrema=tuple(ext), converged=bool(ok),
                     message=msg)


# -- first passage ------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class FirstPassage(Result):
    """Mean first-passage time from one well, both ways, and Kramers' estimate.

    Attributes
    ----------
    start, target : Extremum
        The start well and the absorbing target (barrier top or the other well).
    wall : float
        Position of the reflecting wall.
    barrier : Extremum
    barrier_height : float
        Delta G / T_E (the barrier above the start well, in units of T_E).
    mfpt_integral : float or None
        <t>/zeta from the closed double integral (None when it exceeds e^MAX_EXPONENT).
    log10_mfpt : float
        log10(<t>/zeta) (always given).
    mfpt_time_dependent : float or None
        <t>/zeta from the time-dependent solution (None when the barrier is beyond
        TIME_DEPENDENT_MAX_BARRIER).
    relative_difference : float or None
    kramers_time : float or None
        1/k (target 'well') or 1/(2k) (target 'barrier'), in units of zeta; None where
        Kramers is not justified (see ``warnings``).
    kramers_rate : float or None
    t, distribution, survival : ndarray
        The first-passage-time distribution F(t) and Sigma(t) on a logarithmic time grid.
    converged : bool
        The two mean first-passage times agree within AGREEMENT.
    """

    family: str
    parameters: dict
    temperature: float
    pressure: float
    start: Extremum
    target: Extremum
    target_kind: str
    wall: float
    barrier: Extremum
    barrier_height: float
    mfpt_integral: float | None
    log10_mfpt: float
    mfpt_time_dependent: float | None
    relative_difference: float | None
    kramers_rate: float | None
    kramers_time: float | None
    t: np.ndarray
    distribution: np.ndarray
    survival: np.ndarray
    converged: bool
    message: str
    time_unit: str = "zeta (friction coefficient): times are t/zeta, D = T_E"
    warnings: tuple = ()
    convention: dict = field(default_factory=lambda: dict(CONVENTION))


def _log_cumtrapz(logf, x):
    """log of the cumulative trapezoid integral of exp(logf) over x (from x[0])."""
    m = np.maximum(logf[1:], logf[:-1])
    seg = np.log(0.5 * (np.exp(logf[1:] - m) + np.exp(logf[:-1] - m)) * np.diff(x)) + m
    out = np.empty_like(logf)
    out[0] = -np.inf
    out[1:] = np.logaddexp.accumulate(seg)
    return out


def mfpt_integral(G, T_E: float, wall: float, start: float, target: float,
                  n: int = 40001) -> float:
    """log of the mean first-passage time (units of zeta) by the double integral.

    ``G`` is G_L(x) (vectorised); the wall may be on either side of the start (the
    coordinate is mirrored so that wall < start < target).  Trapezoid rule on about ``n``
    points (the start is one of them) in log space of the integrands (relative error
    ~1e-9 for a smooth G_L).
    """
    sgn = 1.0 if target > wall else -1.0
    L, us = abs(target - wall), abs(start - wall)
    n1 = max(3, int(n * us / L))
    u = np.concatenate([np.linspace(0.0, us, n1), np.linspace(us, L, max(3, n - n1))[1:]])
    x = wall + sgn * u
    beta = 1.0 / T_E
    g = beta * np.asarray(G(x), float)
    k0 = n1 - 1
    g = g - g[k0]
    inner = _log_cumtrapz(-g, u)                      # log int_a^y e^{-beta (G - G0)}
    integrand = g + inner                             # log of e^{beta(G-G0)} * inner
    outer = _log_cumtrapz(integrand[k0:], u[k0:])[-1]
    return float(outer - math.log(T_E))               # 1/D = zeta/T_E


def fokker_planck_grid(wall: float, start: float, target: float, n_cells: int) -> tuple:
    """(h, n, wall'): cells of width h counted from the absorbing target, with the start at
    a cell centre, and the wall moved inwards by less than one cell to close the grid."""
    d_t, L = abs(target - start), abs(target - wall)
    j_s = max(1, int(round(d_t / L * n_cells - 0.5)))
    h = d_t / (j_s + 0.5)
    n = max(j_s + 2, int(math.floor(L / h)))
    sgn = 1.0 if target > wall else -1.0
    return h, n, target - sgn * n * h


def _fp_matrix(g, h):
    """Symmetric tridiagonal generator of the finite-volume Fokker-Planck operator in
    q = e^{beta G/2} rho (D = 1; cells of width h; reflecting left, absorbing right end
    half a cell beyond the last centre).  ``g`` = beta G_L at the cell centres and, last,
    at the absorbing end."""
    gc, gb = g[:-1], g[-1]
    n = len(gc)
    off = np.full(n - 1, 1.0 / h**2)
    diag = np.zeros(n)
    diag[:-1] -= np.exp(0.5 * (gc[:-1] - gc[1:])) / h**2
    diag[1:] -= np.exp(0.5 * (gc[1:] - gc[:-1])) / h**2
    diag[-1] -= 2.0 * np.exp(0.5 * (gc[-1] - gb)) / h**2
    return diag, off


def solve_fokker_planck(G, T_E: float, target: float, direction: float, h: float, n: int,
                        j_start: int, n_times: int = 3000):
    """Time-dependent solution from a delta at a cell centre: (t, Sigma(t), F(t), <t>).

    ``n`` cells of width ``h`` end half a cell before the absorbing ``target``
    (``direction`` +1 when the target is at larger x); cell j (counted from the target,
    j = 0 next to it) is centred at target - direction (j + 1/2) h; the delta starts in
    cell ``j_start``; the far end is a reflecting wall.  The generator is diagonalised
    (``scipy.linalg.eigh_tridiagonal``), so Sigma and F are exact for the discretised
    equation at every t; <t> = int Sigma dt by the trapezoid rule on a logarithmic t grid
    from 1e-4/|lambda_max| to 60/|lambda_min| (plus t_0 for t < t_0, where Sigma = 1).
    Times in units of zeta.
    """
    from scipy.linalg import eigh_tridiagonal  # lazy: scipy.linalg costs start-up time

    j = np.arange(n - 1, -1, -1)                        # from the wall to the target
    pts = np.append(target - direction * (j + 0.5) * h, target)
    g = np.asarray(G(pts), float) / T_E
    k0 = n - 1 - j_start
    g = g - g[k0]
    diag, off = _fp_matrix(g, h)
    lam, V = eigh_tridiagonal(diag * T_E, off * T_E)   # D = T_E/zeta, zeta = 1
    c = h * np.exp(-0.5 * g[:-1])                        # Sigma = sum_i h rho_i
    a = (c @ V) * (V[k0, :] / h)                         # rho_0 = delta: q0 = e_k0 / h
    rates = -lam
    t0, t1 = 1e-4 / rates.max(), 60.0 / rates.min()
    t = np.geomspace(t0, t1, n_times)
    E = np.exp(-np.outer(t, rates))
    survival = E @ a
    density = E @ (a * rates)
    mean = float(t0 + np.trapezoid(survival, t))
    return t, survival, density, mean


def first_passage(th: Thermodynamics, T_E: float, P: float, start: str = "small",
                  target: str = "barrier", landscape: Landscape | None = None,
                  n_cells: int = 400) -> FirstPassage:
    """Mean first-passage time from the small (or large) well across the barrier.

    Parameters
    ----------
    start : {'small', 'large'}
        The well of smaller or larger x among the two wells beside the highest barrier.
    target : {'barrier', 'well'}
        Absorb at the barrier top (LZW20) or at the other well's bottom.

    Raises
    ------
    BhchemError
        Unknown ``start``/``target``, or a landscape without two wells and a barrier.
    """
    if start not in ("small", "large"):
        raise BhchemError(f"unknown start {start!r}; choose small or large")
    if target not in ("barrier", "well"):
        raise BhchemError(f"unknown target {target!r}; choose barrier or well")
    ls = landscape if landscape is not None else free_energy_landscape(th, T_E, P)
    T_E, P = ls.temperature, ls.pressure
    ext = list(ls.extrema)
    bars = [i for i, e in enumerate(ext) if e.kind == "barrier" and 0 < i < len(ext) - 1]
    if not bars:
        raise BhchemError(f"{th.family.name}: G_L at T_E = {T_E:.6g}, P = {P:.6g} has no "
                          f"barrier between two wells (no transition to time)")
    ib = max(bars, key=lambda i: ext[i].G_L)
    bar = ext[ib]
    w_small, w_large = ext[ib - 1], ext[ib + 1]
    w0, w1 = (w_small, w_large) if start == "small" else (w_large, w_small)
    if w0.edge:
        raise BhchemError(f"the {start} well is the edge of the physical domain "
                          f"({th.derivation.state.name} = {w0.x:g}): start from the other well")
    G = landscape_function(th, T_E, P)
    tgt = bar if target == "barrier" else w1
    # the reflecting wall on the far side of the start well
    away = -1.0 if w0.x < bar.x else 1.0
    neighbours = [e.x for e in ext if (e.x - w0.x) * away > 0]
    branches = find_branches(th, P, state_range(th, P))
    dom = (branches[0].x_min, branches[-1].x_max)
    limit = neighbours[0] if neighbours else (dom[0] if away < 0 else dom[1])
    xs = w0.x + (limit - w0.x) * np.geomspace(1e-6, 1.0, 4001)   # fine near the well
    over = np.nonzero((G(xs) - w0.G_L) / T_E >= WALL_HEIGHT)[0]
    wall = float(xs[over[0]]) if over.size else float(limit)
    if tgt.edge and tgt.x == 0.0:
        tgt = Extremum(tgt.kind, float(dom[0]), tgt.r, tgt.G_L, tgt.curvature, True)
    height = (bar.G_L - w0.G_L) / T_E
    direction = 1.0 if tgt.x > w0.x else -1.0
    h, n, wall = fokker_planck_grid(wall, w0.x, tgt.x, n_cells)
    j_s = int(round(abs(tgt.x - w0.x) / h - 0.5))
    log_t = mfpt_integral(G, T_E, wall, w0.x, tgt.x)
    mfpt = math.exp(log_t) if log_t < MAX_EXPONENT else None
    warnings = []
    td = rel = None
    tt = surv = dens = np.zeros(0)
    if height <= TIME_DEPENDENT_MAX_BARRIER:
        r1 = solve_fokker_planck(G, T_E, tgt.x, direction, h, n, j_s)
        r3 = solve_fokker_planck(G, T_E, tgt.x, direction, h / 3, 3 * n, 3 * j_s + 1)
        td = (9 * r3[3] - r1[3]) / 8                  # Richardson: O(h^2) discretisation
        tt, surv, dens = r3[0], r3[1], r3[2]
        rel = abs(td - mfpt) / mfpt if mfpt else None
    else:
        warnings.append(f"the barrier ({height:.1f} T_E) is beyond the time-dependent "
                        f"solver's resolution ({TIME_DEPENDENT_MAX_BARRIER:g} T_E): only the "
                        f"double integral is given")
    k = kt = None
    if w0.curvature is not None and bar.curvature is not None and height >= KRAMERS_MIN_BARRIER:
        log_k = math.log(math.sqrt(w0.curvature * abs(bar.curvature)) / (2 * math.pi)) - height
        log_kt = -log_k + (0.0 if target == "well" else math.log(0.5))
        if log_kt < MAX_EXPONENT:
            k, kt = math.exp(log_k), math.exp(log_kt)
        else:
            warnings.append(f"Kramers time 10^{log_kt / math.log(10):.1f} zeta is beyond double "
                            f"precision: not given as a number")
    elif height < KRAMERS_MIN_BARRIER:
        warnings.append(f"barrier {height:.3g} T_E < {KRAMERS_MIN_BARRIER:g} T_E: too low for "
                        f"Kramers' formula (no rate given)")
    converged = rel is not None and rel <= AGREEMENT
    if rel is not None and rel > AGREEMENT:
        warnings.append(f"double integral and time-dependent solution differ by {rel:.1e} "
                        f"(> {AGREEMENT:g})")
    msg = (f"first passage from the {start} well ({th.derivation.state.name} = {w0.x:.6g}) to "
           f"the {'barrier top' if target == 'barrier' else 'other well'} "
           f"({th.derivation.state.name} = {tgt.x:.6g}): <t>/zeta = "
           + (f"{mfpt:.6g}" if mfpt is not None else f"10^{log_t / math.log(10):.1f}")
           + f", barrier {height:.4g} T_E")
    return FirstPassage(family=th.family.name, parameters=dict(th.values), temperature=T_E,
                        pressure=P, start=w0, target=tgt, target_kind=target, wall=wall,
                        barrier=bar, barrier_height=height, mfpt_integral=mfpt,
                        log10_mfpt=log_t / math.log(10), mfpt_time_dependent=td,
                        relative_difference=rel, kramers_rate=k, kramers_time=kt, t=tt,
                        distribution=dens, survival=surv, converged=bool(converged),
                        message=msg, warnings=tuple(warnings))
