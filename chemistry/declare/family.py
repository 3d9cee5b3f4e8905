"""The family declaration API.

A *family* is a small declaration, nothing more: a name, a one-line summary, a
reference, the spacetime dimension, the parameters (each with a default, a
length dimension and a physical domain), and sympy expressions for the enthalpy
M(x, P, params) and the entropy S(x, params) as functions of a state variable x
(the horizon radius r+ by default).  Everything else (T, V, potentials, G, the
equation of state, response functions, first-law and Smarr checks) is derived by
the engine.

Systems that are not black holes (the reference van der Waals fluid) may instead
give the temperature T(x, P) and Gibbs free energy G(x, P) directly; the engine
then obtains S = -(dG/dT)_P and M = G + T S and proceeds identically.

Example
-------
>>> from bhchem.declare.family import Family, Parameter
>>> from bhchem.declare.domain import Domain
>>> from bhchem.declare.symbols import r, P, pi, parameter_symbol
>>> Q = parameter_symbol("Q")
>>> fam = Family(
...     name="toy-rn", summary="4D charged AdS", reference="Kubiznak & Mann, JHEP 07 (2012) 033",
...     dimension=4,
...     parameters=(Parameter("Q", 1.0, length_dimension=1, domain=Domain.nonnegative()),),
...     enthalpy=r / 2 * (1 + 8 * pi * P * r**2 / 3 + Q**2 / r**2),
...     entropy=pi * r**2)
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import sympy as sp

from bhchem.declare import symbols as sy
from bhchem.declare.conditions import (DEFAULT_SET, ENGINE_CONDITIONS, Condition, ConditionSet,
                                       condition_name_error)
from bhchem.declare.domain import Domain
from bhchem.errors import MalformedFamilyError

_NAME_RE = re.compile(r"^[a-z][a-z0-9]*(-[a-z0-9]+)*$")
_PARAM_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")


@dataclass(frozen=True)
class Parameter:
    """A parameter of a family (a charge, a coupling, the dimension d, curvature k).

    Parameters
    ----------
    name : str
        Symbol name used in the expressions (``Q``, ``alpha``, ``d`` ...).
    default : float
        Value used when the user gives none.
    length_dimension : int, float or sympy expression
        n in [q] = L^n (G = c = hbar = 1).  A charge in d dimensions has
        n = d - 3, a Gauss-Bonnet coupling n = 2, a Born-Infeld field n = -1.
        It may depend on the symbol ``d``.
    domain : Domain
        Physical domain; integer or finite-set domains make the parameter
        *discrete* (structural): it is substituted before derivation and has no
        conjugate potential.
    description : str
        A few words for listings.
    """

    name: str
    default: float
    length_dimension: object = 0
    domain: Domain = field(default_factory=Domain.real)
    description: str = ""

    @property
    def discrete(self) -> bool:
        """Structural parameters (d, k, ...) are substituted before derivation."""
        return self.domain.discrete

    @property
    def symbol(self) -> sp.Symbol:
        """The canonical sympy symbol of this parameter."""
        if self.name == "d":
            return sy.d
        if self.name == "k":
            return sy.k
        return sy.parameter_symbol(self.name)

    def dimension_at(self, dim: int) -> float:
        """Length dimension with the spacetime dimension substituted."""
        n = sp.sympify(self.length_dimension).subs(sy.d, dim)
        if n.free_symbols:
            raise MalformedFamilyError(
                f"parameter {self.name}: length dimension {self.length_dimension} "
                f"may only depend on d")
        return float(n)


@dataclass(frozen=True)
class Family:
    """Declaration of a thermodynamic family (see module docstring).

    Parameters
    ----------
    name : str
        Kebab-case identifier (``rn-ads``).
    summary : str
        One line for listings.
    reference : str
        The paper the formulas come from (authors, journal, year, arXiv id).
    dimension : int or Parameter
        Fixed spacetime dimension, or a discrete parameter named ``d``.
    parameters : sequence of Parameter
        Charges, couplings and structural parameters other than d.
    enthalpy, entropy : sympy expressions
        M(x, P, params) and S(x, P, params) (black-hole route).
    temperature : sympy expression, optional
        T from the surface gravity; the engine verifies it against (dM/dS)_P.
        Required, together with ``gibbs``, on the fluid route.
    volume : sympy expression, optional
        A proposed thermodynamic volume; verified against (dM/dP)_S.
    gibbs : sympy expression, optional
        G(x, P, params) for the fluid route (no enthalpy/entropy given).
    background_gibbs : sympy expression, optional
        G of a competing background phase (thermal AdS: 0), a function of P and the
        parameters only.
    background_name : str
        What the background phase is called (e.g. 'thermal AdS').
    state : sympy.Symbol
        The state variable x (default: horizon radius ``r``).
    state_description : str
        What x is, in words.
    horizon_radius : sympy expression, optional
        r+ as a function of x (default x when the state variable is ``r``).
    specific_volume : sympy expression, optional
        v(x); default 4 r+/(d-2).
    conditions : sequence of Condition (or bare sympy relationals)
        Named conditions a physical state satisfies (may use ``symbols.T``), each with a
        one-line reason and a reference (see :mod:`bhchem.declare.conditions`).  A bare
        relation is named ``condition-1``, ``condition-2``, ... with the family's
        reference.  The engine adds ``positive-entropy`` and ``nonnegative-temperature``.
    condition_sets : sequence of ConditionSet
        Named selections of the conditions (e.g. the set a given paper uses); the set
        ``default`` (every condition) is implied.
    gravitational : bool
        Whether lengths scale as in gravity (P ~ L^-2, M ~ L^(d-3), S ~ L^(d-2));
        the Smarr relation is derived from this scaling.  False for fluids.
    require_nonnegative_temperature : bool
        Add T >= 0 to the state conditions (default for black holes).
    typical_state, typical_pressure : sympy expressions, optional
        Scales used to sample states for numerical checks (defaults from the
        declared length dimensions).
    conventions : mapping
        Entries that override or add to the project's conventions record.
    metric : bhchem.declare.metric.Metric, optional
        The static metric function, when known (:func:`bhchem.declare.metric.from_metric`
        builds a family from it); photon-sphere quantities are derived from it.
    ensemble : mapping
        Set by the engine only (:func:`bhchem.core.ensemble.fixed_potential_family`): for a
        family derived by a Legendre transform, potential name -> the charge it replaces
        (``{"Phi_Q": "Q"}``); empty for a declared family.
    parent : str
        Set by the engine only: the declared family an ensemble family comes from.
    """

    name: str
    summary: str
    reference: str
    dimension: object = 4
    parameters: Sequence[Parameter] = ()
    enthalpy: object = None
    entropy: object = None
    temperature: object = None
    volume: object = None
    gibbs: object = None
    background_gibbs: object = None
    background_name: str = "background"
    state: sp.Symbol = sy.r
    state_description: str = "horizon radius r+"
    horizon_radius: object = None
    specific_volume: object = None
    conditions: Sequence[object] = ()
    gravitational: bool = True
    require_nonnegative_temperature: bool = True
    typical_state: object = None
    typical_pressure: object = None
    conventions: Mapping[str, str] = field(default_factory=dict)
    source: str = ""
    condition_sets: Sequence[ConditionSet] = ()
    metric: object = None
    #: the ensemble: potential name -> the charge it replaces (``{"Phi_Q": "Q"}``) for a family
    #: derived by :func:`bhchem.core.ensemble.fixed_potential_family`; empty for a declared
    #: family (its parameters themselves are held fixed)
    ensemble: Mapping[str, str] = field(default_factory=dict)
    #: the declared family an ensemble family was derived from (its name), else ""
    parent: str = ""

    def __post_init__(self):
        object.__setattr__(self, "parameters", tuple(self.parameters))
        object.__setattr__(self, "conditions", tuple(
            c if isinstance(c, Condition) else Condition(
                f"condition-{i + 1}", c, "declared by the family without a stated reason",
                self.reference if isinstance(self.reference, str) else "")
            for i, c in enumerate(self.conditions)))
        object.__setattr__(self, "condition_sets", tuple(self.condition_sets))
        validate_family(self)

    # -- ensemble -----------------------------------------------------------------
    @property
    def held_fixed(self) -> tuple[str, ...]:
        """The thermodynamic variables the analyses hold fixed besides the state: ``P`` and
        every continuous parameter (for a fixed-potential family the potentials, e.g.
        ``("P", "Phi_Q")``); the structural ones (d, k) are not variables."""
        return ("P",) + tuple(p.name for p in self.continuous_parameters)

    def ensemble_label(self) -> str:
        """One phrase naming the ensemble, e.g. ``fixed P, Q (the declared parameters)`` or
        ``fixed P, Phi_Q (Phi_Q held fixed instead of Q; G = M - T S - Phi_Q Q)``."""
        fixed = ", ".join(self.held_fixed)
        if not self.ensemble:
            return f"fixed {fixed} (as declared)"
        swaps = ", ".join(f"{pot} held fixed instead of {q}" for pot, q in self.ensemble.items())
        g = " - ".join(["G = M - T S"] + [f"{pot} {q}" for pot, q in self.ensemble.items()])
        return f"fixed {fixed} ({swaps}; {g})"

    def ensemble_record(self) -> dict:
        """JSON-ready ``{label, held_fixed, swapped, parent}``."""
        return {"label": self.ensemble_label(), "held_fixed": list(self.held_fixed),
                "swapped": dict(self.ensemble), "parent": self.parent or self.name}

    # -- admissibility ----------------------------------------------------------
    @property
    def engine_condition_names(self) -> tuple[str, ...]:
        """The engine's own conditions that apply to this family, in order."""
        names = []
        if self.route == "enthalpy" and self.gravitational:
            names.append("positive-entropy")
        if self.require_nonnegative_temperature:
            names.append("nonnegative-temperature")
        return tuple(names)

    @property
    def condition_names(self) -> tuple[str, ...]:
        """Every condition name: the engine's first, then the declared ones."""
        return self.engine_condition_names + tuple(c.name for c in self.conditions)

    def condition_records(self) -> list[dict]:
        """Every condition as ``{name, relation, reason, reference, origin}`` (for listings)."""
        out = []
        for name in self.engine_condition_names:
            text, reason, ref = ENGINE_CONDITIONS[name]
            out.append({"name": name, "relation": text, "reason": reason, "reference": ref,
                        "origin": "engine"})
        for c in self.conditions:
            out.append({"name": c.name, "relation": str(c.relation), "reason": c.reason,
                        "reference": c.reference, "origin": "family"})
        return out

    def condition_set_table(self) -> dict:
        """Set name -> ConditionSet, the implied ``default`` set first."""
        table = {DEFAULT_SET: ConditionSet(DEFAULT_SET, self.condition_names,
                                           "every condition (the strictest set)",
                                           "common practice")}
        table.update({s.name: s for s in self.condition_sets})
        return table

    # -- parameters -----------------------------------------------------------
    @property
    def all_parameters(self) -> tuple[Parameter, ...]:
        """Every parameter, the dimension first when it is a parameter."""
        if isinstance(self.dimension, Parameter):
            return (self.dimension,) + self.parameters
        return self.parameters

    @property
    def continuous_parameters(self) -> tuple[Parameter, ...]:
        """Parameters that get a conjugate potential."""
        return tuple(p for p in self.all_parameters if not p.discrete)

    @property
    def discrete_parameters(self) -> tuple[Parameter, ...]:
        """Structural parameters, substituted before derivation."""
        return tuple(p for p in self.all_parameters if p.discrete)

    def parameter(self, name: str) -> Parameter:
        """The parameter called ``name`` (KeyError if none)."""
        for p in self.all_parameters:
            if p.name == name:
                return p
        raise KeyError(name)

    def defaults(self) -> dict[str, float]:
        """Default value of every parameter."""
        return {p.name: p.default for p in self.all_parameters}

    @property
    def route(self) -> str:
        """'enthalpy' (M and S given) or 'gibbs' (T and G given)."""
        return "enthalpy" if self.enthalpy is not None else "gibbs"


