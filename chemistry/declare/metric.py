r"""Families from the metric function: the line element as the declaration.

A static black hole

.. math:: ds^2 = -f(r)\,dt^2 + \frac{dr^2}{h(r)} + r^2 d\Omega_{d-2}^2 \qquad (h = f \text{ unless given})

is declared by its metric function f (in the radial coordinate ``r``, the AdS radius ``L``
and a *mass parameter*, ``M`` by default), the relation between the mass parameter and the
enthalpy (default: M itself, as for f = 1 - 2M/r + ...; in d dimensions with
f = 1 - m/r^(d-3) + ..., M = (d-2) Omega m/(16 pi)), and the entropy: the area law
(default), a stated expression, or ``"first-law"``.  :func:`from_metric` then

1. replaces L by the pressure, L^2 = (d-1)(d-2)/(16 pi P);
2. solves f(r+) = 0 for the mass parameter (symbolically).  With several roots it keeps, in
   this order: the one chosen with ``root=``; the one with the stated asymptotics
   (``asymptotics="a -> 0: r/2 + r^3/(2 L^2)"``: the mass parameter approaches that
   expression in that limit, tested numerically with 30 digits at a reference state); the
   only one real, positive and verifying f(r+) = 0 at a reference state.  It says which in
   the family's conventions (``mass_root``), and refuses in one line when it cannot decide;
3. takes the temperature from the surface gravity, T = f'(r+)/(4 pi), or
   T = sqrt(f'(r+) h'(r+))/(4 pi) when h is given;
4. builds the entropy: A/4 = Omega r+^(d-2)/4, the stated S, or the entropy that makes the
   first law hold with this M and T,

   .. math:: S = \int \frac{(\partial M/\partial r_+)_{P,q}}{T}\,dr_+ ,

   in closed form (sympy), with the integration constant stated (0 in the antiderivative
   shown, or ``entropy_constant``).  When h = f the integrand is
   -4 pi (dM/dm)/(df/dm) at r = r+ (implicit differentiation of f(r+, m) = 0), which needs
   no cancellation.

The result is an ordinary :class:`~bhchem.declare.family.Family` (M, S and T declared, so
the engine checks T against (dM/dS)_P as for any family) that also carries its
:class:`Metric`, from which the photon sphere, the critical impact parameter and the
Lyapunov exponent are derived (:mod:`bhchem.core.metric`).  A family declared by M and S
whose metric is known may attach the :class:`Metric` alone (``Family(..., metric=...)``):
nothing is solved at import, and :func:`bhchem.core.metric.metric_route_agrees` checks that
the metric reproduces the declared M and T.

Example
-------
>>> import sympy as sp
>>> from bhchem.declare.metric import from_metric
>>> r, M, L = sp.symbols("r M L", positive=True)
>>> fam = from_metric(name="toy-sads", summary="Schwarzschild-AdS from its metric",
...                   reference="Hawking & Page, Commun. Math. Phys. 87 (1983) 577",
...                   f=1 - 2*M/r + r**2/L**2)
>>> fam.enthalpy
r*(8*pi*P*r**2 + 3)/6
>>> fam.temperature
2*P*r + 1/(4*pi*r)
"""
from __future__ import annotations

import threading
from dataclasses import dataclass, field, replace

import sympy as sp

from bhchem.declare import symbols as sy
from bhchem.declare.entropy_quadrature import quadrature_entropy
from bhchem.declare.expression_parser import ExpressionError, operation_limit
from bhchem.declare.family import Family, Parameter
from bhchem.errors import MalformedFamilyError

#: the radial coordinate of a metric (the horizon radius r+ is the family's state ``r``)
RHO = sp.Symbol("rho", positive=True)
#: the AdS radius, replaced by the pressure
L_ADS = sp.Symbol("L", positive=True)
#: the mass parameter of a metric
MASS = sp.Symbol("m_metric", real=True)

#: entropy rules of :func:`from_metric`
ENTROPY_RULES = ("area", "first-law")

#: expressions above this many operations are not passed to sympy.simplify
_SIMPLIFY_OPS = 200

#: horizon solutions and first-law entropies kept (the symbolic work is the same for every
#: route and analysis of one metric); the oldest is dropped beyond this many
_CACHE_ENTRIES = 64
_CACHE: dict = {}
_CACHE_LOCK = threading.Lock()


