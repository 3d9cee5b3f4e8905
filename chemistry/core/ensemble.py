r"""Ensembles: hold a potential fixed instead of its charge (fixed Phi, fixed Omega, ...).

A declared family holds its parameters fixed: the charge Q, the angular momentum J, the
couplings.  For any continuous parameter q whose conjugate potential the engine derives,
:func:`fixed_potential_family` builds the family of the *other* ensemble, in which
Phi_q is held fixed instead, as a new :class:`~bhchem.declare.family.Family` derived
from the original by a Legendre transform.  Every analysis then runs on it unchanged.

With the state variable x, pressure P and the swapped charges q (potentials
Phi_q = (dM/dq)_{S,P}), the new family has

.. math::

    q = q(x, P, \Phi) \quad\text{(the inverse of } \Phi_q(x, P, q) = \Phi\text{)},

    \tilde M(x, P, \Phi) = M(x, P, q(x, P, \Phi)) - \sum \Phi\, q(x, P, \Phi), \qquad
    \tilde S(x, P, \Phi) = S(x, P, q(x, P, \Phi)),

so that d\tilde M = T dS + V dP - \sum q\,d\Phi: the engine derives
T = (\partial \tilde M/\partial \tilde S)_{P,\Phi}, V = (\partial\tilde M/\partial P)_{S,\Phi},
the conjugate of Phi (it is -q), G = \tilde M - T S = M - T S - \sum \Phi q, the equation of
state and C_P, kappa_T, ... at fixed Phi, and re-checks the first law (the declared T,
substituted, is compared with (\partial\tilde M/\partial\tilde S)) and the Smarr relation
with n_Phi = (d - 3) - n_q (so that Phi q scales like M).

The inverse is found in closed form when Phi_q - Phi (or Phi_q^2 - Phi^2, for a potential
that carries a square root such as the angular velocity of Kerr-AdS) is, over a common
denominator, a polynomial of degree <= 2 in q or in q^2 -- a counted criterion, never a
time limit.  The root is *certified* on sample states of the original family: the chosen
root must give back the charge at every sampled state where the charge is in its domain
(one root for the whole sample; two roots needed means the potential is not invertible on
the physical domain).

When there is no such closed form, or the transformed family built on it exceeds the
derivation's counted size limits (:class:`~bhchem.core.derive.DerivationTooLarge`), the charge
becomes the implicit function q(y) with Phi_q(y, q) = Phi of :mod:`bhchem.core.implicit`:
derivatives by the implicit-function theorem, values by a certified per-state root solve.
It is certified on the same sample states (the solve must give back the charge as the only
root in its domain; two roots at a sampled physical state: refused in one line, "not
invertible on the physical domain").  Which route was taken is recorded in the family's
``conventions['inverse_<q>']``; a closed form found unusable is noted in the derivation cache
(:func:`~bhchem.core.derivation_cache.store_note`) so that later runs skip it.  One potential
at a time takes the numerical route.

The competing background phase of the new ensemble is the horizonless state at zero charge
(thermal AdS: its charge is free to vanish when the potential is held fixed):
the original family's ``background_gibbs`` at q = 0 when it declares one, else G = 0 for a
gravitational family (Hawking & Page 1983; Chamblin, Emparan, Johnson & Myers, PRD 60
(1999) 064018 for fixed Phi; Hawking, Hunter & Taylor-Robinson, PRD 59 (1999) 064005 for
fixed Omega).

Example
-------
>>> from bhchem.declare.registry import get_family
>>> fam = fixed_potential_family(get_family("rn-ads"), ("Q",), d=4)
>>> fam.name, dict(fam.ensemble)
('rn-ads-fixed-phi-q', {'Phi_Q': 'Q'})
"""
from __future__ import annotations

import math
import threading

import numpy as np
import sympy as sp