def canonical_symbols(family: Family) -> dict[str, sp.Symbol]:
    """Name -> canonical symbol for every symbol a family's expressions may use."""
    table = {family.state.name: family.state, "P": sy.P, "T": sy.T}
    if not isinstance(family.dimension, Parameter):
        table["d"] = sy.d
    for p in family.all_parameters:
        table[p.name] = p.symbol
    return table


def canonicalise(expr, table: Mapping[str, sp.Symbol], where: str, family_name: str):
    """Replace every symbol by the canonical symbol of the same name.

    Raises
    ------
    MalformedFamilyError
        On an undeclared symbol, naming the family and the expression.
    """
    if expr is None:
        return None
    try:
        e = sp.sympify(expr, strict=True) if not isinstance(expr, sp.Basic) else expr
    except (sp.SympifyError, TypeError) as exc:
        raise MalformedFamilyError(
            f"family {family_name}: {where} is not a sympy expression ({exc})") from None
    if isinstance(e, sp.Basic) and not isinstance(e, (sp.Expr, sp.logic.boolalg.Boolean)):
        raise MalformedFamilyError(f"family {family_name}: {where} is not an expression")
    unknown = sorted(s.name for s in e.free_symbols if s.name not in table)
    if unknown:
        raise MalformedFamilyError(
            f"family {family_name}: {where} uses undeclared symbol(s) {', '.join(unknown)}; "
            f"declare them as parameters (known: {', '.join(sorted(table))})")
    return e.xreplace({s: table[s.name] for s in e.free_symbols})


