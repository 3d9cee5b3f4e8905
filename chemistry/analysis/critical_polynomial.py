r"""The critical polynomial: exact thresholds in the couplings where critical points appear,
merge, or cross T = 0 or P = 0.

For T = A(x) + B(x) P (any family whose temperature is linear in the pressure) the
isotherm is P = T u(x) - w(x) with u = 1/B, w = A/B, and the critical conditions
P_x = P_xx = 0 give T u' = w', T u'' = w''; eliminating T leaves

.. math:: E(x) \equiv u''(x)\,w'(x) - u'(x)\,w''(x) = 0,

on which :math:`T_c = w'/u'` and :math:`P_c = T_c u - w`
(:func:`bhchem.analysis.critical.linear_isotherm`; the same elimination as the certified
path of :mod:`bhchem.analysis.critical`, here with the couplings kept as symbols).

*Rational families* (u, w rational in x): the critical polynomial N is the numerator of E,
with the powers of x that divide it removed (x = 0 is outside the domain).

*Algebraic families* (one square root: u, w rational in x and s = sqrt(R(x)), as the
Born--Infeld field energy): with the substitution s^2 = R the condition reads
p0 + p1 s = 0 (p0, p1 rational in x); N is the numerator of the norm p0^2 - R p1^2, whose
roots are those of p0 + p1 sqrt(R) = 0 and of its conjugate p0 - p1 sqrt(R) = 0.  A root
of N counts only where p0 + p1 s vanishes with s = +sqrt(R) (checked at 40 digits).  T_c
and P_c are rationalised the same way for the resultants below.

If N contains only powers of x^m (m > 1) it is written in y = x^m (the Euler--Heisenberg
cubic lives in y = r^2).  It is shown in the family's scale-free variables: the reference
parameter (the first with a non-zero length dimension and value, as
:func:`bhchem.analysis.critical.scale_free_values`) is set to 1, every other symbol then
stands for its scale-free combination (``r`` for r/Q, ``a`` for a/Q^2; homogeneity of N
makes this exact).

Thresholds (:func:`polynomial_thresholds`) along one coupling c, the others fixed:

* ``critical-count``: the discriminant of N in y, and its leading and constant
  coefficients (a root through y = infinity or y = 0, the edges of the domain);
* ``critical-temperature-zero`` / ``critical-pressure-zero``: the resultant in x of N with
  the numerator of T_c or P_c; with the denominator, a critical point that passes through a
  pole of T_c or P_c (T_c, P_c -> +-infinity: the sign changes there too; the message says
  so);
* ``isolated-critical-point`` (rational families): the resultant of the numerators of u'
  and w' (they share a root: every isotherm passes through one point, Dolan et al. 2014).

Each real root of these polynomials in the interval is a candidate; it is returned only if
the number of *physical* critical points -- positive real roots x of N that are genuine
(see above) with T_c > 0 and P_c > 0 -- differs just below and just above it, in the way
its kind says (:func:`_real_change`: a count event changes the number of positive roots, a
T_c or P_c crossing does not, so a coincident root of another equation is not taken for it) (exact root
isolation at rational couplings beside the candidate); an isolated-critical-point candidate
only if u' and w' share a positive root there with T_c = w''/u'' > 0 and P_c > 0.  Other
declared state conditions of the family are not applied to the count.  With rational fixed
couplings the values are exact algebraic numbers (``exact``, sympy text).
"""
from __future__ import annotations

import math
import threading
from dataclasses import dataclass

import mpmath as mp
import numpy as np
import sympy as sp

from bhchem.analysis.critical import (RESIDUAL_TOLERANCE, linear_isotherm, positive_roots,
                                      power_label, critical_newton_increment)
from bhchem.analysis.events import EventCurve, StructureEvent
from bhchem.core.compiled import Thermodynamics, bind
from bhchem.core.identity_cache import MISSING, IdentityCache
from bhchem.core.results import Result
from bhchem.errors import BhchemError, InvalidArgumentError

#: digits of the high-precision checks (genuine roots, signs of T_c and P_c, residuals)
_DPS = 40
#: relative size of |p0 + p1 sqrt(R)| below which a root of the norm is genuine
_GENUINE = 1e-20
#: two positive roots of u' and w' (each refined to 1e-30 relative) closer than this
#: (relative) are one common root
_COMMON_ROOT = sp.Rational(1, 10**20)
_LOCK = threading.Lock()


@dataclass(frozen=True, repr=False)
class CriticalPolynomial(Result):
    """The critical polynomial of a family, couplings symbolic.

    Attributes
    ----------
    family : str
    available : bool
        False when the family has no polynomial form (``message`` says why).
    state : str
        The state variable x.
    variable : str or None
        The polynomial's variable: the state variable or a power of it (``r^2``).
    expression : str or None
        N in the scale-free variables (sympy text, expanded).
    factored : str or None
        The same, factored over the rationals (sympy text).
    factors : tuple
        ((factor text, multiplicity), ...), constants left out.
    scale_free : dict
        Symbol -> the scale-free combination it stands for (``{"r": "r/Q", "a": "a/Q^2"}``);
        the reference parameter is set to 1.
    couplings : tuple of str
        The couplings kept as symbols (the continuous parameters).
    rationalised : str or None
        The substitution used to remove a square root, or None.
    message : str
    """

    family: str
    available: bool
    state: str
    variable: str | None
    expression: str | None
    factored: str | None
    factors: tuple
    scale_free: dict
    couplings: tuple
    rationalised: str | None
    message: str

    def to_dict(self) -> dict:
        return {"variable": self.variable, "expression": self.expression,
                "factored": self.factored,
                "factors": [[f, m] for f, m in self.factors],
                "scale_free": dict(self.scale_free), "available": self.available,
                "rationalised": self.rationalised, "message": self.message}

    def summary(self) -> str:
        return f"{self.family}: {self.factored if self.available else self.message}"


# -- the symbolic system, built once per derivation -------------------------------------
@dataclass(frozen=True)
class _System:
    x: sp.Symbol
    params: tuple            # coupling symbols
    N: sp.Expr               # polynomial in x (params symbolic), no x^k factor
    m: int                   # N is a polynomial in x^m
    y: sp.Symbol
    Ny: sp.Expr              # N with x^m -> y
    R: sp.Expr | None        # radicand (None: rational family)
    s: sp.Symbol | None
    cond: tuple              # (p0, p1): the condition is p0 + p1 s = 0
    Tc: sp.Expr              # T_c = w'/u' (s symbol for sqrt(R))
    Pc: sp.Expr              # P_c = T_c u - w
    T_parts: tuple           # (numerator, denominator) polynomials in x of T_c (rationalised)
    P_parts: tuple
    UW: tuple | None         # numerators of u', w' without x^k (rational families)
    iso: tuple | None        # (Tc_iso, Pc_iso) = (w''/u'', T u - w) for isolated points
    fn: dict                 # mpmath functions of (x, *params)


_SYSTEMS = IdentityCache(32)