def _cached(key, compute):
    with _CACHE_LOCK:
        if key in _CACHE:
            return _CACHE[key]
    value = compute()
    with _CACHE_LOCK:
        while len(_CACHE) >= _CACHE_ENTRIES:
            _CACHE.pop(next(iter(_CACHE)))
        _CACHE[key] = value
    return value


def _key(*parts):
    return tuple(tuple(sorted(p.items(), key=lambda kv: str(kv[0]))) if isinstance(p, dict)
                 else p for p in parts)


@dataclass(frozen=True)
class Metric:
    """A static metric function, as data (see module docstring).

    Attributes
    ----------
    f : sympy.Expr
        f in the canonical symbols: :data:`RHO` (radial coordinate), :data:`L_ADS`,
        :data:`MASS` (the mass parameter), ``d`` and the family's parameters.
    mass_enthalpy : sympy.Expr
        The enthalpy M as a function of :data:`MASS` (and d, parameters).
    h : sympy.Expr or None
        1/g_rr when it differs from f.
    root : int or None
        Which root of f(r+) = 0 to keep when there are several (index in sympy's order).
    asymptotics : tuple or None
        (symbol, '0' or 'oo', expression): the kept root approaches the expression as the
        symbol (a parameter, or ``r`` for r+) goes to 0 or infinity.
    entropy_reference : tuple or None
        (r0, S0): the first-law entropy is S0 at r+ = r0 (expressions in the parameters);
        needed when the entropy integral has no closed form (certified quadrature).
    bounded : bool
        Solve f(r+) = 0 within :data:`SOLVE_MAX_OPERATIONS` counted operations (a file read
        by the declarative loader, whose author may not be trusted; the count costs about a
        factor 2 in speed, so a Python declaration, which runs code anyway, is not metered).
    text : str
        f as the author wrote it (for reports).
    mass_name : str
        The name of the mass parameter as written.
    """

    f: sp.Expr
    mass_enthalpy: sp.Expr = MASS
    h: sp.Expr | None = None
    root: int | None = None
    text: str = ""
    mass_name: str = "M"
    asymptotics: tuple | None = None
    entropy_reference: tuple | None = None
    bounded: bool = False

    @classmethod
    def declare(cls, f, *, mass: str = "M", enthalpy=None, h=None, ads_radius: str = "L",
                root: int | None = None, parameters=(), where: str = "metric",
                asymptotics=None, entropy_reference=None, text: str | None = None,
                bounded: bool = False) -> "Metric":
        """A :class:`Metric` from expressions written with symbols *named* ``r`` (the radial
        coordinate), ``ads_radius``, ``mass``, ``d``, ``k`` and the parameter names
        (``parameters``: the family's Parameter objects or their canonical symbols).
        ``text``: f as the paper writes it, for reports (default: sympy's form of f).

        Raises
        ------
        MalformedFamilyError
            On an undeclared symbol, a metric without L or without the mass parameter.
        """
        table = {"r": RHO, ads_radius: L_ADS, mass: MASS, "d": sy.d, "k": sy.k, "pi": sp.pi}
        for p in parameters:  # Parameter objects, or their canonical symbols
            if p.name in (ads_radius, mass, "r"):
                raise MalformedFamilyError(
                    f"{where}: parameter {p.name} has the name of the radial coordinate, the "
                    f"AdS radius or the mass parameter; rename it")
            table[p.name] = p.symbol if isinstance(p, Parameter) else p
        fc = _canonical(f, table, f"{where} f")
        if fc is None:
            raise MalformedFamilyError(f"{where}: the metric function f is missing")
        if L_ADS not in fc.free_symbols:
            raise MalformedFamilyError(
                f"{where}: f does not contain the AdS radius {ads_radius} (the pressure enters "
                f"through L^2 = (d-1)(d-2)/(16 pi P))")
        if MASS not in fc.free_symbols:
            raise MalformedFamilyError(
                f"{where}: f does not contain the mass parameter {mass} (name it with mass=...)")
        hc = _canonical(h, table, f"{where} h")
        mc = _canonical(enthalpy if enthalpy is not None else sp.Symbol(mass), table,
                        f"{where} enthalpy")
        if MASS not in mc.free_symbols:
            raise MalformedFamilyError(
                f"{where}: the enthalpy must be written in the mass parameter {mass}")
        if RHO in mc.free_symbols:
            raise MalformedFamilyError(f"{where}: the enthalpy may not depend on r")
        if root is not None and (isinstance(root, bool) or not isinstance(root, int) or root < 0):
            raise MalformedFamilyError(f"{where}: root must be a non-negative integer index")
        asym = None
        if asymptotics is not None:
            asym = _asymptotics(asymptotics, {**table, "r": sy.r}, where, mass)
        ref = None
        if entropy_reference is not None:
            try:
                r0, S0 = entropy_reference
            except (TypeError, ValueError):
                raise MalformedFamilyError(f"{where}: entropy_reference must be a pair "
                                           f"(r0, S0)") from None
            pt = {k: v for k, v in table.items() if k not in ("r", ads_radius, mass)}
            ref = (_canonical(r0, pt, f"{where} entropy_reference r0"),
                   _canonical(S0, pt, f"{where} entropy_reference S0"))
        return cls(f=fc, mass_enthalpy=mc, h=hc, root=root, text=text or str(f), mass_name=mass,
                   asymptotics=asym, entropy_reference=ref, bounded=bool(bounded))


