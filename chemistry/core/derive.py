r"""Symbolic derivation: from a family's M and S to all of its thermodynamics.

With a state variable x, pressure P and continuous parameters q, and the
declared enthalpy M(x, P, q) and entropy S(x, P, q), the engine uses the
general relations (subscripts are partial derivatives in the (x, P, q)
coordinates):

.. math::

    T = (\partial M/\partial S)_{P,q} = M_x / S_x, \qquad
    V = (\partial M/\partial P)_{S,q} = M_P - T S_P, \qquad
    \Phi_q = (\partial M/\partial q)_{S,P} = M_q - T S_q,

    G = M - T S, \qquad
    C_P = T (\partial S/\partial T)_P = T S_x / T_x, \qquad
    \kappa_T = -\frac{1}{V}\left(V_P - V_x \frac{T_P}{T_x}\right),

    C_V = T \frac{\partial(S, V)/\partial(x, P)}{\partial(T, V)/\partial(x, P)}.

The same formulas hold whether or not S depends on P or on the couplings (the
Wald entropy of Gauss-Bonnet gravity depends on alpha), so no family needs a
special case.  On the *fluid route* the family gives T(x, P) and G(x, P); then
S = -(\partial G/\partial T)_P = -G_x/T_x and M = G + T S, and the above applies.

The equation of state P(T, v) is closed-form when T is linear in P (solve for P,
then substitute x(v)); otherwise it is parametric: (T(x, P), v(x)).

The work is bounded by counts, never by time.  Before sympy puts a quantity over a
common denominator, cancels or expands it, :func:`estimate_expansion` bounds the
result from the expression tree (multinomial term counts for powers of sums,
degree spreads of every variable); a step above :data:`MAX_EXPANDED_TERMS`,
:data:`MAX_EXPANDED_DEGREE` or :data:`MAX_COEFFICIENT_DEGREE`, or a quantity
above :data:`MAX_DERIVED_NODES` nodes, is refused in one line
(:class:`DerivationTooLarge`) naming the step, the measure, the limit and what to do.
"""
from __future__ import annotations

import dataclasses
import math
import threading
from dataclasses import dataclass, field
from typing import Mapping

import sympy as sp

from bhchem.core import derivation_cache
from bhchem.core.implicit import ImplicitRoot
from bhchem.declare import symbols as sy
from bhchem.declare.conditions import ENGINE_CONDITIONS
from bhchem.errors import MalformedFamilyError
from bhchem.declare.family import Family, canonical_symbols, canonicalise

#: quantities every derivation provides (plus Phi_<q> for each continuous q)
CORE_QUANTITIES = ("M", "S", "T", "V", "G", "v", "C_P", "C_V", "kappa_T")

_OPS_LIMIT_SIMPLIFY = 150  # beyond this, sympy.simplify is too slow to be worth it

#: most terms (numerator plus denominator) a quantity may have once it is put over a
#: common denominator and expanded, estimated *before* expanding (a power of a sum
#: with t terms to the n-th counts C(t + n - 1, n) terms, the number of monomials).
#: The bundled families need at most 261 (lovelock3-ads); (r+Q)^24 + (r+P)^24 needs
#: 2645 in kappa_T
MAX_EXPANDED_TERMS = 2_000
#: highest degree spread (highest minus lowest exponent) of the main variable of a
#: quantity over a common denominator, estimated before expanding.  The bundled
#: families reach 60 (lovelock3-ads at d = 26); rn-ads in a file at d = 60 would reach 116
MAX_EXPANDED_DEGREE = 80
#: highest total degree, in the variables other than the main one, of the coefficients
#: of the main variable (sum of their degree spreads; numeric constants such as pi,
#: which enter one power per term through charges and sphere volumes, not counted),
#: estimated before expanding.  sympy's multivariate gcd (run by cancel) slows down
#: steeply with it.  The bundled families need at most 14; (r+Q)^64 + (r+P)^64 needs
#: 126 for T = M_r/S_r
MAX_COEFFICIENT_DEGREE = 32
#: largest derived quantity, in distinct expression nodes, after every step
MAX_DERIVED_NODES = 20_000


