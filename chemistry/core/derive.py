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
"""
from __future__ import annotations

import threading
from dataclasses import dataclass, field

import sympy as sp

from bhchem.core import derivation_cache
from bhchem.declare import symbols as sy
from bhchem.errors import MalformedFamilyError
from bhchem.declare.family import Family, canonical_symbols, canonicalise

#: quantities every derivation provides (plus Phi_<q> for each continuous q)
CORE_QUANTITIES = ("M", "S", "T", "V", "G", "v", "C_P", "C_V", "kappa_T")

_OPS_LIMIT_SIMPLIFY = 150  # beyond this, sympy.simplify is too slow to be worth it


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


@dataclass(frozen=True)
class StateCondition:
    """A condition a physical state satisfies, with its origin in words."""

    relation: sp.Basic
    description: str


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


def tidy(expr: sp.Expr, variables) -> sp.Expr:
    """See _tidy; also removes exp_polar, which sympy's hypergeometric simplification
    leaves as branch bookkeeping and which is plain exp on the real line."""
    out = _tidy(expr, variables)
    if isinstance(out, sp.Basic) and out.has(sp.exp_polar):
        out = out.replace(sp.exp_polar, sp.exp)
    return out


def _tidy(expr: sp.Expr, variables) -> sp.Expr:
    """A cheap, predictable normal form for display and compilation.

    Rational functions of the variables are put over a common denominator,
    cancelled and split into a sum of terms (e.g. T = 2 P r + 1/(4 pi r) - ...);
    small other expressions go through ``sympy.simplify``; large ones are kept.
    """
    expr = sp.sympify(expr)
    if expr.is_number:
        return sp.nsimplify(expr) if expr.is_Float else sp.simplify(expr)
    try:
        rational = expr.is_rational_function(*variables)
    except (TypeError, ValueError, sp.PolynomialError):
        rational = False
    if rational:
        num, den = sp.fraction(sp.cancel(sp.together(expr)))
        if len(sp.Add.make_args(sp.expand(den))) == 1:  # monomial: a sum of simple terms
            return sp.expand(num / den)
        return sp.factor_terms(sp.expand(num)) / sp.factor_terms(sp.expand(den))
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

    Raises
    ------
    MalformedFamilyError
        When the declaration cannot be differentiated into a usable T (e.g. S
        does not depend on the state variable).
    """
    dim, vals = _discrete_values(family, discrete)
    key = (id(family), tuple(sorted(vals.items())))
    with _cache_lock:
        hit = _cache.get(key)
    if hit is not None and hit.family is family:
        return hit
    result = derivation_cache.load(family, vals)
    if result is None:
        result = _derive(family, dim, vals)
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
    params = tuple(p.symbol for p in family.continuous_parameters)
    variables = (x, P) + params

    def prep(value, where):
        e = canonicalise(value, table, where, family.name)
        return None if e is None else sp.sympify(e).subs(subs)

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
        S = tidy(-sp.diff(G_given, x) / T_x_fluid, variables)
        M = tidy(G_given + T_decl * S, variables)
        notes.append("fluid route: S = -(dG/dT)_P and M = G + T S derived from the given T and G")

    S_x = sp.diff(S, x)
    if S_x == 0:
        raise MalformedFamilyError(
            f"family {family.name}: the entropy does not depend on the state variable {x}")
    M_x = sp.diff(M, x)
    T_derived = tidy(M_x / S_x, variables)
    T = tidy(T_decl, variables) if T_decl is not None else T_derived

    V = tidy(sp.diff(M, P) - T_derived * sp.diff(S, P), variables)
    q = {}
    for s in params:
        q[f"Phi_{s.name}"] = tidy(sp.diff(M, s) - T_derived * sp.diff(S, s), variables)

    G = tidy(M - T * S, variables) if family.route == "enthalpy" else G_given
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
    C_P = tidy(T * S_x / T_x, variables)
    V_x, V_P = sp.diff(V, x), sp.diff(V, P)
    kappa_T = tidy(-(V_P - V_x * T_P / T_x) / V, variables) if V != 0 else sp.nan
    S_P = sp.diff(S, P)
    num = sp.expand(S_x * V_P - S_P * V_x)
    den = T_x * V_P - T_P * V_x
    C_V = sp.Integer(0) if tidy(num, variables) == 0 else tidy(T * num / den, variables)
    if C_V == 0:
        notes.append("C_V vanishes identically (S and V are functions of the same variable)")

    quantities = {"M": tidy(M, variables), "S": tidy(S, variables), "T": T, "V": V, "G": G}
    if v is not None:
        quantities["v"] = v
    if r_plus is not None:
        quantities["r_plus"] = r_plus
    quantities.update(q)
    quantities.update({"C_P": C_P, "C_V": C_V, "kappa_T": kappa_T})
    if family.background_gibbs is not None:
        quantities["G_background"] = prep(family.background_gibbs, "background_gibbs")

    conditions = []
    if family.route == "enthalpy" and family.gravitational:
        conditions.append(StateCondition(sp.StrictGreaterThan(quantities["S"], 0), "S > 0"))
    if family.require_nonnegative_temperature:
        conditions.append(StateCondition(sp.GreaterThan(T, 0), "T >= 0"))
    for c in family.conditions:
        rel = prep(c, "condition").subs(sy.T, T)
        conditions.append(StateCondition(rel, str(c)))

    eos = _equation_of_state(T, v, x, variables)
    length_dims = {p.name: p.dimension_at(dim) for p in family.continuous_parameters}
    return Derivation(family=family, discrete=dict(vals), dimension=dim, state=x,
                      parameters=params, length_dimensions=length_dims,
                      quantities=quantities, temperature_derived=T_derived,
                      volume_declared=prep(family.volume, "volume"),
                      conditions=tuple(conditions), eos=eos, notes=tuple(notes),
                      enthalpy_declared=M, entropy_declared=S)


def _equation_of_state(T, v, x, variables) -> EquationOfState:
    """P(T, v) in closed form when T is linear in P, else parametric."""
    P = sy.P
    T_P = sp.diff(T, P)
    linear = T_P != 0 and tidy(sp.diff(T, P, 2), variables) == 0
    if not linear:
        return EquationOfState("parametric", None, T, v)
    P_of_Tx = tidy((sy.T - T.subs(P, 0)) / T_P, (sy.T,) + tuple(variables))
    if v is None:
        return EquationOfState("closed-in-state", P_of_Tx, T, v)
    if v == x:
        return EquationOfState("closed", _display_in_v(P_of_Tx.subs(x, sy.v)), T, v)
    try:
        roots = sp.solve(sp.Eq(sy.v, v), x, dict=False)
    except (NotImplementedError, ValueError):
        roots = []
    if len(roots) == 1:
        P_of_Tv = _display_in_v(
            tidy(P_of_Tx.subs(x, roots[0]), (sy.T, sy.v) + tuple(variables[1:])))
        return EquationOfState("closed", P_of_Tv, T, v)
    return EquationOfState("closed-in-state", P_of_Tx, T, v)


def _display_in_v(expr):
    """Partial fractions in v (P = T/(v-b) - a/v^2 rather than one big fraction)."""
    try:
        return sp.apart(sp.together(expr), sy.v)
    except (sp.PolynomialError, NotImplementedError, ValueError):
        return expr