def _asymptotics(spec, table, where, mass):
    """('a', '0', expr) from 'a -> 0: expr' or (limit text, expr)."""
    if isinstance(spec, str):
        limit, sep, expr = spec.partition(":")
        if not sep:
            raise MalformedFamilyError(f"{where}: asymptotics must read 'NAME -> 0: EXPRESSION' "
                                       f"or 'NAME -> oo: EXPRESSION', not {spec!r}")
    else:
        try:
            limit, expr = spec
        except (TypeError, ValueError):
            raise MalformedFamilyError(f"{where}: asymptotics must be 'NAME -> 0: EXPRESSION' "
                                       f"or a pair (limit text, expression)") from None
    name, arrow, value = str(limit).partition("->")
    name, value = name.strip(), value.strip()
    if not arrow or value not in ("0", "oo", "inf") or name not in table or name in ("pi",):
        raise MalformedFamilyError(f"{where}: the asymptotic limit {limit!r} must read "
                                   f"'NAME -> 0' or 'NAME -> oo' with NAME r or a parameter")
    e = _canonical(expr if not isinstance(expr, str) else sp.sympify(expr, locals={
        k: sp.Symbol(k) for k in table if k != "pi"}), {k: v for k, v in table.items()
                                                        if k != mass}, f"{where} asymptotics")
    return (name, "oo" if value != "0" else "0", e)


def _fixed_metric(metric: Metric, subs: dict) -> Metric:
    """The metric with structural values (d, k, ...) substituted."""
    def s(e):
        return e.subs(subs) if isinstance(e, sp.Basic) else e
    asym = metric.asymptotics
    if asym is not None:
        asym = (asym[0], asym[1], s(asym[2]))
    ref = metric.entropy_reference
    if ref is not None:
        ref = (s(ref[0]), s(ref[1]))
    return replace(metric, f=s(metric.f), mass_enthalpy=s(metric.mass_enthalpy), h=s(metric.h),
                   asymptotics=asym, entropy_reference=ref)


def _canonical(expr, table, where):
    if expr is None:
        return None
    try:
        e = expr if isinstance(expr, sp.Basic) else sp.sympify(expr, strict=True)
    except (sp.SympifyError, TypeError) as exc:
        raise MalformedFamilyError(f"{where} is not a sympy expression ({exc})") from None
    unknown = sorted(s.name for s in e.free_symbols if s.name not in table)
    if unknown:
        raise MalformedFamilyError(
            f"{where} uses undeclared symbol(s) {', '.join(unknown)} (known: "
            f"{', '.join(sorted(k for k in table if k != 'pi'))})")
    return e.xreplace({s: table[s.name] for s in e.free_symbols})


def pressure_substitution(dim):
    """{L: sqrt((d-1)(d-2)/(16 pi P))}: L^2 = (d-1)(d-2)/(16 pi P)."""
    return {L_ADS: sp.sqrt((dim - 1) * (dim - 2) / (16 * sp.pi * sy.P))}


def _small_simplify(e):
    if sp.count_ops(e) <= _SIMPLIFY_OPS:
        try:
            return sp.simplify(e)
        except Exception:  # pragma: no cover - sympy internals: keep the raw form
            return e
    return e


@dataclass(frozen=True)
class HorizonSolution:
    """f(r+) = 0 solved for the mass parameter, at given structural values.

    ``mass``: m(r+, P, q); ``enthalpy``: M(r+, P, q); ``temperature``: T from the surface
    gravity; ``f_state``/``h_state``: f(rho; r+, P, q) and h with m eliminated;
    ``note``: which root was kept, when there were several."""

    mass: sp.Expr
    enthalpy: sp.Expr
    temperature: sp.Expr
    f_state: sp.Expr
    h_state: sp.Expr | None
    note: str = ""
    roots: tuple = field(default_factory=tuple)