@dataclass(frozen=True)
class EquationOfState:
    """The equation of state P(T, v).

    Attributes
    ----------
    form : str
        ``"closed"`` (``pressure`` is P(T, v)), ``"closed-in-state"`` (P(T, x):
        v(x) is not invertible in closed form) or ``"parametric"`` (T is not
        linear in P; use T(x, P) and v(x) together).
    pressure : sympy.Expr or None
        The closed form, when there is one.
    temperature, specific_volume : sympy.Expr
        T(x, P) and v(x): the parametric form, always available.
    """

    form: str
    pressure: sp.Expr | None
    temperature: sp.Expr
    specific_volume: sp.Expr | None

    def latex(self) -> str:
        """``$P = ...$`` (or ``$T = ...$`` when P(T, v) has no closed form)."""
        if self.pressure is not None:
            return f"$P = {sp.latex(self.pressure)}$"
        return f"$T = {sp.latex(self.temperature)}$"

    def _repr_latex_(self) -> str:
        return self.latex()


@dataclass(frozen=True)
class StateCondition:
    """A named condition a physical state satisfies (see :mod:`bhchem.declare.conditions`).

    Attributes
    ----------
    relation : sympy relational
        In (x, P, parameters), T already substituted.
    description : str
        The relation as declared, in words (``S > 0``).
    name : str
        The condition's kebab-case name.
    reason, reference : str
        Why a physical state satisfies it, and where that comes from.
    """

    relation: sp.Basic
    description: str
    name: str = ""
    reason: str = ""
    reference: str = ""

    def label(self, limit: int = 40) -> str:
        """The name with the relation when that is short (``nonnegative-temperature
        (T >= 0)``), else the name alone: one short phrase for messages."""
        if len(self.description) <= limit:
            return f"{self.name} ({self.description})"
        return self.name


@dataclass(frozen=True)
class Derivation:
    """All symbolic thermodynamics of one family at fixed discrete parameters.

    Attributes
    ----------
    family : Family
    discrete : dict
        Values of the structural parameters (d, k, ...) substituted here.
    dimension : int
        The spacetime dimension d.
    state : sympy.Symbol
        The state variable x.
    parameters : tuple of sympy.Symbol
        Continuous parameters, in declaration order (the numeric argument order
        is ``(x, P, *parameters)``).
    length_dimensions : dict
        n_q of each continuous parameter (with d substituted).
    quantities : dict
        Name -> expression in (x, P, q): M, S, T, V, G, v, C_P, C_V, kappa_T,
        Phi_<q> for each parameter, r_plus and G_background when defined.
    temperature_derived : sympy.Expr
        M_x / S_x (differs from quantities['T'] only if the declared T is wrong).
    volume_declared : sympy.Expr or None
    conditions : tuple of StateCondition
    eos : EquationOfState
    """

    family: Family
    discrete: dict
    dimension: int
    state: sp.Symbol
    parameters: tuple
    length_dimensions: dict
    quantities: dict
    temperature_derived: sp.Expr
    volume_declared: sp.Expr | None
    conditions: tuple
    eos: EquationOfState
    notes: tuple = field(default_factory=tuple)
    #: M and S exactly as declared (before any simplification), for the checks
    enthalpy_declared: sp.Expr | None = None
    entropy_declared: sp.Expr | None = None

    @property
    def arguments(self) -> tuple:
        """Symbols in numeric argument order: (x, P, *parameters)."""
        return (self.state, sy.P) + self.parameters

    @property
    def parameter_names(self) -> tuple[str, ...]:
        return tuple(s.name for s in self.parameters)

    def potential_name(self, param: str) -> str:
        """Quantity name of the potential conjugate to ``param``."""
        return f"Phi_{param}"

    def _repr_latex_(self) -> str:
        """The derived quantities as one aligned block (a notebook shows it typeset)."""
        rows = [rf"{_latex_name(k)} &= {sp.latex(v)}" for k, v in self.quantities.items()]
        if self.eos.pressure is not None:
            rows.append(rf"P(T, v) &= {sp.latex(self.eos.pressure)}")
        return r"$\begin{aligned}" + r" \\ ".join(rows) + r"\end{aligned}$"


def _latex_name(name: str) -> str:
    """'Phi_Q' -> '\\Phi_{Q}', 'C_P' -> 'C_{P}'."""
    if name == "r_plus":
        return "r_{+}"
    head, _, sub = name.partition("_")
    head = {"Phi": r"\Phi", "kappa": r"\kappa", "alpha": r"\alpha"}.get(head, head)
    return f"{head}_{{{sub}}}" if sub else head


