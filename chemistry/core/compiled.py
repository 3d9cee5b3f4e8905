"""Compiled numerics: vectorised numpy functions of a derivation, and a family
bound to parameter values.

Every quantity of a :class:`~bhchem.core.derive.Derivation` is lambdified once
(with common-subexpression elimination) into a function of
``(x, P, *continuous_parameters)`` that broadcasts over numpy arrays.
:func:`bind` validates parameter values against their declared domains and
returns a :class:`Thermodynamics` object: the entry point of every analysis.
"""
from __future__ import annotations

import decimal
import html
import math
import threading
import weakref
from dataclasses import dataclass
from typing import Callable, Mapping

import numpy as np
import sympy as sp

from bhchem.core.derive import Derivation, derive
from bhchem.core.identity_cache import IdentityCache
from bhchem.core.results import html_table
from bhchem.declare.symbols import P as _P
from bhchem.errors import ParameterDomainError, UnknownParameterError
from bhchem.declare.family import Family
from bhchem.core.special import hyp2f1_real
from bhchem.declare.family import canonical_symbols, canonicalise
from bhchem.declare import symbols as sy
from bhchem.declare.registry import get_family
from bhchem.declare.conditions import Admissibility, select
from bhchem.core.ensemble import EnsembleError, charge_of, fixed_potential_family


def _special_functions() -> dict:
    """Numeric implementations of special functions sympy cannot print to numpy."""

    def hyper(a, b, z):
        if len(a) != 2 or len(b) != 1:
            raise NotImplementedError(
                f"only the Gauss function 2F1 is supported numerically, not {len(a)}F{len(b)}")
        return hyp2f1_real(a[0], a[1], b[0], z)

    return {"hyper": hyper}


def _broadcast_reduce(op):
    def f(seq, axis=0):
        arrays = np.broadcast_arrays(*[np.asarray(s, dtype=float) for s in seq])
        out = arrays[0]
        for a in arrays[1:]:
            out = op(out, a)
        return out
    return f


#: numpy's amax/amin on a tuple of differently shaped operands fails: broadcast first
_BROADCASTING = {"amax": _broadcast_reduce(np.maximum), "amin": _broadcast_reduce(np.minimum)}


def lambdify_modules(exprs) -> list:
    """The numeric namespace for lambdify: broadcasting max/min, and 2F1 when needed."""
    if any(e.has(sp.hyper) for e in exprs):
        return [_special_functions(), _BROADCASTING, "numpy"]
    return [_BROADCASTING, "numpy"]


def _lambdify_condition(args, expr) -> Callable:
    """Boolean combinations are compiled piecewise so that operands of different shapes
    (a parameter-only clause next to a state-dependent one) broadcast."""
    if isinstance(expr, (sp.And, sp.Or)):
        parts = [_lambdify_condition(args, a) for a in expr.args]
        op = np.logical_and if isinstance(expr, sp.And) else np.logical_or

        def combined(*a):
            out = parts[0](*a)
            for p in parts[1:]:
                out = op(out, p(*a))
            return out
        return combined
    if isinstance(expr, sp.Not):
        inner = _lambdify_condition(args, expr.args[0])
        return lambda *a: np.logical_not(inner(*a))
    f = _lambdify(args, expr)
    return lambda *a: np.asarray(f(*a), dtype=bool)


def _lambdify(args, expr) -> Callable:
    # sympy's hypergeometric simplifications may leave exp_polar (branch bookkeeping);
    # on the real line it is plain exp
    expr = expr.replace(sp.exp_polar, sp.exp) if expr.has(sp.exp_polar) else expr
    f = sp.lambdify(args, expr, modules=lambdify_modules([expr]), cse=True)
    if expr.free_symbols & {args[0], args[1]}:
        return f

    def broadcast(*a):  # constants (e.g. G_background = 0) must still broadcast
        value = f(*a)
        shape = np.broadcast_shapes(*(np.shape(v) for v in a))
        return np.broadcast_to(np.asarray(value, dtype=float), shape).copy() if shape \
            else float(value)

    return broadcast


