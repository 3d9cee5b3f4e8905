r"""Thermodynamic topology: winding numbers of black hole states and of critical points.

Off-shell free energy (Wei, Liu & Mann, PRL 129 (2022) 191101, arXiv:2208.01932, WLM22).
At fixed pressure P and parameters, with tau the inverse temperature of the (canonical)
ensemble and x the family's state variable,

.. math::

    F(x; \tau) = M(x) - S(x)/\tau, \qquad
    \phi = \Bigl(\frac{\partial F}{\partial x},\; -\cot\Theta\,\csc\Theta\Bigr),
    \qquad 0 < \Theta < \pi .

phi^Theta vanishes only at Theta = pi/2, so the zeros of phi are the on-shell black holes,
F_x = M_x - S_x/tau = 0, i.e. tau = 1/T(x) (T = M_x/S_x).  The winding number of a zero
is the number of turns of the field's angle around a small contour enclosing it; it is
computed here **as that contour integral** (:func:`contour_winding`: the angle of phi
sampled around a rectangle in the (x, Theta) plane, refined until no step exceeds
pi/4; F_x is measured in the unit S_x(x_i)/tau of the zero, a positive constant that
changes no winding number) **and** from the sign formula w = sign(det d phi) = sign(F_xx) = sign(T_x S_x)
(= sign C_P: +1 stable, -1 unstable); the two must agree.  The topological number W(tau)
is their sum; it is also computed as one contour integral around the whole physical
domain (x over each connected physical piece at this P, Theta in [0.01, pi - 0.01]), of
the field with F_x divided by the positive S_x/tau (same zeros, same indices; F_x itself
spans too many decades across the domain for a sampled angle).

State variable.  WLM22 write phi in r+.  Here x is the family's own state variable (r+
for every family declared in r; the entropy S for the rotating families).  Zeros and
indices do not depend on that choice: F_r = F_x x_r and, at a zero, F_rr = F_xx x_r^2,
so for any increasing x(r+) the same zeros carry the same winding numbers.

Events.  As tau grows, two zeros are *generated* where tau(x) has a local minimum
(T(x) a local maximum) and *annihilated* where tau(x) has a local maximum: these are the
spinodals of the isobar.  W is checked to be the same on both sides of each.  Where a
branch ends at the edge of the physical domain at a finite temperature, one zero enters
or leaves and W changes there (reported as a boundary event, not a generation point).

Classes (Wei, Liu & Mann, PRD 110 (2024) L081501, arXiv:2409.09333, WLM24): from the
stability of the innermost (small) and outermost (large) black hole branches,
W^{1-} (unstable, unstable; W = -1), W^{0+} (stable, unstable; W = 0),
W^{0-} (unstable, stable; W = 0), W^{1+} (stable, stable; W = +1); equivalently from the
limits of tau(x) at the small and large ends (tau -> 0 at the small end: innermost
unstable; tau -> infinity at the small end: stable; tau -> 0 at the large end: outermost
stable; tau -> infinity: unstable).  A family whose tau tends to a finite non-zero value
at an end is outside the four classes (Liu & Wang, arXiv:2211.05524, found such a case
for uncharged Gauss-Bonnet-AdS); it is reported with its limits and no class.

Critical points (Wei & Liu, PRD 105 (2022) 104003, arXiv:2112.01706, WL22).  P is
eliminated with T_x = 0 (the spinodal curve P_sp(x)); with T~(x) = T(x, P_sp(x)) the field
phi = (d_x Phi, d_Theta Phi) of Phi = T~(x)/sin Theta has its zeros at the extrema of T~
(Theta = pi/2): the critical points.  Its index, the topological charge, is computed by the
contour integral and by the sign formula: at a zero
det d phi = T~ T~'' with T~'' = -T_P T_xxx / T_xP (implicit differentiation of T_x = 0 at
T_xx = 0).  Conventional critical points (a maximum of the spinodal temperature, as in
charged AdS) carry -1, novel ones (a minimum) +1.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from bhchem.core.results import Result
from bhchem.core.compiled import Thermodynamics
from bhchem.errors import BhchemError
from bhchem.numerics import spinodal_pressure
from bhchem.analysis.isobar import Branch, branch_state_at, find_branches, state_range
from bhchem.analysis.critical import CriticalPoint

CONVENTION = {
    "off_shell_free_energy": "F(x; tau) = M(x) - S(x)/tau at fixed P and parameters "
                             "(canonical ensemble; tau the ensemble's inverse temperature)",
    "field": "phi = (dF/dx, -cot(Theta) csc(Theta)), 0 < Theta < pi (Wei, Liu & Mann, "
             "PRL 129 (2022) 191101)",
    "state_variable": "x is the family's state variable (r+ unless stated); winding numbers "
                      "do not depend on the choice (F_rr = F_xx x_r^2 at a zero)",
    "winding": "counter-clockwise in the (x, Theta) plane; sign formula w = sign(T_x S_x) "
               "= sign(C_P): +1 stable, -1 unstable",
    "events": "as tau increases, zeros are generated at local minima of tau(x) and "
              "annihilated at local maxima",
    "classes": "W^{1-}, W^{0+}, W^{0-}, W^{1+}: innermost/outermost branch unstable/unstable, "
               "stable/unstable, unstable/stable, stable/stable (Wei, Liu & Mann, PRD 110 "
               "(2024) L081501)",
    "critical_charge": "index of the zero of (d_x Phi, d_Theta Phi), Phi = T(x, P_sp(x))/sin "
                       "Theta with P eliminated by T_x = 0; conventional -1, novel +1 (Wei & "
                       "Liu, PRD 105 (2022) 104003)",
}

#: most angle samples one contour may use (a count, not a time)
MAX_CONTOUR_POINTS = 20000
#: farthest a pressure may be from the family's typical pressure (decades)
MAX_PRESSURE_DECADES = 40
#: most bisection rounds of a contour's samples (a segment is halved at most this often)
MAX_BISECTIONS = 40
#: largest angle step (radians) between neighbouring samples of a converged contour
MAX_ANGLE_STEP = math.pi / 4
#: a slope |d ln T / d ln x| below this over the last decade of the search range means
#: tau tends to a finite limit there
FINITE_SLOPE = 0.25


# -- the contour integral ---------------------------------------------------------------------
@dataclass(frozen=True)
class Contour:
    """The winding number of a field around a rectangle, from its sampled angle.

    Attributes
    ----------
    winding : int
        Turns of the field's angle, counter-clockwise.
    total_angle : float
        The summed angle increments / (2 pi) before rounding.
    max_step : float
        Largest angle increment between neighbouring samples (radians).
    n_points : int
    converged : bool
        max_step <= MAX_ANGLE_STEP within MAX_CONTOUR_POINTS samples and the field is
        finite and non-zero on the contour.
    """

    winding: int
    total_angle: float
    max_step: float
    n_points: int
    converged: bool


def contour_winding(field, x_range, theta_range, n_side: int = 64,
                    max_points: int = MAX_CONTOUR_POINTS) -> Contour:
    """Winding number of ``field(x, theta) -> (phi_x, phi_theta)`` around a rectangle.

    The rectangle x_range x theta_range is walked counter-clockwise (x horizontal, Theta
    vertical); the angle atan2(phi_theta, phi_x) is sampled, and every segment whose angle
    step exceeds MAX_ANGLE_STEP is bisected until none does (at most ``max_points``
    samples in all).  The winding number is the sum of the wrapped increments over 2 pi.

    Examples
    --------
    The field (x, y) has index +1 at the origin, (x, -y) index -1:

    >>> contour_winding(lambda x, y: (x, y), (-1, 1), (-1, 1)).winding
    1
    >>> contour_winding(lambda x, y: (x, -y), (-1, 1), (-1, 1)).winding
    -1
    """
    a, b = map(float, x_range)
    lo, hi = map(float, theta_range)
    # parameter s in [0, 4): bottom, right, top, left
    def point(s):
        s = np.asarray(s, float)
        k = np.minimum(np.floor(s), 3)
        u = s - k
        x = np.select([k == 0, k == 1, k == 2], [a + u * (b - a), np.full_like(u, b),
                                                 b - u * (b - a)], a)
        th = np.select([k == 0, k == 1, k == 2], [np.full_like(u, lo), lo + u * (hi - lo),
                                                  np.full_like(u, hi)], hi - u * (hi - lo))
        return x, th

    def angle(s):
        x, th = point(s)
        with np.errstate(all="ignore"):
            fx, ft = field(x, th)
        fx = np.broadcast_to(np.asarray(fx, float), np.shape(s))
        ft = np.broadcast_to(np.asarray(ft, float), np.shape(s))
        bad = ~(np.isfinite(fx) & np.isfinite(ft)) | ((fx == 0) & (ft == 0))
        return np.arctan2(ft, fx), bool(np.any(bad))

    s = np.linspace(0.0, 4.0, 4 * n_side + 1)
    ang, bad = angle(s)
    for _ in range(MAX_BISECTIONS):
        d = np.angle(np.exp(1j * np.diff(ang)))
        big = np.nonzero((np.abs(d) > MAX_ANGLE_STEP) & (np.diff(s) > 1e-12))[0]
        if big.size == 0 or len(s) + big.size > max_points or bad:
            break
        mid = 0.5 * (s[big] + s[big + 1])
        am, bad_m = angle(mid)
        bad = bad or bad_m
        s = np.insert(s, big + 1, mid)
        ang = np.insert(ang, big + 1, am)
    d = np.angle(np.exp(1j * np.diff(ang)))
    total = float(np.sum(d) / (2 * math.pi))
    max_step = float(np.max(np.abs(d))) if d.size else 0.0
    return Contour(winding=int(round(total)), total_angle=total, max_step=max_step,
                   n_points=len(s), converged=bool(max_step <= MAX_ANGLE_STEP and not bad))


# -- result types --------------------------------------------------------------------------------
@dataclass(frozen=True)
class Zero:
    """One on-shell black hole at inverse temperature tau: a zero of phi.

    ``winding`` is the contour integral, ``sign_formula`` sign(T_x S_x); ``agree`` says they
    are equal (and the contour converged)."""

    x: float
    r: float | None
    branch: int
    winding: int | None
    sign_formula: int
    agree: bool


@dataclass(frozen=True)
class TauSample:
    """The zeros of phi at one tau, their sum W and the contour around the whole domain."""

    tau: float
    zeros: tuple
    W: int
    W_contour: int | None
    agree: bool


@dataclass(frozen=True)
class TopologyEvent:
    """A tau where the number of zeros changes.

    kind: 'generation' (two zeros appear as tau increases, at a local minimum of tau(x)),
    'annihilation' (two disappear, at a local maximum) or 'boundary' (a branch ends at the
    edge of the physical domain at finite temperature: one zero enters or leaves).
    ``W_below``/``W_above``: W just below and above this tau (computed, both ways)."""

    tau: float
    x: float
    kind: str
    W_below: int
    W_above: int
    W_conserved: bool


@dataclass(frozen=True)
class BranchWinding:
    """A monotone branch of tau(x): its x range, tau range, stability, winding number."""

    index: int
    x_min: float
    x_max: float
    tau_at_x_min: float
    tau_at_x_max: float
    winding: int
    label: str
    ends: tuple


@dataclass(frozen=True, repr=False)
class TopologyResult(Result):
    """Winding numbers, the topological number W(tau), events and the class at one P.

    Attributes
    ----------
    family, parameters, pressure, state_variable
    branches : tuple of BranchWinding
    samples : tuple of TauSample
        W at one tau inside every interval between events (and any tau asked for).
    events : tuple of TopologyEvent
    tau_limits : dict
        {'small': '0' | 'inf' | float, 'large': ...}: limits of tau(x) at the small and
        large ends of the physical domain (search range).
    topological_class : str or None
        'W^{1-}', 'W^{0+}', 'W^{0-}', 'W^{1+}', or None outside the four classes.
    W : int or None
        The class's topological number (at low and high temperature alike), None when W
        depends on tau.
    converged : bool
        Every contour converged and agrees with the sign formula, W is conserved at every
        generation/annihilation point, and the class's W matches the samples.
    message : str
    """

    family: str
    parameters: dict
    pressure: float
    state_variable: str
    branches: tuple
    samples: tuple
    events: tuple
    tau_limits: dict
    topological_class: str | None
    W: int | None
    converged: bool
    message: str
    curve: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))
    convention: dict = field(default_factory=lambda: dict(CONVENTION))
    warnings: tuple = ()

    def to_dict(self) -> dict:
        d = super().to_dict()
        d.pop("curve", None)   # figure data, not a result
        return d


# -- the off-shell field -----------------------------------------------------------------------------
def off_shell_field(th: Thermodynamics, P: float, tau: float, unit: float = 1.0,
                    normalised: bool = False):
    """phi(x, Theta) = (F_x / unit, -cot Theta csc Theta) with F = M - S/tau at pressure P.

    ``unit`` (> 0) is the unit of F_x: F_x and the angular component have different
    dimensions, and a zero at a large x would otherwise sit in a field whose angle turns
    within a relative width ~1e-16 (a positive constant changes no winding number).
    ``normalised``: F_x divided by the positive S_x/tau at every x, i.e. tau T - 1 (the
    same zeros and winding numbers; used for the contour around a whole domain, across
    which F_x spans many decades)."""

    def field(x, theta):
        Sx = th.d("S", "x", x, P)
        Fx = th.d("M", "x", x, P) - Sx / tau
        if normalised:
            Fx = Fx / (Sx / tau)
        return Fx / unit, -np.cos(theta) / np.sin(theta) ** 2

    return field


def free_energy_off_shell(th: Thermodynamics, x, P: float, tau: float) -> np.ndarray:
    """F(x; tau) = M(x, P) - S(x, P)/tau."""
    return th.M(x, P) - th.S(x, P) / tau


def check_pressure_scale(th: Thermodynamics, P: float) -> None:
    """Refuse (one line) a pressure more than MAX_PRESSURE_DECADES from the family's own."""
    P_typ = th.typical_pressure()
    if P > 0 and abs(math.log10(P / P_typ)) > MAX_PRESSURE_DECADES:
        raise BhchemError(f"pressure {P:g} is more than {MAX_PRESSURE_DECADES} decades from the "
                          f"family's scale ({P_typ:.3g}): its states are not representable in "
                          f"double precision; results are scale-free, rescale the parameters")


