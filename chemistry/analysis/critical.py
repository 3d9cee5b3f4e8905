r"""Critical points: every one, certified where possible.

A critical point is where the isobar T(x) at fixed P has an inflection with zero
slope,

.. math:: \partial_x T = \partial_x^2 T = 0 \quad (\text{fixed } P),

equivalently :math:`\partial_v P = \partial_v^2 P = 0` on the isotherm (for
T_P != 0 and v monotone in x).

Two methods behind one entry point, :func:`find_critical_points`:

*certified* (T = A(x) + B(x) P with A, B rational in x, i.e. a rational
equation of state: charged AdS in any d, Gauss-Bonnet, Lovelock).  Eliminating
P between A' + B' P = 0 and A'' + B'' P = 0 leaves one polynomial equation
:math:`\mathrm{num}(A''B' - A'B'') = 0` in x.  Its coefficients (exact sympy
numbers; parameter values enter as the exact binary value of the float) are
rounded to 60 significant digits, and *all* its real roots are isolated with
sympy's real-root isolation (continued fractions / Vincent-Akritas, exact
rational arithmetic) and refined to relative width 1e-25.  Roots where B' = 0
give a critical point only if A' = 0 there too (then P = -A''/B'').

*scanned* (any other T: square roots, hypergeometric functions, rotation).  The
sign changes of T_x on a logarithmic grid locate the extrema of T(x) at each
pressure of a logarithmic pressure grid chosen from the family's own scales;
where the number of extrema changes between neighbouring pressures a pair is
born or dies (a fold), and each fold is refined by a damped 2D Newton solve in
(log x, log P).  Completeness is relative to the scanned range, which is
reported.

*Couplings typed as decimals.*  An isolated critical point needs the couplings
on a hypersurface of parameter space (the two x-derivatives u' and w' of the
isotherm P = T u(x) - w(x) share a root); couplings typed as decimals reach it
only to within the rounding of the input, and the eliminated polynomial then
has a cluster of nearly coincident roots (or none) where T(x, P) is nearly
0/0.  Whenever u' and w' have a nearly common positive root, the couplings are
moved onto the nearest such hypersurface (Gauss-Newton with the relative
shifts of the continuous, non-zero parameters, least Euclidean norm at each
step); if the largest relative shift is within ROUNDING_TOLERANCE the isolated
critical point of that nearby exact system is reported instead of the cluster,
with the shifts stated (``nearby_system`` and ``note``).  Farther away the
couplings are solved as given and the points of the cluster say how far the
nearby isolated point is.

Each point is classified: *isolated* when the mixed derivative
:math:`\partial^2 P/\partial T\partial v \propto T_{xP}` also vanishes;
*standard* when a pair of extrema of T(x) appears on one side of P_c and not on
the other (a loop forms); *degenerate* otherwise (the conditions hold, no loop
forms: not a critical point in the thermodynamic sense, and reported as such).
"""
from __future__ import annotations

import math
import threading
import weakref
from dataclasses import asdict, dataclass, field, replace

import mpmath as mp
import numpy as np
import sympy as sp

from bhchem.core.results import Result
from bhchem.declare import symbols as sy
from bhchem.core.compiled import Thermodynamics, bind
from bhchem.conventions import convention_record
from bhchem.errors import BhchemError, InvalidArgumentError, StateDomainError

#: relative residual of the critical conditions accepted for a point
RESIDUAL_TOLERANCE = 1e-9
#: |x T_xP / T_P| below this makes a point 'isolated'
ISOLATED_TOLERANCE = 1e-7
#: largest relative shift of the couplings onto an exact system with an isolated critical
#: point that is attributed to the rounding of the input: a typed decimal becomes the nearest
#: double (relative error <= 2^-53); 64 such units cover a value computed by a short chain of
#: floating-point operations or typed with 16 significant digits
ROUNDING_TOLERANCE = 64 * 2.0**-53
#: a nearly common root of u' and w' farther than this (relative shift) is not looked at
NEAR_CONDITION_LIMIT = 1e-6
#: working precision (decimal digits) of the projection onto the nearby exact system
_DPS = 60


@dataclass(frozen=True, repr=False)
class CriticalPoint(Result):
    """One solution of the critical conditions.

    Attributes
    ----------
    T, P, v, x, r, G : float
        Critical temperature, pressure, specific volume, state variable, horizon
        radius (None if the family has none) and Gibbs free energy.
    ratio : float or None
        rho_c = P_c v_c / T_c.
    kind : str
        'standard', 'isolated' or 'degenerate' (see module docstring).
    physical : bool
        T > 0, P > 0 and every declared state condition holds.
    on_preferred_branch : bool or None
        Whether the point takes part in a transition of the globally preferred
        phase (:func:`bhchem.analysis.phases.takes_part_in_transition`: just off P_c the
        preferred phase has a first-order transition ending there).  Decided when the
        search is asked to (:func:`bhchem.analysis.critical_branch.find_critical_points_on_branches`,
        as ``bhchem critical`` and the report do); None otherwise, and always None for
        degenerate or unphysical points.
    residuals : dict
        Relative residuals x T_x / T and x^2 T_xx / T at the point (for an
        isolated point, x P_x / P and x^2 P_xx / P on the isotherm, 60 digits).
    scale_free : dict
        Dimensionless combinations (e.g. 'P_c*Q^2'), from the declared length
        dimensions.
    converged : bool
        Every residual is within RESIDUAL_TOLERANCE.  A point that is not
        converged is reported, flagged, and never counted as a critical point.
    note : str
        One line on anything special (domain boundary, nearby exact system).
    nearby_system : dict or None
        For an isolated point of a nearby exact system (couplings typed as
        decimals): {'relative_distance': max_q |dq/q|, 'tolerance':
        ROUNDING_TOLERANCE, 'relative_shifts': {q: dq/q}}; otherwise None.
    topological_charge : CriticalCharge or None
        Its topological charge (Wei & Liu, PRD 105 (2022) 104003: conventional -1, novel
        +1) by contour integral and sign formula
        (:func:`bhchem.analysis.topology.critical_point_charge`).  Decided with
        ``on_preferred_branch`` by
        :func:`~bhchem.analysis.critical_branch.find_critical_points_on_branches`; None in
        the plain search.
    """

    T: float
    P: float
    v: float | None
    x: float
    r: float | None
    G: float
    ratio: float | None
    kind: str
    physical: bool
    residuals: dict
    scale_free: dict
    on_preferred_branch: bool | None = None
    note: str = ""
    converged: bool = True
    nearby_system: dict | None = None
    topological_charge: object = None

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True, repr=False)
class CriticalSearch(Result):
    """Result of :func:`find_critical_points`.

    Attributes
    ----------
    points : tuple of CriticalPoint
        Every solution found with x > 0, sorted by P (physical or not; see flags).
    completeness : str
        'certified' (all real roots of the eliminated polynomial isolated) or
        'scanned' (complete within ``scanned_range``).
    method : str
    scanned_range : dict or None
        {'x': [lo, hi], 'P': [lo, hi]} for the scanned method.
    converged : bool
        Every reported point meets RESIDUAL_TOLERANCE.
    message : str
    convention : dict
    warnings : tuple of str
        Filled by :func:`~bhchem.analysis.critical_branch.find_critical_points_on_branches`
        (``on_preferred_branch`` rests on G, hence on the first law); the plain search,
        from the equation of state alone, leaves it empty.
    """

    family: str
    parameters: dict
    points: tuple
    completeness: str
    method: str
    scanned_range: dict | None
    converged: bool
    message: str
    convention: dict = field(default_factory=dict)
    warnings: tuple = ()
    #: the binding's admissibility selection, which decides the ``physical`` flags
    admissibility: dict = field(default_factory=dict)
    #: which variables are held fixed (``Family.ensemble_record()``)
    ensemble: dict = field(default_factory=dict)

    @property
    def physical(self) -> tuple:
        """Physical, non-degenerate, converged critical points (the ones the message counts)."""
        return tuple(p for p in self.points if counts_as_critical_point(p))

    def table_rows(self):
        """One row per critical point: kind, T, P, v, x, physical, on the preferred
        branch, converged."""
        return (("kind", "T", "P", "v", "x", "physical", "on_preferred_branch", "converged"),
                [(c.kind, c.T, c.P, c.v, c.x, c.physical, c.on_preferred_branch, c.converged)
                 for c in self.points])