# -- counted bounds on the work of a derivation ----------------------------------------------
class DerivationTooLarge(MalformedFamilyError):
    """A derivation step would exceed a counted size limit (see :func:`estimate_expansion`);
    the message is one line naming the quantity, the measure and the limit."""


#: counts above this are reported as "more than" it (keeps the bounds small integers)
_COUNT_CAP = 10**30


def _capped(n: int) -> int:
    return n if n < _COUNT_CAP else _COUNT_CAP


def multinomial_terms(terms: int, n: int) -> int:
    r"""Number of monomials in the expansion of a sum of ``terms`` terms to the power ``n``.

    .. math:: \#\,(a_1 + \dots + a_t)^n = \binom{t + n - 1}{n},

    the number of exponent vectors (k_1, ..., k_t) with k_1 + ... + k_t = n (exact
    combinatorics, "stars and bars"; e.g. (a + b)^n has n + 1 terms).  An upper bound
    on the terms of the expanded power (like terms can only merge).  Capped at 10^30.
    """
    if terms <= 1 or n <= 0:
        return 1
    k = min(n, terms - 1)
    log = math.lgamma(terms + n) - math.lgamma(k + 1) - math.lgamma(terms + n - k)
    if log > math.log(_COUNT_CAP):
        return _COUNT_CAP
    return _capped(math.comb(terms + n - 1, k))


@dataclass(frozen=True)
class ExpansionEstimate:
    """Upper bounds on an expression put over a common denominator and expanded.

    Computed from the expression tree without expanding anything
    (:func:`estimate_expansion`).  Generators are the symbols, constants such as pi,
    and every non-polynomial part (functions, powers with non-integer exponents).

    Attributes
    ----------
    numerator_terms, denominator_terms : int
        Bounds on the number of terms of the expanded numerator and denominator.
    degrees : mapping
        Generator -> bound on its *degree spread* (highest minus lowest exponent
        over the terms) in the numerator or the denominator.  A common monomial
        factor such as pi^12 r^40 has spread 0: sympy's gcd removes it first.
    inner_terms : int
        Largest term bound inside function arguments (``expand`` is deep).
    """

    numerator_terms: int
    denominator_terms: int
    degrees: Mapping
    inner_terms: int = 0

    @property
    def terms(self) -> int:
        """Bound on the terms of numerator plus denominator (and inside functions)."""
        return max(_capped(self.numerator_terms + self.denominator_terms), self.inner_terms)

    @property
    def main(self):
        """The variable of the largest degree spread (numeric constants such as pi only
        when there is nothing else; None for a constant)."""
        if not self.degrees:
            return None
        return max(self.degrees, key=lambda g: (not g.is_number, self.degrees[g],
                                                sp.default_sort_key(g)))

    @property
    def degree(self) -> int:
        """Largest degree spread of any generator."""
        return max(self.degrees.values(), default=0)

    @property
    def coefficient_degree(self) -> int:
        r"""Total degree of the coefficients of :attr:`main` in the other variables:
        :math:`\sum_g \delta_g` over the other generators g that are not numeric
        constants (pi, sqrt(pi), gamma(5/2), ...), :math:`\delta_g` the degree spread.

        0 for a polynomial in one variable (with monomial factors in the others); the
        work of sympy's multivariate gcd grows steeply with it (its heuristic gcd
        evaluates the other variables at integers)."""
        main, n = self.main, 0
        for g, k in self.degrees.items():
            if g is not main and not g.is_number:
                n = _capped(n + k)
        return n

    def describe_degrees(self, most: int = 4) -> str:
        """E.g. 'degree 64 in r, 63 in P' (the highest first)."""
        items = sorted(((k, str(g)) for g, k in self.degrees.items() if k > 0), reverse=True)
        if not items:
            return "no variable above degree 0"
        shown = ", ".join(f"{k} in {g}" for k, g in items[:most])
        return "degree " + shown + (", ..." if len(items) > most else "")


# degree ranges: generator -> (lowest, highest) exponent over the terms of a polynomial
def _scaled(degrees: dict, n: int) -> dict:
    return {g: (_capped(lo * n), _capped(hi * n)) for g, (lo, hi) in degrees.items()}


def _product(a: dict, b: dict) -> dict:
    out = dict(a)
    for g, (lo, hi) in b.items():
        lo0, hi0 = out.get(g, (0, 0))
        out[g] = (_capped(lo0 + lo), _capped(hi0 + hi))
    return out