def solve_horizon(metric: Metric, subs: dict | None = None, reference: dict | None = None,
                  where: str = "metric") -> HorizonSolution:
    """Solve f(r+) = 0 for the mass parameter and take T from the surface gravity.

    Parameters
    ----------
    metric : Metric
    subs : dict, optional
        Symbol -> value substituted first (d, k, ...).
    reference : dict, optional
        Symbol -> number for every remaining symbol but r+ and P (parameter defaults):
        where roots are tested when there are several.

    Raises
    ------
    MalformedFamilyError
        When f(r+) = 0 has no usable root, or h does not vanish at the horizon.
    """
    def work():
        if not metric.bounded:
            return _solve_horizon(metric, subs, reference, where)
        try:
            with operation_limit(SOLVE_MAX_OPERATIONS, "solving f(r+) = 0 and the surface "
                                 "gravity", "SOLVE_MAX_OPERATIONS"):
                return _solve_horizon(metric, subs, reference, where)
        except ExpressionError as exc:
            raise MalformedFamilyError(f"{where}: {exc}") from None
    return _cached(_key("solve", metric, dict(subs or {}), dict(reference or {})), work)


#: most operations (Python function calls) for solving f(r+) = 0 and differentiating f:
#: a count, not a time (see bhchem.declare.expression_parser.operation_limit)
SOLVE_MAX_OPERATIONS = 3_000_000


def _solve_horizon(metric, subs, reference, where) -> HorizonSolution:
    subs = dict(subs or {})
    dim = subs.get(sy.d, sy.d)
    press = pressure_substitution(dim)
    f = metric.f.subs(subs).subs(press)
    h = metric.h.subs(subs).subs(press) if metric.h is not None else None
    Mm = metric.mass_enthalpy.subs(subs)
    r = sy.r
    try:
        roots = sp.solve(sp.Eq(f.subs(RHO, r), 0), MASS, dict=False)
    except (NotImplementedError, ValueError, TypeError) as exc:
        raise MalformedFamilyError(f"{where}: f(r+) = 0 cannot be solved for the mass "
                                   f"parameter {metric.mass_name} ({exc})") from None
    if not roots:
        raise MalformedFamilyError(f"{where}: f(r+) = 0 has no solution for the mass "
                                   f"parameter {metric.mass_name}")
    note = ""
    if len(roots) > 1:
        ref = {r: sp.Rational(13, 10), sy.P: sp.Rational(1, 100)}
        ref.update(reference or {})
        good = []
        for i, m in enumerate(roots):
            try:
                val = complex(m.subs(ref).evalf())
                res = complex(f.subs(RHO, r).subs(MASS, m).subs(ref).evalf())
            except (TypeError, ValueError):
                continue
            if abs(val.imag) <= 1e-12 * max(1.0, abs(val)) and val.real > 0 \
                    and abs(res) <= 1e-9 * max(1.0, abs(val)):
                good.append(i)
        matching = _matching_asymptotics(metric, roots, f, ref, press) \
            if metric.asymptotics is not None and metric.root is None else []
        if metric.root is not None:
            if metric.root >= len(roots):
                raise MalformedFamilyError(f"{where}: root={metric.root}, but f(r+) = 0 has "
                                           f"{len(roots)} roots")
            keep = metric.root
        elif metric.asymptotics is not None:
            name, value, e = metric.asymptotics
            if len(matching) != 1:
                raise MalformedFamilyError(
                    f"{where}: {len(matching)} of the {len(roots)} roots of f(r+) = 0 for "
                    f"{metric.mass_name} approach {e} as {name} -> {value}; choose one with "
                    f"root=INDEX")
            keep = matching[0]
        elif len(good) == 1:
            keep = good[0]
        else:
            listed = "; ".join(f"[{i}] {m}" for i, m in enumerate(roots))
            raise MalformedFamilyError(
                f"{where}: f(r+) = 0 has {len(roots)} roots for {metric.mass_name} "
                f"({len(good)} real and positive at the reference state): {listed}; choose "
                f"one with root=INDEX")
        if metric.root is not None:
            why = "chosen with root="
        elif metric.asymptotics is not None:
            name, value, e = metric.asymptotics
            why = f"the one with the stated asymptotics: -> {e} as {name} -> {value}"
        else:
            why = "the only one real, positive and verifying f(r+) = 0 at the reference state"
        note = (f"f(r+) = 0 has {len(roots)} roots for {metric.mass_name}; kept root {keep} = "
                f"{roots[keep]} ({why})")
        m_sol = roots[keep]
    else:
        m_sol = roots[0]
    f_state = f.subs(MASS, m_sol)
    h_state = h.subs(MASS, m_sol) if h is not None else None
    fp = sp.diff(f, RHO).subs(MASS, m_sol).subs(RHO, r)
    if h_state is None:
        T = _small_simplify(fp / (4 * sp.pi))
    else:
        at = _small_simplify(h_state.subs(RHO, r))
        if at != 0:
            raise MalformedFamilyError(f"{where}: h does not vanish at the horizon (h(r+) = "
                                       f"{at}); both f and h must vanish there")
        hp = sp.diff(h, RHO).subs(MASS, m_sol).subs(RHO, r)
        T = _small_simplify(sp.sqrt(fp * hp) / (4 * sp.pi))
    M = _small_simplify(Mm.subs(MASS, m_sol))
    return HorizonSolution(mass=m_sol, enthalpy=M, temperature=T, f_state=f_state,
                           h_state=h_state, note=note, roots=tuple(roots))