def counts_as_critical_point(cp: CriticalPoint) -> bool:
    """Whether a solution of the critical conditions is a physical critical point: in the
    physical domain, not degenerate (a loop forms) and converged (residuals within
    RESIDUAL_TOLERANCE).  The search message counts exactly these."""
    return bool(cp.physical and cp.kind != "degenerate" and cp.converged)


# -- entry point -------------------------------------------------------------------
class CriticalMethodError(BhchemError, ValueError):
    """An unknown ``method``, or one that cannot be used for this family."""


#: the default search of each bound family, kept while the bound object lives (isobars,
#: figures and the phase diagram all ask for it); nothing is stored on the object itself
_DEFAULT_SEARCHES: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()
_DEFAULT_LOCK = threading.Lock()
METHODS = ("auto", "certified", "scanned")


def find_critical_points(family, method: str = "auto", *, pressure_range=None,
                         state_range=None, **params) -> CriticalSearch:
    """All critical points of a family at given parameters.

    Parameters
    ----------
    family : str, Family or Thermodynamics
    method : {'auto', 'certified', 'scanned'}
        'auto' uses the certified elimination when the equation of state allows it.
    pressure_range, state_range : (float, float), optional
        Ranges for the scanned method (default: from the family's own scales).
    **params
        Parameter values (ignored when a Thermodynamics is passed).

    Returns
    -------
    CriticalSearch
        ``on_preferred_branch`` of its points is None: deciding it needs the phase
        analysis (:func:`bhchem.analysis.critical_branch.find_critical_points_on_branches`).

    Raises
    ------
    BhchemError
        An unknown ``method``, or ``method='certified'`` for a family whose critical
        conditions do not reduce to a polynomial (a ``ValueError`` too).
    """
    if method not in METHODS:
        raise CriticalMethodError(f"unknown method {method!r}; choose one of "
                                  f"{', '.join(METHODS)}")
    th = family if isinstance(family, Thermodynamics) else bind(family, **params)
    default = method == "auto" and pressure_range is None and state_range is None
    if default:
        with _DEFAULT_LOCK:
            cached = _DEFAULT_SEARCHES.get(th)
        if cached is not None:
            return cached
    result = _search(th, method, pressure_range, state_range)
    if default:
        with _DEFAULT_LOCK:
            _DEFAULT_SEARCHES[th] = result
    return result


def resolve_pressure(th: Thermodynamics, value) -> float:
    """One pressure, absolute or relative to a critical point, as a float.

    Parameters
    ----------
    th : Thermodynamics
    value : float or str
        A number (``0.002``), its text (``'1e-3'``) or a multiple of a physical critical
        pressure: ``'0.5Pc'`` (the lowest), ``'0.5Pc2'`` (the second, by pressure), ``'Pc'``.

    Returns
    -------
    float
        P > 0 (P = -Lambda/8pi for AdS).

    Raises
    ------
    InvalidArgumentError
        ``None``, a bool, an array or other non-number, malformed text, or a relative
        pressure when there is no such critical point (also a ValueError and TypeError).
    StateDomainError
        A pressure that is not a positive finite number.

    Examples
    --------
    >>> from bhchem import bind
    >>> th = bind("rn-ads", Q=1.0)
    >>> resolve_pressure(th, "Pc") == find_critical_points(th).physical[0].P
    True
    >>> resolve_pressure(th, 0.002)
    0.002
    """
    return _resolve_relative(th, value, "pressure", "Pc", "P", "0.01", "0.5Pc",
                             ": there is no AdS black hole (P = -Lambda/8pi > 0)")


def _resolve_relative(th, value, quantity: str, mark: str, attr: str, plain: str, rel: str,
                      why: str = "") -> float:
    """A positive finite number, or a multiple of a quantity of a physical critical point
    (``'0.5Pc'``, ``'0.5Pc2'``; ``mark`` is ``Pc`` or ``Tc``, ``attr`` the CriticalPoint
    attribute); ``plain`` and ``rel`` are an absolute and a relative example for messages,
    ``why`` ends the message for a value that is not positive."""
    if isinstance(value, (bool, np.bool_)) or value is None:
        raise InvalidArgumentError(f"{quantity} {value!r} must be a number or text like {rel}")
    if isinstance(value, str):
        t = value.strip()
        factor, sep, which = t.partition(mark)
        if sep:
            try:
                f = float(factor) if factor.strip() else 1.0
                idx = int(which) if which.strip() else 1
            except ValueError:
                raise InvalidArgumentError(f"{quantity} {value!r} must look like {plain} or "
                                           f"{rel} (or {rel}2)") from None
            cps = find_critical_points(th).physical
            if not cps:
                raise InvalidArgumentError(
                    f"{quantity} {value!r} is relative to a critical point, but "
                    f"{th.family.name} has none at these parameters; give "
                    f"{attr} directly")
            if not 1 <= idx <= len(cps):
                raise InvalidArgumentError(f"{quantity} {value!r}: there are only {len(cps)} "
                                           "critical point(s)")
            x = f * getattr(cps[idx - 1], attr)
        else:
            try:
                x = float(t)
            except ValueError:
                raise InvalidArgumentError(f"{quantity} {value!r} must look like {plain} or "
                                           f"{rel}") from None
    elif isinstance(value, (int, float, np.integer, np.floating)) or (
            isinstance(value, np.ndarray) and value.ndim == 0 and value.dtype.kind in "if"):
        x = float(value)
    elif isinstance(value, (np.ndarray, list, tuple)):
        raise InvalidArgumentError(f"one {quantity} is expected, not a sequence of "
                                   f"{np.size(value)} (loop over them)")
    else:
        raise InvalidArgumentError(f"{quantity} must be a number or text like {rel}, not "
                                   f"{type(value).__name__}")
    if not (math.isfinite(x) and x > 0):
        raise StateDomainError(f"{quantity} {value!r} is not positive and finite{why}")
    return x