def _union(a: dict, b: dict) -> dict:
    """Degree ranges of a sum of two polynomials (a generator missing has degree 0)."""
    out = {}
    for g in set(a) | set(b):
        lo_a, hi_a = a.get(g, (0, 0))
        lo_b, hi_b = b.get(g, (0, 0))
        out[g] = (min(lo_a, lo_b), max(hi_a, hi_b))
    return out


def _denominator_size(den: dict) -> tuple:
    """(terms, degree ranges) of a denominator {key: (exponent, base terms, base ranges)}."""
    terms, degrees = 1, {}
    for exponent, base_terms, base_degrees in den.values():
        terms = _capped(terms * multinomial_terms(base_terms, exponent))
        degrees = _product(degrees, _scaled(base_degrees, exponent))
    return terms, degrees


def _is_integer_power(e) -> bool:
    return isinstance(e, sp.Pow) and isinstance(e.exp, sp.Integer)


def _children(e) -> tuple:
    if isinstance(e, (sp.Add, sp.Mul)):
        return e.args
    if _is_integer_power(e):
        return (e.base,)
    if isinstance(e, sp.Basic) and not e.is_Atom:
        return e.args  # a generator: its arguments only count for the deep expansion
    return ()


def _combine(e, kids: list) -> tuple:
    """(numerator terms, numerator degree ranges, denominator, inner terms) of ``e``."""
    inner = max((k[3] for k in kids), default=0)
    if isinstance(e, sp.Number):
        return 1, {}, {}, 0
    if isinstance(e, sp.Mul):
        terms, degrees, den = 1, {}, {}
        for t, dg, dn, _ in kids:
            terms = _capped(terms * t)
            degrees = _product(degrees, dg)
            for key, (x, bt, bd) in dn.items():
                den[key] = (_capped(den[key][0] + x) if key in den else x, bt, bd)
        return terms, degrees, den, inner
    if isinstance(e, sp.Add):
        den = {}
        for _, _, dn, _ in kids:  # the common denominator: each factor at its highest power
            for key, (x, bt, bd) in dn.items():
                if key not in den or x > den[key][0]:
                    den[key] = (x, bt, bd)
        terms, degrees = 0, None
        for t, dg, dn, _ in kids:  # each term times the factors its denominator lacks
            rest = {key: (x - dn[key][0] if key in dn else x, bt, bd)
                    for key, (x, bt, bd) in den.items()}
            rest_terms, rest_degrees = _denominator_size(rest)
            terms = _capped(terms + t * rest_terms)
            term_degrees = _product(dg, rest_degrees)
            degrees = term_degrees if degrees is None else _union(degrees, term_degrees)
        return terms, degrees or {}, den, inner
    if _is_integer_power(e):
        (t, dg, dn, _), n = kids[0], int(e.exp)
        if n >= 0:
            den = {key: (_capped(x * n), bt, bd) for key, (x, bt, bd) in dn.items()}
            return multinomial_terms(t, n), _scaled(dg, n), den, inner
        m = -n
        terms, degrees = _denominator_size({key: (_capped(x * m), bt, bd)
                                            for key, (x, bt, bd) in dn.items()})
        key = e.base if not dn else ("numerator of", e.base)
        return terms, degrees, {key: (m, t, dg)}, inner
    # a generator: a symbol, pi, a function, a power with a non-integer exponent
    inner = max([inner] + [_capped(k[0] + _denominator_size(k[2])[0]) for k in kids])
    return 1, {e: (1, 1)}, {}, inner