def search_range(th: Thermodynamics, P: float) -> tuple:
    """The state range searched at pressure P (the isobar's, or around the family's scale
    at P = 0, the asymptotically flat limit)."""
    if P > 0:
        return state_range(th, P)
    x0 = th.typical_state()
    return x0 * 1e-4, x0 * 1e5


def _pieces(branches) -> list:
    """Connected physical pieces (x_lo, x_hi) made of consecutive branches."""
    out = []
    for b in branches:
        if out and abs(b.x_min - out[-1][1]) <= 1e-12 * b.x_min:
            out[-1][1] = b.x_max
        else:
            out.append([b.x_min, b.x_max])
    return [tuple(p) for p in out]


def _zero_winding(th, P, tau, x, h) -> Contour:
    unit = abs(float(th.d("S", "x", x, P))) / tau or 1.0    # the scale of M_x and S_x/tau
    return contour_winding(off_shell_field(th, P, tau, unit), (x - h, x + h),
                           (math.pi / 2 - 0.5, math.pi / 2 + 0.5))


def zeros_at(th: Thermodynamics, P: float, tau: float, branches=None) -> TauSample:
    """Every zero of phi at inverse temperature ``tau``, winding numbers both ways, and W
    both as their sum and as one contour integral around each connected physical piece."""
    if not (tau > 0 and math.isfinite(tau)):
        raise BhchemError(f"tau = {tau!r} must be a positive finite inverse temperature")
    if branches is None:
        branches = find_branches(th, P, search_range(th, P))
    T = 1.0 / tau
    found = []
    unresolved = False
    for br in branches:
        if not (br.T_min < T < br.T_max):
            continue
        try:
            x = branch_state_at(th, P, br, T)
        except (RuntimeError, ValueError):   # Brent's method did not converge (a count)
            x, unresolved = None, True
        if x is None:
            continue
        found.append((x, br))
    found.sort(key=lambda z: z[0])
    pieces = _pieces(branches)
    zeros = []
    for i, (x, br) in enumerate(found):
        gaps = [abs(x - y) for j, (y, _) in enumerate(found) if j != i]
        piece = next((p for p in pieces if p[0] <= x <= p[1]), (br.x_min, br.x_max))
        h = min([0.05 * x, 0.9 * (x - piece[0]), 0.9 * (piece[1] - x)]
                + [0.4 * g for g in gaps])
        sign = int(np.sign(float(th.d("T", "x", x, P)) * float(th.d("S", "x", x, P))))
        c = _zero_winding(th, P, tau, x, h) if h > 0 else None
        w = c.winding if (c is not None and c.converged) else None
        r = float(th.quantity("r_plus", x, P)) if th.has("r_plus") else None
        zeros.append(Zero(x=float(x), r=r, branch=br.index, winding=w, sign_formula=sign,
                          agree=bool(w is not None and w == sign and sign != 0)))
    W = int(sum(z.sign_formula for z in zeros))
    # one contour around each physical piece (its sides just inside the piece)
    Wc = 0
    ok = True
    fld = off_shell_field(th, P, tau, normalised=True)
    for lo, hi in pieces:
        a, b = lo * (1 + 1e-9), hi * (1 - 1e-9)
        c = contour_winding(fld, (a, b), (0.01, math.pi - 0.01))
        ok &= c.converged
        Wc += c.winding
    W_contour = Wc if ok else None
    agree = bool(all(z.agree for z in zeros) and W_contour == W and not unresolved)
    return TauSample(tau=float(tau), zeros=tuple(zeros), W=W, W_contour=W_contour, agree=agree)