def resolve_temperature(th: Thermodynamics, value) -> float:
    """One temperature, absolute or relative to a critical point, as a float.

    Parameters
    ----------
    th : Thermodynamics
    value : float or str
        A number (``0.04``), its text, or a multiple of the temperature of a physical
        critical point: ``'0.9Tc'`` (of the lowest by pressure, as ``'0.9Pc'``), ``'0.9Tc2'``.

    Returns
    -------
    float
        T > 0.

    Raises
    ------
    InvalidArgumentError
        Malformed text, a non-number, or a relative temperature without that critical point.
    StateDomainError
        A temperature that is not a positive finite number.

    Examples
    --------
    >>> from bhchem import bind
    >>> th = bind("rn-ads", Q=1.0)
    >>> resolve_temperature(th, "Tc") == find_critical_points(th).physical[0].T
    True
    """
    return _resolve_relative(th, value, "temperature", "Tc", "T", "0.04", "0.9Tc")


def resolve_pressure_range(th: Thermodynamics, value) -> tuple:
    """A pressure range ``(P1, P2)`` with P1 < P2, each end as :func:`resolve_pressure`.

    Parameters
    ----------
    th : Thermodynamics
    value : sequence of two floats or str

    Returns
    -------
    (float, float)

    Raises
    ------
    InvalidArgumentError
        Not two values, or P1 >= P2 (a reversed range).
    """
    if isinstance(value, (str, bytes)) or not hasattr(value, "__len__") or len(value) != 2:
        raise InvalidArgumentError(f"pressure_range must be two pressures (P1, P2), not {value!r}")
    lo, hi = (resolve_pressure(th, v) for v in value)
    if not lo < hi:
        raise InvalidArgumentError(f"pressure_range needs P1 < P2, got ({lo:g}, {hi:g})")
    return lo, hi


def _search(th, method, pressure_range, state_range) -> CriticalSearch:
    poly = None
    if method in ("auto", "certified"):
        poly = _certified_candidates(th)
        if poly is None and method == "certified":
            raise CriticalMethodError(f"family {th.family.name}: the critical conditions do not reduce "
                             f"to a polynomial; use method='scanned'")
    if poly is not None:
        found, note, remarks = poly
        exact = {(c.x, c.P): c for c in found}
        candidates = [(c.x, c.P) for c in found]
        completeness, scanned = "certified", None
        method_text = ("exact elimination of P, real-root isolation of the resulting "
                       "polynomial in " + th.derivation.state.name + note)
    else:
        candidates, scanned = _scanned_candidates(th, pressure_range, state_range)
        exact, remarks = {}, []
        completeness = "scanned"
        method_text = ("fold detection of the extrema of T(x) over a logarithmic (x, P) "
                       "grid, refined by 2D Newton")
    points = []
    for i, (x_c, P_c) in enumerate(candidates):
        # the fold test must not step over a neighbouring solution: scale its steps
        others = [(x, p) for j, (x, p) in enumerate(candidates) if j != i]
        # (an absolute distance: P_c may be exactly 0, e.g. a fold born at P = 0)
        gap_P = min((abs(p - P_c) for _, p in others), default=math.inf)
        gap_x = min((abs(math.log(x / x_c)) for x, _ in others if x > 0), default=1.0)
        cp = _assemble(th, x_c, P_c, gap_P, gap_x, exact.get((x_c, P_c)))
        if cp is not None and not any(_same(cp, q) for q in points):
            points.append(cp)
    points.sort(key=lambda p: (p.P, p.x))
    converged = all(p.converged for p in points)
    msg = (f"{len(points)} solution(s) of the critical conditions, "
           f"{sum(counts_as_critical_point(p) for p in points)} physical "
           f"critical point(s)")
    # every solution not counted, under the first reason that applies (disjoint counts)
    reasons = [f"not converged (residuals above {RESIDUAL_TOLERANCE:.0e})",
               "degenerate (no loop forms: not a critical point)", "outside the physical domain"]
    left_out = dict.fromkeys(reasons, 0)
    for p in points:
        if not counts_as_critical_point(p):
            left_out[reasons[0] if not p.converged else
                     reasons[1] if p.kind == "degenerate" else reasons[2]] += 1
    if any(left_out.values()):
        msg += " (not counted: " + ", ".join(f"{n} {why}" for why, n in left_out.items()
                                              if n) + ")"
    msg += f"; complete: {completeness}"
    if scanned:
        msg += (f" over {th.derivation.state.name} in [{scanned['x'][0]:.3g}, "
                f"{scanned['x'][1]:.3g}], P in [{scanned['P'][0]:.3g}, {scanned['P'][1]:.3g}]")
        if scanned.get("below_floor"):
            msg += (f" and {scanned['below_floor']} below that range from the extrema of the "
                    f"explicit spinodal curve P*({th.derivation.state.name}) (any P > 0)")
    for remark in remarks:
        msg += f"; note: {remark}"
    if not converged:
        msg += "; WARNING: some residuals exceed the tolerance"
    return CriticalSearch(family=th.family.name, parameters=dict(th.values),
                          points=tuple(points), completeness=completeness,
                          method=method_text, scanned_range=scanned, converged=converged,
                          message=msg, convention=convention_record(th.family),
                          admissibility=th.admissibility.to_dict(),
                          ensemble=th.family.ensemble_record())


def _same(a: CriticalPoint, b: CriticalPoint) -> bool:
    return abs(a.x - b.x) <= 1e-9 * abs(a.x) and abs(a.P - b.P) <= 1e-9 * abs(a.P) + 1e-300


# -- certified path ------------------------------------------------------------------
def _exact(value: float) -> sp.Rational:
    return sp.Rational(float(value))  # the exact binary value of the float


def linear_isotherm(T):
    """u and w of the isotherm P = T u - w when T = A + B P is linear in the pressure.

    Parameters
    ----------
    T : sympy expression
        The temperature T(x, P, ...) (any further symbols are kept).

    Returns
    -------
    (u, w) or None
        u = 1/B and w = A/B (cancelled), or None when T is not linear in P (B = 0 or
        B depends on P).  Nothing is assumed about how u and w depend on x.
    """
    P = sy.P
    B = sp.diff(T, P)
    if B == 0 or sp.diff(B, P) != 0:
        return None
    A = sp.expand(T - B * P)
    return sp.cancel(1 / B), sp.cancel(A / B)


def isotherm_form(th: Thermodynamics):
    """The isotherm P(T, x) = T u(x) - w(x) at the bound parameter values.

    Returns
    -------
    (u, w, x) or None
        u = 1/B, w = A/B for T = A(x) + B(x) P (exact rationals for the parameter
        values), or None when T is not linear in P or u, w are not rational in x.
    """
    der = th.derivation
    if der.eos.form == "parametric":
        return None
    x = der.state
    subs = {s: _exact(th.values[s.name]) for s in der.parameters}
    form = linear_isotherm(sp.sympify(der.quantities["T"]).subs(subs))
    if form is None:
        return None
    u, w = form
    try:
        if not (u.is_rational_function(x) and w.is_rational_function(x)):
            return None
    except (TypeError, ValueError):
        return None
    return u, w, x


_isotherm_form = isotherm_form  # the name other modules used before it was public