def estimate_expansion(expr) -> ExpansionEstimate:
    r"""Bound the size of ``expr`` over a common denominator, expanded, without doing it.

    Rules, applied bottom-up on the expression tree; each gives an upper bound
    (like terms can only merge, common factors only cancel), derived here:

    * sums: over the common denominator D (each denominator factor at its highest
      power) the numerator has at most :math:`\sum_i t_i\,\#(D/D_i)` terms; the
      degree range of a generator is the hull of the terms' ranges;
    * products: terms multiply, degree ranges add, denominators multiply;
    * integer powers: :math:`(a_1 + \dots + a_t)^n` has at most
      :math:`\binom{t+n-1}{n}` terms (:func:`multinomial_terms`), degree ranges
      times n; a negative power moves the numerator into the denominator;
    * anything else (symbols, pi, functions, non-integer powers) is a generator of
      degree 1; the terms of its arguments count as ``inner_terms``.

    Used to refuse a derivation step *before* sympy expands or cancels: e.g.
    ``(r+Q)**64 + (r+P)**64`` has only 130 terms, but cancelling C_P = T S_r/T_r
    needs a gcd of polynomials of degree ~64 in r whose coefficients have degree ~64
    in both P and Q (coefficient degree 126 for T = M_r/S_r already).
    """
    expr = sp.sympify(expr)
    memo: dict = {}
    stack = [(expr, False)]
    while stack:
        e, ready = stack.pop()
        if e in memo:
            continue
        kids = _children(e)
        if not ready and kids:
            stack.append((e, True))
            stack.extend((k, False) for k in kids if k not in memo)
            continue
        memo[e] = _combine(e, [memo[k] for k in kids])
    terms, degrees, den, inner = memo[expr]
    den_terms, den_degrees = _denominator_size(den)
    spreads = {}
    for ranges in (degrees, den_degrees):
        for g, (lo, hi) in ranges.items():
            spreads[g] = max(spreads.get(g, 0), hi - lo)
    return ExpansionEstimate(terms, den_terms, spreads, inner)


def count_nodes(expr, limit: int | None = None) -> int:
    """Distinct sub-expressions of ``expr`` (a DAG walk), stopping just past ``limit``."""
    seen = set()
    stack = [expr]
    while stack:
        e = stack.pop()
        if e in seen:
            continue
        seen.add(e)
        if limit is not None and len(seen) > limit:
            break
        if isinstance(e, sp.Basic):
            stack.extend(e.args)
    return len(seen)


_ADVICE = ("simplify the formula by hand (fewer terms, lower powers of sums, fewer variables "
           "in them)")


def check_expansion(expr, what: str) -> ExpansionEstimate:
    """Refuse, before expanding, an expression whose expansion exceeds the limits.

    Raises
    ------
    DerivationTooLarge
        One line naming ``what``, the estimated size and the limit
        (:data:`MAX_EXPANDED_TERMS`, :data:`MAX_EXPANDED_DEGREE`,
        :data:`MAX_COEFFICIENT_DEGREE`).
    """
    est = estimate_expansion(expr)
    if est.terms > MAX_EXPANDED_TERMS:
        raise DerivationTooLarge(
            f"{what} would expand to up to {_count(est.terms)} terms, above the limit of "
            f"{MAX_EXPANDED_TERMS} (MAX_EXPANDED_TERMS); {_ADVICE}")
    if est.degree > MAX_EXPANDED_DEGREE:
        top = max(est.degrees, key=lambda g: (est.degrees[g], sp.default_sort_key(g)))
        raise DerivationTooLarge(
            f"{what} would reach degree {_count(est.degree)} in {top} once expanded, "
            f"above the limit of {MAX_EXPANDED_DEGREE} (MAX_EXPANDED_DEGREE); {_ADVICE}")
    if est.coefficient_degree > MAX_COEFFICIENT_DEGREE:
        raise DerivationTooLarge(
            f"{what} would be a polynomial in {est.main} whose coefficients reach total "
            f"degree {_count(est.coefficient_degree)} in the other variables "
            f"({est.describe_degrees()}), above the limit of {MAX_COEFFICIENT_DEGREE} "
            f"(MAX_COEFFICIENT_DEGREE); {_ADVICE}")
    return est


def check_nodes(expr, what: str) -> int:
    """Refuse a derived expression larger than :data:`MAX_DERIVED_NODES` nodes."""
    n = count_nodes(expr, MAX_DERIVED_NODES)
    if n > MAX_DERIVED_NODES:
        raise DerivationTooLarge(f"{what} has more than {MAX_DERIVED_NODES} distinct "
                                 f"sub-expressions (MAX_DERIVED_NODES); {_ADVICE}")
    return n


def _count(n: int) -> str:
    return "more than 10^30" if n >= _COUNT_CAP else str(n)


def tidy(expr: sp.Expr, variables, what: str = "an expression") -> sp.Expr:
    """See _tidy; also removes exp_polar, which sympy's hypergeometric simplification
    leaves as branch bookkeeping and which is plain exp on the real line.

    Raises
    ------
    DerivationTooLarge
        Before any expansion, when the estimated expansion of ``expr`` (named ``what``
        in the message) exceeds :data:`MAX_EXPANDED_TERMS` or
        :data:`MAX_EXPANDED_DEGREE` or :data:`MAX_COEFFICIENT_DEGREE`.
    """
    out = _tidy(expr, variables, what)
    if isinstance(out, sp.Basic) and out.has(sp.exp_polar):
        out = out.replace(sp.exp_polar, sp.exp)
    return out