def _matching_asymptotics(metric, roots, f, ref, press) -> list:
    """Indices of the roots that approach the stated expression in the stated limit
    (relative difference below 1e-3 at 1e-8 (or 1e8) times the reference value of the
    symbol, 30 significant digits)."""
    name, value, e = metric.asymptotics
    e = e.subs(press)
    sym = sy.r if name == "r" else next((s for s in ref if getattr(s, "name", "") == name),
                                        None)
    base = dict(ref)
    if sym is None:
        return []
    x0 = base.get(sym, 1)
    base[sym] = sp.Float(x0, 30) * (sp.Rational(1, 10**8) if value == "0" else 10**8)
    out = []
    for i, m in enumerate(roots):
        try:
            a = complex(m.subs(base).evalf(30))
            b = complex(e.subs(base).evalf(30))
        except (TypeError, ValueError):
            continue
        if abs(a - b) <= 1e-3 * max(abs(b), 1e-300):
            out.append(i)
    return out


def first_law_integrand(metric: Metric, solution: HorizonSolution, subs: dict | None = None):
    r"""(dM/dr+)_{P,q} / T: the derivative of the first-law-consistent entropy.

    With h = f this is -4 pi (dM/dm) / (df/dm) at r = r+ (implicit differentiation of
    f(r+, m(r+)) = 0 and T = f'(r+)/(4 pi)): free of the cancellation in M_r / T."""
    subs = dict(subs or {})
    if metric.h is None:
        dim = subs.get(sy.d, sy.d)
        f = metric.f.subs(subs).subs(pressure_substitution(dim))
        dMdm = sp.diff(metric.mass_enthalpy.subs(subs), MASS)
        dfdm = sp.diff(f, MASS)
        expr = (-4 * sp.pi * dMdm / dfdm).subs(RHO, sy.r).subs(MASS, solution.mass)
    else:
        expr = sp.diff(solution.enthalpy, sy.r) / solution.temperature
    return _small_simplify(expr)


def _assumed(parameters) -> dict:
    """Canonical symbol -> a symbol with the sign its domain implies (for the integrator:
    sqrt(g**2) is g for g >= 0).  Bounded below by 0: positive (the antiderivative is then
    continuous at 0 in the cases met here, and evaluated numerically there)."""
    out = {}
    for p in parameters:
        if p.discrete:
            continue
        if p.domain.lower >= 0:
            out[p.symbol] = sp.Symbol(p.name, positive=True)
        elif p.domain.upper <= 0:
            out[p.symbol] = sp.Symbol(p.name, negative=True)
    return out


def first_law_entropy(metric: Metric, solution: HorizonSolution, subs: dict | None = None,
                      where: str = "metric", parameters=()):
    """The first-law entropy: ``(S, how)``.

    The antiderivative of :func:`first_law_integrand` in closed form (integration constant
    0; ``how`` = 'closed form'), checked by differentiating it at reference states; when
    sympy finds none within a counted amount of work, or its result fails the check, the
    certified quadrature S = S0 + integral from r0 (:mod:`bhchem.declare.entropy_quadrature`)
    with ``metric.entropy_reference`` = (r0, S0) (``how`` says so and why).

    ``parameters``: the family's parameters; their domains' signs are assumed while
    integrating.

    Raises
    ------
    MalformedFamilyError
        When there is no closed form and no entropy_reference.
    """
    return _cached(_key("entropy", metric, solution, dict(subs or {}), tuple(parameters)),
                   lambda: _first_law_entropy(metric, solution, subs, where, parameters))


