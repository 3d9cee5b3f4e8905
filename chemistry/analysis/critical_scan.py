"""Critical points for many values of one parameter at once.

Two routes, both exact to the tolerance of :mod:`bhchem.analysis.critical`:

*scale invariance*: when the varied parameter is the only dimensionful one that
moves the family's scale (every other dimensionful parameter is zero), the
dimensionless critical data do not change; one full search is rescaled,
T_c ~ q^(-1/n), P_c ~ q^(-2/n), x_c ~ q^(s/n) (s the length dimension of the
state variable).

*critical polynomial*: when the family has one
(:func:`bhchem.analysis.critical_polynomial.critical_points_over`), the roots for every value
at once (batched companion-matrix eigenvalues) with a Newton polish on the original
conditions; a value with a candidate that does not converge there (an isolated critical
point, a near-double root) gets a full search.

*continuation* (families without a polynomial): full searches at anchor values; between two anchors with the same
number of critical points, each point is continued by a vectorised damped Newton
solve on (x T_x, x^2 T_xx) = 0 over all values in the interval at once, from
guesses interpolated between the anchors; intervals where the number changes are
split (a threshold lies inside) down to a few values, which get full searches.  A
value whose Newton solve does not verify also gets a full search, so no point is
returned unchecked.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bhchem.core.results import Result
from bhchem.core.compiled import bind
from bhchem.analysis.critical import (RESIDUAL_TOLERANCE, critical_newton_increment,
                                      find_critical_points)
from bhchem.analysis.critical_polynomial import NoPolynomialFormError, critical_points_over


@dataclass(repr=False)
class CriticalScan(Result):
    """Critical points (physical, non-degenerate) for each parameter value."""

    parameter: str
    values: np.ndarray
    points: list  # per value: list of (T, P, x) tuples sorted by P
    method: str
    full_searches: int
    notes: list = field(default_factory=list)

    def counts(self) -> np.ndarray:
        return np.array([len(p) for p in self.points])


def _state_dimension(th) -> float:
    name = th.derivation.state.name
    if name == "S":
        return th.derivation.dimension - 2
    return 1.0


def critical_scan(family, parameter: str, values, n_anchor: int = 24, **fixed) -> CriticalScan:
    values = np.asarray(values, float)
    order = np.argsort(values)
    sv = values[order]
    th0 = bind(family, **{**fixed, parameter: float(sv[0])})
    n = th0.derivation.length_dimensions.get(parameter, 0.0)
    others = [nm for nm, m in th0.derivation.length_dimensions.items()
              if nm != parameter and m != 0 and th0.values[nm] != 0]
    if n != 0 and not others and np.all(sv > 0):
        ref = float(sv[-1])
        base = find_critical_points(family, **{**fixed, parameter: ref}).physical
        s = _state_dimension(th0)
        pts = []
        for q in sv:
            lam = (q / ref) ** (1.0 / n)  # length rescaling
            pts.append([(cp.T / lam, cp.P / lam**2, cp.x * lam**s) for cp in base])
        out = [None] * len(values)
        for i, k in enumerate(order):
            out[k] = pts[i]
        return CriticalScan(parameter, values, out, "scale invariance (one full search, "
                            "rescaled)", 1)
    try:
        over = critical_points_over(family, parameter, values, **fixed)
    except NoPolynomialFormError:
        return _continuation(family, parameter, values, order, sv, n_anchor, fixed)
    pts = [list(p) for p in over.points]
    for i in over.unresolved:
        pts[i] = _full(family, parameter, values[i], fixed)
    notes = [over.message]
    if over.unresolved:
        notes.append(f"{len(over.unresolved)} value(s) with an unconverged polynomial root "
                     f"searched in full")
    return CriticalScan(parameter, values, pts, "critical polynomial: " + over.method,
                        len(over.unresolved), notes)


def _full(family, parameter, q, fixed):
    s = find_critical_points(family, **{**fixed, parameter: float(q)})
    return sorted(((cp.T, cp.P, cp.x) for cp in s.physical), key=lambda t: t[1])


def _continuation(family, parameter, values, order, sv, n_anchor, fixed) -> CriticalScan:
    th = bind(family, **{**fixed, parameter: float(sv[0])})
    names = [s.name for s in th.derivation.parameters]
    idx_q = names.index(parameter)
    base_params = [float(th.values[nm]) for nm in names]
    fT = th.compiled.function("T")
    fTx = th.compiled.derivative("T", "x")
    fTxx = th.compiled.derivative("T", "xx")
    fTxxx = th.compiled.derivative("T", "xxx")
    fTxP = th.compiled.derivative("T", "xP")
    fTxxP = th.compiled.derivative("T", "xxP")
    results = {}
    full_count = [0]

    def full(i):
        full_count[0] += 1
        results[i] = _full(family, parameter, sv[i], fixed)

    def newton(qs, x, P):
        params = [np.full_like(qs, v) for v in base_params]
        params[idx_q] = qs
        u, w = np.log(x), np.log(P)
        with np.errstate(all="ignore"):
            for _ in range(40):
                x, P = np.exp(u), np.exp(w)
                T = fT(x, P, *params)
                Tx, Txx = fTx(x, P, *params), fTxx(x, P, *params)
                Txxx, TxP, TxxP = fTxxx(x, P, *params), fTxP(x, P, *params), fTxxP(x, P, *params)
                du, dw = critical_newton_increment(x, P, T, Tx, Txx, Txxx, TxP, TxxP)
                m = np.maximum(np.abs(du), np.abs(dw))
                f = np.where(m > 0.3, 0.3 / np.where(m > 0, m, 1), 1.0)
                u, w = u + np.nan_to_num(f * du), w + np.nan_to_num(f * dw)
                if np.all(m < 1e-14):
                    break
            x, P = np.exp(u), np.exp(w)
            T = fT(x, P, *params)
            Tx, Txx = fTx(x, P, *params), fTxx(x, P, *params)
            res = np.maximum(np.abs(x * Tx), np.abs(x * x * Txx)) / np.abs(T)
            ok = res <= RESIDUAL_TOLERANCE
            for c in th.active_conditions:  # the binding's physical domain
                ok &= th.condition_holds(c.name, x, P)
        return T, P, x, ok

    N = len(sv)
    anchors = sorted(set(np.linspace(0, N - 1, min(n_anchor, N)).round().astype(int).tolist()))
    for a in anchors:
        full(a)

    def fill(a, b):
        if b - a <= 1:
            return
        pa, pb = results[a], results[b]
        if len(pa) != len(pb) or not pa:
            if b - a <= 3:
                for i in range(a + 1, b):
                    full(i)
                return
            m = (a + b) // 2
            full(m)
            fill(a, m)
            fill(m, b)
            return
        inner = np.arange(a + 1, b)
        qs = sv[inner]
        wq = (qs - sv[a]) / (sv[b] - sv[a])
        cols = []
        for (Ta, Pa, xa), (Tb, Pb, xb) in zip(pa, pb):
            x0 = np.exp(np.log(xa) + wq * (np.log(xb) - np.log(xa)))
            P0 = np.exp(np.log(Pa) + wq * (np.log(Pb) - np.log(Pa)))
            cols.append(newton(qs, x0, P0))
        for j, i in enumerate(inner):
            if all(c[3][j] for c in cols) and all(
                    c[1][j] > 0 and c[0][j] > 0 for c in cols):
                pts = sorted(((float(c[0][j]), float(c[1][j]), float(c[2][j])) for c in cols),
                             key=lambda t: t[1])
                distinct = all(abs(pts[k][1] / pts[k + 1][1] - 1) > 1e-9
                               for k in range(len(pts) - 1))
                if distinct:
                    results[i] = pts
                    continue
            full(i)

    for a, b in zip(anchors[:-1], anchors[1:]):
        fill(a, b)
    out = [None] * len(values)
    for i, k in enumerate(order):
        out[k] = results[i]
    return CriticalScan(parameter, values, out,
                        "continuation between full searches (vectorised Newton)", full_count[0],
                        [f"{len(anchors)} anchors: a pair of critical points that appears and "
                         f"vanishes between two neighbouring anchors would be missed; raise "
                         f"n_anchor to refine"])