def _tidy(expr: sp.Expr, variables, what: str) -> sp.Expr:
    """A cheap, predictable normal form for display and compilation.

    Rational functions of the variables are put over a common denominator,
    cancelled and split into a sum of terms (e.g. T = 2 P r + 1/(4 pi r) - ...),
    within the counted limits of :func:`check_expansion`; small other expressions
    go through ``sympy.simplify``; large ones are kept.
    """
    expr = sp.sympify(expr)
    if expr.is_number:
        return sp.nsimplify(expr) if expr.is_Float else sp.simplify(expr)
    try:
        rational = expr.is_rational_function(*variables)
    except (TypeError, ValueError, sp.PolynomialError):
        rational = False
    if rational:
        check_expansion(expr, what)
        num, den = sp.fraction(sp.cancel(sp.together(expr)))
        if len(sp.Add.make_args(sp.expand(den))) == 1:  # monomial: a sum of simple terms
            return sp.expand(num / den)
        return sp.factor_terms(sp.expand(num)) / sp.factor_terms(sp.expand(den))
    if expr.has(ImplicitRoot):
        # a numerically inverted charge (core/implicit.py): simplify cannot see through
        # it and spends seconds on the surrounding radicals; the form is kept as derived
        return expr
    if sp.count_ops(expr) <= _OPS_LIMIT_SIMPLIFY:
        try:
            return sp.simplify(expr)
        except Exception:  # pragma: no cover - sympy internals; keep the raw form
            return expr
    return expr


def _discrete_values(family: Family, discrete: dict) -> tuple[int, dict]:
    vals = {}
    for p in family.discrete_parameters:
        v = discrete.get(p.name, p.default)
        vals[p.name] = int(v) if float(v).is_integer() else v
    dim = vals["d"] if "d" in vals else int(family.dimension)
    return dim, vals


#: derivations kept in memory (keyed by the family object; each holds its family, so an
#: id is never reused while its entry lives)
_MEMORY_ENTRIES = 128
_cache: dict = {}
_cache_lock = threading.Lock()


def derive(family: Family, **discrete) -> Derivation:
    """Derive the thermodynamics of ``family`` at the given structural parameters.

    Results are cached: a family is derived once per process for each set of
    discrete values (d, k, ...), and kept on disk across processes by
    :mod:`bhchem.core.derivation_cache` (keyed by the family's content and the
    derivation code, so a stale result is never served).  Continuous parameters
    stay symbolic.

    The work is bounded by counts, never by time: every expression is measured
    before it is expanded or cancelled (:func:`check_expansion`) and every derived
    quantity after each step (:func:`check_nodes`).

    Raises
    ------
    MalformedFamilyError
        When the declaration cannot be differentiated into a usable T (e.g. S
        does not depend on the state variable).
    DerivationTooLarge
        (a MalformedFamilyError) one line "family NAME: QUANTITY would expand to ...,
        above the limit ...; simplify the formula by hand ..." when a step would
        exceed :data:`MAX_EXPANDED_TERMS`, :data:`MAX_EXPANDED_DEGREE`,
        :data:`MAX_COEFFICIENT_DEGREE` or :data:`MAX_DERIVED_NODES`.
    """
    dim, vals = _discrete_values(family, discrete)
    key = (id(family), tuple(sorted(vals.items())))
    with _cache_lock:
        hit = _cache.get(key)
    if hit is not None and hit.family is family:
        return hit
    result = derivation_cache.load(family, vals)
    if result is None:
        try:
            result = _derive(family, dim, vals)
        except DerivationTooLarge as exc:
            where = ", ".join(f"{k} = {v}" for k, v in sorted(vals.items()))
            at = f" at {where}" if where else ""
            raise DerivationTooLarge(f"family {family.name}{at}: {exc}") from None
        derivation_cache.store(result, vals)
    with _cache_lock:
        while len(_cache) >= _MEMORY_ENTRIES:   # bounded: forget the oldest
            _cache.pop(next(iter(_cache)))
        _cache[key] = result
    return result