def _limit(th, P, br: Branch, side: int, x_range) -> object:
    """'0', 'inf' or a finite value: the limit of tau(x) at one end of the physical domain."""
    x_end = br.x_min if side == 0 else br.x_max
    kind = br.ends[side]
    T_end = br.T_at_x_min if side == 0 else br.T_at_x_max
    if kind == "domain":
        return "inf" if T_end == 0.0 else float(1.0 / T_end) if T_end > 0 else "inf"
    # the end of the search range: the log-slope of T over its last decade
    x_in = x_end * (10.0 if side == 0 else 0.1)
    T_in = float(th.T(x_in, P))
    if not (T_end > 0 and T_in > 0):
        return "inf"
    slope = math.log(T_end / T_in) / math.log(x_end / x_in)
    if abs(slope) < FINITE_SLOPE:
        return float(1.0 / T_end)
    # T grows towards the end -> tau -> 0; T falls -> tau -> infinity
    return "0" if (slope < 0) == (side == 0) else "inf"


_CLASSES = {(-1, -1): ("W^{1-}", -1), (1, -1): ("W^{0+}", 0),
            (-1, 1): ("W^{0-}", 0), (1, 1): ("W^{1+}", 1)}


def thermodynamic_topology(th: Thermodynamics, P: float, taus=(), n_per_interval: int = 1
                           ) -> TopologyResult:
    """Winding numbers, W(tau), generation/annihilation points and the class at pressure P.

    Parameters
    ----------
    th : Thermodynamics
    P : float
        Pressure (>= 0; 0 is the asymptotically flat limit).
    taus : sequence of float
        Extra inverse temperatures to sample (besides one inside every interval between
        events, and one beyond each end).

    Examples
    --------
    Schwarzschild-AdS: a small unstable and a large stable branch, W = 0, class W^{0-}
    (Wei, Liu & Mann, PRL 129 (2022) 191101; PRD 110 (2024) L081501):

    >>> from bhchem import bind
    >>> res = thermodynamic_topology(bind("schwarzschild-ads"), 0.01)
    >>> res.topological_class, res.W, [b.winding for b in res.branches]
    ('W^{0-}', 0, [-1, 1])
    """
    P = float(P)
    if not (P >= 0 and math.isfinite(P)):
        raise BhchemError(f"pressure {P!r} must be finite and >= 0")
    check_pressure_scale(th, P)
    xr = search_range(th, P)
    branches = find_branches(th, P, xr)
    if not branches:
        raise BhchemError(f"{th.family.name}: no physical state at P = {P:g} in "
                          f"{th.derivation.state.name} in [{xr[0]:.3g}, {xr[1]:.3g}]")
    bw = []
    for b in branches:
        xm = math.sqrt(b.x_min * b.x_max)
        s = int(np.sign(float(th.d("T", "x", xm, P)) * float(th.d("S", "x", xm, P))))
        inv = lambda T: float(1.0 / T) if T > 0 else math.inf  # noqa: E731
        bw.append(BranchWinding(b.index, b.x_min, b.x_max, inv(b.T_at_x_min),
                                inv(b.T_at_x_max), s, b.label, b.ends))
    # events: spinodals between branches, and domain ends at finite T
    raw = []
    for b in branches:
        for side, (x, T) in enumerate(((b.x_min, b.T_at_x_min), (b.x_max, b.T_at_x_max))):
            kind = b.ends[side]
            if kind == "spinodal" and side == 1:   # one event per spinodal
                # T has a local max at a spinodal when the branch below rises into it
                rising = b.T_at_x_max > b.T_at_x_min
                raw.append((1.0 / T, x, "generation" if rising else "annihilation"))
            elif kind == "domain" and T > 0:
                raw.append((1.0 / T, x, "boundary"))
    raw.sort()
    events = []
    for tau_e, x, kind in raw:
        below = zeros_at(th, P, tau_e * (1 - 1e-6), branches).W
        above = zeros_at(th, P, tau_e * (1 + 1e-6), branches).W
        events.append(TopologyEvent(tau=tau_e, x=x, kind=kind, W_below=below, W_above=above,
                                    W_conserved=below == above))
    # sample tau: one inside every interval between events, and beyond both ends
    ev = sorted({e.tau for e in events})
    if ev:
        grid = [ev[0] / 2] + [math.sqrt(a * b) for a, b in zip(ev[:-1], ev[1:])] + [ev[-1] * 2]
    else:  # one monotone branch: tau at the middle of the (largest) branch, and beyond
        b = max(branches, key=lambda b: b.x_max / b.x_min)
        Tm = float(th.T(math.sqrt(b.x_min * b.x_max), P))
        grid = [1.0 / Tm] if Tm > 0 and math.isfinite(Tm) else []
    grid = sorted(set(grid) | {float(t) for t in taus})
    samples = tuple(zeros_at(th, P, t, branches) for t in grid)
    first, last = branches[0], branches[-1]
    limits = {"small": _limit(th, P, first, 0, xr), "large": _limit(th, P, last, 1, xr)}
    inner, outer = bw[0].winding, bw[-1].winding
    finite_end = any(not isinstance(v, str) for v in limits.values())
    # consistency of the limits with the end branches' stability (tau -> 0 at the small
    # end rises: unstable; tau -> inf at the small end falls: stable; and so on)
    expect = {"small": {"0": -1, "inf": 1}, "large": {"0": 1, "inf": -1}}
    consistent = (expect["small"].get(limits["small"], inner) == inner
                  and expect["large"].get(limits["large"], outer) == outer)
    if finite_end or len(_pieces(branches)) > 1:
        cls, W = None, None
        why = ("tau tends to a finite value at the "
               + " and ".join(k for k, v in limits.items() if not isinstance(v, str))
               + " end" if finite_end else "the physical domain is not connected")
        cls_text = f"outside the four classes of WLM24 ({why}): W depends on tau"
    else:
        cls, W = _CLASSES[(inner, outer)]
        cls_text = (f"class {cls} (innermost branch {'stable' if inner > 0 else 'unstable'}, "
                    f"outermost {'stable' if outer > 0 else 'unstable'}), W = {W}")
    problems = []
    if not all(s.agree for s in samples):
        bad = [s.tau for s in samples if not s.agree]
        problems.append(f"contour and sign formula disagree (or a contour did not converge) "
                        f"at tau = {', '.join(f'{t:.6g}' for t in bad)}")
    gen = [e for e in events if e.kind != "boundary"]
    if not all(e.W_conserved for e in gen):
        problems.append("W changes at a generation/annihilation point")
    if W is not None and any(s.W != W for s in samples):
        problems.append(f"a sampled W differs from the class's W = {W}")
    if not consistent:
        problems.append("the limits of tau(x) do not match the stability of the end branches")
    converged = not problems
    n_zero_counts = sorted({len(s.zeros) for s in samples})
    msg = (f"{len(branches)} branch(es) with winding numbers "
           f"{', '.join(f'{b.winding:+d}' for b in bw)}; {cls_text}; "
           f"{len(gen)} generation/annihilation point(s)"
           + (f" (W conserved at each)" if gen and all(e.W_conserved for e in gen) else "")
           + f"; zeros per tau: {', '.join(map(str, n_zero_counts))}")
    warnings = tuple(problems)
    # tau(x) for the figure, around every event and sampled zero
    marks = [e.x for e in events] + [z.x for smp in samples for z in smp.zeros]
    x_lo, x_hi = branches[0].x_min, branches[-1].x_max
    if marks:
        x_lo, x_hi = max(x_lo, min(marks) / 10), min(x_hi, max(marks) * 10)
    xs = np.geomspace(x_lo, x_hi, 800)
    ok = th.physical(xs, P)
    with np.errstate(all="ignore"):
        tau_x = 1.0 / th.T(xs[ok], P)
    curve = np.column_stack([xs[ok], tau_x])
    curve = curve[np.isfinite(curve[:, 1]) & (curve[:, 1] > 0)]
    return TopologyResult(family=th.family.name, parameters=dict(th.values), pressure=P,
                          state_variable=th.derivation.state.name, branches=tuple(bw),
                          samples=samples, events=tuple(events), tau_limits=limits,
                          topological_class=cls, W=W, converged=converged, message=msg,
                          curve=curve, warnings=warnings)