def positive_roots(expr, x, with_multiplicity: bool = False) -> list:
    """All positive real roots of a polynomial in x (coefficients rounded to 60 digits),
    isolated exactly and refined to relative width 1e-30, as rationals; a repeated root
    is returned once (with its multiplicity, from the square-free decomposition, when
    ``with_multiplicity``).

    Parameters
    ----------
    expr : sympy expression
        A polynomial in x with numeric coefficients.
    x : sympy.Symbol
    with_multiplicity : bool

    Returns
    -------
    list of sympy.Rational, or of (Rational, int) with ``with_multiplicity``
    """
    expr = sp.expand(expr)
    if expr == 0:
        return []
    poly = sp.Poly(expr, x)
    if poly.degree() < 1:
        return []
    coeffs = [sp.Rational(sp.Float(c.evalf(_DPS), _DPS)) for c in poly.all_coeffs()]
    out = []
    # square-free factors are pairwise coprime: each root belongs to exactly one
    for factor, mult in sp.Poly(coeffs, x, domain=sp.QQ).sqf_list()[1]:
        for (lo, hi), _ in factor.intervals():
            if hi <= 0:
                continue
            lo, hi = factor.refine_root(lo, hi,
                                        eps=max(abs(hi), abs(lo)) * sp.Rational(1, 10**30))
            xr = (lo + hi) / 2
            if xr > 0:
                out.append((xr, mult))
    out.sort()
    return out if with_multiplicity else [xr for xr, _ in out]


_positive_roots = positive_roots  # the name used inside this module before it was public


@dataclass(frozen=True)
class _Candidate:
    """A solution of the eliminated system: x_c, P_c, the exact T_c (60 digits, rounded),
    whether u' = w' = 0 there (isolated), the multiplicity of x_c as a root of the
    critical polynomial, a note and the nearby exact system (see CriticalPoint)."""

    x: float
    P: float
    T: float
    isolated: bool = False
    multiplicity: int = 1
    note: str = ""
    nearby: dict | None = None


def _certified_candidates(th: Thermodynamics):
    """Candidates (a list of _Candidate) from exact elimination, a note on the method and
    remarks for the search message (a nearby isolated point no solution stands for);
    or None.

    On the isotherm P(T, x) = T u(x) - w(x) (regular even where T(x, P) has a removable
    singularity, as at an isolated critical point), P_x = P_xx = 0 gives
    T u' = w', T u'' = w''; eliminating T leaves num(u'' w' - u' w'') = 0.  Where u' = 0
    (the mixed derivative d2P/dT dx vanishes) a solution needs w' = 0 too and then
    T = w''/u'': an isolated critical point.  Couplings within the rounding of the
    input of such a system get its isolated point (:func:`_nearby_isolated_points`).
    """
    form = _isotherm_form(th)
    if form is None:
        return None
    u, w, x = form
    u1, u2 = sp.diff(u, x), sp.diff(u, x, 2)
    w1, w2 = sp.diff(w, x), sp.diff(w, x, 2)
    num, den = sp.fraction(sp.cancel(sp.together(u2 * w1 - u1 * w2)))
    num = sp.expand(num)
    if num == 0:
        return [], " (the conditions hold identically in x: no isolated solution)", []
    out = []
    for xr, mult in _positive_roots(num, x, with_multiplicity=True):
        ev = lambda e: sp.N(e.subs(x, xr), 50)  # noqa: E731
        a1, b1 = ev(u1), ev(w1)
        scale_u = abs(ev(u)) / xr + abs(ev(u2)) * xr + sp.Float(1e-300)
        scale_w = abs(ev(w)) / xr + abs(ev(w2)) * xr + sp.Float(1e-300)
        isolated = False
        if abs(a1) > 1e-22 * scale_u:
            Tr = b1 / a1
        else:
            if abs(b1) > 1e-22 * scale_w:
                continue  # u' = 0 but w' != 0: no solution
            a2 = ev(u2)
            if a2 == 0:
                continue
            Tr = ev(w2) / a2
            isolated = True
        Pr = Tr * ev(u) - ev(w)
        if not (Tr.is_real and Pr.is_real):
            continue
        out.append(_Candidate(float(xr), float(Pr), float(Tr), isolated, mult))
    sym = _symbolic_isotherm(th.derivation)
    remarks = []
    if sym is None:
        return out, "", remarks
    for near in _nearby_isolated_points(th, sym):
        if any(c.isolated and abs(c.x / near.x - 1) <= 1e-9 for c in out):
            continue  # the couplings as given are exact: found above
        cluster = [c for c in out if abs(c.x / near.x - 1) <= 4 * near.radius]
        shifts = ", ".join(f"{k} {v:+.1e}" for k, v in near.shifts.items())
        name = x.name
        if near.distance <= ROUNDING_TOLERANCE:
            out = [c for c in out if c not in cluster]
            note = (f"isolated critical point of the nearby exact system: the couplings as "
                    f"given miss its condition (d/d{name} of both u and w in P = T u({name}) "
                    f"- w({name}) vanish at one {name}) by {near.distance:.1e} relative "
                    f"({shifts}), within the rounding of the input (tolerance "
                    f"{ROUNDING_TOLERANCE:.1e})")
            if cluster:
                note += (f"; it replaces {len(cluster)} nearly coincident solution(s) of the "
                         f"couplings as given")
            nearby = {"relative_distance": near.distance, "tolerance": ROUNDING_TOLERANCE,
                      "relative_shifts": dict(near.shifts)}
            out.append(_Candidate(near.x, near.P, near.T, True, note=note, nearby=nearby))
        else:
            note = (f"the couplings are {near.distance:.1e} (relative: {shifts}) from an exact "
                    f"system with an isolated critical point at {name} = {near.x:.6g}, beyond "
                    f"the rounding of the input (tolerance {ROUNDING_TOLERANCE:.1e}): solved as "
                    f"given")
            out = [replace(c, note=note) if c in cluster else c for c in out]
            if not cluster:
                remarks.append(note)
    return out, "", remarks


# -- couplings typed as decimals: the nearby exact system with an isolated point ------
@dataclass(frozen=True)
class _SymbolicIsotherm:
    """u, w of P = T u(x) - w(x) with the continuous parameters kept as symbols, the
    numerators U, W of u', w' and of the critical polynomial N, compiled for mpmath."""

    x: sp.Symbol
    params: tuple
    U: sp.Expr
    W: sp.Expr
    N: sp.Expr
    fn: dict


_SYMBOLIC: dict = {}
#: mpmath's working precision is global: searches in threads take turns in the projection
_MP_LOCK = threading.Lock()


def _symbolic_isotherm(der) -> _SymbolicIsotherm | None:
    """Built once per derivation (parameter-independent)."""
    hit = _SYMBOLIC.get(id(der))
    if hit is not None and hit[0] is der:
        return hit[1]
    result = _build_symbolic_isotherm(der)
    _SYMBOLIC[id(der)] = (der, result)
    return result


def _abs_terms(expr) -> sp.Expr:
    """Sum of |term| over the expanded terms: the scale that rounding errors of expr
    are relative to."""
    return sp.Add(*[sp.Abs(t) for t in sp.Add.make_args(sp.expand(expr))])


