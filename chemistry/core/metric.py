r"""The metric of a family at its structural values: f(rho; r+, P, q) and the null-geodesic
quantities derived from it, compiled to numpy.

For a family that carries a :class:`~bhchem.declare.metric.Metric`, f(r+) = 0 is solved for
the mass parameter at the derivation's structural values (d, k, ...) by
:func:`bhchem.declare.metric.solve_horizon`; then, with rho the radial coordinate,

.. math::

    g_{ps}(\rho) = 2 f - \rho f' \quad (\text{photon sphere: } g_{ps}(r_{ps}) = 0),\qquad
    u_{ps} = \frac{r_{ps}}{\sqrt{f(r_{ps})}},\qquad
    \lambda^2 = \frac{f\,(2 f - \rho^2 f'')}{2\rho^2}\Big|_{r_{ps}}

(circular null orbits of a static metric; Cardoso, Miranda, Berti, Witek & Zanchin,
Phys. Rev. D 79 (2009) 064016, arXiv:0812.1806, eq. (3.7) for lambda; the impact parameter
is the orbit's L/E).  Only g_tt = -f enters null circular orbits, so h plays no part here.

:func:`metric_route_agrees` checks that the metric reproduces a family's declared M and T
(symbolically: the difference simplifies to 0).
"""
from __future__ import annotations

import threading
from dataclasses import dataclass
from typing import Callable

import numpy as np
import sympy as sp

from bhchem.core.compiled import compile_expression
from bhchem.core.derive import Derivation
from bhchem.declare import symbols as sy
from bhchem.declare.metric import RHO, HorizonSolution, Metric, solve_horizon
from bhchem.errors import MalformedFamilyError


@dataclass(frozen=True)
class MetricDerivation:
    """The metric of one derivation (structural values substituted).

    Attributes
    ----------
    derivation : Derivation
    solution : HorizonSolution
        m(r+), M(r+), T from the surface gravity, f(rho; r+, P, q).
    f : sympy.Expr
        f(rho; x, P, q) with the family's canonical parameter symbols.
    photon_condition : sympy.Expr
        2 f - rho f'.
    impact_parameter : sympy.Expr
        rho / sqrt(f).
    lyapunov_squared : sympy.Expr
        f (2 f - rho^2 f'') / (2 rho^2).
    """

    derivation: Derivation
    solution: HorizonSolution
    f: sp.Expr
    photon_condition: sp.Expr
    impact_parameter: sp.Expr
    lyapunov_squared: sp.Expr

    @property
    def arguments(self) -> tuple:
        """(rho, x, P, *parameters): the argument order of :meth:`function`."""
        return (RHO,) + self.derivation.arguments

    def function(self, name: str) -> Callable:
        """Numeric function of (rho, x, P, *parameters): 'f', 'photon_condition',
        'impact_parameter', 'lyapunov_squared' or 'df' (f')."""
        return _compiled(self, name)


_CACHE: dict = {}
_LOCK = threading.Lock()
_ENTRIES = 64


def derive_metric(derivation: Derivation) -> MetricDerivation:
    """The metric quantities of a derivation whose family declares a metric (cached).

    Raises
    ------
    MalformedFamilyError
        When the family declares no metric, or f(r+) = 0 cannot be solved.
    """
    fam = derivation.family
    if getattr(fam, "metric", None) is None:
        raise MalformedFamilyError(f"family {fam.name} declares no metric function; photon-"
                                   f"sphere quantities need one (see bhchem.declare.metric)")
    if not isinstance(fam.metric, Metric):
        raise MalformedFamilyError(f"family {fam.name}: metric must be a "
                                   f"bhchem.declare.Metric (Metric.declare(...)), not "
                                   f"{type(fam.metric).__name__}")
    key = id(derivation)
    with _LOCK:
        hit = _CACHE.get(key)
    if hit is not None and hit.derivation is derivation:
        return hit
    subs = {sy.d: derivation.dimension}
    for p in fam.discrete_parameters:
        subs[p.symbol] = derivation.discrete[p.name]
    ref = {p.symbol: sp.nsimplify(p.default) for p in fam.continuous_parameters}
    sol = solve_horizon(fam.metric, subs, ref, where=f"family {fam.name}")
    x = derivation.state
    f = sol.f_state.subs(sy.r, x) if x != sy.r else sol.f_state
    fp = sp.diff(f, RHO)
    fpp = sp.diff(f, RHO, 2)
    out = MetricDerivation(derivation=derivation, solution=sol, f=f,
                           photon_condition=2 * f - RHO * fp,
                           impact_parameter=RHO / sp.sqrt(f),
                           lyapunov_squared=f * (2 * f - RHO**2 * fpp) / (2 * RHO**2))
    with _LOCK:
        while len(_CACHE) >= _ENTRIES:
            _CACHE.pop(next(iter(_CACHE)))
        _CACHE[key] = out
    return out


