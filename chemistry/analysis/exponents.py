r"""Critical exponents at a critical point, two independent ways.

Exact (from the series of the equation of state)
    With t = T/T_c - 1 and omega = x/x_c - 1 (x the state variable; the orders
    below do not change under an analytic change of variable v(x) with v' != 0),

    .. math:: P/P_c = 1 + \sum_{ij} a_{ij}\, t^i \omega^j .

    The derivatives of the implicitly defined P(T, x) (from T(x, P) = T) are
    obtained by implicit differentiation in sympy and evaluated at 40 digits.
    Let n be the first j >= 1 with a_{0j} != 0 (critical isotherm) and m the first
    j >= 1 with a_{1j} != 0 (a "vanishing" coefficient is one below 1e-8 of the
    scale a_{10}).  The equal-area construction then gives
    delta = n, beta = 1/(n - m), gamma = (n - 1)/(n - m): mean field (n, m) = (3, 1)
    gives (beta, gamma, delta) = (1/2, 1, 3) (Kubiznak & Mann, JHEP 07 (2012) 033);
    the isolated critical point (3, 2) gives (1, 2, 3) (Dolan, Kostouki, Kubiznak
    & Mann, CQG 31 (2014) 242001).  alpha = 0 when C_V vanishes identically (static
    black holes: S and V depend on r+ only) or is finite at the critical point.

Numerical (log-log fits, each with a first correction-to-scaling term)
    delta from the critical isotherm |P/P_c - 1| ~ |omega|^delta; gamma from the
    isothermal compressibility on the critical isochore kappa_T ~ t^-gamma; beta
    from the coexisting volumes (equal T, P and G on an isobar near P_c)
    |v_2 - v_1|/v_c ~ |t|^beta; alpha is not fitted when C_V = 0 identically
    (there is nothing to fit).  Each fit reports its range and standard error, and
    disagreement with the exact value beyond max(5 sigma, 0.01) is flagged.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import numpy as np
import sympy as sp

from bhchem.core.results import Result
from bhchem.declare import symbols as sy
from bhchem.core.compiled import Thermodynamics
from bhchem.analysis.coexistence import coexistence_near_critical
from bhchem.analysis.critical import CriticalPoint, loop_side
from bhchem.analysis.critical import isotherm_form
from bhchem.numerics import isotherm_pressure
from bhchem.analysis.consistency import emit, first_law_warnings

ZERO_TOLERANCE = 1e-8


@dataclass(frozen=True)
class FittedExponent:
    value: float | None
    uncertainty: float | None
    fit_range: tuple | None
    note: str = ""


@dataclass(frozen=True, repr=False)
class ExponentResult(Result):
    """Exponents at one critical point.

    Attributes
    ----------
    exact : dict
        alpha, beta, gamma, delta as exact fractions (strings like '1/2') and floats.
    fitted : dict of FittedExponent
    coefficients : dict
        The scaled series coefficients a_ij used.
    orders : dict
        n and m (see module docstring).
    agree : bool
        Every fitted exponent agrees with the exact one.
    message : str
    disagreements : list of str
    warnings : tuple of str
        A first-law failure of the family (the fitted beta rests on coexistence from G).
    """

    exact: dict
    fitted: dict
    coefficients: dict
    orders: dict
    agree: bool
    message: str
    disagreements: list = field(default_factory=list)
    warnings: tuple = ()

    def to_dict(self) -> dict:
        d = asdict(self)
        return d


def _series_coefficients(th: Thermodynamics, cp: CriticalPoint, jmax: int = 5) -> dict:
    """a_ij of P/P_c in t = T/T_c - 1, omega = x/x_c - 1 (i <= 1, j <= jmax).

    Closed equations of state: directly from P = T u(x) - w(x) (regular even at an
    isolated critical point, where T(x, P) has a removable singularity); otherwise by
    implicit differentiation of T(x, P) = T."""
    form = isotherm_form(th)
    if form is not None:
        u, w, x = form
        xr, Tr, Pr = sp.Rational(cp.x), sp.Rational(cp.T), sp.Rational(cp.P)
        out = {}
        for j in range(0, jmax + 1):
            uj = sp.N(sp.diff(u, x, j).subs(x, xr), 50)
            wj = sp.N(sp.diff(w, x, j).subs(x, xr), 50)
            if j > 0:
                out[(0, j)] = float(xr**j * (Tr * uj - wj) / (math.factorial(j) * Pr))
            out[(1, j)] = float(Tr * xr**j * uj / (math.factorial(j) * Pr))
        return out
    der = th.derivation
    x, P = der.state, sy.P
    Tv = sp.Symbol("T_var", positive=True)
    subs = {s: sp.Rational(float(th.values[s.name])) for s in der.parameters}
    Texpr = sp.sympify(der.quantities["T"]).subs(subs)
    point = {x: sp.Rational(cp.x), P: sp.Rational(cp.P)}
    # implicit derivatives of p(x, T): d/dx^j of T(x, p(x,T)) - T = 0, and d/dT of that
    p = sp.Function("p")(x, Tv)
    E = Texpr.subs(P, p) - Tv
    known = {}

    def value(expr):
        e = expr
        for (i, j), val in sorted(known.items(), key=lambda kv: -(kv[0][0] + kv[0][1])):
            if i == 0 and j == 0:
                continue
            args = [x] * j + [Tv] * i
            e = e.subs(p.diff(*args), val)
        e = e.subs(p, P).subs(point).subs(Tv, sp.Rational(cp.T))
        return e

    known[(0, 0)] = sp.Rational(cp.P)
    coeffs = {}
    for i in (0, 1):
        for j in range(0, jmax + 1):
            if i == 0 and j == 0:
                continue
            args = [x] * j + [Tv] * i
            Ed = sp.expand(E.diff(*args))
            D = p.diff(*args)
            lin = Ed.coeff(D) if Ed.has(D) else None
            if lin is None or lin == 0:
                raise ValueError("implicit differentiation failed")
            rest = sp.expand(Ed - lin * D)
            val = sp.N(-value(rest) / value(lin), 40)
            known[(i, j)] = val
            coeffs[(i, j)] = float(val * sp.Rational(cp.T) ** i * sp.Rational(cp.x) ** j
                                   / (math.factorial(i) * math.factorial(j) * sp.Rational(cp.P)))
    return coeffs


def exact_exponents(th: Thermodynamics, cp: CriticalPoint) -> tuple[dict, dict, dict]:
    a = _series_coefficients(th, cp)
    scale = max(abs(a[(1, 0)]), 1.0)
    n = next((j for j in range(1, 6) if abs(a[(0, j)]) > ZERO_TOLERANCE * scale), None)
    m = next((j for j in range(1, 6) if abs(a[(1, j)]) > ZERO_TOLERANCE * scale), None)
    orders = {"n": n, "m": m}
    exact = {}
    cv_zero = th.derivation.quantities["C_V"] == 0
    cv = float(th.quantity("C_V", cp.x, cp.P))
    exact["alpha"] = "0" if (cv_zero or np.isfinite(cv)) else None
    if n is None or m is None or n <= m:
        exact.update(beta=None, gamma=None, delta=None if n is None else str(n))
    else:
        exact["beta"] = str(sp.Rational(1, n - m))
        exact["gamma"] = str(sp.Rational(n - 1, n - m))
        exact["delta"] = str(n)
    return exact, {f"a{i}{j}": v for (i, j), v in a.items()}, orders


# -- numerical fits ---------------------------------------------------------------------
def _fit(xs, ys, sign: float = 1.0) -> tuple[float, float]:
    """Fit log y = c + e log x + c1 x + c2 x^2 (corrections to scaling); return
    (e*sign, standard error of e)."""
    X = np.column_stack([np.ones_like(xs), np.log(xs), xs, xs**2])
    Y = np.log(ys)
    coef, res, *_ = np.linalg.lstsq(X, Y, rcond=None)
    dof = max(len(xs) - 4, 1)
    resid = Y - X @ coef
    s2 = float(resid @ resid) / dof
    cov = s2 * np.linalg.inv(X.T @ X)
    return sign * float(coef[1]), float(math.sqrt(max(cov[1, 1], 0.0)))


def _fit_delta(th, cp) -> FittedExponent:
    om = np.geomspace(1e-3, 3e-2, 25)
    vals = np.abs(isotherm_pressure(th, cp.x * (1 + om), cp.T, cp.P) / cp.P - 1)
    e, s = _fit(om, vals)
    return FittedExponent(e, s, (1e-3, 3e-2), "critical isotherm, |P/P_c - 1| vs omega = x/x_c - 1")


def _fit_gamma(th, cp) -> FittedExponent:
    ts = np.geomspace(1e-6, 1e-3, 25)
    # P on the critical isochore at each T (one vectorised Newton per temperature)
    P = np.array([float(isotherm_pressure(th, cp.x, cp.T * (1 + t), cp.P)) for t in ts])
    kap = np.abs(th.quantity("kappa_T", cp.x, P))
    e, s = _fit(ts, kap, sign=-1.0)
    return FittedExponent(e, s, (1e-6, 1e-3), "kappa_T on the critical isochore, t > 0")


def _fit_beta(th, cp) -> FittedExponent:
    side = loop_side(th, cp)
    taus, dvs = [], []
    for eps in np.geomspace(1e-5, 1e-2, 16):
        res = coexistence_near_critical(th, cp.x, cp.P, cp.P * (1 + side * eps))
        if res is None:
            continue
        T, x1, x2 = res
        v1, v2 = float(th.v(x1, cp.P)), float(th.v(x2, cp.P))
        taus.append(abs(1 - T / cp.T))
        dvs.append(abs(v2 - v1) / cp.v)
    if len(taus) < 6:
        return FittedExponent(None, None, None, "coexistence not found near the critical point")
    taus, dvs = np.array(taus), np.array(dvs)
    e, s = _fit(taus, dvs)
    return FittedExponent(e, s, (float(taus.min()), float(taus.max())),
                          "coexisting volumes |v2 - v1|/v_c vs |1 - T/T_c| (equal-area on isobars)")


def _safe(fit, th, cp) -> FittedExponent:
    """A fit that cannot be done says so rather than raising or returning noise."""
    try:
        res = fit(th, cp)
    except (ValueError, ZeroDivisionError, FloatingPointError, np.linalg.LinAlgError) as exc:
        return FittedExponent(None, None, None, f"fit not possible: {exc}")
    if res.value is not None and not (np.isfinite(res.value) and np.isfinite(res.uncertainty)):
        return FittedExponent(None, None, res.fit_range, "fit gave a non-finite value")
    return res


def critical_exponents(th: Thermodynamics, cp: CriticalPoint) -> ExponentResult:
    """Exact and fitted exponents at a critical point (see module docstring)."""
    exact, coeffs, orders = exact_exponents(th, cp)
    fitted = {}
    cv_zero = th.derivation.quantities["C_V"] == 0
    fitted["alpha"] = FittedExponent(
        None, None, None,
        "C_V vanishes identically: alpha = 0, nothing to fit" if cv_zero
        else "C_V is finite at the critical point: alpha = 0 (not fitted)")
    if cp.kind == "isolated":
        why = ("isolated critical point: T(x, P) has a removable singularity at x_c and every "
               "isotherm passes through it; {} is taken from the series only")
        fitted["beta"] = FittedExponent(None, None, None, why.format("beta"))
        fitted["gamma"] = FittedExponent(None, None, None, why.format("gamma"))
    else:
        fitted["beta"] = _safe(_fit_beta, th, cp)
        fitted["gamma"] = _safe(_fit_gamma, th, cp)
    fitted["delta"] = _safe(_fit_delta, th, cp)
    disagreements = []
    for k in ("beta", "gamma", "delta"):
        f = fitted[k]
        if exact.get(k) is None or f.value is None:
            continue
        ex = float(sp.Rational(exact[k]))
        if abs(f.value - ex) > max(5 * (f.uncertainty or 0.0), 1e-2):
            disagreements.append(f"{k}: exact {exact[k]}, fitted {f.value:.4f} +- {f.uncertainty:.1e}")
    agree = not disagreements
    flagged = first_law_warnings(th)
    emit(flagged)
    msg = "fitted exponents agree with the exact ones" if agree else \
        "DISAGREEMENT: " + "; ".join(disagreements)
    return ExponentResult(exact=exact, fitted={k: asdict(v) for k, v in fitted.items()},
                          coefficients=coeffs, orders=orders, agree=agree, message=msg,
                          disagreements=disagreements, warnings=flagged)