def validate_family(fam: Family) -> None:
    """Check a declaration; raise MalformedFamilyError naming the first fault."""
    who = fam.name if isinstance(fam.name, str) else repr(fam.name)
    if not isinstance(fam.name, str) or not _NAME_RE.match(fam.name):
        raise MalformedFamilyError(
            f"family name {who!s} must be kebab-case (lower-case letters, digits, hyphens)")
    if not isinstance(fam.summary, str) or not fam.summary.strip():
        raise MalformedFamilyError(f"family {who}: a one-line summary is required")
    if not isinstance(fam.reference, str) or not fam.reference.strip():
        raise MalformedFamilyError(f"family {who}: a reference for its formulas is required")
    if not isinstance(fam.state, sp.Symbol):
        raise MalformedFamilyError(f"family {who}: the state variable must be a sympy Symbol")
    # dimension
    if isinstance(fam.dimension, Parameter):
        if fam.dimension.name != "d" or not fam.dimension.domain.integer:
            raise MalformedFamilyError(
                f"family {who}: a variable dimension must be an integer parameter named d")
        if not fam.dimension.domain.lower >= 3:
            raise MalformedFamilyError(f"family {who}: the dimension domain must have d >= 3")

    elif not (isinstance(fam.dimension, int) and fam.dimension >= 3):
        raise MalformedFamilyError(
            f"family {who}: dimension must be an integer >= 3 or a Parameter named d")
    # parameters
    seen = set()
    for p in fam.all_parameters:
        if not isinstance(p, Parameter):
            raise MalformedFamilyError(f"family {who}: parameters must be Parameter objects")
        if not _PARAM_RE.match(p.name or ""):
            raise MalformedFamilyError(f"family {who}: parameter name {p.name!r} is not an identifier")
        if p.name in seen:
            raise MalformedFamilyError(f"family {who}: parameter {p.name} declared twice")
        if p.name in sy.RESERVED or p.name == fam.state.name:
            raise MalformedFamilyError(
                f"family {who}: parameter name {p.name} is reserved (P, T, the state variables "
                f"r, S, v and the quantities M, V, G print the same); rename it, e.g. {p.name}0")
        if p.name == "d" and p is not fam.dimension:
            raise MalformedFamilyError(
                f"family {who}: declare the dimension with dimension=Parameter('d', ...)")
        seen.add(p.name)
        if not p.domain.contains(p.default):
            raise MalformedFamilyError(
                f"family {who}: default {p.name} = {p.default} is outside its domain "
                f"{p.domain.describe(p.name)}")
        try:
            n = sp.sympify(p.length_dimension)
        except (sp.SympifyError, TypeError):
            raise MalformedFamilyError(
                f"family {who}: parameter {p.name} has an unreadable length dimension") from None
        if n.free_symbols - {sy.d}:
            raise MalformedFamilyError(
                f"family {who}: length dimension of {p.name} may only depend on d")
    # expressions
    if fam.route == "enthalpy":
        if fam.entropy is None:
            raise MalformedFamilyError(f"family {who}: the entropy S is missing")
        if fam.gibbs is not None:
            raise MalformedFamilyError(
                f"family {who}: give either M and S, or T and G (fluid route), not both")
    else:
        if fam.gibbs is None or fam.temperature is None:
            raise MalformedFamilyError(
                f"family {who}: the enthalpy M and the entropy S are missing "
                f"(or, for a fluid, the temperature T and Gibbs free energy G)")
        if fam.entropy is not None:
            raise MalformedFamilyError(
                f"family {who}: the fluid route (T and G) takes no separate entropy")
    table = canonical_symbols(fam)
    for attr in ("enthalpy", "entropy", "temperature", "volume", "gibbs", "background_gibbs",
                 "horizon_radius", "specific_volume", "typical_state", "typical_pressure"):
        value = getattr(fam, attr)
        e = canonicalise(value, table, attr, who)
        if e is not None and sy.T in e.free_symbols:
            raise MalformedFamilyError(f"family {who}: {attr} may not use the symbol T")
    if fam.background_gibbs is not None:
        bg = canonicalise(fam.background_gibbs, table, "background_gibbs", who)
        if fam.state in sp.sympify(bg).free_symbols:
            raise MalformedFamilyError(
                f"family {who}: background_gibbs may not depend on the state variable")
    names = list(fam.engine_condition_names)
    for i, c in enumerate(fam.conditions):
        problem = condition_name_error(who, c.name)
        if problem:
            raise MalformedFamilyError(problem)
        if c.name in names:
            raise MalformedFamilyError(f"family {who}: condition {c.name} declared twice "
                                       f"(or it repeats an engine condition)")
        names.append(c.name)
        for attr in ("reason", "reference"):
            if not isinstance(getattr(c, attr), str):
                raise MalformedFamilyError(f"family {who}: condition {c.name}: {attr} must be text")
        if not c.reason.strip():
            raise MalformedFamilyError(f"family {who}: condition {c.name} needs a one-line reason")
        e = canonicalise(c.relation, table, f"condition {c.name}", who)
        if not isinstance(e, (sp.logic.boolalg.Boolean, sp.core.relational.Relational)):
            raise MalformedFamilyError(
                f"family {who}: condition {c.name} must be a relation such as r > b")
    seen_sets = set()
    for cs in fam.condition_sets:
        if not isinstance(cs, ConditionSet):
            raise MalformedFamilyError(f"family {who}: condition_sets must be ConditionSet objects")
        problem = condition_name_error(who, cs.name)
        if problem:
            raise MalformedFamilyError(problem.replace("condition name", "condition set name"))
        if cs.name == DEFAULT_SET or cs.name in seen_sets:
            raise MalformedFamilyError(f"family {who}: condition set {cs.name} declared twice "
                                       f"('{DEFAULT_SET}' is implied: every condition)")
        seen_sets.add(cs.name)
        unknown = [m for m in cs.members if m not in names]
        if unknown:
            raise MalformedFamilyError(
                f"family {who}: condition set {cs.name} names unknown condition {unknown[0]!r} "
                f"(known: {', '.join(names)})")
    if fam.state.name != "r" and fam.horizon_radius is None and fam.specific_volume is None \
            and fam.gravitational:
        raise MalformedFamilyError(
            f"family {who}: with state variable {fam.state.name}, declare horizon_radius "
            f"or specific_volume")