from bhchem.core import derivation_cache
from bhchem.core.derive import DerivationTooLarge, check_expansion, derive
from bhchem.core.implicit import ImplicitRoot, compile_numeric, implicit_root
from bhchem.declare import symbols as sy
from bhchem.declare.conditions import Condition, ConditionSet
from bhchem.declare.domain import Domain
from bhchem.declare.family import Family, Parameter
from bhchem.errors import BhchemError

#: the prefix of a potential's name: Phi_Q is conjugate to Q
POTENTIAL_PREFIX = "Phi_"
#: relative agreement a candidate inverse must reach at every sample state
INVERSE_TOLERANCE = 1e-8
#: highest degree (in q, or in q^2 for a potential with only even powers) solved exactly
MAX_INVERSE_DEGREE = 2


class EnsembleError(BhchemError, ValueError):
    """A potential that cannot be held fixed instead of its charge (no conjugate, not
    invertible on the physical domain, both given, ...); the message is one line."""


class _NoClosedForm(EnsembleError):
    """No closed-form inverse: the certified numerical inverse is used instead."""


def potential_name(charge: str) -> str:
    """``'Q'`` -> ``'Phi_Q'``."""
    return POTENTIAL_PREFIX + charge


def charge_of(name: str) -> str | None:
    """``'Phi_Q'`` -> ``'Q'``; None for a name that is not a potential's."""
    if name.startswith(POTENTIAL_PREFIX) and len(name) > len(POTENTIAL_PREFIX):
        return name[len(POTENTIAL_PREFIX):]
    return None


def _family_slug(pot: str) -> str:
    return pot.lower().replace("_", "-")


# -- the inverse q(x, P, Phi) ----------------------------------------------------------------
def _candidates(phi_expr, q, phi) -> tuple[list, str]:
    """Closed-form candidate roots of Phi_q(q) = phi, and how they were found."""
    if q not in phi_expr.free_symbols:
        raise EnsembleError(f"Phi_{q.name} does not depend on {q.name}: holding it fixed "
                            f"cannot replace {q.name}")
    for power, how in ((1, "Phi_q = Phi"), (2, "Phi_q^2 = Phi^2")):
        eq = phi_expr**power - phi**power
        check_expansion(eq, f"the inverse of Phi_{q.name}")
        num = sp.numer(sp.together(eq))
        try:
            poly = sp.Poly(sp.expand(num), q)
        except sp.PolynomialError:
            continue
        if any(q in c.free_symbols for c in poly.coeffs()):
            continue
        degree = poly.degree()
        if 1 <= degree <= MAX_INVERSE_DEGREE:
            return list(sp.solve(poly.as_expr(), q)), how
        monoms = [m[0] for m in poly.monoms()]
        if degree <= 2 * MAX_INVERSE_DEGREE and all(m % 2 == 0 for m in monoms):
            u = sp.Dummy("u", nonnegative=True)
            inner = sp.Poly(sum(c * u ** (m[0] // 2) for c, m in zip(poly.coeffs(),
                                                                        poly.monoms())), u)
            roots = sp.solve(inner.as_expr(), u)
            return [s * sp.sqrt(r) for r in roots for s in (1, -1)], how + " in " + \
                f"{q.name}^2"
    raise _NoClosedForm(
        f"Phi_{q.name} cannot be inverted for {q.name} in closed form (neither it nor its "
        f"square is algebraic of degree <= {MAX_INVERSE_DEGREE} in {q.name} or "
        f"{q.name}^2); holding Phi_{q.name} fixed is not supported for this family")


def _lam(args, expr):
    f = compile_numeric(args, expr)
    return lambda *a: np.asarray(f(*a), dtype=complex) * np.ones(np.broadcast(*a).shape)