def _build_symbolic_isotherm(der) -> _SymbolicIsotherm | None:
    if der.eos.form == "parametric" or not der.parameters:
        return None
    x = der.state
    form = linear_isotherm(sp.sympify(der.quantities["T"]))
    if form is None:
        return None
    u, w = form
    try:
        if not (u.is_rational_function(x) and w.is_rational_function(x)):
            return None
    except (TypeError, ValueError):
        return None
    U, DU = sp.fraction(sp.cancel(sp.diff(u, x)))
    W, DW = sp.fraction(sp.cancel(sp.diff(w, x)))
    N, _ = sp.fraction(sp.cancel(sp.together(sp.diff(u, x, 2) * sp.diff(w, x)
                                             - sp.diff(u, x) * sp.diff(w, x, 2))))
    U, W, N = sp.expand(U), sp.expand(W), sp.expand(N)
    if U == 0 or W == 0 or N == 0:
        return None
    params = tuple(der.parameters)
    args = (x,) + params

    def lam(e):
        return sp.lambdify(args, e, modules="mpmath")

    fn = {"U": lam(U), "W": lam(W), "|U|": lam(_abs_terms(U)), "|W|": lam(_abs_terms(W)),
          "U_x": lam(sp.diff(U, x)), "W_x": lam(sp.diff(W, x)),
          "U_p": [lam(sp.diff(U, q)) for q in params], "W_p": [lam(sp.diff(W, q)) for q in params],
          "DU": lam(DU), "|DU|": lam(_abs_terms(DU)), "DW": lam(DW), "|DW|": lam(_abs_terms(DW)),
          "u": lam(u), "w": lam(w), "u2": lam(sp.diff(u, x, 2)), "w2": lam(sp.diff(w, x, 2)),
          "N": lam(N), "|N|": lam(_abs_terms(N)), "N_k": {}}
    return _SymbolicIsotherm(x=x, params=params, U=U, W=W, N=N, fn=fn)


def _n_derivative(sym: _SymbolicIsotherm, k: int):
    """d^k N/dx^k, compiled on first use."""
    if k not in sym.fn["N_k"]:
        sym.fn["N_k"][k] = sp.lambdify((sym.x,) + sym.params, sp.diff(sym.N, sym.x, k),
                                       modules="mpmath")
    return sym.fn["N_k"][k]


@dataclass(frozen=True)
class _NearbyIsolated:
    x: float
    T: float
    P: float
    shifts: dict       # parameter -> relative shift dq/q onto the exact system
    distance: float    # max |dq/q|
    radius: float      # relative distance from x within which the roots of N are its copies


def _project_onto_isolated(sym: _SymbolicIsotherm, x0, p0: list, max_iter: int = 40):
    """Move (x, couplings) from (x0, p0) onto U(x; p) = W(x; p) = 0.

    Unknowns s = log x and the relative shifts e_q (q -> q (1 + e_q)) of the parameters
    with a non-zero value; equations f = (U/|U|, W/|W|) (|.| the sum of the absolute
    terms).  Each Gauss-Newton step eliminates ds (x is free) through the normal n of
    the column J_s and takes the de of least Euclidean norm: de = -(n.f) h/|h|^2 with
    h = J_e^T n, then ds from J_s ds = -f - J_e de.  Returns (x, p, e) or None when the
    shift leaves NEAR_CONDITION_LIMIT or the iteration does not reach |f| < 1e-45 in
    ``max_iter`` steps (mpmath at _DPS digits; call inside mp.workdps)."""
    fn = sym.fn
    free = [j for j, q in enumerate(p0) if q != 0]
    e = [mp.mpf(0)] * len(p0)
    s = mp.log(x0)
    for _ in range(max_iter):
        x = mp.exp(s)
        p = [q * (1 + ej) for q, ej in zip(p0, e)]
        sU, sW = fn["|U|"](x, *p), fn["|W|"](x, *p)
        if sU == 0 or sW == 0:
            return None
        f = [fn["U"](x, *p) / sU, fn["W"](x, *p) / sW]
        if max(abs(f[0]), abs(f[1])) < mp.mpf(10) ** (-45):
            return x, p, e
        Js = [x * fn["U_x"](x, *p) / sU, x * fn["W_x"](x, *p) / sW]
        Je = [[p0[j] * fn["U_p"][j](x, *p) / sU for j in free],
              [p0[j] * fn["W_p"][j](x, *p) / sW for j in free]]
        n = [Js[1], -Js[0]]
        h = [n[0] * Je[0][i] + n[1] * Je[1][i] for i in range(len(free))]
        hh = sum(v * v for v in h)
        JJ = Js[0] ** 2 + Js[1] ** 2
        if hh == 0 or JJ == 0:
            return None
        g = n[0] * f[0] + n[1] * f[1]
        de = [-g * v / hh for v in h]
        rhs = [-f[r] - sum(Je[r][i] * de[i] for i in range(len(free))) for r in (0, 1)]
        s += (Js[0] * rhs[0] + Js[1] * rhs[1]) / JJ
        for i, j in enumerate(free):
            e[j] += de[i]
        if max((abs(v) for v in e), default=0) > NEAR_CONDITION_LIMIT:
            return None
    return None


def _nearby_isolated_points(th: Thermodynamics, sym: _SymbolicIsotherm) -> list:
    """Exact systems with an isolated critical point within NEAR_CONDITION_LIMIT
    (largest relative shift of the couplings) of the given one.

    Seeds are the positive real roots of U = num(u') and W = num(w') at the given
    (binary) values; each is projected by :func:`_project_onto_isolated`.  At the
    projected system T_c = w''/u'' and P_c = T_c u - w at x_c.  The critical polynomial
    N of that system has a root of some multiplicity m at x_c; under the shift back to
    the given couplings its copies move to relative distance (|N(x_c)| / |c_m|)^(1/m)
    (to leading order), c_m = x_c^m N^(m)(x_c)/m! of the exact system: that is
    ``radius``."""
    x = sym.x
    names = [q.name for q in sym.params]
    exact = {q: _exact(th.values[q.name]) for q in sym.params}
    deg = sp.Poly(sym.N, x).degree()
    found = []
    with _MP_LOCK, mp.workdps(_DPS):
        p0 = [mp.mpf(float(th.values[nm])) for nm in names]
        seeds = _positive_roots(sym.U.subs(exact), x) + _positive_roots(sym.W.subs(exact), x)
        for seed in seeds:
            x0 = mp.mpf(seed.p) / seed.q
            if any(abs(x0 / nb.x - 1) < 1e-12 for nb in found):
                continue
            proj = _project_onto_isolated(sym, x0, p0)
            if proj is None:
                continue
            xc, p, e = proj
            if any(abs(xc / nb.x - 1) < 1e-12 for nb in found):
                continue  # the same exact system reached from another seed
            fn = sym.fn
            # a pole of u' or w' is not a root of the critical conditions
            if (abs(fn["DU"](xc, *p)) <= mp.mpf(10) ** -30 * fn["|DU|"](xc, *p)
                    or abs(fn["DW"](xc, *p)) <= mp.mpf(10) ** -30 * fn["|DW|"](xc, *p)):
                continue
            uv, wv = fn["u"](xc, *p), fn["w"](xc, *p)
            u2, w2 = fn["u2"](xc, *p), fn["w2"](xc, *p)
            if u2 == 0 or abs(u2) * xc**2 <= mp.mpf(10) ** -30 * abs(uv):
                continue  # u'' = 0 too: P_xx = 0 does not fix T
            Tc = w2 / u2
            Pc = Tc * uv - wv
            if not (mp.isfinite(Tc) and mp.isfinite(Pc)) or mp.im(Tc) != 0 or mp.im(Pc) != 0:
                continue
            # multiplicity m of x_c as a root of the exact system's N, and the radius
            scale_N = fn["|N|"](xc, *p)
            radius = None
            for k in range(1, deg + 1):
                ck = abs(_n_derivative(sym, k)(xc, *p)) * xc**k / mp.factorial(k)
                if ck > mp.mpf(10) ** -30 * scale_N:
                    radius = float((abs(fn["N"](xc, *p0)) / ck) ** (mp.mpf(1) / k))
                    break
            if radius is None:
                # every Taylor coefficient of N vanishes: N = 0 identically for the exact
                # system, whose conditions then hold along the whole isotherm T_c (a flat
                # isotherm, not an isolated point)
                continue
            shifts = {names[j]: float(e[j]) for j in range(len(names)) if p0[j] != 0}
            found.append(_NearbyIsolated(
                x=float(xc), T=float(Tc), P=float(Pc), shifts=shifts,
                distance=max((abs(v) for v in shifts.values()), default=0.0),
                radius=radius))
    return found


