r"""First-law and Smarr verification.

First law
    :math:`dM = T\,dS + V\,dP + \sum_q \Phi_q\,dq`.  In the (x, P, q)
    coordinates this is one identity per coordinate:

    .. math::
        M_x - T S_x = 0,\quad M_P - T S_P - V = 0,\quad M_q - T S_q - \Phi_q = 0,

    with T and V the *declared* ones when the family gives them (a surface-gravity
    temperature, a proposed volume) and the derived ones otherwise.  The engine
    tries a symbolic proof (declared minus derived simplifies to zero) and always
    also evaluates the identities numerically, from exact derivatives, at random
    physical states; a second, independent numerical check uses central finite
    differences of the compiled M and S.

Smarr relation
    From Euler's theorem for M(S, P, q), homogeneous under a length rescaling
    with [M] = L^(d-3), [S] = L^(d-2), [P] = L^-2 and [q] = L^(n_q):

    .. math::
        (d-3) M = (d-2) T S - 2 P V + \sum_q n_q \Phi_q q

    (Kastor, Ray & Traschen, CQG 26 (2009) 195011).  When it fails, a least-squares
    fit of the n_q tells whether a parameter has a wrong declared dimension, or
    whether no choice can close it (a dimensionful constant without a parameter,
    hence without its conjugate term).

Tolerances: a relative residual below 1e-9 counts as holding (double-precision
evaluation of exact expressions loses a few digits to cancellation; common
practice).
"""
from __future__ import annotations

import threading
import weakref
from dataclasses import dataclass, field

import numpy as np
import sympy as sp

from bhchem.core.results import Result
from bhchem.declare import symbols as sy
from bhchem.core.compiled import Thermodynamics
from bhchem.core import derivation_cache
from bhchem.core.derive import tidy
from bhchem.core.sampling import physical_sample
from bhchem.core.compiled import lambdify_modules
from bhchem.core.compiled import compile_expression
from bhchem.core.identity_cache import MISSING, IdentityCache

#: relative residual below which an identity counts as holding (common practice)
TOLERANCE = 1e-9
#: Richardson-extrapolated differences reach ~1e-10; 1e-6 leaves room near singularities
FD_TOLERANCE = 1e-6


@dataclass(frozen=True, repr=False)
class FirstLawResult(Result):
    """Verdict on dM = T dS + V dP + sum Phi dq.

    Attributes
    ----------
    holds : bool or None
        None when no physical sample point could be found.
    max_residual : float
        Largest relative residual of the exact-derivative identities.
    finite_difference_residual : float
        Largest relative residual of the finite-difference check (independent).
    n_points : int
    proved : bool or None
        True when declared T/V equal the derived ones symbolically (or nothing
        was declared); None when simplification could not decide.
    message : str
    worst_point : dict
    """

    holds: bool | None
    max_residual: float
    finite_difference_residual: float
    n_points: int
    proved: bool | None
    message: str
    worst_point: dict = field(default_factory=dict)


@dataclass(frozen=True, repr=False)
class SmarrResult(Result):
    """Verdict on the Smarr relation derived from the declared length dimensions.

    Attributes
    ----------
    holds : bool or None
        None when not applicable (non-gravitational scaling) or no sample.
    relation : str
        The relation tested, with the numerical coefficients.
    missing : list of str
        When it fails: which parameter lacks a conjugate term or has a wrong dimension.
    max_residual : float
    n_points : int
    message : str
    fitted_dimensions : dict
        Least-squares length dimensions (only when the check failed).
    """

    holds: bool | None
    relation: str
    missing: list
    max_residual: float
    n_points: int
    message: str
    fitted_dimensions: dict = field(default_factory=dict)


def _fmt_coef(c: float) -> str:
    if float(c).is_integer():
        c = int(c)
    return "" if c == 1 else f"{c} "


def smarr_relation_text(th: Thermodynamics) -> str:
    """The Smarr relation with this family's coefficients, e.g. ``M = 2 T S - 2 P V + Phi_Q Q``."""
    d = th.derivation.dimension
    rhs = [f"{_fmt_coef(d - 2)}T S", "- 2 P V"]
    for name, n in th.derivation.length_dimensions.items():
        if n == 0:
            continue
        sign = "+" if n > 0 else "-"
        rhs.append(f"{sign} {_fmt_coef(abs(n))}Phi_{name} {name}")
    return f"{_fmt_coef(d - 3)}M = " + " ".join(rhs)


