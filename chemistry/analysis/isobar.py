r"""Isobar analysis: branches, swallowtails, the globally preferred phase, transitions.

At fixed pressure P (and parameters) the isobar T(x) is split into *branches*
between its stationary points (T_x = 0: the spinodals) and the ends of the
physical domain.  On each branch T is monotone, so G(T) is single valued there;
local stability is the sign of C_P = T S_x / T_x.  Stable branches are the
thermodynamic *phases*, named by size order: small / intermediate / large (one
stable branch: 'large' if a smaller unstable branch exists, else 'black hole').

The G-T curve of all branches self-intersects at *swallowtails*; the globally
preferred state at each T minimises G over every branch and the background phase
(when the family declares one, e.g. thermal AdS with G = 0).  Walking the
minimum in T gives the transitions at this pressure:

* first order: the minimum switches between two branches that cross (G
  continuous; S and v jump): latent heat L = T (S_2 - S_1), Delta v;
* Hawking-Page type: the minimum crosses the background phase;
* zeroth order: the preferred branch *ends* (at a spinodal or the edge of the
  physical domain) and G jumps to another branch (the reentrant case): Delta G;
* second order: at the pressure of a critical point.

Where T has a pole at finite x (T -> +-infinity from both sides, e.g. where the Wald-entropy
factor of a hyperbolic Lovelock hole vanishes), dT/dx changes sign without a spinodal: the
isobar is split there into two branches, each followed up to |T| = POLE_T_FACTOR times the
isobar's median |T| (beyond, T is dominated by round-off in the vanishing denominator);
their ends are of kind ``pole``.  A domain edge that falls on such a pole is treated alike.

Every crossing is refined by Brent's method on G_i(T) - G_j(T), with x_i(T)
obtained by inverting the monotone branch; residuals |Delta G|/|G| are reported.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field, replace

import numpy as np

from bhchem.core.results import Result
from bhchem.core.compiled import Thermodynamics
from bhchem.core.implicit import counting, numerical_potentials, unsolved_warning
from bhchem.errors import StateDomainError
from bhchem.analysis.critical import find_critical_points, resolve_pressure
from bhchem.analysis.coexistence import coexistence_newton
from bhchem.numerics import brentq, state_range, true_runs
from bhchem.analysis.admissibility import excluded_states
from bhchem.analysis.consistency import emit, first_law_warnings

_XTOL = 1e-15


@dataclass(frozen=True)
class Branch:
    """A monotone piece of the isobar T(x) between stationary points / domain ends."""

    index: int
    x_min: float
    x_max: float
    T_at_x_min: float
    T_at_x_max: float
    stable: bool
    label: str
    #: ('spinodal' | 'domain' | 'range' | 'pole', same) at x_min, x_max; a 'pole' end runs to
    #: T -> +-infinity and is followed up to |T| = POLE_T_FACTOR x the isobar's median |T|
    ends: tuple

    @property
    def T_min(self) -> float:
        return min(self.T_at_x_min, self.T_at_x_max)

    @property
    def T_max(self) -> float:
        return max(self.T_at_x_min, self.T_at_x_max)


@dataclass(frozen=True)
class StateData:
    """One state taking part in a transition."""

    phase: str
    x: float
    r: float | None
    v: float | None
    S: float
    G: float
    T: float


@dataclass(frozen=True)
class Transition:
    """A transition of the globally preferred phase at fixed P."""

    kind: str  # 'first-order' | 'zeroth-order' | 'hawking-page' | 'second-order'
    T: float
    P: float
    from_phase: str
    to_phase: str
    states: tuple
    latent_heat: float | None
    delta_v: float | None
    delta_G: float
    residual: float

    def to_dict(self) -> dict:
        d = asdict(self)
        d["from"] = d.pop("from_phase")
        d["to"] = d.pop("to_phase")
        return d


@dataclass(frozen=True)
class Crossing:
    """A self-intersection of the G-T curve (swallowtail vertex) between two branches."""

    T: float
    branches: tuple
    G: float
    on_envelope: bool


@dataclass(frozen=True, repr=False)
class IsobarResult(Result):
    """Everything about one isobar."""

    pressure: float
    parameters: dict
    branches: tuple
    crossings: tuple
    transitions: tuple
    preferred: tuple  # ((T_lo, T_hi, phase), ...) in increasing T
    background: str | None
    state_range: tuple
    message: str
    warnings: tuple = field(default_factory=tuple)
    #: the binding's admissibility selection (``Admissibility.to_dict()``)
    admissibility: dict = field(default_factory=dict)
    #: the states this isobar leaves out, by condition (an ``Exclusions``), or None when not
    #: asked for (``report_excluded=False``)
    excluded: object = None
    #: which variables are held fixed (``Family.ensemble_record()``)
    ensemble: dict = field(default_factory=dict)

    def phase_at(self, T: float) -> str | None:
        for lo, hi, ph in self.preferred:
            if lo <= T <= hi:
                return ph
        return None

    def table_rows(self):
        """One row per transition: kind, T, from, to, latent heat, Delta G."""
        return (("kind", "T", "from", "to", "latent_heat", "delta_G"),
                [(t.kind, t.T, t.from_phase, t.to_phase, t.latent_heat, t.delta_G)
                 for t in self.transitions])


# -- construction --------------------------------------------------------------------
def _refine_root(f, a, b):
    fa, fb = f(a), f(b)
    if not (np.isfinite(fa) and np.isfinite(fb)) or fa * fb > 0:
        return 0.5 * (a + b)
    return brentq(f, a, b, xtol=_XTOL * max(abs(a), abs(b)), rtol=1e-15, maxiter=200)


def _pole_between(th, P, a: float, b: float) -> float | None:
    """The pole of T between two grid states where dT/dx changes sign, or None when the
    sign change is a spinodal (a smooth extremum of T).

    Bisection on the sign of dT/dx (non-finite values count as the side they lie on) to
    1e-15 relative; a pole is where |T| there exceeds 1e3 times its value at the bracket
    ends (at a spinodal it stays within the bracket's own variation, a fraction of a
    percent on the isobar grid), or is not finite."""
    def sign(z):
        v = float(th.d("T", "x", z, P))
        return 0.0 if not math.isfinite(v) else math.copysign(1.0, v)
    sa = sign(a)
    lo, hi = a, b
    for _ in range(80):
        if hi - lo <= 1e-15 * lo:
            break
        mid = 0.5 * (lo + hi)
        sm = sign(mid)
        if sm == 0.0:
            lo = hi = mid
            break
        if sm == sa:
            lo = mid
        else:
            hi = mid
    x = 0.5 * (lo + hi)
    with np.errstate(all="ignore"):
        T_mid = float(th.T(x, P))
        T_ends = max(abs(float(th.T(a, P))), abs(float(th.T(b, P))))
    if not math.isfinite(T_mid) or abs(T_mid) > 1e3 * T_ends:
        return x
    return None


def _pole_side(th, P, pole: float, inner: float, side: int, T_cap: float) -> float:
    """Where a branch running into a pole of T is cut: the state between ``inner`` (a grid
    state on the branch) and the pole where |T| = ``T_cap``, by bisection on |T| to 1e-15
    relative.  Closer to the pole T is dominated by the cancellation in its vanishing
    denominator (round-off of either sign); at |T| = T_cap, many orders of magnitude above
    the branch's own temperatures, it is still computed to full precision.  ``side`` is
    +1 when the branch lies above the pole in x, -1 below.  Returns ``inner`` when |T|
    there already exceeds the cap."""
    with np.errstate(all="ignore"):
        if not abs(float(th.T(inner, P))) < T_cap:
            return inner
        lo, hi = inner, pole  # |T| < cap at lo; the pole at hi
        for _ in range(200):
            if abs(hi - lo) <= 1e-15 * abs(lo):
                break
            mid = 0.5 * (lo + hi)
            T = float(th.T(mid, P))
            if math.isfinite(T) and abs(T) < T_cap and math.copysign(1.0, T) == \
                    math.copysign(1.0, float(th.T(inner, P))):
                lo = mid
            else:
                hi = mid
    return lo


#: a branch running into a pole of T is followed up to |T| = this factor times the median
#: |T| of its isobar's states (see _pole_side)
POLE_T_FACTOR = 1e6


def _refine_boundary(th, P, a, b, inside_a: bool):
    """The edge of the physical mask between a (on the ``inside_a`` side) and b, to 1e-14
    relative: each step evaluates the mask at 33 points across the bracket (one vectorised
    call) and keeps the first cell where it changes, so the bracket shrinks 32-fold."""
    for _ in range(60):
        if abs(b - a) <= 1e-14 * abs(a):
            break
        xs = np.linspace(a, b, 33)
        same = np.asarray(th.physical(xs, P)) == inside_a
        k = int(np.argmin(same))  # the first point on the other side
        if k == 0 or same[k]:
            break
        a, b = float(xs[k - 1]), float(xs[k])
    return a  # the physical side


def find_branches(th: Thermodynamics, P: float, x_range=None, n: int = 6000,
                  focus=()) -> list[Branch]:
    """Split the physical isobar into monotone branches (see module docstring).

    ``focus``: state values (critical points) around which the grid is made dense, so that
    the small swallowtail just off a critical pressure is resolved."""
    lo, hi = x_range if x_range else state_range(th, P)
    xs = np.geomspace(lo, hi, n)
    extra = [xc * np.exp(np.linspace(-0.15, 0.15, 6001)) for xc in focus if lo < xc < hi]
    if extra:
        xs = np.unique(np.concatenate([xs, *extra]))
    n = len(xs)
    phys = th.physical(xs, P)
    Tx = th.d("T", "x", xs, P)
    phys &= np.isfinite(Tx)
    with np.errstate(all="ignore"):
        T_grid = np.abs(th.T(xs[phys], P))
    T_cap = POLE_T_FACTOR * float(np.median(T_grid)) if T_grid.size else math.inf
    fx = lambda z: float(th.d("T", "x", z, P))  # noqa: E731
    pieces = []
    for i, j in true_runs(phys):
        a_end = "range" if i == 0 else "domain"
        b_end = "range" if j == n - 1 else "domain"
        a = xs[i] if i == 0 else _refine_boundary(th, P, xs[i], xs[i - 1], True)
        b = xs[j] if j == n - 1 else _refine_boundary(th, P, xs[j], xs[j + 1], True)
        # a domain edge on a pole of T (a condition switching exactly there): T at the edge
        # is round-off; the branch ends where |T| reaches T_cap, as at a pole
        with np.errstate(all="ignore"):
            if i > 0 and not abs(float(th.T(a, P))) < T_cap:
                a, a_end = _pole_side(th, P, a, xs[min(i + 1, j)], +1, T_cap), "pole"
            if j < n - 1 and not abs(float(th.T(b, P))) < T_cap:
                b, b_end = _pole_side(th, P, b, xs[max(j - 1, i)], -1, T_cap), "pole"
        cuts = [(a, a_end)]
        s = np.where(Tx[i:j + 1] >= 0, 1.0, -1.0)  # an exact zero counts as a sign
        for k in np.nonzero(s[1:] * s[:-1] < 0)[0]:
            k0 = i + k
            pole = _pole_between(th, P, xs[k0], xs[k0 + 1])
            if pole is None:
                cuts.append((_refine_root(fx, xs[k0], xs[k0 + 1]), "spinodal"))
            else:  # T diverges here: two branches, each running to T -> +-infinity
                cuts.append((_pole_side(th, P, pole, xs[k0], -1, T_cap), "pole"))
                cuts.append((_pole_side(th, P, pole, xs[k0 + 1], +1, T_cap), "pole (beyond)"))
        cuts.append((b, b_end))
        for (xa, ea), (xb, eb) in zip(cuts[:-1], cuts[1:]):
            if eb == "pole (beyond)":  # the gap around a pole holds no state
                continue
            if xb > xa * (1 + 1e-13):
                pieces.append((xa, xb, "pole" if ea == "pole (beyond)" else ea, eb))
    branches = []
    # a domain edge where T reaches 0 (extremality, the condition T >= 0) is located to
    # 1e-14 in x, so T there is round-off of 0: it is set to 0 exactly, else two branches
    # that both start at T = 0 would be ordered by noise (a spurious zeroth-order jump at
    # T ~ 1e-16)
    with np.errstate(all="ignore"):
        T_scale = float(np.median(np.abs(th.T(xs[phys], P)))) if np.any(phys) else 0.0

    def end_T(x, kind):
        T = float(th.T(x, P))
        return 0.0 if kind == "domain" and abs(T) <= 1e-11 * T_scale else T
    for idx, (xa, xb, ea, eb) in enumerate(pieces):
        xm = math.sqrt(xa * xb)
        cp = float(th.quantity("C_P", xm, P))
        branches.append(Branch(idx, xa, xb, end_T(xa, ea), end_T(xb, eb),
                               bool(cp > 0), "", (ea, eb)))
    return _label(branches, "black hole" if th.family.gravitational else "fluid")


def _label(branches: list[Branch], single: str = "black hole") -> list[Branch]:
    stable = [b for b in branches if b.stable]
    names = {1: ["large"], 2: ["small", "large"], 3: ["small", "intermediate", "large"]}
    if len(stable) == 1 and not any((not b.stable) and b.x_max <= stable[0].x_min
                                    for b in branches):
        labels = [single]
    else:
        labels = names.get(len(stable), [f"phase-{k + 1}" for k in range(len(stable))])
    out, it = [], iter(labels)
    stable_labels = {}
    for b in branches:
        if b.stable:
            stable_labels[b.index] = next(it)
    for b in branches:
        if b.stable:
            label = stable_labels[b.index]
        else:
            below = [stable_labels[s.index] for s in branches if s.stable and s.x_max <= b.x_min]
            above = [stable_labels[s.index] for s in branches if s.stable and s.x_min >= b.x_max]
            label = "unstable" + (f" ({below[-1] if below else '-'}|{above[0] if above else '-'})")
        out.append(Branch(b.index, b.x_min, b.x_max, b.T_at_x_min, b.T_at_x_max, b.stable,
                          label, b.ends))
    return out


def branch_state_at(th, P, br: Branch, T: float) -> float | None:
    """Invert the monotone branch: the x on ``br`` where T(x, P) = T, or None outside its
    temperature range.  Brent's method to 1e-15 relative in x (the absolute tolerance is
    scaled by the branch's *small* end, so a branch running to the end of the search range
    keeps full relative precision)."""
    if not (br.T_min <= T <= br.T_max):
        return None
    # th.T(z, P) without its per-call lookup and floating-point-error context (set once
    # around the whole solve instead): the same compiled function on the same arguments,
    # called ~10^5 times per phase diagram
    T_of = th.compiled.function("T")
    args = (np.asarray(P, dtype=float), *th.parameter_values)

    def f(z):
        return float(T_of(np.asarray(z, dtype=float), *args)) - T

    with np.errstate(all="ignore"):
        fa, fb = f(br.x_min), f(br.x_max)
        if fa == 0:
            return br.x_min
        if fb == 0:
            return br.x_max
        if fa * fb > 0:
            return br.x_min if abs(fa) < abs(fb) else br.x_max
        return brentq(f, br.x_min, br.x_max, xtol=_XTOL * br.x_min, rtol=1e-15, maxiter=200)




def _G_on_grid(th, P, br: Branch, Ts: np.ndarray, m: int = 4000) -> np.ndarray:
    """G on the branch at temperatures Ts (NaN outside its range), vectorised:
    interpolate x(T) from samples, then three Newton polishes."""
    width = br.x_max - br.x_min
    near = width * np.geomspace(1e-13, 0.5, 200)  # dense at both ends (a pole of T there)
    xs = np.unique(np.clip(np.concatenate([np.geomspace(br.x_min, br.x_max, m),
                                           br.x_min + near, br.x_max - near]),
                           br.x_min, br.x_max))
    T = th.T(xs, P)
    order = np.argsort(T)
    out = np.full(Ts.shape, np.nan)
    inside = (Ts >= br.T_min) & (Ts <= br.T_max)
    if not np.any(inside):
        return out
    x = np.interp(Ts[inside], T[order], xs[order])
    with np.errstate(all="ignore"):
        for _ in range(3):
            Tx = th.d("T", "x", x, P)
            step = np.where(Tx != 0, (th.T(x, P) - Ts[inside]) / Tx, 0.0)
            x = np.clip(x - np.nan_to_num(step), br.x_min, br.x_max)
        G = th.G(x, P)
        # near T = 0 the temperature itself carries an absolute round-off of order 1e-16
        # of the branch's scale: accept to 1e-9 relative or 1e-12 of that scale
        T_floor = 1e-12 * max(abs(br.T_min), abs(br.T_max))
        bad = ~(np.abs(th.T(x, P) - Ts[inside]) <= 1e-9 * np.abs(Ts[inside]) + T_floor) \
            | ~np.isfinite(G)
    # states the interpolation could not reach (a branch whose T varies over many decades):
    # bisection on the monotone branch, all of them at once (in log x, 120 halvings: to
    # round-off), then the same acceptance test; what still fails stays NaN
    if np.any(bad):
        target = Ts[inside][bad]
        lo = np.full(target.shape, math.log(br.x_min))
        hi = np.full(target.shape, math.log(br.x_max))
        rising = br.T_at_x_max >= br.T_at_x_min
        with np.errstate(all="ignore"):
            for _ in range(120):
                mid = 0.5 * (lo + hi)
                above = th.T(np.exp(mid), P) > target
                go_left = above if rising else ~above
                hi = np.where(go_left, mid, hi)
                lo = np.where(go_left, lo, mid)
            xb = np.exp(0.5 * (lo + hi))
            Gb = th.G(xb, P)
            ok = np.abs(th.T(xb, P) - target) <= 1e-9 * np.abs(target) + T_floor
        G[bad] = np.where(ok & np.isfinite(Gb), Gb, np.nan)
    out[inside] = G
    return out


def isobar_branches(th: Thermodynamics, P: float, critical_points=(), x_range=None) -> list:
    """The branches :func:`analyze_isobar` works with at pressure P: :func:`find_branches` over
    :func:`state_range`, with the grid made dense around every critical state whose pressure
    is within 5 % of P (so the small swallowtail next to a critical pressure is resolved)."""
    xr = x_range if x_range else state_range(th, P)
    focus = [cp.x for cp in critical_points or () if abs(cp.P / P - 1) < 0.05]
    return find_branches(th, P, xr, focus=focus)


def analyze_isobar(th: Thermodynamics, P: float, *, x_range=None, n_T: int = 3000,
                   critical_points=None, warn: bool = True,
                   report_excluded: bool = True) -> IsobarResult:
    """Branches, swallowtails, preferred phase and transitions at pressure P.

    Parameters
    ----------
    th : Thermodynamics
    P : float or str
        The pressure (> 0), or relative to a critical point (``'0.5Pc'``, see
        :func:`~bhchem.analysis.critical.resolve_pressure`).
    x_range : (float, float), optional
        State range to search (default: :func:`state_range`).
    n_T : int
        Temperatures of the grid on which the branches are compared.
    critical_points : sequence of CriticalPoint, optional
        Default: the physical points of :func:`~bhchem.analysis.critical.find_critical_points`.
    warn : bool
        Issue the result's warnings with :func:`warnings.warn` (the phase diagram passes
        False and issues its own, once). The result carries them either way.
    report_excluded : bool
        Report which states the binding's conditions leave out, by condition and range
        (``excluded``, see :func:`bhchem.analysis.admissibility.excluded_states`); analyses
        that only need the transitions pass False.

    Returns
    -------
    IsobarResult
        ``warnings`` names a first-law failure of the family (its transitions then have no
        thermodynamic meaning) and anything the walk could not resolve.

    Raises
    ------
    InvalidArgumentError
        P is not one number or pressure text (None, an array, ...).
    StateDomainError
        P is not positive and finite, or there is no physical state at P.
    """
    with counting() as missed:
        res = _isobar(th, P, x_range, n_T, critical_points, warn, report_excluded)
    # states whose charge the numerical inverse of a fixed potential could not give
    note = unsolved_warning(missed, numerical_potentials(th.family))
    return replace(res, warnings=res.warnings + (note,)) if note else res


def _isobar(th, P, x_range, n_T, critical_points, warn, report_excluded) -> IsobarResult:
    """The body of :func:`analyze_isobar` (same arguments)."""
    P = resolve_pressure(th, P)
    xr = x_range if x_range else state_range(th, P)
    if critical_points is None:
        critical_points = find_critical_points(th).physical
    branches = isobar_branches(th, P, critical_points, xr)
    if not branches:
        raise StateDomainError(
            f"no physical {th.family.name} state at P = {P:g} with "
            f"{', '.join(f'{k} = {v:g}' for k, v in th.values.items())}")
    has_bg = th.has("G_background")
    bg_name = th.family.background_name if has_bg else None
    G_bg = float(th.quantity("G_background", 1.0, P)) if has_bg else None

    T_lo = 0.0 if has_bg else min(b.T_min for b in branches)  # the background exists at all T
    if th.family.require_nonnegative_temperature:
        # a spinodal can dip below T = 0 between the grid points of the physical mask: the
        # states there are not physical, and the walk starts at T = 0
        T_lo = max(T_lo, 0.0)
    T_hi = max(b.T_max for b in branches)
    # a branch cut by the search range (not by physics) continues beyond it: on the far
    # side of such an end's temperature the branch list is incomplete, so the walk stops
    # there -- above it when the branch rises towards the cut (the usual large-x end),
    # below it when the branch falls towards it (T -> 0 as x -> 0, as on some hyperbolic
    # small branches)
    for b in branches:
        for end, T_end, T_other in ((b.ends[0], b.T_at_x_min, b.T_at_x_max),
                                    (b.ends[1], b.T_at_x_max, b.T_at_x_min)):
            if end != "range":
                continue
            if T_end >= T_other and T_end > T_lo:
                T_hi = min(T_hi, T_end)
            elif T_end < T_other:
                T_lo = max(T_lo, T_end)
    ends = sorted(t for t in {b.T_min for b in branches} | {b.T_max for b in branches}
                  if T_lo <= t <= T_hi)
    grid = [np.linspace(T_lo, T_hi, n_T), ends]
    T_small = min((t for t in ends if t > 0), default=T_hi)
    if T_hi > 1e3 * T_small:
        # branches running to very high T (a pole of T, a domain edge next to one): a
        # linear grid would step over the structure at low T; add a geometric one
        grid.append(np.geomspace(T_small, T_hi, n_T))
    Ts = np.unique(np.concatenate(grid))
    Gs = np.vstack([_G_on_grid(th, P, b, Ts) for b in branches])
    names = [b.label for b in branches]
    if has_bg:
        Gs = np.vstack([Gs, np.full(Ts.shape, G_bg)])
        names.append(bg_name)

    def G_of(k, T):
        if has_bg and k == len(branches):
            return G_bg, None
        x = branch_state_at(th, P, branches[k], T)
        return (None, None) if x is None else (float(th.G(x, P)), x)

    # swallowtail vertices: sign changes of G_i - G_j where both branches exist
    crossings = []
    nb = len(names)
    for i in range(nb):
        for j in range(i + 1, nb):
            diff = Gs[i] - Gs[j]
            ok = np.isfinite(diff)
            sd = np.where(diff >= 0, 1.0, -1.0)
            idx = np.nonzero(ok[:-1] & ok[1:] & (sd[:-1] * sd[1:] < 0))[0]
            for k in idx:
                T = _refine_crossing(G_of, i, j, Ts[k], Ts[k + 1])
                if T is not None and not _is_cusp(branches, i, j, T):
                    crossings.append((T, i, j))

    # the global minimum of G over the locally stable branches (C_P > 0) and the
    # background: a C_P < 0 state is never the preferred phase
    stable_rows = np.array([b.stable for b in branches] + ([True] if has_bg else []))
    Genv = np.where(stable_rows[:, None], Gs, np.nan)
    if not np.any(np.isfinite(Genv)):
        raise StateDomainError(
            f"no locally stable {th.family.name} state at P = {P:g}: every branch has C_P < 0")
    with np.errstate(invalid="ignore"):
        Gmin_idx = np.where(np.all(np.isnan(Genv), axis=0), -1,
                            np.nanargmin(np.where(np.isnan(Genv), np.inf, Genv), axis=0))
    transitions, segments = [], []
    warnings = list(first_law_warnings(th))
    valid = np.nonzero(Gmin_idx >= 0)[0]
    start = Ts[valid[0]]
    for k in range(valid[0], valid[-1]):
        a, b = Gmin_idx[k], Gmin_idx[k + 1]
        if a >= 0 and b < 0:
            nxt = k + 1 + int(np.argmax(Gmin_idx[k + 1:] >= 0))
            warnings.append(f"no locally stable state for T in ({Ts[k]:.6g}, {Ts[nxt]:.6g})")
        if a == b or a < 0 or b < 0:
            continue
        switches = _switches(th, P, branches, G_of, a, b, Ts[k], Ts[k + 1], has_bg,
                             [i for i in range(nb) if stable_rows[i]])
        if switches is None:
            warnings.append(f"could not resolve the switch {names[a]} -> {names[b]} between "
                            f"T = {Ts[k]:.6g} and {Ts[k + 1]:.6g}")
            continue
        for kind, T_t, p, q in switches:
            tr = _transition(th, P, kind, T_t, p, q, names, branches, G_of, has_bg)
            segments.append((float(start), float(tr.T), names[p]))
            start = tr.T
            transitions.append(tr)
    segments.append((float(start), float(Ts[valid[-1]]), names[Gmin_idx[valid[-1]]]))

    # second order at a critical pressure
    for cp in critical_points or ():
        if cp.physical and cp.kind != "degenerate" and abs(cp.P - P) <= 1e-10 * P:
            transitions.append(Transition("second-order", cp.T, P, "black hole", "black hole",
                                          (), 0.0, 0.0, 0.0, 0.0))
    transitions.sort(key=lambda t: t.T)
    env_T = {round(t.T, 12) for t in transitions}
    cross = tuple(Crossing(T, (names[i], names[j]), float(G_of(i, T)[0]),
                           round(T, 12) in env_T) for T, i, j in sorted(crossings))
    msg = (f"{len(branches)} branch(es), {len(cross)} G-T crossing(s), "
           f"{len(transitions)} transition(s) of the preferred phase")
    if warn:
        emit(first_law_warnings(th))
    return IsobarResult(pressure=P, parameters=dict(th.values), branches=tuple(branches),
                        crossings=cross, transitions=tuple(transitions),
                        preferred=tuple(segments), background=bg_name,
                        state_range=tuple(xr), message=msg, warnings=tuple(warnings),
                        admissibility=th.admissibility.to_dict(),
                        ensemble=th.family.ensemble_record(),
                        excluded=excluded_states(th, P, xr) if report_excluded else None)


def _is_cusp(branches, i, j, T) -> bool:
    """Whether T is the spinodal where branches i and j meet (the cusp of a swallowtail:
    the same state on both, so equal G without a crossing).  The background (an index past
    the branches) has no cusp."""
    if i >= len(branches) or j >= len(branches):
        return False
    bi, bj = branches[i], branches[j]
    for xa, ka, Ta in ((bi.x_min, bi.ends[0], bi.T_at_x_min), (bi.x_max, bi.ends[1], bi.T_at_x_max)):
        for xb, kb, Tb in ((bj.x_min, bj.ends[0], bj.T_at_x_min),
                           (bj.x_max, bj.ends[1], bj.T_at_x_max)):
            if ka == kb == "spinodal" and abs(xa - xb) <= 1e-9 * abs(xa) \
                    and abs(T - Ta) <= 1e-9 * abs(Ta):
                return True
    return False


def _refine_crossing(G_of, i, j, Ta, Tb):
    def f(T):
        gi, _ = G_of(i, T)
        gj, _ = G_of(j, T)
        if gi is None or gj is None:
            return np.nan
        return gi - gj
    fa, fb = f(Ta), f(Tb)
    if not (np.isfinite(fa) and np.isfinite(fb)) or fa * fb > 0:
        return None
    if fa == 0:
        return Ta
    if fb == 0:
        return Tb
    return brentq(f, Ta, Tb, xtol=1e-15 * abs(Tb), rtol=1e-15, maxiter=200)


def _locate_switch(th, P, branches, G_of, a, b, Ta, Tb, has_bg):
    """Kind and temperature of a change of the minimising branch between Ta and Tb."""
    ga_b, _ = G_of(a, Tb)
    gb_a, _ = G_of(b, Ta)
    if ga_b is not None and gb_a is not None:  # both exist across the cell: a crossing
        T = _refine_crossing(G_of, a, b, Ta, Tb)
        if T is None:
            return None
        bg = has_bg and (a == len(branches) or b == len(branches))
        return ("hawking-page" if bg else "first-order"), T
    if ga_b is None:  # branch a ends inside the cell: zeroth order at its end
        br = branches[a]
        T_end = br.T_max if abs(br.T_max - Ta) <= abs(br.T_min - Ta) else br.T_min
        if G_of(b, T_end)[0] is None:
            return None
        return "zeroth-order", T_end
    br = branches[b]  # branch b starts inside the cell
    T_start = br.T_min if abs(br.T_min - Tb) <= abs(br.T_max - Tb) else br.T_max
    if G_of(a, T_start)[0] is None:
        return None
    return "zeroth-order", T_start


def _switches(th, P, branches, G_of, a, b, Ta, Tb, has_bg, stable, depth: int = 0):
    """The changes of the minimising phase inside the grid cell (Ta, Tb) where it goes from
    a to b: [(kind, T, from, to)], or None.  A third stable phase can be preferred on a
    window narrower than the cell (next to a triple point, or in a reentrant window): if it
    lies below the a/b crossing (or below b just after a zeroth-order jump), the switch is
    split into the switches through it (at most three levels)."""
    edge = _locate_switch(th, P, branches, G_of, a, b, Ta, Tb, has_bg)
    if edge is None:
        return None
    kind, T = edge
    if depth >= 3:
        return [(kind, T, a, b)]
    ref, _ = G_of(b, T)
    if ref is None:
        return [(kind, T, a, b)]
    below = []
    for c in stable:
        if c in (a, b):
            continue
        g, _ = G_of(c, T)
        if g is not None and g < ref - 1e-13 * (abs(ref) + abs(g)):
            below.append((g, c))
    if not below:
        return [(kind, T, a, b)]
    _, c = min(below)
    if kind == "zeroth-order" and G_of(a, T)[0] is not None and G_of(a, Tb)[0] is None:
        # a ends at T and the jump lands on c, which b undercuts later in the cell
        rest = _switches(th, P, branches, G_of, c, b, T, Tb, has_bg, stable, depth + 1)
        return None if rest is None else [(kind, T, a, c)] + rest
    if kind in ("first-order", "hawking-page"):
        first = _switches(th, P, branches, G_of, a, c, Ta, T, has_bg, stable, depth + 1)
        second = _switches(th, P, branches, G_of, c, b, T, Tb, has_bg, stable, depth + 1)
        if first is None or second is None:
            return None
        return first + second
    return [(kind, T, a, b)]


def _state(th, P, name, x, T, G) -> StateData:
    if x is None:  # background phase
        return StateData(name, float("nan"), None, None, 0.0, G, T)
    return StateData(name, x, float(th.quantity("r_plus", x, P)) if th.has("r_plus") else None,
                     float(th.v(x, P)) if th.has("v") else None, float(th.S(x, P)),
                     float(th.G(x, P)), T)


def _transition(th, P, kind, T, a, b, names, branches, G_of, has_bg) -> Transition:
    ga, xa = G_of(a, T)
    gb, xb = G_of(b, T)
    if kind == "first-order" and xa is not None and xb is not None:
        # polish the bracketed crossing: Newton on (T1 - T2, G1 - G2) in the two states
        lo, hi = (xa, xb) if xa < xb else (xb, xa)
        n1, n2, ok = coexistence_newton(th, np.array([P]), np.array([lo]), np.array([hi]))
        if ok[0] and abs(np.log(n1[0] / lo)) < 0.1 and abs(np.log(n2[0] / hi)) < 0.1:
            xa, xb = (n1[0], n2[0]) if xa < xb else (n2[0], n1[0])
            T = 0.5 * float(th.T(xa, P) + th.T(xb, P))
            ga, gb = float(th.G(xa, P)), float(th.G(xb, P))
    sa, sb = _state(th, P, names[a], xa, T, ga), _state(th, P, names[b], xb, T, gb)
    dG = float(gb - ga)
    if kind == "zeroth-order":
        L = None if (xa is None or xb is None) else float(T * (sb.S - sa.S))
        residual = 0.0
    else:
        L = float(T * (sb.S - sa.S))
        # relative to the size of the terms G = M - T S is computed from, in both states
        size = sum(abs(float(th.M(x, P))) + abs(T * s.S) for x, s in ((xa, sa), (xb, sb))
                   if x is not None) + abs(ga) + abs(gb)
        residual = abs(dG) / (size + 1e-300)
        dG = 0.0 if kind != "zeroth-order" else dG
    dv = None if (sa.v is None or sb.v is None) else float(sb.v - sa.v)
    return Transition(kind, float(T), float(P), names[a], names[b], (sa, sb), L, dv, dG,
                      float(residual))


# -- the cheap skeleton of an isobar and its scalar functions ---------------------------------
@dataclass(frozen=True)
class BranchEnd:
    """A physical end of a locally stable branch: a spinodal (T_x = 0) or the edge of the
    physical domain (never a cut of the search range)."""

    branch: int  # index into IsobarSkeleton.branches
    side: int  # 0: at x_min, 1: at x_max
    kind: str  # 'spinodal' | 'domain'
    x: float
    T: float
    G: float


@dataclass(frozen=True)
class IsobarSkeleton:
    r"""What an isobar is made of, without walking the preferred phase: the branches (as in
    :func:`analyze_isobar`), the physical ends of the stable ones with their T and G, and the
    background phase.  ``topology`` is the sequence of (stable, end kinds) of the branches:
    between pressures where it changes (critical points, domain edges), every branch keeps
    its index, so the scalar functions of :func:`skeleton_margins` are continuous in P."""

    pressure: float
    branches: tuple
    ends: tuple
    background: str | None
    G_background: float | None
    topology: tuple

    @property
    def stable(self) -> tuple:
        """Indices of the locally stable branches, and -1 for the background phase."""
        idx = tuple(b.index for b in self.branches if b.stable)
        return idx + ((-1,) if self.background is not None else ())

    def label(self, k: int) -> str:
        return self.background if k == -1 else self.branches[k].label

    def exists_at(self, k: int, T: float) -> bool:
        """Whether phase k has a state at temperature T inside the search range."""
        if k == -1:
            return T >= 0
        b = self.branches[k]
        return b.T_min <= T <= b.T_max

    def gibbs(self, th: Thermodynamics, k: int, T: float):
        """(G, x) of phase k at temperature T, or (None, None) where it has no state."""
        if k == -1:
            return (self.G_background, None) if T >= 0 else (None, None)
        x = branch_state_at(th, self.pressure, self.branches[k], T)
        return (None, None) if x is None else (float(th.G(x, self.pressure)), x)


def isobar_skeleton(th: Thermodynamics, P: float, critical_points=()) -> IsobarSkeleton:
    """The skeleton of the isobar at P (see :class:`IsobarSkeleton`).

    Cheap: one split of T(x) into monotone branches at its stationary points T_x = 0 (the
    spinodals) and domain edges, and T, G at the physical ends of the stable branches
    (C_P = T S_x / T_x > 0); no temperature grid and no walk of the preferred phase.

    Parameters
    ----------
    th : Thermodynamics
    P : float
    critical_points : sequence
        As for :func:`analyze_isobar` (the branch grid is made dense near them).

    Returns
    -------
    IsobarSkeleton
        With no branches and topology ``('no state',)`` where there is no physical state.
    """
    branches = tuple(isobar_branches(th, P, critical_points)) if P > 0 else ()
    has_bg = th.has("G_background")
    bg = th.family.background_name if has_bg else None
    G_bg = float(th.quantity("G_background", 1.0, P)) if has_bg else None
    ends = []
    for b in branches:
        if not b.stable:
            continue
        for side, (x, kind) in enumerate(((b.x_min, b.ends[0]), (b.x_max, b.ends[1]))):
            if kind in ("spinodal", "domain"):
                T = b.T_at_x_min if side == 0 else b.T_at_x_max
                if T < 0 and th.family.require_nonnegative_temperature:
                    # a spinodal dipping below T = 0 between the mask's grid points: the
                    # physical branch ends where T = 0 (next to it)
                    T, kind = 0.0, "domain"
                ends.append(BranchEnd(b.index, side, kind, float(x), float(T),
                                      float(th.G(x, P))))
    topo = tuple((b.stable, b.ends) for b in branches) + (("background",) if has_bg else ())
    if not branches:
        topo = ("no state",)
    return IsobarSkeleton(float(P), branches, tuple(ends), bg, G_bg, topo)


def phase_crossing(th: Thermodynamics, sk: IsobarSkeleton, i: int, j: int):
    """The temperature where phases i and j (stable branch indices, -1 for the background) have
    equal G inside the T range where both exist, or None.  dG/dT = -S on each branch, so
    G_i - G_j is monotone there when the entropies are ordered like the states, and a sign
    change at the two ends of the common range brackets the single crossing."""
    def rng(k):
        if k == -1:
            return 0.0, math.inf
        b = sk.branches[k]
        return b.T_min, b.T_max
    lo = max(rng(i)[0], rng(j)[0])
    hi = min(rng(i)[1], rng(j)[1])
    if not hi > lo or not math.isfinite(hi):
        return None

    def f(T):
        gi, _ = sk.gibbs(th, i, T)
        gj, _ = sk.gibbs(th, j, T)
        return np.nan if gi is None or gj is None else gi - gj
    fa, fb = f(lo), f(hi)
    if not (np.isfinite(fa) and np.isfinite(fb)) or fa * fb > 0:
        return None
    if fa == 0 or fb == 0:
        return lo if fa == 0 else hi
    return brentq(f, lo, hi, xtol=1e-15 * hi, rtol=1e-15, maxiter=200)


def skeleton_margins(th: Thermodynamics, sk: IsobarSkeleton, keys=None) -> dict:
    r"""The scalar functions of one isobar whose signs fix which transitions its preferred
    phase has (``keys``: only these).  Each value is ``(margin, T)``:

    * ``('ends', (i, s), (j, t))``: T_{i,s} - T_{j,t}, the difference of the temperatures of
      two physical ends (spinodal or domain edge) of different stable branches; its zero is
      where a branch starts or stops existing at the other's end temperature;
    * ``('gibbs', (i, s), j)``: G_j(T_{i,s}) - G_i(T_{i,s}) at the end of branch i, for
      every other stable phase j (-1: background) that exists there; its zero is where a
      first-order (or Hawking-Page) crossing of i and j reaches the end of branch i: a
      terminal point, where a zeroth-order line with zero jump begins;
    * ``('triple', (i, j), k)``: G_k(T_ij) - G_i(T_ij) at the crossing T_ij of i and j, for a
      third stable phase k; its zero is a triple point.

    The preferred phase minimises G over the stable branches and the background; its
    sequence of transitions can change only where one of these changes sign, where the
    branches themselves change (``topology``), or at a critical pressure.
    """
    want = None if keys is None else set(keys)
    out = {}
    ends = sk.ends
    for a in range(len(ends)):
        for b in range(a + 1, len(ends)):
            ea, eb = ends[a], ends[b]
            if ea.branch == eb.branch:
                continue
            key = ("ends", (ea.branch, ea.side), (eb.branch, eb.side))
            if want is None or key in want:
                out[key] = (ea.T - eb.T, ea.T, max(abs(ea.T), abs(eb.T)))
    for e in ends:
        for j in sk.stable:
            if j == e.branch:
                continue
            key = ("gibbs", (e.branch, e.side), j)
            if want is not None and key not in want:
                continue
            if not sk.exists_at(j, e.T):
                continue
            g, _ = sk.gibbs(th, j, e.T)
            if g is not None:
                out[key] = (g - e.G, e.T, abs(g) + abs(e.G))
    phases = sk.stable
    need_triple = want is None or any(k[0] == "triple" for k in want)
    if len(phases) >= 3 and need_triple:
        for a in range(len(phases)):
            for b in range(a + 1, len(phases)):
                i, j = phases[a], phases[b]
                third = [k for k in phases if k not in (i, j)]
                tkeys = [("triple", (i, j), k) for k in third]
                if want is not None and not any(k in want for k in tkeys):
                    continue
                T = phase_crossing(th, sk, i, j)
                if T is None:
                    continue
                gi, _ = sk.gibbs(th, i, T)
                for k, key in zip(third, tkeys):
                    if gi is None or not sk.exists_at(k, T):
                        continue
                    gk, _ = sk.gibbs(th, k, T)
                    if gk is not None:
                        out[key] = (gk - gi, T, abs(gk) + abs(gi))
    return out