class CompiledDerivation:
    """Lazily compiled numpy functions of one derivation (cached per quantity)."""

    def __init__(self, derivation: Derivation):
        self.derivation = derivation
        self._funcs: dict[str, Callable] = {}
        self._lock = threading.Lock()

    def function(self, name: str) -> Callable:
        """Numeric f(x, P, *params) of quantity ``name`` (see Derivation.quantities)."""
        f = self._funcs.get(name)
        if f is None:
            expr = self._expression(name)
            if name.startswith("condition_"):
                f = _lambdify_condition(self.derivation.arguments, expr)
            else:
                f = _lambdify(self.derivation.arguments, expr)
            with self._lock:
                self._funcs[name] = f
        return f

    def derivative_expression(self, quantity: str, wrt: str) -> sp.Expr:
        """Symbolic partial derivative of a quantity; ``wrt`` is a string of 'x'/'P',
        e.g. ``'xx'`` for d^2/dx^2 and ``'xP'`` for d^2/dx dP (cached)."""
        key = f"D[{quantity};{wrt}]"
        cache = self.__dict__.setdefault("_dexpr", {})
        if key not in cache:
            d = self.derivation
            e = self._expression(quantity)
            for c in wrt:
                e = sp.diff(e, d.state if c == "x" else _P)
            cache[key] = e
        return cache[key]

    def derivative(self, quantity: str, wrt: str) -> Callable:
        """Numeric f(x, P, *params) of a partial derivative (see derivative_expression)."""
        return self.function(f"D[{quantity};{wrt}]")

    def _expression(self, name: str) -> sp.Expr:
        d = self.derivation
        if name.startswith("D["):
            quantity, wrt = name[2:-1].split(";")
            return self.derivative_expression(quantity, wrt)
        if name in d.quantities:
            return d.quantities[name]
        if name == "T_derived":
            return d.temperature_derived
        if name.startswith("condition_"):
            return d.conditions[int(name.split("_")[1])].relation
        raise KeyError(f"no quantity {name!r}; known: {', '.join(d.quantities)}")


def compile_expression(arguments, expr) -> Callable:
    """A vectorised numpy function of ``arguments`` for a sympy expression.

    Compiled with common-subexpression elimination and the project's special-function
    table (:func:`lambdify_modules`); ``exp_polar`` left by sympy's hypergeometric
    simplification is plain ``exp`` on the real line; a result that does not depend on
    the first two arguments (x, P) still broadcasts to their shape.
    """
    return _lambdify(tuple(arguments), sp.sympify(expr))


#: compiled derivations kept (by identity; the oldest is dropped beyond this many)
_COMPILED = IdentityCache(128)


def compile_derivation(derivation: Derivation) -> CompiledDerivation:
    """The (cached) compiled form of a derivation."""
    return _COMPILED.setdefault(derivation, lambda: CompiledDerivation(derivation))


@dataclass(frozen=True)
class State:
    """Thermodynamic state arrays at given (x, P); all share one broadcast shape."""

    x: np.ndarray
    P: np.ndarray
    T: np.ndarray
    S: np.ndarray
    M: np.ndarray
    V: np.ndarray
    G: np.ndarray
    v: np.ndarray | None
    physical: np.ndarray
    potentials: Mapping[str, np.ndarray]


#: largest spacetime dimension the symbolic derivation is asked to handle
MAX_DIMENSION = 30