def check_first_law(th: Thermodynamics, n_points: int = 64, seed: int = 20261202) -> FirstLawResult:
    """Verify the first law at random physical states (see module docstring)."""
    der = th.derivation
    q = der.quantities
    x, P = der.state, sy.P
    args = der.arguments
    # differentiate M and S as declared: a simplified form can cancel catastrophically
    M = der.enthalpy_declared if der.enthalpy_declared is not None else q["M"]
    S = der.entropy_declared if der.entropy_declared is not None else q["S"]
    T = q["T"]
    V = der.volume_declared if der.volume_declared is not None else q["V"]

    # the symbolic proof depends on the derivation only: done once per derivation
    proved = first_law_proved(der) or None

    rows = [(sp.diff(M, x), T * sp.diff(S, x), sp.Integer(0))]
    rows.append((sp.diff(M, P), T * sp.diff(S, P), V))
    for s in der.parameters:
        rows.append((sp.diff(M, s), T * sp.diff(S, s), q[f"Phi_{s.name}"]))
    exprs = [e for row in rows for e in row]
    exprs = [e.replace(sp.exp_polar, sp.exp) if e.has(sp.exp_polar) else e for e in exprs]
    f = sp.lambdify(args, exprs, modules=lambdify_modules(exprs), cse=True)

    sample = physical_sample(th, n_points, seed=seed)
    if sample.n_points == 0:
        return FirstLawResult(None, float("nan"), float("nan"), 0, proved,
                              "no physical state found to test the first law at")
    worst, worst_pt = 0.0, {}
    fd_worst = 0.0
    for bound, xs, Ps in sample.points:
        pv = bound._param_values
        with np.errstate(all="ignore"):
            vals = [np.broadcast_to(np.asarray(v, float), xs.shape)
                    for v in f(xs, Ps, *pv)]
        for i in range(len(rows)):
            a, b, c = vals[3 * i], vals[3 * i + 1], vals[3 * i + 2]
            scale = np.abs(a) + np.abs(b) + np.abs(c) + 1e-300
            rel = np.abs(a - b - c) / scale
            j = int(np.nanargmax(rel)) if np.any(np.isfinite(rel)) else 0
            if not np.isfinite(rel[j]) or rel[j] > worst:
                worst = float(rel[j]) if np.isfinite(rel[j]) else float("inf")
                worst_pt = {"x": float(xs[j]), "P": float(Ps[j]), **bound.values}
        fd_worst = max(fd_worst, _finite_difference_residual(bound, xs, Ps))
    holds = bool(worst <= TOLERANCE and fd_worst <= FD_TOLERANCE)
    if holds:
        how = "proved symbolically and " if proved else ""
        msg = (f"holds: {how}max relative residual {worst:.1e} at {sample.n_points} "
               f"random physical states")
    else:
        culprit = "the declared temperature differs from (dM/dS)_P" \
            if der.family.temperature is not None and proved is not True else \
            "the identities are violated"
        msg = (f"fails: {culprit}; max relative residual {worst:.1e} "
               f"(finite differences {fd_worst:.1e}) at x={worst_pt.get('x', float('nan')):.6g}, "
               f"P={worst_pt.get('P', float('nan')):.6g}")
    return FirstLawResult(holds, worst, fd_worst, sample.n_points, proved, msg, worst_pt)


#: the first-law verdict of each bound family, kept while the bound object lives (every
#: analysis whose meaning rests on the first law asks for it); nothing is stored on the object
_FIRST_LAW_VERDICTS: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()
_FIRST_LAW_LOCK = threading.Lock()


#: symbolic first-law proofs kept, by derivation (identity); the oldest dropped beyond 256;
#: also on disk, next to the derivation (keyed by this module's source text as well)
_PROOFS = IdentityCache(256)
_PROOF_CODE = ("core/checks.py",)


def first_law_proved(derivation) -> bool:
    """Whether the first law holds identically for a derivation, whatever the parameters.

    True when the family declares neither T nor V (then T = M_x/S_x, V = M_P - T S_P and
    Phi_q = M_q - T S_q by construction), or when the declared ones equal those
    derivatives symbolically.  Cached per derivation: it does not depend on parameter
    values, so analyses of many bindings of one family pay for it once.
    """
    hit = _PROOFS.get(derivation)
    if hit is not MISSING:
        return hit
    if derivation.family.temperature is None and derivation.volume_declared is None:
        return _PROOFS.put(derivation, True)   # by construction: nothing to prove
    stored = derivation_cache.load_note(derivation.family, derivation.discrete,
                                       "first-law-proved", _PROOF_CODE)
    if isinstance(stored, bool):   # proved (or not) by an earlier run: seconds of sympy
        return _PROOFS.put(derivation, stored)
    q, args = derivation.quantities, derivation.arguments
    proved = True
    if derivation.family.temperature is not None:
        proved = tidy(q["T"] - derivation.temperature_derived, args) == 0
    if proved and derivation.volume_declared is not None:
        proved = tidy(derivation.volume_declared - q["V"], args) == 0
    derivation_cache.store_note(derivation.family, derivation.discrete, "first-law-proved",
                                bool(proved), _PROOF_CODE)
    return _PROOFS.put(derivation, bool(proved))