def _samples(derivation, values: dict, x0: float, P0: float, q_names: tuple) -> dict:
    """Sample states of the original family (x, P, every continuous parameter), on a fixed
    grid around its typical scales: the swapped charges vary over two decades."""
    xs = x0 * np.geomspace(0.2, 8.0, 9)
    Ps = P0 * np.geomspace(0.1, 10.0, 5)
    grids = [xs, Ps]
    for s in derivation.parameters:
        v = float(values[s.name])
        if s.name in q_names:
            base = abs(v) if v != 0 else 1.0
            grids.append(math.copysign(1.0, v if v != 0 else 1.0)
                         * base * np.geomspace(0.1, 10.0, 5))
        else:
            grids.append(np.array([v]))
    mesh = np.meshgrid(*grids, indexing="ij")
    return {sym: m.ravel() for sym, m in zip(derivation.arguments, mesh)}


def _physical_samples(derivation, family: Family, samples: dict, q_syms) -> np.ndarray:
    args = derivation.arguments
    pts = [samples[a] for a in args]
    with np.errstate(all="ignore"):
        ok = np.ones(len(pts[0]), dtype=bool)
        for name in ("T", "S"):
            val = _lam(args, derivation.quantities[name])(*pts)
            ok &= np.isfinite(val) & (np.abs(val.imag) <= 1e-12 * np.abs(val.real))
            ok &= val.real >= 0 if name == "T" else val.real > 0
        for q in q_syms:
            ok &= np.array([family.parameter(q.name).domain.contains(v)
                            for v in samples[q]], dtype=bool)
    return ok


def _certify(candidates, q, phi, phi_expr, derivation, samples, ok) -> sp.Expr:
    """The one candidate that gives back q at every physical sample state."""
    args = derivation.arguments
    pts = [samples[a][ok] for a in args]
    with np.errstate(all="ignore"):
        phis = _lam(args, phi_expr)(*pts)
    good = np.isfinite(phis) & (np.abs(phis.imag) <= 1e-12 * (1 + np.abs(phis.real)))
    if not good.any():
        raise EnsembleError(f"Phi_{q.name} is not finite at any sampled physical state; it "
                            f"cannot be held fixed")
    pts = [p[good] for p in pts]
    phis = phis.real[good]
    q_true = pts[args.index(q)]
    new_args = tuple(phi if a is q else a for a in args)
    new_pts = [phis if a is q else p for a, p in zip(args, pts)]
    covering = []
    for cand in candidates:
        with np.errstate(all="ignore"):
            got = _lam(new_args, cand)(*new_pts)
        hit = np.isfinite(got) & (np.abs(got - q_true) <= INVERSE_TOLERANCE
                                  * np.maximum(np.abs(q_true), 1e-300))
        covering.append(hit)
    whole = [c for c, hit in zip(candidates, covering) if hit.all()]
    if whole:
        return min(whole, key=sp.count_ops)
    if any(hit.any() for hit in covering):
        raise EnsembleError(
            f"Phi_{q.name} is not invertible on the physical domain: different states need "
            f"different roots {q.name}(Phi_{q.name}) (two charges give the same potential)")
    raise EnsembleError(f"no closed-form root of Phi_{q.name} = Phi gives back {q.name} on "
                        f"the physical domain; Phi_{q.name} cannot be held fixed")


def _domain_relation(domain: Domain, expr):
    """The relation expr in domain (None when the domain is the whole real line)."""
    parts = []
    if math.isfinite(domain.lower):
        parts.append(sp.GreaterThan(expr, domain.lower) if domain.lower_closed
                     else sp.StrictGreaterThan(expr, domain.lower))
    if math.isfinite(domain.upper):
        parts.append(sp.LessThan(expr, domain.upper) if domain.upper_closed
                     else sp.StrictLessThan(expr, domain.upper))
    if not parts:
        return None
    return parts[0] if len(parts) == 1 else sp.And(*parts)


# -- the family of the new ensemble ----------------------------------------------------------
_ENTRIES = 64
_built: dict = {}
#: (family key, parameter values) already verified -> the family (holds it alive: ids stay unique)
_verified: dict = {}
_lock = threading.Lock()