# -- critical points ----------------------------------------------------------------------------
@dataclass(frozen=True)
class CriticalCharge:
    """The topological charge of one critical point (WL22), both ways.

    ``charge`` is the contour integral (None when it could not be computed), ``sign_formula``
    sign(T~ T~'') (None at a degenerate point, where T~'' = 0), ``kind`` 'conventional' (-1),
    'novel' (+1) or 'degenerate (index 0)'; ``agree``: both computed and equal."""

    charge: int | None
    sign_formula: int | None
    agree: bool
    kind: str | None
    note: str = ""


def _spinodal_pressure(th, x, P0, iters: int = 60):
    """P on the spinodal T_x(x, P) = 0 near P0, by Newton at every x (vectorised)."""
    return spinodal_pressure(th, x, float(P0), iters, 1e-15)


def critical_field(th: Thermodynamics, P_c: float):
    """(d_x Phi, d_Theta Phi) of Phi = T(x, P_sp(x))/sin Theta, with T~' = -T_P T_xx/T_xP."""

    def fld(x, theta):
        x = np.asarray(x, float)
        P = _spinodal_pressure(th, x, P_c)
        Tt = th.T(x, P)
        dTt = -th.d("T", "P", x, P) * th.d("T", "xx", x, P) / th.d("T", "xP", x, P)
        return dTt / np.sin(theta), -Tt * np.cos(theta) / np.sin(theta) ** 2

    return fld