def _first_law_entropy(metric, solution, subs, where, parameters):
    """(S, how): the closed form (how 'closed form', constant 0) when sympy finds one within
    :data:`INTEGRATION_MAX_OPERATIONS` and it passes :func:`_verify_antiderivative`; else
    the certified quadrature from ``metric.entropy_reference`` (how 'quadrature')."""
    assumed = _assumed(parameters)
    back = {v: k for k, v in assumed.items()}
    integrand = first_law_integrand(metric, solution, subs).xreplace(assumed)
    structural = sorted(s.name for s in integrand.free_symbols
                        if s in (sy.d, sy.k) or any(p.discrete and p.symbol == s
                                                    for p in parameters))
    if structural:
        raise MalformedFamilyError(
            f"{where}: the first-law entropy is built at fixed structural parameters; "
            f"{', '.join(structural)} must have a value (declare one family per value, e.g. "
            f"dimension=5; bhchem metric --compare builds the routes at the bound values)")
    # sqrt((r^2 + 2a)^2) is r^2 + 2a for positive symbols, once the base is factored
    integrand = _small_simplify(integrand.replace(
        lambda e: isinstance(e, sp.Pow) and e.exp.is_Rational and not e.exp.is_Integer,
        lambda e: sp.Pow(sp.factor(e.base), e.exp)))
    why = ""
    try:
        with operation_limit(INTEGRATION_MAX_OPERATIONS, "the first-law entropy integral",
                             "INTEGRATION_MAX_OPERATIONS"):
            S = sp.integrate(integrand, sy.r, conds="none")
    except ExpressionError:
        S, why = None, f"sympy needed more than {INTEGRATION_MAX_OPERATIONS} operations"
    except Exception as exc:  # sympy's integrator raises many kinds of errors
        S, why = None, f"sympy's integrator failed ({type(exc).__name__})"
    if S is not None and S.has(sp.Integral):
        S, why = None, "sympy found no closed form"
    if S is not None:
        # log(u) from the integral of u'/u: log|u| is the real antiderivative for either sign
        S = _small_simplify(S).replace(sp.log, lambda u: sp.log(sp.Abs(u)))
        ok, detail = _verify_antiderivative(S, integrand, parameters, assumed)
        if ok:
            return S.xreplace(back), "closed form"
        S, why = None, f"sympy's antiderivative fails the check dS/dr = integrand ({detail})"
    if metric.entropy_reference is None:
        raise MalformedFamilyError(
            f"{where}: no closed form for the first-law entropy S = integral of "
            f"{integrand.xreplace(back)} dr+ ({why}); give entropy_reference = (r0, S0) "
            f"(S = S0 at r+ = r0) for a certified quadrature, or state the entropy")
    r0, S0 = (e.subs(subs or {}) for e in metric.entropy_reference)
    cont = tuple(p.symbol for p in parameters if not p.discrete)
    S = quadrature_entropy(integrand.xreplace(back), cont, r0, S0)
    return S, f"certified quadrature ({why}; S = {S0} at r+ = {r0})"


#: most operations (Python function calls) sympy may spend on the first-law entropy
#: integral before the certified quadrature is used instead: a count, not a time
INTEGRATION_MAX_OPERATIONS = 3_000_000


#: functions a closed-form entropy may contain (the engine's numerics evaluate them)
_NUMERIC_FUNCTIONS = (sp.exp, sp.log, sp.sin, sp.cos, sp.tan, sp.sinh, sp.cosh, sp.tanh,
                      sp.asinh, sp.acosh, sp.atanh, sp.atan, sp.asin, sp.acos, sp.Abs, sp.sign,
                      sp.hyper)


def _verify_antiderivative(S, integrand, parameters, assumed):
    """dS/dr = integrand at a few reference states (30 digits, relative 1e-12), and S uses
    only functions the numerics evaluate (no Ei, erf, polylog ...)."""
    other = sorted({type(e).__name__ for e in S.atoms(sp.Function)
                    if not isinstance(e, _NUMERIC_FUNCTIONS)})
    if other:
        return False, f"it uses {', '.join(other)}, which the numerics do not evaluate"
    dS = sp.diff(S, sy.r)
    vals = {sy.P: sp.Rational(1, 100)}
    for p in parameters:
        if not p.discrete:
            vals[assumed.get(p.symbol, p.symbol)] = sp.nsimplify(p.default)
    worst = 0.0
    for x in (sp.Rational(7, 10), sp.Rational(13, 10), sp.Integer(3), sp.Integer(11)):
        at = {**vals, sy.r: x}
        try:
            a = complex(dS.subs(at).evalf(30))
            b = complex(integrand.subs(at).evalf(30))
        except (TypeError, ValueError):
            return False, "not a number at a reference state"
        worst = max(worst, abs(a - b) / max(abs(b), 1e-300))
    return worst <= 1e-12, f"relative difference {worst:.1e}"