def fixed_potential_family(family: Family, charges, *, values=None, **discrete) -> Family:
    """The family of the ensemble in which Phi_q is held fixed instead of each q in ``charges``.

    Parameters
    ----------
    family : Family
        A declared family (not itself an ensemble family).
    charges : sequence of str
        Continuous parameters whose conjugate potential is held fixed instead.
    values : mapping, optional
        Parameter values of the original family at which the inverse is certified too
        (it always is at the defaults, where the family is built; the family does not
        depend on ``values``).
    **discrete
        The structural parameters (d, k, ...).

    Returns
    -------
    Family
        Named ``<family>-fixed-phi-<q>``, its ``ensemble`` mapping Phi_q -> q; cached.

    Raises
    ------
    EnsembleError
        One line: a structural parameter (no conjugate), an unknown one, a potential
        that cannot be inverted on the physical domain.
    """
    if family.ensemble:
        raise EnsembleError(f"family {family.name} is already an ensemble of "
                            f"{family.parent}; swap from the declared family")
    order = [p.name for p in family.all_parameters]
    charges = tuple(sorted(set(charges), key=order.index if set(charges) <= set(order)
                           else str))
    for name in charges:
        if name not in order:
            raise EnsembleError(f"family {family.name} has no parameter {name!r}, so "
                                f"{potential_name(name)} cannot be held fixed; its parameters "
                                f"are: {', '.join(order) or 'none'}")
        if family.parameter(name).discrete:
            raise EnsembleError(f"{name} is a structural parameter of {family.name} (discrete: "
                                f"substituted before derivation), it has no conjugate "
                                f"potential, so {potential_name(name)} cannot be held fixed")
    if not charges:
        raise EnsembleError("no potential to hold fixed")
    disc = {p.name: p.default for p in family.discrete_parameters}
    disc.update({k: v for k, v in (values or {}).items() if k in disc})
    disc.update(discrete)
    vals = family.defaults()
    vals.update(disc)
    key = (id(family), tuple(sorted(disc.items())), charges)
    with _lock:
        hit = _built.get(key)
    if hit is None or hit[0] is not family:
        topic = "closed-form inverse of " + ", ".join(charges)
        # an earlier run that found no usable closed form left a note (derivation cache)
        refused = derivation_cache.load_note(family, disc, topic)
        try:
            try:
                if refused is not None:
                    raise _NoClosedForm(refused)
                out, der, solved = _build(family, charges, vals, None, disc)
                derive(out)   # cached: bind derives it next
            except (_NoClosedForm, DerivationTooLarge) as exc:
                if refused is None:
                    derivation_cache.store_note(family, disc, topic, str(exc).splitlines()[0])
                reason = str(exc).splitlines()[0].split(";")[0]
                if len(charges) > 1:
                    raise EnsembleError(
                        f"{', '.join(map(potential_name, charges))} cannot be held fixed "
                        f"together in {family.name}: a closed form is not available "
                        f"({reason}) and the numerical inverse takes one potential at a "
                        f"time") from None
                out, der, solved = _build(family, charges, vals, None, disc,
                                          numeric_inverse=reason)
                derive(out)
        except BhchemError:
            raise
        except (sp.PolynomialError, NotImplementedError, ValueError, TypeError,
                ZeroDivisionError, ArithmeticError) as exc:
            raise EnsembleError(
                f"{', '.join(map(potential_name, charges))} cannot be held fixed in "
                f"{family.name}: the Legendre transform failed "
                f"({type(exc).__name__}: {str(exc).splitlines()[0] if str(exc) else ''})"
            ) from None
        hit = (family, out, der, solved)
        with _lock:
            while len(_built) >= _ENTRIES:
                _built.pop(next(iter(_built)))
            _built[key] = hit
    if values:
        at = {**vals, **{k: float(v) for k, v in values.items() if k not in disc}}
        checked = (key, tuple(sorted(at.items())))
        with _lock:
            done = checked in _verified and _verified[checked] is family
        if not done:
            _verify(family, hit[2], hit[3], at)
            with _lock:
                while len(_verified) >= 4 * _ENTRIES:
                    _verified.pop(next(iter(_verified)))
                _verified[checked] = family
    return hit[1]