def _system(der):
    """(system, None) or (None, reason); cached per derivation."""
    hit = _SYSTEMS.get(der)
    if hit is not MISSING:
        return hit
    try:
        out = _build(der)
    except (TypeError, ValueError, NotImplementedError, sp.PolynomialError) as exc:
        out = (None, f"no polynomial form ({type(exc).__name__}: {exc})")
    return _SYSTEMS.put(der, out)


def _radicand(expr, x):
    """The single square-root radicand R of expr (None if there is none); raises ValueError
    with the reason when there are several or a root of another order."""
    bases = []
    for a in expr.atoms(sp.Pow):
        if a.exp.is_Rational and a.exp.q != 1 and a.base.has(x):
            if a.exp.q != 2:
                raise ValueError(f"a root of order {a.exp.q} in T")
            if not any(sp.simplify(a.base - b) == 0 for b in bases):
                bases.append(a.base)
    if len(bases) > 1:
        raise ValueError(f"{len(bases)} different square roots in T")
    return bases[0] if bases else None


def _with_s(expr, R, s):
    """expr with every R^(k/2) replaced by s^k."""
    return expr.replace(lambda e: e.is_Pow and e.exp.is_Rational and e.exp.q == 2
                        and sp.simplify(e.base - R) == 0,
                        lambda e: s**e.exp.p)


def _numerator_poly(expr, x):
    """Numerator of expr as an expanded polynomial in x, without the powers of x and
    constant factors dividing it."""
    num, _ = sp.fraction(sp.cancel(sp.together(expr)))
    num = sp.expand(num)
    if num == 0:
        return num
    poly = sp.Poly(num, x)
    k = min(mon[0] for mon in poly.monoms())
    num = sp.expand(num / x**k)
    # a factor of the couplings alone (its zero makes the whole polynomial vanish) goes too
    _, prim = sp.Poly(num, x).primitive()
    return _drop_constant(prim.as_expr())