def first_law_verdict(th: Thermodynamics) -> FirstLawResult:
    """:func:`check_first_law` with its defaults, computed once per bound family.

    Parameters
    ----------
    th : Thermodynamics

    Returns
    -------
    FirstLawResult
        The same object for every call with the same bound family.
    """
    with _FIRST_LAW_LOCK:
        hit = _FIRST_LAW_VERDICTS.get(th)
    if hit is not None:
        return hit
    verdict = check_first_law(th)
    with _FIRST_LAW_LOCK:
        _FIRST_LAW_VERDICTS[th] = verdict
    return verdict


def _finite_difference_residual(bound: Thermodynamics, xs, Ps) -> float:
    """Independent check: Richardson-extrapolated central differences of the compiled
    M and S against the compiled T and V.

    Per point, the smallest residual over relative steps 1e-2 ... 1e-5 is kept: a
    real violation of the first law shows at every step, truncation error (near a
    singularity such as v -> b) and rounding error do not.
    """
    T = bound.T(xs, Ps)
    V = bound.quantity("V", xs, Ps) if bound.derivation.volume_declared is None else \
        _declared_volume(bound, xs, Ps)
    size = 1e-8 * (np.abs(bound.M(xs, Ps)) + np.abs(T * bound.S(xs, Ps)))

    def diff(f, ex, eP, h):
        def central(step):
            return (f(xs * (1 + ex * step), Ps * (1 + eP * step))
                    - f(xs * (1 - ex * step), Ps * (1 - eP * step))) / (2 * step)
        return (4 * central(h / 2) - central(h)) / 3  # derivative w.r.t. log x or log P

    worst = np.zeros(np.shape(xs))
    for ex, eP, rhs in ((1.0, 0.0, 0.0), (0.0, 1.0, V * Ps)):
        best = np.full(np.shape(xs), np.inf)
        M0, S0 = np.abs(bound.M(xs, Ps)), np.abs(T * bound.S(xs, Ps))
        for h in (1e-2, 1e-3, 1e-4, 1e-5):
            dM = diff(bound.M, ex, eP, h)
            dS = diff(bound.S, ex, eP, h)
            # rounding of the differences themselves (a large state-independent constant in
            # M, as in Lovelock gravity, costs digits): about 4 eps |M| / h
            rounding = 4 * np.finfo(float).eps * (M0 + S0) / h
            scale = np.abs(dM) + np.abs(T * dS) + np.abs(rhs) + size + rounding + 1e-300
            # what rounding alone can produce is not a violation (a derivative far below
            # the size of M, e.g. the P-dependence of a Lovelock hole at small r+, is
            # otherwise judged by its rounding noise)
            rel = np.maximum(np.abs(dM - T * dS - rhs) - rounding, 0.0) / scale
            best = np.fmin(best, rel)
        worst = np.fmax(worst, best)
    return float(np.nanmax(worst)) if worst.size else 0.0


def _declared_volume(bound, xs, Ps):
    f = compile_expression(bound.derivation.arguments, bound.derivation.volume_declared)
    return f(xs, Ps, *bound.parameter_values)


def _declared_inconsistency(th, sample) -> list[str]:
    """The declared T or V that is not the derivative of M, with where and by how much.

    The Smarr relation is Euler's theorem applied to M with T = (dM/dS)_P and
    V = (dM/dP)_S; a declared T or V that differs from these breaks it even when M and S
    are perfectly homogeneous, so this is diagnosed before the dimensions."""
    der = th.derivation
    out = []
    checks = []
    if der.family.temperature is not None:
        checks.append(("temperature T", "(dM/dS)_P",
                       lambda b, x, P: b.T(x, P), lambda b, x, P: b.quantity("T_derived", x, P)))
    if der.volume_declared is not None:
        checks.append(("volume V", "(dM/dP)_S", _declared_volume,
                       lambda b, x, P: b.V(x, P)))
    for what, exact, declared, derived in checks:
        worst, where = 0.0, None
        for bound, xs, Ps in sample.points:
            a, b = np.asarray(declared(bound, xs, Ps), float), np.asarray(derived(bound, xs, Ps),
                                                                          float)
            rel = np.abs(a - b) / (np.abs(b) + 1e-300)
            i = int(np.nanargmax(rel)) if np.any(np.isfinite(rel)) else 0
            if np.isfinite(rel[i]) and rel[i] > worst:
                worst, where = float(rel[i]), (float(xs[i]), float(Ps[i]), dict(bound.values))
        if worst > TOLERANCE and where is not None:
            x, P, vals = where
            at = ", ".join([f"{der.state}={x:.6g}", f"P={P:.6g}"]
                           + [f"{k}={v:g}" for k, v in vals.items()])
            out.append(f"the declared {what} is not {exact}: it differs by up to "
                       f"{100 * worst:.3g}% (at {at}); M and the entropy are then not a "
                       f"consistent pair, which breaks the first law and the Smarr relation "
                       f"(fix the declared {what.split()[0]}, or the entropy)")
    return out