def _derive(family: Family, dim: int, vals: dict) -> Derivation:
    table = canonical_symbols(family)
    subs = {sy.d: dim}
    for p in family.discrete_parameters:
        subs[p.symbol] = vals[p.name]
    x = family.state
    P = sy.P
    # derive with the assumptions the declared domains imply (a parameter declared >= 0 is
    # nonnegative: sqrt(g**2) is g, not Abs(g)); the results are stated in the canonical
    # symbols again at the end, so every caller sees the same symbols as before
    assumed = {p.symbol: sp.Symbol(p.name, **domain_assumptions(p.domain))
               for p in family.continuous_parameters if domain_assumptions(p.domain)}
    restore = {v: k for k, v in assumed.items()}
    params = tuple(assumed.get(p.symbol, p.symbol) for p in family.continuous_parameters)
    variables = (x, P) + params

    def prep(value, where):
        e = canonicalise(value, table, where, family.name)
        if e is None:
            return None
        e = sp.sympify(e).subs(subs)
        if assumed and isinstance(e, sp.Basic):
            e = e.xreplace(assumed)
        check_nodes(e, f"the declared {where}")
        return e

    def step(expr, what):
        """One derivation step: the tidied quantity, within the counted limits."""
        out = tidy(expr, variables, what)
        check_nodes(out, what)
        return out

    notes = []
    T_decl = prep(family.temperature, "temperature")
    if family.route == "enthalpy":
        M = prep(family.enthalpy, "enthalpy")
        S = prep(family.entropy, "entropy")
    else:
        G_given = prep(family.gibbs, "gibbs")
        T_x_fluid = sp.diff(T_decl, x)
        if T_x_fluid == 0:
            raise MalformedFamilyError(
                f"family {family.name}: T does not depend on the state variable {x}")
        S = step(-sp.diff(G_given, x) / T_x_fluid, "S = -(dG/dT)_P")
        M = step(G_given + T_decl * S, "M = G + T S")
        notes.append("fluid route: S = -(dG/dT)_P and M = G + T S derived from the given T and G")

    S_x = sp.diff(S, x)
    if S_x == 0:
        raise MalformedFamilyError(
            f"family {family.name}: the entropy does not depend on the state variable {x}")
    M_x = sp.diff(M, x)
    T_derived = step(M_x / S_x, "T = (dM/dS)_P")
    T = step(T_decl, "the declared T") if T_decl is not None else T_derived

    V = step(sp.diff(M, P) - T_derived * sp.diff(S, P), "V = (dM/dP)_S")
    q = {}
    for s in params:
        q[f"Phi_{s.name}"] = step(sp.diff(M, s) - T_derived * sp.diff(S, s),
                                  f"Phi_{s.name} = (dM/d{s.name})_(S,P)")

    G = step(M - T * S, "G = M - T S") if family.route == "enthalpy" else G_given
    if family.horizon_radius is not None:
        r_plus = prep(family.horizon_radius, "horizon_radius")
    elif x.name == "r":
        r_plus = x
    else:
        r_plus = None
    if family.specific_volume is not None:
        v = prep(family.specific_volume, "specific_volume")
    elif r_plus is not None:
        v = 4 * r_plus / (dim - 2)
    else:
        v = None

    T_x, T_P = sp.diff(T, x), sp.diff(T, P)
    C_P = step(T * S_x / T_x, "C_P = T (dS/dT)_P")
    V_x, V_P = sp.diff(V, x), sp.diff(V, P)
    kappa_T = step(-(V_P - V_x * T_P / T_x) / V, "kappa_T") if V != 0 else sp.nan
    S_P = sp.diff(S, P)
    jacobian = S_x * V_P - S_P * V_x
    if jacobian.has(ImplicitRoot):
        # through a numerically inverted charge nothing cancels on expansion: kept as is
        num = jacobian
    else:
        check_expansion(jacobian, "the numerator of C_V")
        num = sp.expand(jacobian)
    den = T_x * V_P - T_P * V_x
    C_V = sp.Integer(0) if step(num, "the numerator of C_V") == 0 \
        else step(T * num / den, "C_V = T (dS/dT)_V")
    if C_V == 0:
        notes.append("C_V vanishes identically (S and V are functions of the same variable)")

    quantities = {"M": step(M, "M"), "S": step(S, "S"), "T": T, "V": V, "G": G}
    if v is not None:
        quantities["v"] = v
    if r_plus is not None:
        quantities["r_plus"] = r_plus
    quantities.update(q)
    quantities.update({"C_P": C_P, "C_V": C_V, "kappa_T": kappa_T})
    if family.background_gibbs is not None:
        quantities["G_background"] = prep(family.background_gibbs, "background_gibbs")

    conditions = []
    engine_relations = {"positive-entropy": sp.StrictGreaterThan(quantities["S"], 0),
                        "nonnegative-temperature": sp.GreaterThan(T, 0)}
    for name in family.engine_condition_names:
        text, reason, ref = ENGINE_CONDITIONS[name]
        conditions.append(StateCondition(engine_relations[name], text, name, reason, ref))
    for c in family.conditions:
        rel = prep(c.relation, f"condition {c.name}").subs(sy.T, T)
        conditions.append(StateCondition(rel, str(c.relation), c.name, c.reason, c.reference))

    eos = _equation_of_state(T, v, x, variables)
    length_dims = {p.name: p.dimension_at(dim) for p in family.continuous_parameters}

    def back(e):
        return e.xreplace(restore) if restore and isinstance(e, sp.Basic) else e

    eos = EquationOfState(eos.form, back(eos.pressure), back(eos.temperature),
                          back(eos.specific_volume))
    return Derivation(family=family, discrete=dict(vals), dimension=dim, state=x,
                      parameters=tuple(p.symbol for p in family.continuous_parameters),
                      length_dimensions=length_dims,
                      quantities={k: back(e) for k, e in quantities.items()},
                      temperature_derived=back(T_derived),
                      volume_declared=back(prep(family.volume, "volume")),
                      conditions=tuple(dataclasses.replace(c, relation=back(c.relation))
                                       for c in conditions),
                      eos=eos, notes=tuple(notes),
                      enthalpy_declared=back(M), entropy_declared=back(S))