# -- scanned path --------------------------------------------------------------------
def _scanned_candidates(th: Thermodynamics, pressure_range=None, state_range=None,
                        nx: int = 2400, nP: int = 360):
    x0, P0 = th.typical_state(), th.typical_pressure()
    xlo, xhi = state_range if state_range else (x0 * 1e-3, x0 * 1e3)
    Plo, Phi = pressure_range if pressure_range else (P0 * 1e-5, P0 * 1e4)
    xs = np.geomspace(xlo, xhi, nx)
    Ps = np.geomspace(Plo, Phi, nP)
    if th.derivation.eos.form != "parametric":
        # T linear in P: every critical point is an extremum of the explicit spinodal
        # curve P*(x), found on a fine 1D grid (cheaper and more reliable than a 2D grid)
        nP = 2
        Ps = np.array([Plo, Phi])
    F = th.d("T", "x", xs[:, None], Ps[None, :])
    ok = np.isfinite(F)
    sgn = np.where(F >= 0, 1.0, -1.0)  # a grid point exactly at a root counts as a sign
    change = (sgn[1:] * sgn[:-1] < 0) & ok[1:] & ok[:-1]
    counts = change.sum(axis=0)
    guesses = []
    for j in range(nP - 1):
        if counts[j] == counts[j + 1]:
            continue
        col = j if counts[j] > counts[j + 1] else j + 1
        idx = np.nonzero(change[:, col])[0]
        for a, b in zip(idx[:-1], idx[1:]):
            guesses.append((math.sqrt(xs[a] * xs[b + 1]), Ps[col]))
        for a in idx:  # a pair merging within one grid cell
            guesses.append((xs[a], Ps[col]))
    # T linear in P (the default range): the spinodal curve P*(x) is explicit, so its extrema
    # are found at any P > 0, not only above the grid's floor Plo (a critical point running
    # to P -> 0 as a coupling moves stays visible however small its pressure)
    floor = 0.0 if (th.derivation.eos.form != "parametric" and not pressure_range) else Plo
    guesses += _spinodal_extrema_guesses(th, xlo, xhi, floor, Phi, xs, Ps, F,
                                         P_mid=math.sqrt(Plo * Phi))
    found = []
    for g in guesses:
        sol = _newton(th, *g)
        if sol is not None and xlo <= sol[0] <= xhi and sol[1] <= Phi \
                and (sol[1] > 0 if floor == 0.0 else sol[1] >= Plo):
            if not any(abs(sol[0] - f[0]) <= 1e-9 * sol[0] and abs(sol[1] - f[1]) <= 1e-9 * sol[1]
                       for f in found):
                found.append(sol)
    scanned = {"x": [float(xlo), float(xhi)], "P": [float(Plo), float(Phi)]}
    below = sum(1 for f in found if f[1] < Plo)
    if below:
        scanned["below_floor"] = below
    return found, scanned


def _spinodal_extrema_guesses(th, xlo, xhi, Plo, Phi, xs, Ps, F, n_fine: int = 40000,
                              P_mid=None):
    """Critical points are the extrema of the spinodal curve P*(x) defined by T_x(x, P*) = 0
    (there dP*/dx = -T_xx/T_xP = 0).  Extrema of a 1D curve on a fine grid are found
    even when two critical points are close together, where counting extrema of T(x)
    on a pressure grid can step over them."""
    guesses = []
    if th.derivation.eos.form != "parametric":
        # T linear in P: the spinodal curve is explicit, P* = P0 - T_x(x, P0) / T_xP(x, P0)
        xf = np.geomspace(xlo, xhi, n_fine)
        P0 = P_mid if P_mid is not None else math.sqrt(Plo * Phi)
        with np.errstate(all="ignore"):
            Pst = P0 - th.d("T", "x", xf, P0) / th.d("T", "xP", xf, P0)
        curves = [(xf, Pst)]
    else:
        # general: the roots of T_x along P at each x of the coarse grid (first two)
        curves = []
        sg = np.where(F >= 0, 1.0, -1.0)
        ch = (sg[:, 1:] * sg[:, :-1] < 0) & np.isfinite(F[:, 1:]) & np.isfinite(F[:, :-1])
        for k in range(2):
            Pk = np.full(len(xs), np.nan)
            for i in range(len(xs)):
                idx = np.nonzero(ch[i])[0]
                if len(idx) > k:
                    j = idx[k]
                    f0, f1 = F[i, j], F[i, j + 1]
                    w = f0 / (f0 - f1)
                    Pk[i] = math.exp(math.log(Ps[j]) + w * math.log(Ps[j + 1] / Ps[j]))
            curves.append((xs, Pk))
    for xg, Pg in curves:
        ok = np.isfinite(Pg) & (Pg > Plo) & (Pg < Phi)
        dP = np.diff(Pg)
        good = ok[1:] & ok[:-1]
        s = np.where(dP >= 0, 1.0, -1.0)
        idx = np.nonzero(good[1:] & good[:-1] & (s[1:] * s[:-1] < 0))[0]
        for i in idx[:200]:
            guesses.append((float(xg[i + 1]), float(Pg[i + 1])))
    return guesses


def _newton(th: Thermodynamics, x: float, P: float, max_iter: int = 60):
    """Damped Newton on (x T_x, x^2 T_xx) = 0 in (log x, log P); None if no convergence."""
    u, w = math.log(x), math.log(P)
    for _ in range(max_iter):
        x, P = math.exp(u), math.exp(w)
        T = float(th.T(x, P))
        Tx, Txx = float(th.d("T", "x", x, P)), float(th.d("T", "xx", x, P))
        Txxx = float(th.d("T", "xxx", x, P))
        TxP, TxxP = float(th.d("T", "xP", x, P)), float(th.d("T", "xxP", x, P))
        scale = abs(T) + abs(x * Tx) + 1e-300
        F = np.array([x * Tx, x * x * Txx]) / scale
        J = np.array([[x * Tx + x * x * Txx, x * P * TxP],
                      [2 * x * x * Txx + x**3 * Txxx, x * x * P * TxxP]]) / scale
        if not (np.all(np.isfinite(F)) and np.all(np.isfinite(J))):
            return None
        try:
            step = np.linalg.solve(J, -F)
        except np.linalg.LinAlgError:
            return None
        n = float(np.max(np.abs(step)))
        if n > 0.5:
            step *= 0.5 / n
        u, w = u + step[0], w + step[1]
        if n < 1e-14 and float(np.max(np.abs(F))) < 1e-12:
            return math.exp(u), math.exp(w)
    x, P = math.exp(u), math.exp(w)
    res = _residuals(th, x, P)
    return (x, P) if max(res.values()) <= RESIDUAL_TOLERANCE else None