def check_smarr(th: Thermodynamics, n_points: int = 64, seed: int = 20261202) -> SmarrResult:
    """Verify the Smarr relation (see module docstring)."""
    der = th.derivation
    if not der.family.gravitational:
        return SmarrResult(None, "", [], float("nan"), 0,
                           "not applicable: the family does not scale like gravity "
                           "(no Euler homogeneity in lengths)")
    d = der.dimension
    relation = smarr_relation_text(th)
    sample = physical_sample(th, n_points, seed=seed)
    if sample.n_points == 0:
        return SmarrResult(None, relation, [], float("nan"), 0,
                           "no physical state found to test the Smarr relation at")
    names = list(der.length_dimensions)
    rows_b, rows_A, scales = [], [], []
    for bound, xs, Ps in sample.points:
        M = bound.M(xs, Ps)
        TS = bound.T(xs, Ps) * bound.S(xs, Ps)
        V = bound.V(xs, Ps) if der.volume_declared is None else _declared_volume(bound, xs, Ps)
        base = (d - 3) * M - (d - 2) * TS + 2 * Ps * V
        cols = [bound.potential(nm, xs, Ps) * bound.values[nm] for nm in names]
        rows_b.append(base)
        rows_A.append(np.column_stack(cols) if cols else np.zeros((xs.size, 0)))
        scale = np.abs((d - 3) * M) + np.abs((d - 2) * TS) + np.abs(2 * Ps * V)
        for c, nm in zip(cols, names):
            scale = scale + np.abs(der.length_dimensions[nm] * c)
        scales.append(scale + 1e-300)
    b = np.concatenate(rows_b)
    A = np.concatenate(rows_A, axis=0)
    scale = np.concatenate(scales)
    n_decl = np.array([der.length_dimensions[nm] for nm in names], dtype=float)
    resid = b - (A @ n_decl if names else 0.0)
    rel = np.abs(resid) / scale
    worst = float(np.nanmax(rel)) if np.all(np.isfinite(rel)) else float("inf")
    if worst <= TOLERANCE:
        return SmarrResult(True, relation, [], worst, sample.n_points,
                           f"holds: {relation} (max relative residual {worst:.1e} at "
                           f"{sample.n_points} random physical states)")
    # diagnose, in order: a declared T or V that is not the derivative of M; then the
    # length dimensions (which would close the relation?); then a hidden constant
    missing, fitted = _declared_inconsistency(th, sample), {}
    if missing:
        return SmarrResult(False, relation, missing, worst, sample.n_points,
                           f"fails: {relation} is violated (max relative residual {worst:.1e}); "
                           + "; ".join(missing), fitted)
    if names:
        w = 1.0 / scale
        n_fit, *_ = np.linalg.lstsq(A * w[:, None], b * w, rcond=None)
        fit_rel = float(np.nanmax(np.abs(b - A @ n_fit) / scale))
        fitted = {nm: float(v) for nm, v in zip(names, n_fit)}
    else:
        fit_rel = worst
    if fit_rel <= 1e-7:
        for nm, nf, nd in zip(names, fitted.values(), n_decl):
            if abs(nf - nd) > 1e-6:
                missing.append(f"parameter {nm}: declared length dimension {nd:g}, but M "
                               f"scales as if it were {nf:.6g}")
    if not missing:
        missing.append("M and S are not homogeneous in the declared variables: a dimensionful "
                       "constant has no parameter, so its conjugate term is missing from the "
                       "Smarr relation (declare it as a parameter with its length dimension)")
    return SmarrResult(False, relation, missing, worst, sample.n_points,
                       f"fails: {relation} is violated (max relative residual {worst:.1e}); "
                       + "; ".join(missing), fitted)