def _first_law_text(S, how, const) -> str:
    if how == "closed form":
        return (f"first-law entropy S = integral of (dM/dr+)/T dr+ = {S} + C, integration "
                f"constant C = {const}")
    return (f"first-law entropy S = integral of (dM/dr+)/T dr+ by {how}"
            + (f", plus C = {const}" if const != 0 else ""))


def area_entropy(dim):
    """A/4 = Omega_{d-2} r+^(d-2)/4."""
    return sy.omega(dim) * sy.r ** (dim - 2) / 4


def from_metric(*, name: str, summary: str, reference: str, f, dimension=4, parameters=(),
                mass: str = "M", enthalpy=None, h=None, ads_radius: str = "L",
                entropy="area", entropy_constant=0, root: int | None = None,
                asymptotics=None, entropy_reference=None, bounded: bool = False,
                temperature: str = "surface-gravity", **family) -> Family:
    """A :class:`Family` from a static metric function (see module docstring).

    Parameters
    ----------
    name, summary, reference, dimension, parameters
        As for :class:`Family`.
    f : sympy expression
        The metric function, with symbols named ``r`` (radial coordinate), ``ads_radius``
        and ``mass``, ``d`` and the parameter names.
    mass : str
        Name of the mass parameter in f (default ``M``).
    enthalpy : sympy expression, optional
        The enthalpy M in terms of the mass parameter (default: the mass parameter).
    h : sympy expression, optional
        1/g_rr when it differs from f; then T = sqrt(f'h')/(4 pi).
    entropy : 'area', 'first-law' or a sympy expression in r, d and the parameters
    entropy_constant : sympy expression
        Added to the first-law entropy (default 0), stated in the conventions.
    entropy_reference : (r0, S0), optional
        S = S0 at r+ = r0 (expressions in the parameters): used when the first-law entropy
        has no closed form (certified quadrature, :mod:`bhchem.declare.entropy_quadrature`).
    bounded : bool
        Solve f(r+) = 0 within a counted number of operations (the declarative loader sets
        it; see :class:`Metric`).  The entropy integral is always bounded by a count.
    root : int, optional
        Which root of f(r+) = 0 to keep when there are several.
    asymptotics : str, optional
        'NAME -> 0: EXPRESSION' or 'NAME -> oo: EXPRESSION' (NAME r or a parameter): with
        several roots, keep the one that approaches EXPRESSION (in r, L and the parameters)
        in that limit.
    temperature : 'surface-gravity' or 'first-law'
        'first-law' declares no T: the engine derives T = (dM/dS)_P (the area-law route
        that a comparison of routes needs).
    **family
        Other :class:`Family` keywords (conditions, background_gibbs, conventions, ...).

    Raises
    ------
    MalformedFamilyError
        One line naming the family and the fault.
    """
    who = f"family {name}"
    params = tuple(parameters)
    metric = Metric.declare(f, mass=mass, enthalpy=enthalpy, h=h, ads_radius=ads_radius,
                            root=root, parameters=params, where=who, asymptotics=asymptotics,
                            entropy_reference=entropy_reference, bounded=bounded)
    dim_sym = sy.d if isinstance(dimension, Parameter) else dimension
    subs = {} if isinstance(dimension, Parameter) else {sy.d: dimension}
    reference_values = {p.symbol: sp.nsimplify(p.default) for p in params if not p.discrete}
    reference_values.update({p.symbol: p.default for p in params if p.discrete})
    sol = solve_horizon(metric, subs, reference_values, where=who)
    conventions = dict(family.pop("conventions", {}) or {})
    conventions.setdefault("metric", f"f = {metric.text}" + (f", h = {h}" if h is not None
                                                             else "")
                           + f"; L^2 = (d-1)(d-2)/(16 pi P); enthalpy M = "
                             f"{enthalpy if enthalpy is not None else mass}")
    if sol.note:
        conventions.setdefault("mass_root", sol.note)
    if isinstance(entropy, str):
        if entropy == "area":
            S = area_entropy(dim_sym)
            conventions.setdefault("entropy", "area law S = Omega_{d-2} r+^(d-2)/4")
        elif entropy == "first-law":
            S0, how = first_law_entropy(metric, sol, subs, where=who, parameters=params)
            const = sp.sympify(entropy_constant)
            S = S0 + const
            conventions.setdefault("entropy", _first_law_text(S0, how, const))
        else:
            raise MalformedFamilyError(f"{who}: entropy must be 'area', 'first-law' or an "
                                       f"expression, not {entropy!r}")
    else:
        S = entropy
        conventions.setdefault("entropy", f"stated: S = {entropy}")
    if temperature == "surface-gravity":
        T = sol.temperature
        conventions.setdefault("temperature", "surface gravity: T = f'(r+)/(4 pi)" if h is None
                               else "surface gravity: T = sqrt(f'(r+) h'(r+))/(4 pi)")
    elif temperature == "first-law":
        T = None
        conventions.setdefault("temperature", "T = (dM/dS)_P (not the surface gravity)")
    else:
        raise MalformedFamilyError(f"{who}: temperature must be 'surface-gravity' or "
                                   f"'first-law', not {temperature!r}")
    return Family(name=name, summary=summary, reference=reference, dimension=dimension,
                  parameters=params, enthalpy=sol.enthalpy, entropy=S, temperature=T,
                  conventions=conventions, metric=metric, **family)