def parse_number(raw, name: str = "value") -> float:
    """A float that is exactly what the text says, to double precision, or a one-line error.

    Refuses text that is not a number, that overflows (``1e400`` -> inf), that names a
    non-finite value, or that is nonzero but underflows to 0.0 (``1e-400``): such a value
    would silently describe a different black hole.  Subnormal results (``4.9e-324``) are
    nonzero and kept.

    Parameters
    ----------
    raw : str or float
    name : str
        The parameter name for the message.

    Returns
    -------
    float

    Raises
    ------
    ParameterDomainError

    Examples
    --------
    >>> parse_number("0.5", "Q")
    0.5
    """
    try:
        value = float(raw)
    except (TypeError, ValueError):
        raise ParameterDomainError(f"{name} = {raw!r} is not a number") from None
    if not math.isfinite(value):
        raise ParameterDomainError(f"{name} = {raw} is not a finite double-precision number")
    if value == 0.0 and isinstance(raw, str):
        try:
            exact = decimal.Decimal(raw.strip().replace("_", ""))
        except decimal.InvalidOperation:
            exact = decimal.Decimal(0)
        if exact != 0:
            raise ParameterDomainError(
                f"{name} = {raw} underflows to 0 in double precision (smallest nonzero "
                f"magnitude ~4.9e-324); give 0 or a representable value")
    return value


def validate_values(family: Family, values: Mapping[str, object]) -> dict:
    """Fill defaults and check every value against its declared domain.

    Raises
    ------
    UnknownParameterError, ParameterDomainError
        With one line saying what is wrong and what is allowed.
    """
    names = [p.name for p in family.all_parameters]
    out = family.defaults()
    for name, raw in values.items():
        if name not in names:
            known = ", ".join(names) if names else "none"
            raise UnknownParameterError(
                f"family {family.name} has no parameter {name!r}; its parameters are: {known}")
        p = family.parameter(name)
        try:
            value = float(raw)
        except (TypeError, ValueError):
            raise ParameterDomainError(
                f"{name} = {raw!r} is not a number; expected {p.domain.describe(name)}") from None
        if not math.isfinite(value):
            raise ParameterDomainError(
                f"{name} = {raw} is outside its domain {p.domain.describe(name)}: not a finite "
                f"double-precision number (family {family.name})")
        value = parse_number(raw, name)
        if not p.domain.contains(value):
            raise ParameterDomainError(
                f"{name} = {raw} is outside its domain {p.domain.describe(name)} "
                f"(family {family.name})")
        if name == "d" and p.discrete and value > MAX_DIMENSION:
            raise ParameterDomainError(
                f"d = {raw} is too large: the symbolic derivation supports d <= {MAX_DIMENSION}")
        if value == 0.0:
            value = 0.0  # normalise -0.0
        out[name] = int(value) if p.discrete and value.is_integer() else value
    return out


#: the declared typical state and pressure of each binding, evaluated once and kept while the
#: bound object lives (nothing is stored on the object)
_SCALES: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()
_SCALES_LOCK = threading.Lock()