class _Algebra:
    """Rational functions of x, or of x and s = sqrt(R(x)) kept in the normal form
    a0(x) + a1(x) s (s^2 = R); d/dx acts with ds/dx = R' s / (2 R)."""

    def __init__(self, x, s, R):
        self.x, self.s, self.R = x, s, R
        self.ds = sp.cancel(sp.diff(R, x) * s / (2 * R)) if s is not None else None

    def d(self, F):
        if self.s is None:
            return sp.cancel(sp.diff(F, self.x))
        return self.reduce(sp.diff(F, self.x) + sp.diff(F, self.s) * self.ds)

    def _pair(self, e):
        poly = sp.Poly(sp.expand(e), self.s)
        a0, a1 = sp.S.Zero, sp.S.Zero
        for (k,), c in poly.terms():
            if k % 2:
                a1 += c * self.R ** (k // 2)
            else:
                a0 += c * self.R ** (k // 2)
        return a0, a1

    def reduce(self, F):
        """F in the normal form (cancelled)."""
        if self.s is None:
            return sp.cancel(F)
        n, d = sp.fraction(sp.cancel(sp.together(F)))
        n0, n1 = self._pair(n)
        d0, d1 = self._pair(d)
        den = sp.cancel(d0**2 - self.R * d1**2)
        return (sp.cancel((n0 * d0 - self.R * n1 * d1) / den)
                + self.s * sp.cancel((n1 * d0 - n0 * d1) / den))

    def norm(self, F):
        """(a0 + a1 s)(a0 - a1 s) = a0^2 - R a1^2 for F in normal form: it vanishes where
        F or its conjugate does."""
        if self.s is None:
            return F
        a0, a1 = F.coeff(self.s, 0), F.coeff(self.s, 1)
        return sp.cancel(sp.together(a0**2 - self.R * a1**2))

    def denominator(self, F):
        """The denominator of F in normal form (a polynomial in x): F has a pole only where
        it vanishes."""
        _, den = sp.fraction(sp.together(F))
        return den


def _build(der):
    if der.eos.form == "parametric":
        return None, ("no polynomial form (the equation of state is parametric: T is not an "
                      "explicit function of the state variable and P)")
    x = der.state
    T = sp.sympify(der.quantities["T"])
    form = linear_isotherm(T)
    if form is None:
        return None, "no polynomial form (T is not linear in P)"
    u, w = form
    params = tuple(der.parameters)
    try:
        R = _radicand(u + w, x)
    except ValueError as exc:
        return None, f"no polynomial form ({exc})"
    s = sp.Symbol("s_root", positive=True) if R is not None else None
    if R is not None:
        u, w = _with_s(u, R, s), _with_s(w, R, s)
        gens = (x, s) + params
        R = sp.cancel(sp.together(R))
    else:
        gens = (x,) + params
    for e in (u, w):
        if not sp.together(e).is_rational_function(*gens):
            return None, ("no polynomial form (T involves functions other than rational "
                          "ones and one square root)")
    alg = _Algebra(x, s, R)
    u1, w1 = alg.d(u), alg.d(w)
    u2, w2 = alg.d(u1), alg.d(w1)
    E = alg.reduce(u2 * w1 - u1 * w2)
    Tc = alg.reduce(w1 / u1)
    Pc = alg.reduce(Tc * u - w)
    p0, p1 = (E, sp.S.Zero) if s is None else (E.coeff(s, 0), E.coeff(s, 1))
    N = _numerator_poly(alg.norm(E), x)
    T_parts = (_numerator_poly(alg.norm(Tc), x), _numerator_poly(alg.denominator(Tc), x))
    P_parts = (_numerator_poly(alg.norm(Pc), x), _numerator_poly(alg.denominator(Pc), x))
    if N == 0:
        return None, ("no polynomial form (the critical conditions hold identically in the "
                      "state variable)")
    if not N.has(x):
        return None, ("no polynomial form (the critical conditions have no solution: the "
                      "eliminated condition is a non-zero constant)")
    poly = sp.Poly(N, x)
    m = 0
    for (k,) in poly.monoms():
        m = math.gcd(m, k)
    m = max(m, 1)
    y = sp.Symbol("y", positive=True)
    Ny = sp.expand(N.subs(x, y ** sp.Rational(1, m))) if m > 1 else N.subs(x, y)
    UW, iso = None, None
    if R is None:
        U, W = _numerator_poly(u1, x), _numerator_poly(w1, x)
        if U.has(x) and W.has(x):
            UW = (U, W)
            Ti = w2 / u2
            iso = (Ti, Ti * u - w)
    args = (x,) + params + ((s,) if s is not None else ())

    def lam(e):
        return sp.lambdify(args, e, modules="mpmath")

    def lam_np(e):
        return sp.lambdify(args, e, modules="numpy")

    fn = {"p0": lam(p0), "p1": lam(p1), "Tc": lam(Tc), "Pc": lam(Pc),
          "R": sp.lambdify((x,) + params, R, modules="mpmath") if R is not None else None,
          "np": {"p0": lam_np(p0), "p1": lam_np(p1), "Tc": lam_np(Tc), "Pc": lam_np(Pc),
                 "R": (sp.lambdify((x,) + params, R, modules="numpy") if R is not None
                       else None),
                 "coeffs": sp.lambdify(params, sp.Poly(Ny, y).all_coeffs(), modules="numpy")}}
    if iso is not None:
        fn["Ti"], fn["Pi"] = lam(iso[0]), lam(iso[1])
        fn["np"]["Ti"], fn["np"]["Pi"] = lam_np(iso[0]), lam_np(iso[1])
    return _System(x=x, params=params, N=N, m=m, y=y, Ny=Ny, R=R, s=s, cond=(p0, p1),
                   Tc=Tc, Pc=Pc, T_parts=T_parts, P_parts=P_parts, UW=UW, iso=iso,
                   fn=fn), None


def _thermo(family, params) -> Thermodynamics:
    return family if isinstance(family, Thermodynamics) else bind(family, **params)


def _reference(th, der):
    """(name, length dimension) of the reference parameter, or None."""
    return next(((nm, n) for nm, n in der.length_dimensions.items()
                 if n != 0 and th.values[nm] != 0), None)




def _scale_free_map(th, sysm):
    """({symbol: 1 for the reference}, {name: combination text})."""
    der = th.derivation
    ref = _reference(th, der)
    if ref is None:
        return {}, {}
    name, n = ref
    n = sp.nsimplify(n)
    sub = {q: 1 for q in sysm.params if q.name == name}
    labels = {}
    s_dim = der.dimension - 2 if sysm.x.name == "S" else 1
    e = sp.nsimplify(s_dim) / n
    labels[sysm.x.name] = (f"{sysm.x.name}/{power_label(name, e)}" if e > 0 else
                           f"{sysm.x.name}*{power_label(name, -e)}")
    for q in sysm.params:
        mq = sp.nsimplify(der.length_dimensions.get(q.name, 0))
        if q.name == name or mq == 0:
            continue
        e = mq / n
        labels[q.name] = (f"{q.name}/{power_label(name, e)}" if e > 0 else
                          f"{q.name}*{power_label(name, -e)}")
    return sub, labels


def _drop_constant(expr):
    """expr without its rational content (a number times a primitive polynomial)."""
    expr = sp.expand(expr)
    if expr == 0 or expr.is_number:
        return expr if expr == 0 else sp.S.One
    _, prim = expr.as_content_primitive()
    return sp.expand(prim)


def _clean(expr, var):
    """Drop a constant factor: the primitive part, with a leading coefficient in ``var``
    that is positive for positive couplings."""
    expr = sp.expand(expr)
    if expr == 0:
        return expr
    prim = _drop_constant(expr)
    if prim.has(var):
        lc = sp.Poly(prim, var).LC()
        if lc.could_extract_minus_sign():
            prim = -prim
    return sp.expand(prim)


def critical_polynomial(family, **params) -> CriticalPolynomial:
    """The critical polynomial N of a family, factored, in its scale-free variables.

    Parameters
    ----------
    family : str, Family or Thermodynamics
    **params
        Parameter values: they fix the discrete parameters (d, k) and choose the
        reference parameter of the scale-free variables; the couplings stay symbolic.

    Returns
    -------
    CriticalPolynomial
        ``available`` False (with the reason) when T is not linear in P, not algebraic
        with at most one square root, or the equation of state is parametric.

    Examples
    --------
    >>> cp = critical_polynomial("rn-ads", Q=1.0)   # r_c = sqrt(6) Q (Kubiznak & Mann 2012)
    >>> cp.variable, cp.factored, cp.scale_free
    ('r^2', 'y - 6', {'y': '(r/Q)^2'})
    """
    th = _thermo(family, params)
    sysm, reason = _system(th.derivation)
    name = th.family.name
    state = th.derivation.state.name
    if sysm is None:
        return CriticalPolynomial(family=name, available=False, state=state, variable=None,
                                  expression=None, factored=None, factors=(),
                                  scale_free={}, couplings=(), rationalised=None,
                                  message=reason)
    sub, labels = _scale_free_map(th, sysm)
    Y = _clean(sysm.Ny.subs(sub), sysm.y)
    if sysm.m == 1:
        Y = Y.subs(sysm.y, sysm.x)
    fac = sp.factor_list(Y)
    factors = tuple((str(f), int(k)) for f, k in fac[1])
    variable = state if sysm.m == 1 else f"{state}^{sysm.m}"
    if sysm.m > 1:
        labels = dict(labels)
        labels["y"] = f"({labels.get(state, state)})^{sysm.m}" if state in labels else variable
    rational = None
    if sysm.R is not None:
        rational = (f"s = sqrt({sp.sstr(sysm.R)}), s^2 = R: condition p0 + p1 s = 0, "
                    f"N = numerator of p0^2 - R p1^2 (roots of the conjugate branch removed "
                    f"by a 40-digit check)")
    factored = str(sp.factor(Y))
    msg = (f"critical polynomial in {variable}" + (" (y = " + variable + ")" if sysm.m > 1
                                                      else "")
           + f", degree {sp.Poly(Y, sysm.y if sysm.m > 1 else sysm.x).degree()}"
           + (", rationalised" if rational else ""))
    if sysm.m == 1:
        shown_var = sysm.x.name
    else:
        shown_var = "y"
    return CriticalPolynomial(family=name, available=True, state=state, variable=variable,
                              expression=str(Y), factored=factored, factors=factors,
                              scale_free={k: v for k, v in labels.items()
                                          if k == shown_var or k in {q.name for q in
                                                                     sysm.params}},
                              couplings=tuple(q.name for q in sysm.params),
                              rationalised=rational, message=msg)


class NoPolynomialFormError(BhchemError, ValueError):
    """The family's critical conditions have no polynomial form (see the message)."""


def _rational(value) -> sp.Rational:
    """A coupling as an exact rational: the number as typed (0.3 -> 3/10)."""
    if isinstance(value, sp.Basic):
        return sp.nsimplify(value)
    return sp.Rational(repr(float(value)))


def _power_of(expr, x) -> int:
    """The largest m such that expr is a polynomial in x^m."""
    m = 0
    for (k,) in sp.Poly(expr, x).monoms():
        m = math.gcd(m, k)
    return max(m, 1)


def _resultant(f, g, x):
    """Res_x(f, g), in x^m when both are polynomials in x^m."""
    if not g.has(x):
        return sp.S.Zero if g == 0 else sp.S.One
    m = math.gcd(_power_of(f, x), _power_of(g, x))
    if m > 1:
        z = sp.Symbol("z_res", positive=True)
        f, g = f.subs(x, z ** sp.Rational(1, m)), g.subs(x, z ** sp.Rational(1, m))
        f, g = sp.expand(f), sp.expand(g)
        x = z
    return sp.resultant(f, g, x)


def _candidate_polynomials(sysm, sub, c):
    """[(F(c), kind, method)] whose real roots are the candidate thresholds."""
    x, y = sysm.x, sysm.y
    N = _numerator_poly(sysm.N.subs(sub), x)
    if not N.has(x):
        return []
    Ny = sp.expand(N.subs(x, y ** sp.Rational(1, sysm.m)))
    out = []
    py = sp.Poly(Ny, y)
    out.append((sp.discriminant(Ny, y) if py.degree() > 1 else sp.S.One, "critical-count",
                "discriminant of the critical polynomial"))
    out.append((py.LC(), "critical-count", "leading coefficient (a root through infinity)"))
    out.append((py.coeff_monomial(1), "critical-count", "constant coefficient (a root "
                "through the edge x = 0 of the domain)"))
    for parts, kind, what in ((sysm.T_parts, "critical-temperature-zero", "T_c"),
                              (sysm.P_parts, "critical-pressure-zero", "P_c")):
        for part, how in zip(parts, ("numerator", "denominator")):
            g = sp.expand(part.subs(sub))
            if g.has(x):
                out.append((_resultant(N, g, x), kind, f"resultant with the {how} of {what}"))
    if sysm.UW is not None:
        U, W = (sp.expand(e.subs(sub)) for e in sysm.UW)
        if U.has(x) and W.has(x):
            out.append((_resultant(U, W, x), "isolated-critical-point",
                        "resultant of the numerators of u' and w'"))
    return [(sp.expand(F), k, m) for F, k, m in out]


def _radical(root, pf):
    """A real root of degree <= 4 as radicals (real ones only), else as given."""
    if pf.degree() < 3 or pf.degree() > 4 or not isinstance(root, sp.CRootOf):
        return root
    value = sp.N(root, _DPS)
    for r in sp.roots(pf, multiple=True):
        if not r.has(sp.I) and abs(sp.N(r, _DPS) - value) <= 1e-30 * (1 + abs(value)):
            return sp.nsimplify(sp.radsimp(r))
    return root


def _real_roots_in(F, c, lo, hi):
    """[(exact or None, value as mpf, factor)] for the real roots of F(c) in [lo, hi]."""
    F = sp.expand(F)
    if F == 0 or not F.has(c):
        return []
    found = []
    with _LOCK, mp.workdps(_DPS + 10):     # the values carry 50 digits
        for f, _ in sp.factor_list(F)[1]:
            if f.has(c):
                found += _factor_roots(f, c, lo, hi)
    return found


def _factor_roots(f, c, lo, hi) -> list:
    """_real_roots_in for one irreducible factor (inside ``mp.workdps``)."""
    found = []
    pf = sp.Poly(f, c)
    rational = pf.domain.is_ZZ or pf.domain.is_QQ
    if rational:
        roots = [(_radical(r, pf), mp.mpf(str(sp.N(r, _DPS + 10))))
                 for r in pf.real_roots()]
    else:
        roots = [(None, mp.mpf(str(sp.re(r)))) for r in pf.nroots(n=_DPS + 10)
                 if abs(sp.im(r)) <= 1e-30 * (1 + abs(sp.re(r)))]
        if pf.degree() <= 2:
            exact = [e for e in sp.solve(f, c) if e.is_real]
            roots = [(min(exact, key=lambda e: abs(sp.N(e, _DPS) - v)) if exact
                      else None, v) for _, v in roots]
    for r, v in roots:
        if lo <= v <= hi:
            if r is not None and pf.degree() <= 2:
                # radsimp only: nsimplify of an exact number with a long rational part
                # "simplifies" it into a different radical (2 alpha2^2 at a grid alpha2
                # became 2^(43/46) 3^(37/46) ..., off by 2e-17)
                r = sp.radsimp(r)
            if r is not None and abs(mp.mpf(str(sp.N(r, _DPS + 10))) - v) > \
                    mp.mpf(10) ** (-_DPS) * max(1, abs(v)):
                r = None                # never report an "exact" value that is not the root
            found.append((r, v, f))
    return found


def _evaluate(sysm, fname, xv, pv, sv):
    args = [xv] + pv + ([sv] if sysm.s is not None else [])
    return sysm.fn[fname](*args)


def _positive_roots_mp(expr, y) -> list:
    """The distinct positive real roots of a polynomial in y with exact coefficients, as
    mpf at the working precision: isolated exactly (sympy), polished by a bracketing
    solver (call inside ``mp.workdps``).  Coefficients that are not rational (pi) go through
    :func:`bhchem.analysis.critical.positive_roots` (rounded to 60 digits)."""
    poly = sp.Poly(expr, y)
    if not (poly.domain.is_ZZ or poly.domain.is_QQ):
        return [mp.mpf(str(sp.N(r, mp.mp.dps + 10))) for r in positive_roots(expr, y)]
    sqf = poly.sqf_part()
    coeffs = [mp.mpf(c.p) / c.q if hasattr(c, "q") else mp.mpf(int(c))
              for c in (sp.Rational(a) for a in sqf.all_coeffs())]
    out = []
    for (a, b), _ in sqf.intervals():
        if b <= 0:
            continue
        if a <= 0:
            a, b = sqf.refine_root(a, b, eps=b / 4)
            if b <= 0 or a < 0:
                continue
        if a == b:
            out.append(mp.mpf(a.p) / a.q)
            continue
        lo, hi = mp.mpf(a.p) / a.q, mp.mpf(b.p) / b.q
        out.append(mp.findroot(lambda t: mp.polyval(coeffs, t), (lo, hi), solver="anderson"))
    return out


def _tally(roots) -> tuple:
    """(all, T_c > 0, P_c > 0, physical) counts of a list of (x, T_c, P_c)."""
    return (len(roots), sum(1 for r in roots if r[1] > 0), sum(1 for r in roots if r[2] > 0),
            sum(1 for r in roots if r[1] > 0 and r[2] > 0))


def _real_change(kind: str, below: tuple, above: tuple, pole: bool = False) -> bool:
    """Whether the counts (see :func:`_tally`) either side of a candidate show an event of
    this kind: the physical count changes, and -- so that a coincident root of another
    equation is not mistaken for it -- for 'critical-count' the number of genuine positive
    roots changes, for a T_c (P_c) crossing it does not, nor the number with P_c > 0
    (T_c > 0), while the number with T_c > 0 (P_c > 0) does.  Through a pole (``pole``: the
    candidate zeroes the denominator of T_c or P_c; both may change sign there at once) only
    the number of genuine positive roots must stay."""
    if below[3] == above[3]:
        return False
    if pole:
        return below[0] == above[0]
    if kind == "critical-count":
        return below[0] != above[0]
    if kind == "critical-temperature-zero":
        return below[0] == above[0] and below[2] == above[2] and below[1] != above[1]
    if kind == "critical-pressure-zero":
        return below[0] == above[0] and below[1] == above[1] and below[2] != above[2]
    return False


def _physical_roots(sysm, values: dict):
    """[(x, T_c, P_c)] for the genuine positive roots of N (T_c, P_c real and finite, of any
    sign) at the given (exact) coupling values; None if N vanishes identically there."""
    Ny = sp.expand(sysm.Ny.subs(values))
    if Ny == 0:
        return None
    if not Ny.has(sysm.y):
        return []
    out = []
    with _LOCK, mp.workdps(_DPS):
        pv = [mp.mpf(str(sp.N(values[q], _DPS + 10))) for q in sysm.params]
        for yv in _positive_roots_mp(Ny, sysm.y):
            xv = yv ** (mp.mpf(1) / sysm.m)
            try:
                sv = None
                if sysm.s is not None:
                    Rv = sysm.fn["R"](xv, *pv)
                    if Rv < 0:
                        continue
                    sv = mp.sqrt(Rv)
                    p0 = _evaluate(sysm, "p0", xv, pv, sv)
                    p1 = _evaluate(sysm, "p1", xv, pv, sv)
                    if abs(p0 + p1 * sv) > _GENUINE * (abs(p0) + abs(p1 * sv)):
                        continue        # a root of the conjugate branch
                Tv = _evaluate(sysm, "Tc", xv, pv, sv)
                Pv = _evaluate(sysm, "Pc", xv, pv, sv)
            except ZeroDivisionError:
                continue
            if mp.im(Tv) == 0 and mp.im(Pv) == 0 and mp.isfinite(Tv) and mp.isfinite(Pv):
                out.append((float(xv), float(Tv), float(Pv)))
    return out


def _isolated_point(sysm, values: dict):
    """(x, T_c, P_c) of an isolated critical point (u' and w' share a positive root x with
    T_c = w''/u'' > 0, P_c > 0) at the given exact values, or None.

    The common root is found numerically, not by a symbolic gcd: the positive roots of u'
    and of w' (coefficients at 60 digits, isolated exactly, refined to 1e-30 relative) that
    agree to ``_COMMON_ROOT`` relative.  A simple common root agrees to ~1e-30 and a double
    one to ~1e-28; a symbolic gcd over the coefficient field of an algebraic coupling (a
    radical such as 2^(43/46) 3^(37/46) ... for alpha3 = 2 alpha2^2 at a grid alpha2) took
    minutes."""
    U, W = (sp.expand(e.subs(values)) for e in sysm.UW)
    if not (U.has(sysm.x) and W.has(sysm.x)):
        return None
    xu, xw = positive_roots(U, sysm.x), positive_roots(W, sysm.x)
    common = [a for a in xu if any(abs(a - b) <= _COMMON_ROOT * abs(a) for b in xw)]
    with _LOCK, mp.workdps(_DPS):
        pv = [mp.mpf(str(sp.N(values[q], _DPS + 10))) for q in sysm.params]
        for xr in common:
            xv = mp.mpf(xr.p) / xr.q
            try:
                Tv, Pv = sysm.fn["Ti"](xv, *pv), sysm.fn["Pi"](xv, *pv)
            except ZeroDivisionError:
                continue
            if Tv > 0 and Pv > 0:
                return float(xv), float(Tv), float(Pv)
    return None


def _event_scale_free(th, values: dict) -> dict:
    """The scale-free combinations q / ref^(n_q/n_ref) at the given values."""
    der = th.derivation
    dims = der.length_dimensions
    ref = next(((nm, n) for nm, n in dims.items() if n != 0 and values.get(nm, 0) != 0), None)
    if ref is None:
        return {}
    name, n = ref
    ell = abs(float(values[name])) ** (1.0 / n)
    out = {}
    for nm, m in dims.items():
        if nm == name or m == 0:
            continue
        e = sp.nsimplify(m) / sp.nsimplify(n)
        label = (f"{nm}/{power_label(name, e)}" if e > 0 else f"{nm}*{power_label(name, -e)}")
        out[label] = float(values[nm]) / ell**m
    return out


def _system_for(family, params):
    th = _thermo(family, params)
    sysm, reason = _system(th.derivation)
    if sysm is None:
        raise NoPolynomialFormError(f"family {th.family.name}: {reason}")
    return th, sysm


def _coupling_symbol(sysm, th, name):
    for q in sysm.params:
        if q.name == name:
            return q
    raise InvalidArgumentError(f"{name!r} is not a continuous parameter of "
                               f"{th.family.name} (choose one of "
                               f"{', '.join(q.name for q in sysm.params)})")


def polynomial_thresholds(family, coupling: str, interval, **fixed) -> list:
    """Exact thresholds along one coupling where the critical points change.

    Parameters
    ----------
    family : str or Family
    coupling : str
        The continuous parameter that moves.
    interval : (float, float)
        Its range [lo, hi].
    **fixed
        The other parameters (discrete ones and couplings; defaults otherwise), taken as
        exact rationals as typed (0.3 -> 3/10).

    Returns
    -------
    list of StructureEvent
        Sorted by value; kinds 'critical-count', 'critical-temperature-zero',
        'critical-pressure-zero', 'isolated-critical-point' (module docstring).  Each is a
        root of its defining polynomial F(c) (``method``), confirmed by counting the
        physical critical points just below and above it (``message``); ``exact`` is the
        algebraic number (sympy text: a radical for degree <= 2, else a CRootOf) when the
        fixed couplings are rational, ``value`` its nearest double (checked at 40 digits:
        ``residuals['value - exact']``, relative), ``residuals['F(value)']`` the relative
        residual |F| / sum |terms of F| at the double.

    Raises
    ------
    NoPolynomialFormError
        The family has no critical polynomial.
    InvalidArgumentError
        An unknown coupling or an empty interval.

    Examples
    --------
    >>> ev = polynomial_thresholds("rn-ads", "Q", (0.1, 2.0))   # Q is the only scale
    >>> [e.kind for e in ev]
    []
    """
    lo, hi = (float(v) for v in interval)
    if not lo < hi:
        raise InvalidArgumentError(f"interval needs lo < hi, got ({lo:g}, {hi:g})")
    th, sysm = _system_for(family, {**fixed, coupling: 0.5 * (lo + hi)})
    c = _coupling_symbol(sysm, th, coupling)
    sub = {q: _rational(th.values[q.name]) for q in sysm.params if q is not c}
    cands = []
    for F, kind, method in _candidate_polynomials(sysm, sub, c):
        for exact, v, f in _real_roots_in(F, c, mp.mpf(lo), mp.mpf(hi)):
            cands.append((v, exact, f, kind, method))
    cands.sort(key=lambda t: t[0])
    values = sorted({float(t[0]) for t in cands})
    width = hi - lo
    events, seen = [], set()
    for v, exact, f, kind, method in cands:
        key = (kind, float(v))
        if key in seen:
            continue
        seen.add(key)
        fv = float(v)
        others = [abs(o - fv) for o in values if abs(o - fv) > 1e-13 * max(1.0, abs(fv))]
        h = min(1e-7 * max(abs(fv), width), min(others, default=width) / 3)
        if kind == "isolated-critical-point":
            if exact is None:
                continue
            point = _isolated_point(sysm, {**sub, c: exact})
            if point is None:
                continue
            change = f"isolated critical point at {sysm.x.name} = {point[0]:.12g}, " \
                     f"T_c = {point[1]:.12g}, P_c = {point[2]:.12g}"
        else:
            below = _physical_roots(sysm, {**sub, c: _rational(fv - h)})
            above = _physical_roots(sysm, {**sub, c: _rational(fv + h)})
            if below is None or above is None:
                continue
            below, above = _tally(below), _tally(above)
            pole = "denominator" in method
            if not _real_change(kind, below, above, pole):
                continue
            change = (f"{below[3]} -> {above[3]} physical critical point(s) "
                      f"(T_c > 0, P_c > 0) across it, of {below[0]} -> {above[0]} positive "
                      f"root(s)" + ("; the critical point passes through a pole of "
                                    f"{'T_c' if 'T_c' in method else 'P_c'} "
                                    "(-> +-infinity), not through zero" if pole else ""))
        with _LOCK, mp.workdps(_DPS):
            fval = abs(sp.N(f.subs(c, sp.Rational(fv)), _DPS))
            scale = sum(abs(sp.N(t.subs(c, sp.Rational(fv)), _DPS))
                        for t in sp.Add.make_args(sp.expand(f)))
            rel = float(fval / scale) if scale else float(fval)
            dv = float(abs(mp.mpf(fv) - v) / abs(v)) if v != 0 else abs(fv)
        at = {**{q.name: float(sub[q]) for q in sub}, coupling: fv}
        events.append(StructureEvent(
            kind=kind, coupling=coupling, value=fv,
            fixed={q.name: float(sub[q]) for q in sub} | dict(th.derivation.discrete),
            exact=str(exact) if exact is not None else None,
            scale_free=_event_scale_free(th, at),
            residuals={"F(value)": rel, "value - exact": dv},
            converged=dv <= 2.3e-16, method=method,
            message=f"{kind} at {coupling} = {exact if exact is not None else fv}: {change}; "
                    f"F = {sp.sstr(f)}"))
    events.sort(key=lambda e: e.value)
    return events


def _count_numeric(sysm, params: np.ndarray) -> tuple:
    """The counts of :func:`_tally` (genuine positive roots of N; with T_c > 0; with P_c > 0;
    physical) at one point of coupling space, in double precision (for tracing curves)."""
    fnp = sysm.fn["np"]
    coeffs = np.array([complex(v) for v in np.broadcast_arrays(*fnp["coeffs"](*params))],
                      dtype=complex).real
    nz = np.nonzero(np.abs(coeffs) > 1e-300)[0]
    if len(nz) == 0:
        return (-1, -1, -1, -1)
    coeffs = coeffs[nz[0]:]
    roots = np.roots(coeffs) if len(coeffs) > 1 else np.array([])
    ys = roots[(np.abs(roots.imag) <= 1e-9 * np.abs(roots)) & (roots.real > 0)].real
    found = []
    with np.errstate(all="ignore"):
        for yv in ys:
            xv = yv ** (1.0 / sysm.m)
            extra = ()
            if sysm.s is not None:
                Rv = fnp["R"](xv, *params)
                if not Rv >= 0:
                    continue
                sv = math.sqrt(Rv)
                p0, p1 = fnp["p0"](xv, *params, sv), fnp["p1"](xv, *params, sv)
                if abs(p0 + p1 * sv) > 1e-6 * (abs(p0) + abs(p1 * sv)):
                    continue
                extra = (sv,)
            Tv, Pv = fnp["Tc"](xv, *params, *extra), fnp["Pc"](xv, *params, *extra)
            if np.isfinite(Tv) and np.isfinite(Pv):
                found.append((xv, Tv, Pv))
    return _tally(found)


def polynomial_threshold_curves(family, couplings, box, n: int = 161, **fixed) -> list:
    """The threshold curves in the plane of two couplings.

    Each candidate polynomial of :func:`polynomial_thresholds` (discriminant, edge
    coefficients, resultants) is now a polynomial F(c1, c2); each of its irreducible factors
    is traced over the box: at ``n`` values of c1 the real roots c2 in the box (the
    univariate polynomial's companion eigenvalues, each polished by Newton on F at 40 digits
    through mpmath's ``polyroots``), or, for a factor free of c2, the vertical line.  A point
    is kept when the event is real there: the number of physical critical points differs at
    c2 -+ h (double-precision count, h = 1e-6 of the box height), or, for the
    isolated-critical-point kind, u' and w' share a positive root with T_c > 0 and P_c > 0.
    Runs of kept points with the same number of roots form one curve.

    Parameters
    ----------
    family : str or Family
    couplings : (str, str)
        The x-axis and y-axis couplings.
    box : ((float, float), (float, float))
        Their ranges.
    n : int
        Number of c1 values (the curves' resolution).
    **fixed
        The other parameters (exact rationals as typed).

    Returns
    -------
    list of EventCurve
        ``equation`` is the factor F = 0 (sympy text, in the couplings' own names),
        ``residuals`` |F| / sum |terms of F| at each point.

    Raises
    ------
    NoPolynomialFormError, InvalidArgumentError
    """
    c1n, c2n = couplings
    (lo1, hi1), (lo2, hi2) = ((float(a), float(b)) for a, b in box)
    if not (lo1 < hi1 and lo2 < hi2):
        raise InvalidArgumentError(f"box needs lo < hi on both axes, got {box!r}")
    th, sysm = _system_for(family, {**fixed, c1n: 0.5 * (lo1 + hi1),
                                    c2n: 0.5 * (lo2 + hi2)})
    c1, c2 = _coupling_symbol(sysm, th, c1n), _coupling_symbol(sysm, th, c2n)
    sub = {q: _rational(th.values[q.name]) for q in sysm.params if q not in (c1, c2)}
    names = [q.name for q in sysm.params]
    i1, i2 = names.index(c1n), names.index(c2n)
    base = np.array([float(sub.get(q, 0)) for q in sysm.params])
    h = 1e-6 * (hi2 - lo2)
    xs = np.linspace(lo1, hi1, n)
    curves = []
    done = set()
    for F, kind, method in _candidate_polynomials(sysm, sub, None):
        if F == 0:
            continue
        for f, _ in sp.factor_list(F)[1]:
            if not (f.has(c1) or f.has(c2)) or (kind, f) in done:
                continue
            done.add((kind, f))
            pts = _trace(f, c1, c2, xs, lo1, hi1, lo2, hi2)
            if kind == "isolated-critical-point":
                isolated_at = _isolated_checker(sysm, sub, c1, c2)
            kept = []
            for run in pts:
                seg = []
                for p1, p2 in run:
                    params = base.copy()
                    params[i1], params[i2] = p1, p2
                    if kind == "isolated-critical-point":
                        ok = isolated_at(p1, p2)
                    else:
                        lo_p, hi_p = params.copy(), params.copy()
                        if f.has(c2):
                            lo_p[i2], hi_p[i2] = p2 - h, p2 + h
                        else:
                            hx = 1e-6 * (hi1 - lo1)
                            lo_p[i1], hi_p[i1] = p1 - hx, p1 + hx
                        ok = _real_change(kind, _count_numeric(sysm, lo_p),
                                          _count_numeric(sysm, hi_p),
                                          "denominator" in method)
                    if ok:
                        seg.append((p1, p2))
                    elif len(seg) > 1:
                        kept.append(seg)
                        seg = []
                    else:
                        seg = []
                if len(seg) > 1:
                    kept.append(seg)
            fl = sp.lambdify((c1, c2), f, modules="numpy")
            fa = sp.lambdify((c1, c2), _abs_terms(f), modules="numpy")
            for seg in kept:
                arr = np.array(seg, float)
                with np.errstate(all="ignore"):
                    res = np.abs(fl(arr[:, 0], arr[:, 1])) / fa(arr[:, 0], arr[:, 1])
                res = np.broadcast_to(res, (len(arr),)).astype(float)
                curves.append(EventCurve(
                    kind=kind, couplings=(c1n, c2n), points=arr, residuals=res,
                    converged=bool(np.all(res <= 1e-12)), equation=f"{sp.sstr(f)} = 0",
                    method=method + ", traced over " + c1n,
                    message=f"{kind}: {sp.sstr(f)} = 0, {len(arr)} points in "
                            f"{c1n} in [{arr[0, 0]:.6g}, {arr[-1, 0]:.6g}]"))
    return curves


def _abs_terms(expr):
    return sp.Add(*[sp.Abs(t) for t in sp.Add.make_args(sp.expand(expr))])


def _isolated_checker(sysm, sub, c1, c2):
    """A function (c1, c2) -> bool: u' and w' share a positive root x with T_c = w''/u''
    > 0 and P_c > 0 there (double precision)."""
    U, W = (sp.expand(e.subs(sub)) for e in sysm.UW)
    x = sysm.x
    if not U.has(x):
        return lambda p1, p2: False
    coeffs = sp.lambdify((c1, c2), sp.Poly(U, x).all_coeffs(), modules="numpy")
    wf = sp.lambdify((x, c1, c2), W, modules="numpy")
    wabs = sp.lambdify((x, c1, c2), _abs_terms(W), modules="numpy")
    names = [q for q in sysm.params]
    fixed = {q: float(v) for q, v in sub.items()}

    def check(p1, p2):
        params = [fixed.get(q, p1 if q is c1 else p2) for q in names]
        cs = np.array([float(v) for v in coeffs(p1, p2)])
        nz = np.nonzero(cs)[0]
        if len(nz) == 0 or nz[0] == len(cs) - 1:
            return False
        xs = np.roots(cs[nz[0]:])
        return _isolated_ok(sysm, xs, lambda xv: (wf(xv, p1, p2), wabs(xv, p1, p2)), params)
    return check


def _isolated_ok(sysm, xs, wvals, params) -> bool:
    fnp = sysm.fn["np"]
    for xr in xs:
        if abs(xr.imag) > 1e-9 * abs(xr) or xr.real <= 0:
            continue
        xv = xr.real
        wv, wa = wvals(xv)
        if abs(wv) > 1e-8 * wa:
            continue
        with np.errstate(all="ignore"):
            Tv, Pv = fnp["Ti"](xv, *params), fnp["Pi"](xv, *params)
        if np.isfinite(Tv) and np.isfinite(Pv) and Tv > 0 and Pv > 0:
            return True
    return False


def _trace(f, c1, c2, xs, lo1, hi1, lo2, hi2) -> list:
    """Runs [(c1, c2), ...] of real points of f = 0 in the box, split where the number of
    roots in the box changes."""
    if not f.has(c2):
        roots = [float(sp.re(r)) for r in sp.Poly(f, c1).nroots(n=30)
                 if abs(sp.im(r)) <= 1e-25 and lo1 <= sp.re(r) <= hi1]
        ys = np.linspace(lo2, hi2, len(xs))
        return [[(r, float(v)) for v in ys] for r in roots]
    poly = sp.Poly(f, c2)
    coeff_fns = [sp.lambdify(c1, a, modules="mpmath") for a in poly.all_coeffs()]
    runs, current, count = [], {}, None
    with _LOCK, mp.workdps(30):
        for xv in xs:
            cs = [mp.mpf(fn(mp.mpf(float(xv)))) for fn in coeff_fns]
            while cs and cs[0] == 0:
                cs = cs[1:]
            if len(cs) < 2:
                roots = []
            else:
                try:
                    roots = mp.polyroots(cs, maxsteps=200, extraprec=60)
                except mp.libmp.libhyper.NoConvergence:
                    roots = []
            ys = sorted(float(mp.re(r)) for r in roots
                        if abs(mp.im(r)) <= 1e-20 * (1 + abs(r)) and lo2 <= mp.re(r) <= hi2)
            if count is not None and len(ys) != count:
                runs.extend(current.values())
                current = {}
            count = len(ys)
            for k, yv in enumerate(ys):
                current.setdefault(k, []).append((float(xv), yv))
    runs.extend(current.values())
    return [r for r in runs if len(r) > 1]


# -- many coupling values at once: roots of the critical polynomial, vectorised ------------
@dataclass(frozen=True, repr=False)
class CriticalPointsOver(Result):
    """Physical critical points for many values of one coupling (from the polynomial).

    Attributes
    ----------
    family, coupling : str
    values : numpy.ndarray
        The coupling values, as given.
    points : tuple
        Per value, a tuple of (T_c, P_c, x_c) sorted by P_c: the physical critical points
        (genuine positive roots of N, polished, converged, T_c > 0, P_c > 0, every active
        state condition of the binding holding, T, S and G finite).
    residuals : tuple
        Per value, per point: max(|x T_x|, |x^2 T_xx|) / |T| after the Newton polish.
    converged : bool
        Every candidate root met RESIDUAL_TOLERANCE after the polish (a root that did not is
        counted in ``message`` and left out of ``points``, never returned unchecked).
    method : str
    message : str
    unresolved : tuple of int
        Indices of the values with a candidate root that did not converge or could not be
        decided (an isolated critical point, where T(x, P) is 0/0; a nearly multiple root;
        coefficients that are not finite): a caller that needs them searches those values
        in full.
    """

    family: str
    coupling: str
    values: np.ndarray
    points: tuple
    residuals: tuple
    converged: bool
    method: str
    message: str
    unresolved: tuple = ()

    def counts(self) -> np.ndarray:
        """Number of physical critical points at each value."""
        return np.array([len(p) for p in self.points])


def _batched_roots(C: np.ndarray) -> np.ndarray:
    """All complex roots of each row of C (n, deg + 1), leading coefficient first, by the
    eigenvalues of the companion matrices (one batched LAPACK call); rows whose leading
    coefficient vanishes get NaN in the slots of their missing roots."""
    n, k = C.shape
    deg = k - 1
    out = np.full((n, deg), np.nan + 0j)
    if deg == 0:
        return out
    lead = C[:, 0]
    good = np.abs(lead) > 1e-300
    if np.any(good):
        Cg = C[good] / lead[good, None]
        comp = np.zeros((int(good.sum()), deg, deg))
        comp[:, 0, :] = -Cg[:, 1:]
        if deg > 1:
            idx = np.arange(deg - 1)
            comp[:, idx + 1, idx] = 1.0
        out[good] = np.linalg.eigvals(comp)
    for i in np.nonzero(~good)[0]:
        row = C[i]
        nz = np.nonzero(np.abs(row) > 1e-300)[0]
        if len(nz) and nz[0] < deg:
            r = np.roots(row[nz[0]:])
            out[i, :len(r)] = r
    return out


def critical_points_over(family, coupling: str, values, newton_steps: int = 2,
                         **fixed) -> CriticalPointsOver:
    """Critical points at many values of one coupling from the critical polynomial.

    The coefficients of N(y) are evaluated for all values at once, all roots come from the
    batched companion-matrix eigenvalues (numpy), the positive real ones become candidates
    x = y^(1/m), a root of the conjugate branch of a rationalised N is dropped (|p0 + p1 s|
    above 1e-6 of its terms), T_c and P_c follow from the isotherm (T_c = w'/u',
    P_c = T_c u - w), and each candidate gets ``newton_steps`` Newton steps on the original
    conditions (x T_x, x^2 T_xx) = 0 in (log x, log P) with the compiled derivatives of T,
    then its residuals.

    Parameters
    ----------
    family : str or Family
    coupling : str
    values : array_like
    newton_steps : int
    **fixed
        The other parameters.

    Returns
    -------
    CriticalPointsOver

    Raises
    ------
    NoPolynomialFormError, InvalidArgumentError
    """
    vals = np.atleast_1d(np.asarray(values, dtype=float))
    if vals.ndim != 1 or len(vals) == 0 or not np.all(np.isfinite(vals)):
        raise InvalidArgumentError("values must be a non-empty 1D array of finite numbers")
    th, sysm = _system_for(family, {**fixed, coupling: float(vals[0])})
    c = _coupling_symbol(sysm, th, coupling)
    n = len(vals)
    params = [vals if q is c else np.full(n, float(th.values[q.name])) for q in sysm.params]
    fnp = sysm.fn["np"]
    with np.errstate(all="ignore"):
        C = np.stack([np.broadcast_to(np.asarray(a, dtype=float), (n,))
                      for a in fnp["coeffs"](*params)], axis=1)
        roots = _batched_roots(C)
    # roots at y = 0 (the edge of the domain; exact zeros of trailing coefficients) are not
    # candidates
    big = np.nanmax(np.where(np.isfinite(roots), np.abs(roots), 0.0), axis=1, initial=0.0)
    roots = np.where(np.abs(roots) <= 1e-12 * big[:, None], np.nan, roots)
    real = (np.abs(roots.imag) <= 1e-7 * np.abs(roots)) & (roots.real > 0)
    rows, cols = np.nonzero(real)
    ys = roots.real[rows, cols]
    P_args = [p[rows] for p in params]
    with np.errstate(all="ignore"):
        xs = ys ** (1.0 / sysm.m)
        keep = np.isfinite(xs)
        extra = []
        if sysm.s is not None:
            Rv = fnp["R"](xs, *P_args)
            sv = np.sqrt(np.where(Rv >= 0, Rv, np.nan))
            p0 = fnp["p0"](xs, *P_args, sv)
            p1 = fnp["p1"](xs, *P_args, sv)
            keep &= np.abs(p0 + p1 * sv) <= 1e-6 * (np.abs(p0) + np.abs(p1 * sv))
            extra = [sv]
        Pc = np.broadcast_to(fnp["Pc"](xs, *P_args, *extra), xs.shape).astype(float)
    # a genuine root where T_c = w'/u' is 0/0 (an isolated critical point) is not decided here
    undecided = {int(i) for i in rows[keep & ~np.isfinite(Pc)]}
    undecided |= {int(i) for i in np.nonzero(~np.all(np.isfinite(C), axis=1))[0]}
    # a nearly multiple root (eigenvalues of a cluster split into complex pairs of relative
    # size ~ eps^(1/m)): a merge of critical points or an isolated point, decided in full
    near = ((np.abs(roots.imag) > 1e-7 * np.abs(roots))
            & (np.abs(roots.imag) <= 1e-3 * np.abs(roots)) & (roots.real > 0))
    undecided |= {int(i) for i in np.nonzero(np.any(near, axis=1))[0]}
    keep &= np.isfinite(Pc) & (Pc > 0)
    rows, xs, Pc = rows[keep], xs[keep], Pc[keep]
    P_args = [p[rows] for p in params]
    comp = th.compiled
    fT = comp.function("T")
    d = {k: comp.derivative("T", k) for k in ("x", "xx", "xxx", "xP", "xxP")}
    u, w = np.log(xs), np.log(Pc)
    with np.errstate(all="ignore"):
        for _ in range(newton_steps):
            x, P = np.exp(u), np.exp(w)
            T = fT(x, P, *P_args)
            Tx, Txx = d["x"](x, P, *P_args), d["xx"](x, P, *P_args)
            Txxx, TxP, TxxP = (d["xxx"](x, P, *P_args), d["xP"](x, P, *P_args),
                               d["xxP"](x, P, *P_args))
            du, dw = critical_newton_increment(x, P, T, Tx, Txx, Txxx, TxP, TxxP)
            ok = np.isfinite(du) & np.isfinite(dw)
            u, w = u + np.where(ok, du, 0.0), w + np.where(ok, dw, 0.0)
        x, P = np.exp(u), np.exp(w)
        T = fT(x, P, *P_args)
        Tx, Txx = d["x"](x, P, *P_args), d["xx"](x, P, *P_args)
        res = np.maximum(np.abs(x * Tx), np.abs(x * x * Txx)) / np.abs(T)
        res = np.where(np.isfinite(res), res, np.inf)
        phys = (T > 0) & (P > 0)
        for name in ("T", "S", "G"):
            phys &= np.isfinite(comp.function(name)(x, P, *P_args))
        for cond in th.active_conditions:
            i = th.derivation.conditions.index(cond)
            phys &= np.broadcast_to(np.asarray(
                comp.function(f"condition_{i}")(x, P, *P_args), dtype=bool), x.shape)
    good = res <= RESIDUAL_TOLERANCE
    failed = int(np.sum(~good))
    per_point = [[] for _ in range(n)]
    for k in np.nonzero(phys & good)[0]:
        per_point[rows[k]].append((float(T[k]), float(P[k]), float(x[k]), float(res[k])))
    points, residuals = [], []
    for lst in per_point:
        lst.sort(key=lambda t: t[1])
        points.append(tuple(t[:3] for t in lst))
        residuals.append(tuple(t[3] for t in lst))
    total = sum(len(p) for p in points)
    msg = (f"{total} physical critical point(s) over {n} values of {coupling} from the "
           f"critical polynomial")
    if failed:
        msg += f"; WARNING: {failed} candidate(s) left out, residuals above " \
               f"{RESIDUAL_TOLERANCE:.0e} after the polish"
    if undecided:
        msg += (f"; WARNING: at {len(undecided)} value(s) a root has T_c = 0/0 (an isolated "
                f"critical point?) or the coefficients are not finite: not decided here")
    return CriticalPointsOver(
        family=th.family.name, coupling=coupling, values=vals, points=tuple(points),
        residuals=tuple(residuals), converged=failed == 0 and not undecided,
        unresolved=tuple(sorted(undecided | {int(rows[k]) for k in np.nonzero(~good)[0]})),
        method=(f"batched companion-matrix roots of the critical polynomial in "
                f"{th.derivation.state.name}^{sysm.m}, {newton_steps} Newton step(s) on "
                f"(x T_x, x^2 T_xx) = 0"),
        message=msg)