def with_route(family: Family, *, entropy, temperature: str, suffix: str,
               fixed: dict | None = None) -> Family:
    """The same metric family with another entropy/temperature choice (a route).

    Parameters
    ----------
    family : Family
        Must carry a :class:`Metric`.
    entropy : 'area', 'first-law' or an expression
    temperature : 'surface-gravity' or 'first-law'
    suffix : str
        Appended to the name (``-area``, ``-first-law``).
    fixed : dict, optional
        Values of the structural parameters (d, k, ...): the route family has them fixed
        (the dimension an integer, the others no longer parameters), which the symbolic
        solving and integration need.
    """
    m = family.metric
    if m is None:
        raise MalformedFamilyError(f"family {family.name}: declares no metric")
    dim = family.dimension
    fixed = dict(fixed or {})
    if fixed:
        subs_fixed = {}
        for p in family.discrete_parameters:
            if p.name in fixed:
                subs_fixed[p.symbol] = fixed[p.name]
        if isinstance(dim, Parameter) and "d" in fixed:
            dim = int(fixed["d"])
        subs_fixed[sy.d] = dim if not isinstance(dim, Parameter) else sy.d
        m = _fixed_metric(m, subs_fixed)
        kept = tuple(p for p in family.parameters if p.name not in fixed)
        family = replace(family, dimension=dim, parameters=kept, metric=m,
                         conditions=tuple(replace(c, relation=sp.sympify(c.relation)
                                                  .subs(subs_fixed))
                                          for c in family.conditions),
                         background_gibbs=(sp.sympify(family.background_gibbs).subs(subs_fixed)
                                           if family.background_gibbs is not None else None),
                         typical_state=None, typical_pressure=None, enthalpy=sp.Integer(0),
                         entropy=sy.r, temperature=None, volume=None, horizon_radius=None,
                         specific_volume=None)
    subs = {} if isinstance(dim, Parameter) else {sy.d: dim}
    params = family.parameters
    ref = {p.symbol: sp.nsimplify(p.default) for p in params if not p.discrete}
    sol = solve_horizon(m, subs, ref, where=f"family {family.name}")
    dim_sym = sy.d if isinstance(dim, Parameter) else dim
    conv = dict(family.conventions)
    if entropy == "area":
        S = area_entropy(dim_sym)
        conv["entropy"] = "area law S = Omega_{d-2} r+^(d-2)/4"
    elif entropy == "first-law":
        S, how = first_law_entropy(m, sol, subs, where=f"family {family.name}",
                                   parameters=params)
        conv["entropy"] = _first_law_text(S, how, 0)
    else:
        S = entropy
        conv["entropy"] = f"stated: S = {entropy}"
    T = sol.temperature if temperature == "surface-gravity" else None
    conv["temperature"] = ("surface gravity of the metric" if T is not None
                           else "T = (dM/dS)_P (not the surface gravity)")
    return replace(family, name=family.name + suffix, enthalpy=sol.enthalpy, entropy=S,
                   temperature=T, volume=None, conventions=conv)