class Thermodynamics:
    """A family bound to parameter values: vectorised quantities as functions of (x, P).

    Obtain one with :func:`bind`.  ``th.T(x, P)``, ``th.G(x, P)`` ... broadcast
    over numpy arrays; ``th.quantity(name, x, P)`` reaches any derived quantity.
    """

    def __init__(self, family: Family, values: dict, derivation: Derivation,
                 admissibility: Admissibility | None = None):
        self.family = family
        self.values = dict(values)
        self.derivation = derivation
        self.compiled = compile_derivation(derivation)
        self._param_values = tuple(float(values[s.name]) for s in derivation.parameters)
        names = tuple(c.name for c in derivation.conditions)
        self.admissibility = admissibility if admissibility is not None else \
            Admissibility("default", names)
        self._active = tuple(i for i, n in enumerate(names) if n in self.admissibility.active)

    # -- admissibility ----------------------------------------------------------
    @property
    def active_conditions(self) -> tuple:
        """The StateConditions this binding applies (see ``admissibility``)."""
        return tuple(self.derivation.conditions[i] for i in self._active)

    def condition_holds(self, name: str, x, P) -> np.ndarray:
        """Boolean array: whether the named condition (active or not) holds at (x, P)."""
        for i, c in enumerate(self.derivation.conditions):
            if c.name == name:
                x = np.asarray(x, dtype=float)
                P = np.asarray(P, dtype=float)
                with np.errstate(all="ignore"):
                    out = self.compiled.function(f"condition_{i}")(x, P, *self._param_values)
                return np.broadcast_to(np.asarray(out, dtype=bool),
                                       np.broadcast_shapes(x.shape, P.shape)).copy()
        raise KeyError(f"{self.family.name} has no condition {name!r}")

    def with_conditions(self, conditions: str | None = None, without=()) -> "Thermodynamics":
        """The same family and values, with another selection of admissibility conditions.

        Parameters
        ----------
        conditions : str, optional
            A condition set of the family (default ``"default"``: every condition).
        without : iterable of str or comma-separated str
            Conditions to drop in addition.

        Raises
        ------
        InvalidArgumentError
            An unknown set or condition name.
        """
        adm = select(self.family.name, tuple(c.name for c in self.derivation.conditions),
                     self.family.condition_set_table(), conditions, without)
        return Thermodynamics(self.family, self.values, self.derivation, adm)

    @property
    def parameter_values(self) -> tuple:
        """The continuous parameter values, in the derivation's argument order
        (``derivation.parameters``): the trailing arguments of every compiled function."""
        return self._param_values

    def compile(self, expr) -> Callable:
        """A vectorised function ``f(x, P)`` of a sympy expression in this family's symbols.

        ``expr`` may use the state variable, ``P`` and the continuous parameters (the
        discrete ones, d, k, ..., are already substituted in ``derivation.quantities``;
        substitute them yourself in an expression of your own).  The parameter values
        of this binding are filled in.

        Examples
        --------
        >>> from bhchem import bind
        >>> th = bind("rn-ads", Q=1.0)
        >>> T_over_S = th.compile(th.derivation.quantities["T"] / th.derivation.quantities["S"])
        >>> bool(abs(T_over_S(1.0, 0.01) - th.T(1.0, 0.01) / th.S(1.0, 0.01)) < 1e-15)
        True
        """
        f = compile_expression(self.derivation.arguments, expr)
        values = self._param_values

        def bound(x, P):
            with np.errstate(all="ignore"):
                return f(np.asarray(x, dtype=float), np.asarray(P, dtype=float), *values)

        return bound

    # -- generic access -----------------------------------------------------
    def quantity(self, name: str, x, P) -> np.ndarray:
        """Evaluate quantity ``name`` at states (x, P) (arrays broadcast)."""
        f = self.compiled.function(name)
        with np.errstate(all="ignore"):
            return f(np.asarray(x, dtype=float), np.asarray(P, dtype=float),
                     *self._param_values)

    def d(self, quantity: str, wrt: str, x, P) -> np.ndarray:
        """Partial derivative of a quantity at (x, P); ``wrt`` like 'x', 'xx', 'xP'."""
        return self.quantity(f"D[{quantity};{wrt}]", x, P)

    def has(self, name: str) -> bool:
        return name in self.derivation.quantities

    def T(self, x, P):
        """Temperature."""
        return self.quantity("T", x, P)

    def S(self, x, P):
        """Entropy."""
        return self.quantity("S", x, P)

    def M(self, x, P):
        """Enthalpy (mass)."""
        return self.quantity("M", x, P)

    def V(self, x, P):
        """Thermodynamic volume (dM/dP)_S."""
        return self.quantity("V", x, P)

    def G(self, x, P):
        """Gibbs free energy M - T S."""
        return self.quantity("G", x, P)

    def v(self, x, P=1.0):
        """Specific volume."""
        return self.quantity("v", x, P)

    def potential(self, param: str, x, P):
        """Potential conjugate to ``param``."""
        return self.quantity(f"Phi_{param}", x, P)

    def physical(self, x, P) -> np.ndarray:
        """Boolean mask: finite T, S, G and every active state condition holds (the
        binding's ``admissibility``; by default every condition)."""
        x = np.asarray(x, dtype=float)
        P = np.asarray(P, dtype=float)
        ok = np.ones(np.broadcast_shapes(x.shape, P.shape), dtype=bool)
        for name in ("T", "S", "G"):
            ok &= np.isfinite(self.quantity(name, x, P))
        for i in self._active:
            with np.errstate(all="ignore"):
                c = self.compiled.function(f"condition_{i}")(x, P, *self._param_values)
            ok &= np.asarray(c, dtype=bool)
        return ok

    def state(self, x, P) -> State:
        """All core quantities at (x, P)."""
        x = np.asarray(x, dtype=float)
        P = np.asarray(P, dtype=float)
        shape = np.broadcast_shapes(x.shape, P.shape)
        xb, Pb = np.broadcast_to(x, shape), np.broadcast_to(P, shape)
        pots = {s.name: self.potential(s.name, xb, Pb) for s in self.derivation.parameters}
        return State(x=xb, P=Pb, T=self.T(xb, Pb), S=self.S(xb, Pb), M=self.M(xb, Pb),
                     V=self.V(xb, Pb), G=self.G(xb, Pb),
                     v=self.v(xb, Pb) if self.has("v") else None,
                     physical=self.physical(xb, Pb), potentials=pots)

    # -- scales ---------------------------------------------------------------
    def length_scale(self) -> float:
        """The family's own length scale at these parameter values.

        The geometric mean of |q|^(1/n_q) over continuous parameters with a
        non-zero value and length dimension; 1 when there is none (the family is
        then scale-free and any unit will do).
        """
        logs = []
        for name, n in self.derivation.length_dimensions.items():
            val = self.values[name]
            if n != 0 and val != 0:
                logs.append(math.log(abs(val)) / n)
        return math.exp(sum(logs) / len(logs)) if logs else 1.0

    def typical_state(self) -> float:
        """Typical value of the state variable (for sampling and plot ranges)."""
        e = self.family.typical_state
        if e is not None:
            return self._scale_value("typical_state", e)
        ell = self.length_scale()
        if self.derivation.state.name == "S":
            return ell ** (self.derivation.dimension - 2)
        return ell

    def typical_pressure(self) -> float:
        """Typical pressure (for sampling and plot ranges)."""
        e = self.family.typical_pressure
        if e is not None:
            return self._scale_value("typical_pressure", e)
        return 1.0 / (8 * math.pi * self.length_scale() ** 2) * 0.1

    def _scale_value(self, which: str, e) -> float:
        """A declared scale expression at this binding's values, evaluated once per binding
        (every isobar asks for its search range; the sympy substitution is the costly part)."""
        with _SCALES_LOCK:
            hit = _SCALES.get(self, {}).get(which)
        if hit is not None:
            return hit
        value = float(self._evaluate_parameter_expression(e))
        with _SCALES_LOCK:
            _SCALES.setdefault(self, {})[which] = value
        return value

    def _evaluate_parameter_expression(self, e) -> float:
        expr = canonicalise(e, canonical_symbols(self.family), "scale", self.family.name)
        subs = {sy.d: self.derivation.dimension}
        for p in self.family.all_parameters:
            subs[p.symbol] = self.values[p.name]
        return float(sp.sympify(expr).subs(subs))

    def __repr__(self) -> str:
        vals = ", ".join(f"{k}={v}" for k, v in self.values.items())
        extra = "" if self.admissibility.is_default else f"; {self.admissibility.label()}"
        return f"Thermodynamics({self.family.name}: {vals}{extra})"

    def _repr_html_(self) -> str:
        """The family, its parameters with their domains, the states that count and the
        equation of state (typeset in a notebook)."""
        esc = html.escape
        rows = [(p.name, self.values[p.name], getattr(p, "description", "") or "")
                for p in self.family.all_parameters if p.name in self.values]
        eos = self.derivation.eos
        law = eos.latex()
        return ("<div>" + f"<b>{esc(self.family.name)}</b>: {esc(self.family.summary)}<br>"
                + f"states: {esc(self.admissibility.label())}<br>"
                + html_table(("parameter", "value", "meaning"), rows)
                + f"equation of state: {esc(law)}</div>")