def critical_point_charge(th: Thermodynamics, cp: CriticalPoint) -> CriticalCharge:
    """Topological charge of a critical point by the contour integral and the sign formula.

    Not computed (None, with a note) for isolated points (T is 0/0 there), points with
    T <= 0, and points whose residuals are above the bound.
    """
    if cp.kind == "isolated":
        return CriticalCharge(None, None, False, None,
                              "not computed: isolated point (T is 0/0 there)")
    if not (cp.converged and cp.T > 0 and cp.P > 0):
        return CriticalCharge(None, None, False, None,
                              "not computed: the point is not converged or has T, P <= 0")
    x, P = cp.x, cp.P
    with np.errstate(all="ignore"):
        Tp = float(th.d("T", "P", x, P))
        Txxx = float(th.d("T", "xxx", x, P))
        TxP = float(th.d("T", "xP", x, P))
        second = -Tp * Txxx / TxP
    # at a degenerate point (an even-multiplicity root: no loop forms) T~'' vanishes and
    # its computed sign is rounding noise: the sign formula is silent there
    flat = cp.kind == "degenerate" or not abs(second) > 1e-8 * cp.T / cp.x**2
    s = int(np.sign(second * cp.T)) if math.isfinite(second) else 0
    sign = None if (flat or s == 0) else s
    c = None
    for frac in (1e-2, 1e-3, 1e-4):
        c = contour_winding(critical_field(th, P), (x * (1 - frac), x * (1 + frac)),
                            (math.pi / 2 - 0.5, math.pi / 2 + 0.5))
        if c.converged:
            break
    charge = c.winding if c is not None and c.converged else None
    note = "" if charge is not None else "contour did not converge"
    if sign is None:
        note = (note + "; " if note else "") + ("T~'' = 0 at this degenerate zero: the sign "
                                                "formula is silent, the contour integral decides")
    q = charge if charge is not None else sign
    kind = {-1: "conventional", 1: "novel", 0: "degenerate (index 0)"}.get(q)
    return CriticalCharge(charge, sign, bool(charge is not None and charge == sign), kind, note)