def _verify(family: Family, der, solved: dict, vals: dict) -> None:
    """The inverse, certified at the defaults, must give back every charge at sample states
    of the original family at ``vals`` too (another root branch would be refused)."""
    names = tuple(q.name for q in solved)
    samples = _samples(der, vals, *_scales(der, vals), names)
    ok = _physical_samples(der, family, samples, tuple(solved))
    if not ok.any():
        return
    if any(isinstance(root, ImplicitRoot) for root in solved.values()):
        _certify_implicit(family, der, solved, samples, ok)
        return
    args = der.arguments
    pts = [samples[a][ok] for a in args]
    with np.errstate(all="ignore"):
        pots = {q: _lam(args, der.quantities[potential_name(q.name)])(*pts).real
                for q in solved}
        new = [pots.get(a, p) for a, p in zip(args, pts)]
        new_args = tuple(sy.parameter_symbol(potential_name(a.name)) if a in solved else a
                         for a in args)
        for q, root in solved.items():
            got = _lam(new_args, root)(*new)
            want = pts[args.index(q)]
            fine = np.isfinite(pots[q])
            bad = fine & ~(np.abs(got - want) <= 1e-6 * np.maximum(np.abs(want), 1e-300))
            if bad.any():
                raise EnsembleError(
                    f"the closed-form inverse {q.name}({potential_name(q.name)}) of "
                    f"{family.name}, certified at its default parameters, does not give back "
                    f"{q.name} at these values (another root branch): holding "
                    f"{potential_name(q.name)} fixed is not supported here")


def _scales(der, vals: dict) -> tuple:
    ell = [abs(float(vals[s.name])) ** (1 / n) for s in der.parameters
           if (n := der.length_dimensions[s.name]) != 0 and vals[s.name] != 0]
    ell = math.exp(sum(math.log(e) for e in ell) / len(ell)) if ell else 1.0
    x0 = ell ** (der.dimension - 2) if der.state.name == "S" else ell
    return x0, 0.1 / (8 * math.pi * ell**2)


def _build(family: Family, charges: tuple, vals: dict, scales, disc: dict,
           numeric_inverse: str | None = None) -> tuple:
    der = derive(family, **disc)
    q_syms = tuple(s for s in der.parameters if s.name in charges)
    phis = {q: sy.parameter_symbol(potential_name(q.name)) for q in q_syms}
    if scales is None:
        scales = _scales(der, vals)
    samples = _samples(der, vals, float(scales[0]), float(scales[1]), charges)
    ok = _physical_samples(der, family, samples, q_syms)
    if not ok.any():
        raise EnsembleError(f"no physical state of {family.name} found to certify the inverse "
                            f"of the potential(s) {', '.join(map(potential_name, charges))}")
    solved: dict = {}           # q -> q(x, P, Phi, other parameters)
    how = {}
    if numeric_inverse is not None:
        (q,) = q_syms
        root = _implicit_inverse(family, der, q, phis[q])
        _certify_implicit(family, der, {q: root}, samples, ok)
        solved[q] = root
        how[q.name] = (f"certified numerical inverse (no closed form: {numeric_inverse}): "
                       f"{q.name} is the unique root in its domain of Phi_{q.name}(state, "
                       f"{q.name}) = {potential_name(q.name)}, bracketed and refined to 8 ulp "
                       f"per state; derivatives by implicit differentiation; definition "
                       f"{type(root).definition_key[:16]}")
        return _assemble(family, der, disc, vals, samples, ok, solved, phis, how), der, solved
    for q in q_syms:
        phi_expr = der.quantities[potential_name(q.name)].xreplace(solved)
        cands, method = _candidates(phi_expr, q, phis[q])
        # certify on samples: the other swapped charges (already solved) take their sample
        # values through their own potentials, so evaluate the original potential instead
        root = _certify(cands, q, phis[q], der.quantities[potential_name(q.name)], der,
                        samples, ok) if not solved else \
            _certify_joint(cands, q, phis, solved, der, samples, ok)
        root = _reciprocal_roots(root)
        root = sp.simplify(root) if sp.count_ops(root) < 80 else root
        solved = {k: v.xreplace({q: root}) for k, v in solved.items()}
        solved[q] = root
        how[q.name] = f"closed form from {method}"
    return _assemble(family, der, disc, vals, samples, ok, solved, phis, how), der, solved