def bind(family, *, conditions: str | None = None, without=(), **values) -> Thermodynamics:
    """Bind a family (object or name) to parameter values.

    Parameters
    ----------
    family : Family or str
        A family object, or the name of a registered family.
    conditions : str, optional
        Which named condition set decides which states count (default ``"default"``:
        every condition the family and the engine declare; see ``bhchem show``).
    without : iterable of str or comma-separated str
        Conditions to drop in addition (e.g. ``without="regular-exterior"``).
    **values
        Parameter values; missing ones take their defaults.  A potential given in place of
        its charge (``Phi_Q=0.5`` instead of ``Q=1``; ``Phi_J`` is the angular velocity
        Omega) chooses the ensemble in which that potential is held fixed: the family is
        then the Legendre-transformed one of :func:`bhchem.core.ensemble.fixed_potential_family`
        (named ``<family>-fixed-phi-q``).

    Returns
    -------
    Thermodynamics
        With ``admissibility`` recording the selection.

    Raises
    ------
    UnknownFamilyError, UnknownParameterError, ParameterDomainError, InvalidArgumentError
    """
    if isinstance(family, str):
        family = get_family(family)
    family, values = resolve_ensemble(family, values)
    vals = validate_values(family, values)
    discrete = {p.name: vals[p.name] for p in family.discrete_parameters}
    derivation = derive(family, **discrete)
    adm = select(family.name, tuple(c.name for c in derivation.conditions),
                 family.condition_set_table(), conditions, without)
    th = Thermodynamics(family, vals, derivation, adm)
    _check_representable(th)
    return th