def domain_assumptions(domain) -> dict:
    """The sympy assumptions a parameter domain implies: ``positive`` (lower end > 0, or 0
    excluded), ``nonnegative`` (0 included), ``negative``/``nonpositive`` likewise, else none
    beyond the canonical symbol's ``real``; a finite set of choices implies nothing."""
    if getattr(domain, "choices", None):
        return {}
    lo, hi = domain.lower, domain.upper
    if lo > 0 or (lo == 0 and not domain.lower_closed):
        return {"positive": True}
    if lo == 0:
        return {"nonnegative": True}
    if hi < 0 or (hi == 0 and not domain.upper_closed):
        return {"negative": True}
    if hi == 0:
        return {"nonpositive": True}
    return {}


def _equation_of_state(T, v, x, variables) -> EquationOfState:
    """P(T, v) in closed form when T is linear in P, else parametric."""
    P = sy.P
    if any(P in f.args for f in T.atoms(ImplicitRoot)):
        # T depends on P through a numerically inverted charge: not provably linear in P
        return EquationOfState("parametric", None, T, v)
    T_P = sp.diff(T, P)
    linear = T_P != 0 and tidy(sp.diff(T, P, 2), variables, "d^2T/dP^2") == 0
    if not linear:
        return EquationOfState("parametric", None, T, v)
    P_of_Tx = tidy((sy.T - T.subs(P, 0)) / T_P, (sy.T,) + tuple(variables),
                   "the equation of state P(T, x)")
    check_nodes(P_of_Tx, "the equation of state P(T, x)")
    if v is None:
        return EquationOfState("closed-in-state", P_of_Tx, T, v)
    if v == x:
        return EquationOfState("closed", _display_in_v(P_of_Tx.subs(x, sy.v)), T, v)
    check_expansion(v, "the specific volume v(x)")
    try:
        roots = sp.solve(sp.Eq(sy.v, v), x, dict=False)
    except (NotImplementedError, ValueError):
        roots = []
    if len(roots) == 1:
        P_of_Tv = _display_in_v(
            tidy(P_of_Tx.subs(x, roots[0]), (sy.T, sy.v) + tuple(variables[1:]),
                 "the equation of state P(T, v)"))
        return EquationOfState("closed", P_of_Tv, T, v)
    return EquationOfState("closed-in-state", P_of_Tx, T, v)


def _display_in_v(expr):
    """Partial fractions in v (P = T/(v-b) - a/v^2 rather than one big fraction)."""
    check_expansion(expr, "the equation of state P(T, v)")
    try:
        return sp.apart(sp.together(expr), sy.v)
    except (sp.PolynomialError, NotImplementedError, ValueError):
        return expr
