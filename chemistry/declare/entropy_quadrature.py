r"""The first-law entropy by certified quadrature, when sympy finds no closed form.

.. math:: S(r_+) = S_0 + \int_{r_0}^{r_+} s(r, P, q)\,dr, \qquad s = (\partial M/\partial r)/T,

is a sympy function of (r, P, q) (:func:`quadrature_entropy`) that the engine treats like any
other expression: its derivative in r is the integrand s exactly (so T = (dM/dS)_P is exact),
its derivatives in P and the couplings are quadratures of the derivatives of s (needed by
V and the potentials), and it evaluates numerically through ``lambdify`` (its ``_imp_``).

Quadrature: Gauss-Legendre on :data:`PANELS` panels equally spaced in log r between r0 and
r+, with :data:`NODES` and 2 :data:`NODES` nodes per panel; the difference of the two is the
error estimate.  A value whose estimated relative error exceeds :data:`TOLERANCE` is NaN (the
engine's checks then reject that state): a returned value is certified to that tolerance
(for integrands smooth on the panels; a singularity between r0 and r+ is not certified away,
it shows as a large error estimate).  The work is a fixed count of evaluations.
"""
from __future__ import annotations

import hashlib
import threading

import numpy as np
import sympy as sp

from bhchem.declare import symbols as sy

#: panels (equal in log r) and Gauss-Legendre nodes per panel (the check uses twice as many)
PANELS = 24
NODES = 20
#: largest estimated relative error of a returned value
TOLERANCE = 1e-11

_LOCK = threading.Lock()
_X1, _W1 = np.polynomial.legendre.leggauss(NODES)
_X2, _W2 = np.polynomial.legendre.leggauss(2 * NODES)


def _integrate(fn, r, P, params, r0):
    """(integral from r0 to r of fn dr, error estimate), vectorised over the states."""
    arrays = np.broadcast_arrays(np.asarray(r, float), np.asarray(P, float),
                                 *[np.asarray(p, float) for p in params],
                                 np.asarray(r0, float))
    r, P, *params, r0 = [a.ravel() for a in arrays]
    shape = arrays[0].shape
    lo, hi = np.log(r0), np.log(r)
    edges = lo[:, None] + (hi - lo)[:, None] * np.linspace(0.0, 1.0, PANELS + 1)[None, :]
    a, b = edges[:, :-1], edges[:, 1:]
    half, mid = (b - a) / 2, (b + a) / 2
    out = []
    for x, w in ((_X1, _W1), (_X2, _W2)):
        u = mid[:, :, None] + half[:, :, None] * x[None, None, :]
        rr = np.exp(u)
        args = [p[:, None, None] for p in (P, *params)]
        with np.errstate(all="ignore"):
            vals = np.asarray(fn(rr, *args), float) * rr
        vals = np.broadcast_to(vals, u.shape)
        out.append(np.sum(half[:, :, None] * w[None, None, :] * vals, axis=(1, 2)))
    coarse, fine = out
    return fine.reshape(shape), np.abs(fine - coarse).reshape(shape)


def quadrature_entropy(integrand, parameters, r0, S0=0, name: str = "S"):
    """S(r+) = S0 + integral from r0 to r+ of ``integrand`` dr, as a sympy expression.

    Parameters
    ----------
    integrand : sympy.Expr
        s(r, P, q) in the canonical symbols.
    parameters : sequence of sympy.Symbol
        The continuous parameters (the function's arguments after r and P).
    r0, S0 : sympy expressions in the parameters
        The reference radius (> 0) and the entropy there: the integration constant.
    """
    args = (sy.r, sy.P) + tuple(parameters)
    r0 = sp.sympify(r0)
    S0 = sp.sympify(S0)
    return S0 + _quadrature_function(sp.sympify(integrand), args, r0, name)(*args)


#: the function classes made, by name (one class per integrand: lambdify refuses two
#: implementations of one name); bounded
_CLASSES: dict = {}
_MAX_CLASSES = 256


def _quadrature_function(integrand, args, r0, name):
    """A sympy Function class F(r, P, q...) = integral from r0 to r of integrand dr."""
    digest = hashlib.sha256(sp.srepr((integrand, args, r0)).encode()).hexdigest()[:12]
    key = f"{name}_quadrature_{digest}"
    with _LOCK:
        if key in _CLASSES:
            return _CLASSES[key]
    cls = _make_class(key, integrand, args, r0, name)
    with _LOCK:
        while len(_CLASSES) >= _MAX_CLASSES:
            _CLASSES.pop(next(iter(_CLASSES)))
        return _CLASSES.setdefault(key, cls)


def _make_class(key, integrand, args, r0, name):
    fn = sp.lambdify(args, integrand, modules="numpy")
    r0_fn = sp.lambdify(args[1:], r0, modules="numpy")

    def numeric(r, P, *params):
        value, error = _integrate(fn, r, P, params, r0_fn(P, *params))
        scale = np.abs(value) + 1e-300
        return np.where(error <= TOLERANCE * scale, value, np.nan)

    def fdiff(self, argindex=1):
        if argindex == 1:
            return integrand.xreplace(dict(zip(args, self.args)))
        wrt = args[argindex - 1]
        inner = sp.diff(integrand, wrt)
        # d/dq of the integral: the integral of ds/dq, minus s(r0) dr0/dq (r0 may depend on q)
        boundary = -integrand.xreplace({sy.r: r0}) * sp.diff(r0, wrt)
        part = _quadrature_function(inner, args, r0, name + "_d" + wrt.name) \
            if inner != 0 else None
        expr = (part(*args) if part is not None else 0) + boundary
        return sp.sympify(expr).xreplace(dict(zip(args, self.args)))

    cls = type(key, (sp.Function,),
               {"nargs": len(args), "fdiff": fdiff, "_imp_": staticmethod(numeric),
                "is_real": True,
                "__doc__": f"integral from {r0} of {integrand} dr (certified quadrature)"})
    return cls