# -- assembly and classification -----------------------------------------------------
def _residuals(th: Thermodynamics, x: float, P: float) -> dict:
    T = float(th.T(x, P))
    Tx, Txx = float(th.d("T", "x", x, P)), float(th.d("T", "xx", x, P))
    # relative to the size of the terms of T (T itself may be small)
    scale = abs(T) + 1e-300
    return {"x*dT/dx/T": abs(x * Tx) / scale, "x^2*d2T/dx2/T": abs(x * x * Txx) / scale}


def loop_side(th: Thermodynamics, cp: CriticalPoint) -> float:
    """The sign of P - P_c on which the isobar has a loop (two extrema of T(x) near x_c):
    -1 when the swallowtail lies below the critical pressure (as for charged AdS)."""
    return -1.0 if _count_extrema(th, cp.x, cp.P * (1 - 1e-3)) >= 2 else 1.0


def _isotherm_residuals(th: Thermodynamics, x_c: float, P_c: float, T_c: float) -> dict:
    """x P_x / P and x^2 P_xx / P on the isotherm P = T u - w (60 digits)."""
    u, w, x = _isotherm_form(th)
    xr, Tr = sp.Rational(x_c), sp.Rational(T_c)
    ev = lambda e: sp.N(e.subs(x, xr), 60)  # noqa: E731
    Pval = abs(Tr * ev(u) - ev(w)) + sp.Float(1e-300)
    r1 = abs(xr * (Tr * ev(sp.diff(u, x)) - ev(sp.diff(w, x)))) / Pval
    r2 = abs(xr**2 * (Tr * ev(sp.diff(u, x, 2)) - ev(sp.diff(w, x, 2)))) / Pval
    return {"x*dP/dx/P": float(r1), "x^2*d2P/dx2/P": float(r2)}


def _critical_isotherm_neighbours(th: Thermodynamics, x_c: float, T_c: float) -> list:
    """States (x, P) on the isotherm T = T_c at x = x_c (1 +- 1e-5), (1 +- 1e-6), with
    P = T_c u(x) - w(x) at 40 digits; [] without a rational isotherm form.  At an
    isolated point T(x, P) is 0/0 and every isotherm passes through (x_c, P_c), so the
    states next to it at P_c itself need not lie on its own isotherm."""
    form = _isotherm_form(th)
    if form is None:
        return []
    u, w, x = form
    Tr = sp.Rational(T_c)
    out = []
    for eps in (1e-5, -1e-5, 1e-6, -1e-6):
        xx = x_c * (1 + eps)
        out.append((xx, float(sp.N((Tr * u - w).subs(x, sp.Rational(xx)), 40))))
    return out


def _count_extrema(th: Thermodynamics, x_c: float, P: float, half_width: float = 0.7) -> int:
    xs = x_c * np.exp(np.linspace(-half_width, half_width, 20001))
    F = th.d("T", "x", xs, P)
    s = np.where(F[np.isfinite(F)] >= 0, 1.0, -1.0)
    return int(np.sum(s[1:] * s[:-1] < 0))


def _pressure_unit(th: Thermodynamics, x_c: float, P_c: float) -> float:
    """The pressure step unit of the fold test at (x_c, P_c): |P_c|, or where P_c = 0 the
    pressure that changes T by T_c itself, |T_c / (dT/dP)_x| (NaN when neither exists)."""
    if P_c != 0:
        return abs(P_c)
    T_c, TP = float(th.T(x_c, P_c)), float(th.d("T", "P", x_c, P_c))
    unit = abs(T_c / TP) if TP != 0 else math.nan
    return unit if math.isfinite(unit) and unit > 0 else math.nan


def _classify(th: Thermodynamics, x_c: float, P_c: float, gap_P: float = math.inf,
              gap_x: float = 1.0) -> str:
    """'isolated', 'standard' (two extrema of T(x) appear on one side of P_c) or 'degenerate'.

    The pressure is stepped by eps * u on either side, u = :func:`_pressure_unit` (|P_c|,
    or |T_c/T_P| for a solution at P_c = 0); ``gap_P`` is the absolute pressure distance to
    the nearest other solution, which the steps must not reach, and ``gap_x`` the log
    distance in x."""
    TP = float(th.d("T", "P", x_c, P_c))
    TxP = float(th.d("T", "xP", x_c, P_c))
    if TP != 0 and abs(x_c * TxP / TP) < ISOLATED_TOLERANCE:
        return "isolated"
    unit = _pressure_unit(th, x_c, P_c)
    if not math.isfinite(unit):
        return "degenerate"  # no pressure scale to step by: no loop can be shown to form
    width = min(0.7, 0.45 * gap_x)
    top = min(3e-2, gap_P / unit / 3)
    for eps in sorted({min(e, top) for e in (top * 1e-4, top * 1e-2, 1e-3, 1e-2, 3e-2)}):
        if eps <= 1e-14:
            continue
        below = _count_extrema(th, x_c, P_c - eps * unit, width)
        above = _count_extrema(th, x_c, P_c + eps * unit, width)
        if abs(below - above) == 2:
            return "standard"
    return "degenerate"


def _assemble(th: Thermodynamics, x_c: float, P_c: float, gap_P: float = math.inf,
              gap_x: float = 1.0, exact: _Candidate | None = None) -> CriticalPoint | None:
    """The critical point at (x_c, P_c): T, v, r, G, kind, physical flag, residuals.

    ``exact`` is the certified path's record (exact T_c, isolated flag, multiplicity,
    note).  Where the compiled T(x, P) is too ill-conditioned for the residual bound
    (near a removable singularity, T = (P + w)/u with u nearly 0), the residuals are
    taken on the isotherm P = T u(x) - w(x) at 60 digits instead, and the kind from the
    multiplicity m of the root of the critical polynomial N: with tau(x) = w'/u' the
    spinodal temperature, tau' = -N/(den u'^2), so tau has an extremum (a loop forms
    on one side of T_c: 'standard') exactly when m is odd, and 'degenerate' when m is
    even (derived here from P_x = T u' - w')."""
    if not (np.isfinite(x_c) and np.isfinite(P_c)) or x_c <= 0:
        return None
    T_known = exact.T if exact is not None else None
    isolated = exact.isolated if exact is not None else False
    T_c = float(th.T(x_c, P_c))
    G_c = float(th.G(x_c, P_c))
    # an isolated critical point sits on a removable singularity of T(x, P): the compiled
    # value there is 0/0 garbage, so use the exact T_c and a cancelled G
    singular = isolated or not (np.isfinite(T_c) and np.isfinite(G_c))
    if T_known is not None:
        T_c = float(T_known)
    if singular and T_known is not None:
        G_c = float(th.M(x_c, P_c) - T_c * th.S(x_c, P_c))  # M and S are regular there
    if not np.isfinite(T_c):
        return None
    v_c = float(th.v(x_c, P_c)) if th.has("v") else None
    r_c = float(th.quantity("r_plus", x_c, P_c)) if th.has("r_plus") else None
    ratio = P_c * v_c / T_c if (v_c is not None and T_c != 0) else None
    if singular:
        # the compiled functions are 0/0 here: judge the domain just beside the point, on
        # its critical isotherm when there is one (the states the point is the limit of)
        beside = _critical_isotherm_neighbours(th, x_c, T_c) or [(x_c * (1 + 1e-6), P_c)]
        physical = bool(T_c > 0 and P_c > 0
                        and any(bool(th.physical(xx, pp)) for xx, pp in beside))
        kind = "isolated" if isolated else "degenerate"
        residuals = _isotherm_residuals(th, x_c, P_c, T_c)
    else:
        physical = bool(T_c > 0 and P_c > 0 and th.physical(x_c, P_c))
        kind = "isolated" if isolated else _classify(th, x_c, P_c, gap_P, gap_x)
        residuals = _residuals(th, x_c, P_c)
    notes = [exact.note] if exact is not None and exact.note else []
    if (kind == "degenerate" and not singular
            and not math.isfinite(_pressure_unit(th, x_c, P_c))):
        notes.append("kind not tested: at P_c = 0 with T_c = 0 or dT/dP = 0 there is no "
                     "pressure step for the fold test")
    if (exact is not None and not singular
            and not all(float(v) <= RESIDUAL_TOLERANCE for v in residuals.values())):
        precise = _isotherm_residuals(th, x_c, P_c, T_c)
        if all(v <= RESIDUAL_TOLERANCE for v in precise.values()):
            residuals = precise
            kind = "standard" if exact.multiplicity % 2 else "degenerate"
            notes.append(f"T({th.derivation.state.name}, P) is ill-conditioned here: residuals "
                         f"on the isotherm at 60 digits, kind from the root multiplicity "
                         f"{exact.multiplicity}")
    note = ""
    if not physical and T_c > 0 and P_c > 0:
        # a point on the edge of the declared domain (a condition holding with equality,
        # decided by rounding) belongs to its closure: test the neighbourhood
        d = 1e-7
        near = [(x_c * (1 + a * d), P_c * (1 + b * d)) for a in (-1, 0, 1) for b in (-1, 0, 1)]
        if any(bool(th.physical(xx, pp)) for xx, pp in near):
            physical = True
            note = "on the boundary of the declared physical domain"
    converged = all(float(v) <= RESIDUAL_TOLERANCE for v in residuals.values())
    note = "; ".join(notes + ([note] if note else []))
    cp = CriticalPoint(T=T_c, P=P_c, v=v_c, x=x_c, r=r_c, G=G_c, ratio=ratio, kind=kind,
                       physical=physical, residuals=residuals, scale_free={}, note=note,
                       converged=converged,
                       nearby_system=exact.nearby if exact is not None else None)
    return replace(cp, scale_free=scale_free_values(th, cp))