def _reciprocal_roots(expr):
    """sqrt(1/X) -> 1/sqrt(X): equal wherever X > 0, and both are non-real (the state is
    then not physical) where X < 0; the second form lets sympy cancel X against sqrt(X)."""
    return expr.replace(
        lambda e: isinstance(e, sp.Pow) and e.exp == sp.Rational(1, 2)
        and isinstance(e.base, sp.Pow) and e.base.exp == -1,
        lambda e: 1 / sp.sqrt(e.base.base))


def _implicit_inverse(family: Family, der, q, phi):
    """q(y) with Phi_q(y, q) = phi, as an applied :class:`ImplicitRoot` of the arguments
    of the new family that the potential depends on."""
    phi_expr = der.quantities[potential_name(q.name)]
    if q not in phi_expr.free_symbols:
        raise EnsembleError(f"Phi_{q.name} does not depend on {q.name}: holding it fixed "
                            f"cannot replace {q.name}")
    equation = phi_expr - phi
    new_args = tuple(phi if a is q else a for a in der.arguments)
    variables = tuple(a for a in new_args if a in equation.free_symbols)
    domain = family.parameter(q.name).domain
    cls = implicit_root(equation, q, variables, lower=domain.lower, upper=domain.upper,
                        name=f"{q.name}_of_{potential_name(q.name)}")
    return cls(*variables)


def _certify_implicit(family: Family, der, solved: dict, samples, ok) -> None:
    """The numerical inverse must give back the charge, as the only root in its domain, at
    every sampled physical state of the original family where the potential is finite."""
    args = der.arguments
    pts = [samples[a][ok] for a in args]
    for q, root in solved.items():
        pot = potential_name(q.name)
        with np.errstate(all="ignore"):
            phis = _lam(args, der.quantities[pot])(*pts)
        fine = np.isfinite(phis) & (np.abs(phis.imag) <= 1e-12 * (1 + np.abs(phis.real)))
        if not fine.any():
            raise EnsembleError(f"{pot} is not finite at any sampled physical state of "
                                f"{family.name}; it cannot be held fixed")
        by_symbol = dict(zip(args, pts))
        by_symbol[sy.parameter_symbol(pot)] = phis.real
        cls = type(root)
        got, count = cls.solve(*[by_symbol[a][fine] for a in root.args])
        want = by_symbol[q][fine]
        if (count > 1).any():
            raise EnsembleError(
                f"{pot} is not invertible on the physical domain of {family.name}: at a "
                f"sampled physical state more than one {q.name} in its domain gives the "
                f"same potential")
        bad = ~(np.abs(got - want) <= INVERSE_TOLERANCE * np.maximum(np.abs(want), 1e-300))
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise EnsembleError(
                f"the numerical inverse of {pot} in {family.name} does not give back "
                f"{q.name} = {want[i]:.6g} at a sampled physical state (got {got[i]:.6g}); "
                f"{pot} cannot be held fixed")