def resolve_ensemble(family: Family, values: Mapping) -> tuple:
    """The family of the ensemble the values choose, and the values for it: a value for
    ``Phi_<q>`` (not itself a parameter) holds that potential fixed instead of q."""
    names = {p.name for p in family.all_parameters}
    swapped = [n for n in values if n not in names and charge_of(n) is not None]
    if not swapped:
        return family, values
    charges = []
    for pot in swapped:
        q = charge_of(pot)
        if q not in names:
            raise UnknownParameterError(
                f"family {family.name} has no parameter {pot!r} and no parameter {q!r} whose "
                f"potential it could be; its parameters are: {', '.join(sorted(names)) or 'none'}")
        if q in values:
            raise EnsembleError(f"give {q} or {pot}, not both: holding {pot} fixed replaces {q} "
                                f"(bhchem compare shows both ensembles side by side)")
        charges.append(q)
    rest = {k: v for k, v in values.items() if k not in swapped}
    base = validate_values(family, rest)
    discrete = {p.name: base[p.name] for p in family.discrete_parameters}
    if family.ensemble:
        raise EnsembleError(f"family {family.name} already holds "
                            f"{', '.join(family.ensemble)} fixed")
    derived = fixed_potential_family(family, tuple(charges), values=base, **discrete)
    return derived, dict(values)


def _check_representable(th: "Thermodynamics") -> None:
    """Refuse parameter values whose length scale double precision cannot carry.

    Quantities involve powers of the length scale up to ell^(2(d-1)); beyond
    |log10 ell| = 250/(2(d-1)) they overflow or underflow.  Results are scale-free, so
    the remedy is to compute at a moderate scale and rescale.
    """
    dims = th.derivation.length_dimensions
    logs = []
    for name, n in dims.items():
        v = th.values[name]
        if n != 0 and v != 0:
            logs.append((name, math.log10(abs(v)) / n))
    if not logs:
        return
    d = th.derivation.dimension
    limit = 250.0 / (2 * (d - 1))
    for name, lg in logs:
        if abs(lg) > limit:
            raise ParameterDomainError(
                f"{name} = {th.values[name]:g} puts the length scale at 1e{lg:+.0f}, beyond what "
                f"double precision can evaluate in d = {d} (|log10 scale| <= {limit:.0f}); "
                f"results are scale-free: compute at a moderate value and rescale")