def power_label(name: str, e) -> str:
    """``Q``, ``Q^2`` or ``Q^(1/2)``: a parameter name raised to a rational power e > 0, as in
    the labels of :func:`scale_free_values` (``P_c*Q^2``)."""
    e = sp.nsimplify(e)
    if e == 1:
        return name
    return f"{name}^{e}" if e.q == 1 and e > 0 else f"{name}^({e})"


_power_label = power_label  # the name used inside this module before it was public

def scale_free_key(th) -> tuple:
    """The scale-free combinations that determine every dimensionless result (the
    parameter atlas computes one grid point per distinct key; overlays name it).

    Entries: ``('discrete', ((name, value), ...))`` for the structural parameters; per other
    parameter with a length dimension, ``(name/ref^(n/n_ref), value / ell^n)`` with the
    reference length ell = ref^(1/n_ref) of the first dimensionful parameter that is not
    zero; a dimensionless one as ``(name, value)``; ``('scale', 'none')`` when no parameter
    sets a scale.  Two bindings with equal keys differ only by a length rescaling.
    """
    der = th.derivation
    dims = der.length_dimensions
    ref = next(((nm, n) for nm, n in dims.items() if n != 0 and th.values[nm] != 0), None)
    key = [("discrete", tuple(sorted(der.discrete.items())))]
    for nm, n in dims.items():
        v = float(th.values[nm])
        if ref is None or n == 0:
            key.append((nm, round(v, 12)))
        elif nm != ref[0]:
            ell = abs(float(th.values[ref[0]])) ** (1.0 / ref[1])
            key.append((f"{nm}/{ref[0]}^({n}/{ref[1]})", float(f"{v / ell ** n:.12g}")))
    if ref is None:
        key.append(("scale", "none"))
    return tuple(key)


def scale_free_combinations(th, scale: str) -> dict:
    """The scale-free combinations of the continuous parameters other than ``scale`` (a
    parameter with a length dimension): ``{'mu/Q^3': 0.1}``, a dimensionless parameter
    under its own name.  Empty when ``scale`` is the only parameter that matters."""
    der = th.derivation
    dims = der.length_dimensions
    n = sp.nsimplify(dims[scale])
    ell = abs(float(th.values[scale])) ** (1.0 / float(n))
    out = {}
    for other, m in dims.items():
        if other == scale:
            continue
        v = float(th.values[other])
        if m == 0:
            out[other] = v
        else:
            e = sp.nsimplify(sp.nsimplify(m) / n)
            label = f"{other}/{power_label(scale, e)}" if e > 0 else \
                f"{other}*{power_label(scale, -e)}"
            out[label] = v / ell ** float(m)
    return out


def scale_free_values(th: Thermodynamics, cp: CriticalPoint) -> dict:
    """Dimensionless combinations of the critical data, e.g. {'P_c*Q^2': 1/(96 pi)}.

    The reference length is ell = q_ref^(1/n_ref) for the first continuous parameter
    with a non-zero length dimension and value; [T] = L^-1, [P] = L^-2, [v] = [r] = L,
    [G] = L^(d-3).  Other parameters appear as q / ell^(n_q).
    """
    der = th.derivation
    if not th.family.gravitational:
        return {}
    ref = next(((nm, n) for nm, n in der.length_dimensions.items()
                if n != 0 and th.values[nm] != 0), None)
    if ref is None:
        return {}
    name, n = ref
    n_r = sp.nsimplify(n)
    ell = abs(float(th.values[name])) ** (1.0 / n)
    d = der.dimension
    out = {}

    def put(label, value, dim):
        e = sp.nsimplify(-sp.nsimplify(dim) / n_r)  # value * q^(e) is dimensionless
        key = f"{label}*{_power_label(name, e)}" if e > 0 else f"{label}/{_power_label(name, -e)}"
        out[key] = value * ell ** (-dim)

    put("T_c", cp.T, -1)
    put("P_c", cp.P, -2)
    if cp.v is not None:
        put("v_c", cp.v, 1)
    if cp.r is not None:
        put("r_c", cp.r, 1)
    put("G_c", cp.G, d - 3)
    for other, m in der.length_dimensions.items():
        if other != name and m != 0:
            put(other, float(th.values[other]), m)
    return out


def critical_newton_increment(x, P, T, Tx, Txx, Txxx, TxP, TxxP):
    """The Newton increment (du, dw) in u = log x, w = log P for the critical conditions
    (x T_x, x^2 T_xx) = 0, each scaled by |T| + |x T_x| (elementwise on arrays; non-finite
    where the Jacobian is singular).  Shared by the vectorised critical-point polishers."""
    sc = abs(T) + abs(x * Tx) + 1e-300
    F1, F2 = x * Tx / sc, x * x * Txx / sc
    J11, J12 = (x * Tx + x * x * Txx) / sc, x * P * TxP / sc
    J21, J22 = (2 * x * x * Txx + x**3 * Txxx) / sc, x * x * P * TxxP / sc
    det = J11 * J22 - J12 * J21
    return -(J22 * F1 - J12 * F2) / det, -(-J21 * F1 + J11 * F2) / det