def _simpler(expr, args, pts):
    """A shorter form of ``expr`` (radicands factored, perfect powers taken out, over a
    common denominator), kept only when it agrees with ``expr`` to 1e-12 at every sample
    state (``args``, ``pts``): the identities used assume positive radicands, which the
    physical states have."""
    try:
        e = expr.replace(lambda a: isinstance(a, sp.Pow) and a.exp.is_Rational
                         and a.exp.q == 2 and not a.base.is_Atom,
                         lambda a: sp.Pow(sp.factor(sp.together(a.base)), a.exp))
        e = sp.factor_terms(sp.together(sp.powdenest(e, force=True)))
    except (sp.PolynomialError, NotImplementedError, ValueError, TypeError):
        return expr
    if sp.count_ops(e) >= sp.count_ops(expr):
        return expr
    with np.errstate(all="ignore"):
        a = _lam(args, expr)(*pts)
        b = _lam(args, e)(*pts)
    fine = np.isfinite(a)
    if not fine.any() or not np.all(np.abs(a[fine] - b[fine])
                                    <= 1e-12 * np.maximum(np.abs(a[fine]), 1e-300)):
        return expr
    return e


def _certify_joint(cands, q, phis, solved, der, samples, ok) -> sp.Expr:
    """Certify a root for q when earlier charges were already expressed through their
    potentials: substitute the sampled values of their potentials."""
    args = der.arguments
    pts = {a: samples[a][ok] for a in args}
    lam_args = tuple(args) + tuple(phis[k] for k in solved)
    with np.errstate(all="ignore"):
        extra = [(_lam(args, der.quantities[potential_name(k.name)])(*[pts[a] for a in args])
                  ).real for k in solved]
    full = dict(zip(lam_args, [pts[a] for a in args] + extra))
    cands = [c for c in cands]
    phi = phis[q]
    with np.errstate(all="ignore"):
        phi_true = _lam(args, der.quantities[potential_name(q.name)])(
            *[pts[a] for a in args]).real
    full_args = tuple(a for a in lam_args if a not in solved) + (phi,)
    q_true = pts[q]
    best = []
    for c in cands:
        f = _lam(full_args, c)
        with np.errstate(all="ignore"):
            got = f(*[full[a] for a in full_args[:-1]], phi_true)
        best.append(bool(np.all(np.isfinite(got) & (np.abs(got - q_true) <= INVERSE_TOLERANCE
                                                     * np.maximum(np.abs(q_true), 1e-300)))))
    whole = [c for c, b in zip(cands, best) if b]
    if not whole:
        raise EnsembleError(f"no closed-form root of Phi_{q.name} = Phi gives back {q.name} on "
                            f"the physical domain with the other potentials held fixed")
    return min(whole, key=sp.count_ops)