_FUNCS: dict = {}


def _compiled(md: MetricDerivation, name: str) -> Callable:
    key = (id(md), name)
    with _LOCK:
        hit = _FUNCS.get(key)
    if hit is not None and hit[0] is md:
        return hit[1]
    exprs = {"f": md.f, "df": sp.diff(md.f, RHO), "photon_condition": md.photon_condition,
             "impact_parameter": md.impact_parameter, "lyapunov_squared": md.lyapunov_squared}
    if name not in exprs:
        raise KeyError(name)
    fn = compile_expression(md.arguments, exprs[name])
    with _LOCK:
        while len(_FUNCS) >= 4 * _ENTRIES:
            _FUNCS.pop(next(iter(_FUNCS)))
        _FUNCS[key] = (md, fn)
    return fn


@dataclass(frozen=True)
class MetricAgreement:
    """Whether the metric route reproduces a family's declared M and T.

    ``enthalpy``/``temperature``: True when equal, False when not, None when undecided;
    ``how``: 'symbolic' (declared minus metric simplifies to 0 under the sign assumptions
    the parameter domains imply) or 'numerical' (undecided symbolically, e.g. sqrt(a^2) with
    the sign of a fixed only by a state condition: compared at random physical states to
    1e-12); ``differences``: the simplified differences, as text."""

    enthalpy: bool | None
    temperature: bool | None
    how: dict
    differences: dict

    @property
    def holds(self) -> bool:
        return bool(self.enthalpy and self.temperature)


def _simplified(e, assumed: dict):
    e = e.xreplace(assumed)
    e = e.replace(lambda a: isinstance(a, sp.Pow) and a.exp.is_Rational and not a.exp.is_Integer,
                  lambda a: sp.Pow(sp.factor(a.base), a.exp))
    return sp.simplify(e)


def metric_route_agrees(derivation: Derivation, sample=None) -> MetricAgreement:
    """Compare the declared M and T of a derivation with those its metric gives.

    Parameters
    ----------
    derivation : Derivation
    sample : bhchem.core.sampling.Sample, optional
        Physical states for the numerical fallback (when the symbolic comparison is
        undecided); without it an undecided comparison stays None.
    """
    md = derive_metric(derivation)
    q = derivation.quantities
    M_decl = derivation.enthalpy_declared if derivation.enthalpy_declared is not None else q["M"]
    x = derivation.state
    M_met = md.solution.enthalpy.subs(sy.r, x)
    T_met = md.solution.temperature.subs(sy.r, x)
    fam = derivation.family
    assumed = {}
    for p in fam.continuous_parameters:
        if p.domain.lower > 0:
            assumed[p.symbol] = sp.Symbol(p.name, positive=True)
        elif p.domain.lower == 0:
            assumed[p.symbol] = sp.Symbol(p.name, nonnegative=True)
    back = {v: k for k, v in assumed.items()}
    verdicts, how, diffs = {}, {}, {}
    for name, decl, met in (("M", M_decl, M_met), ("T", q["T"], T_met)):
        d = _simplified(decl - met, assumed).xreplace(back)
        diffs[name] = str(d)
        if d == 0:
            verdicts[name], how[name] = True, "symbolic"
            continue
        verdicts[name], how[name] = None, "undecided"
        if sample is not None and sample.n_points:
            worst = 0.0
            for bound, xs, Ps in sample.points:
                a = np.asarray(bound.compile(decl)(xs, Ps), float)
                b = np.asarray(bound.compile(met)(xs, Ps), float)
                worst = max(worst, float(np.nanmax(np.abs(a - b) / (np.abs(a) + 1e-300))))
            verdicts[name] = bool(worst <= 1e-12)
            how[name] = f"numerical (max relative difference {worst:.1e} at " \
                        f"{sample.n_points} physical states)"
    return MetricAgreement(verdicts["M"], verdicts["T"], how, diffs)