def _assemble(family, der, disc, vals, samples, ok, solved, phis, how) -> Family:
    x = der.state
    rep = dict(solved)

    def sub(e):
        return None if e is None else sp.sympify(e).xreplace(rep)

    # the sample states in the new variables (x, P, Phi, other parameters)
    args = der.arguments
    new_args = tuple(phis.get(a, a) for a in args)
    with np.errstate(all="ignore"):
        new_pts = [(_lam(args, der.quantities[potential_name(a.name)])(
            *[samples[b][ok] for b in args])).real if a in phis else samples[a][ok]
            for a in args]

    implicit = any(isinstance(root, ImplicitRoot) for root in solved.values())

    def simpler(e):
        # the implicit root is kept as it is (its derivatives are exact by construction)
        return e if implicit else _simpler(e, new_args, new_pts)

    M = simpler(der.enthalpy_declared.xreplace(rep)
                - sum(phis[q] * solved[q] for q in solved))
    S = simpler(der.entropy_declared.xreplace(rep))
    T = simpler(der.quantities["T"].xreplace(rep))
    dim = der.dimension
    n_M = (dim - 3) if family.gravitational else 0
    params = []
    pts = [samples[a][ok] for a in args]
    if isinstance(family.dimension, Parameter):
        params_dim = Parameter("d", dim, length_dimension=0, domain=Domain.integers(dim, dim),
                               description=family.dimension.description)
    else:
        params_dim = dim
    for p in family.parameters:
        if p.discrete:
            params.append(Parameter(p.name, disc[p.name], p.length_dimension,
                                    Domain.one_of(disc[p.name]), p.description))
        elif p.symbol in solved:
            pot = potential_name(p.name)
            with np.errstate(all="ignore"):
                sampled = _lam(args, der.quantities[pot])(*pts).real
                default = _lam(args, der.quantities[pot])(
                    *[np.array([float(samples[a][ok][len(pts[0]) // 2])]) for a in args]).real[0]
            sampled = sampled[np.isfinite(sampled)]
            domain = Domain.nonnegative() if sampled.size and (sampled >= 0).all() \
                and p.domain.lower >= 0 else Domain.real()
            if not (math.isfinite(default) and domain.contains(default)):
                default = 0.0
            params.append(Parameter(pot, float(default),
                                    length_dimension=n_M - p.dimension_at(dim),
                                    domain=domain,
                                    description=f"potential conjugate to {p.name}, held fixed "
                                                f"instead of it"))
        else:
            params.append(p)
    conditions = []
    engine = set(("positive-entropy", "nonnegative-temperature"))
    for c in der.conditions:
        if c.name in engine:
            continue
        conditions.append(Condition(c.name, c.relation.xreplace(rep), c.reason, c.reference))
    added = []
    for q, root in solved.items():
        # the numerical inverse searches the declared domain only
        rel = None if isinstance(root, ImplicitRoot) else \
            _domain_relation(family.parameter(q.name).domain, root)
        if rel is not None:
            name = f"charge-{_family_slug(q.name)}-in-domain"
            added.append(name)
            conditions.append(Condition(
                name, rel, f"the charge {q.name}, now a function of the state and "
                           f"{potential_name(q.name)}, lies in its declared domain "
                           f"{family.parameter(q.name).domain.describe(q.name)}",
                family.reference))
    sets = tuple(ConditionSet(cs.name, tuple(cs.members) + tuple(added), cs.description,
                              cs.reference) for cs in family.condition_sets)
    if family.background_gibbs is not None:
        bg = sp.sympify(family.background_gibbs).xreplace({q: 0 for q in solved})
        bg_name = f"{family.background_name} at {', '.join(q.name for q in solved)} = 0"
    elif family.gravitational:
        bg = sp.Integer(0)
        bg_name = "thermal AdS (" + ", ".join(f"{q.name} = 0" for q in solved) + ")"
    else:
        bg, bg_name = None, family.background_name
    ens = {potential_name(q.name): q.name for q in solved}
    swaps = ", ".join(f"{p} instead of {q}" for p, q in ens.items())
    conventions = dict(family.conventions)
    conventions["legendre_transform"] = (f"{swaps} held fixed: G = M - T S - "
                               + " - ".join(f"{p} {q}" for p, q in ens.items())
                               + f"; background {bg_name}" if bg is not None else
                               f"{swaps} held fixed")
    for q in solved:
        conventions[f"inverse_{q.name}"] = f"{how[q.name]}: {q.name} = {sp.sstr(solved[q])}"
    name = f"{family.name}-fixed-" + "-".join(_family_slug(p) for p in ens)
    return Family(
        name=name,
        summary=f"{family.summary}; {swaps} held fixed",
        reference=family.reference,
        dimension=params_dim,
        parameters=tuple(params),
        enthalpy=M,
        entropy=S,
        temperature=T,
        background_gibbs=bg,
        background_name=bg_name,
        state=x,
        state_description=family.state_description,
        horizon_radius=sub(der.quantities.get("r_plus")) if x.name != "r" else None,
        specific_volume=sub(der.quantities.get("v")) if family.specific_volume is not None
        else None,
        conditions=tuple(conditions),
        condition_sets=sets,
        gravitational=family.gravitational,
        require_nonnegative_temperature=family.require_nonnegative_temperature,
        conventions=conventions,
        source=family.source,
        ensemble=ens,
        parent=family.name,
    )
