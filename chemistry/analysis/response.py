r"""Response functions along isobars and isotherms, and where they diverge.

Every quantity is a function of the state variable x and the pressure P (the
family's parameters held fixed); subscripts are partial derivatives in the
(x, P) coordinates.  Each response function is a ratio of Jacobians,

.. math::

    C_P = T\left(\frac{\partial S}{\partial T}\right)_P = \frac{T S_x}{T_x}, \qquad
    C_V = T\left(\frac{\partial S}{\partial T}\right)_V
        = T\,\frac{S_x V_P - S_P V_x}{T_x V_P - T_P V_x},

    \kappa_T = -\frac{1}{V}\left(\frac{\partial V}{\partial P}\right)_T
             = \frac{V_x T_P - V_P T_x}{V\,T_x}, \qquad
    \kappa_S = -\frac{1}{V}\left(\frac{\partial V}{\partial P}\right)_S
             = \frac{V_x S_P - V_P S_x}{V\,S_x},

    \alpha_P = \frac{1}{V}\left(\frac{\partial V}{\partial T}\right)_P = \frac{V_x}{V\,T_x},

so no family needs a special case (S and V may depend on P, as they do for
rotating holes with the entropy as state variable).  The numerators of C_V and
kappa_S are the same Jacobian, d(S, V)/d(x, P): when it vanishes identically
(S and V functions of one variable: every static black hole,
``derivation.quantities['C_V'] == 0``) both C_V and kappa_S vanish identically,
and the results say so.

Exact identities checked at every evaluated state (residuals reported):

.. math::

    C_P - C_V = \frac{T V \alpha_P^2}{\kappa_T}, \qquad
    \kappa_T - \kappa_S = \frac{T V \alpha_P^2}{C_P}

(e.g. Callen, *Thermodynamics*, 2nd ed. 1985, Sec. 3.9).

Divergences.  A response function diverges where its denominator vanishes and
its numerator does not: C_P, kappa_T and alpha_P where T_x = 0 (a *spinodal*:
an extremum of T(x) on the isobar, of P(x) on the isotherm, since
(dP/dx)_T = -T_x/T_P), C_V where d(T, V)/d(x, P) = 0, kappa_S where S_x = 0.
Simple zeros are sign changes of the denominator along the path, refined by
Brent's method; a *double* zero (the critical point, where T_x = T_xx = 0, so
T_x does not change sign along the critical isobar or isotherm) is found as a
local minimum of |denominator| refined to zero, and labelled with the critical
point it matches.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import numpy as np

from bhchem.core.results import Result
from bhchem.core.compiled import Thermodynamics
from bhchem.numerics import brentq, isotherm_pressure, minimize_scalar
from bhchem.errors import BhchemError, StateDomainError
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.isobar import state_range

#: names of the response functions, in reporting order
RESPONSE_NAMES = ("C_P", "C_V", "kappa_T", "kappa_S", "alpha_P")

#: which denominator each response function has (see module docstring)
DENOMINATOR_OF = {"C_P": "T_x", "kappa_T": "T_x", "alpha_P": "T_x",
                  "C_V": "d(T,V)/d(x,P)", "kappa_S": "S_x"}

#: a denominator whose normalised minimum along the path is below this is a double zero
DOUBLE_ZERO_TOLERANCE = 1e-9


def cv_vanishes(th: Thermodynamics) -> bool:
    """Whether C_V (and with it kappa_S) vanishes identically (symbolic verdict of the
    derivation: ``derivation.quantities['C_V'] == 0``)."""
    return th.derivation.quantities.get("C_V") == 0


def _partials(th: Thermodynamics, x, P) -> dict:
    x = np.asarray(x, float)
    P = np.asarray(P, float)
    out = {"T": th.T(x, P), "V": th.V(x, P), "S": th.S(x, P)}
    for q in ("T", "S", "V", "M"):
        out[q + "_x"] = th.d(q, "x", x, P)
        out[q + "_P"] = th.d(q, "P", x, P)
    shape = np.broadcast_shapes(x.shape, P.shape)
    return {k: np.broadcast_to(np.asarray(v, float), shape) for k, v in out.items()}


def response_functions(th: Thermodynamics, x, P) -> dict:
    """C_P, C_V, kappa_T, kappa_S and alpha_P at states (x, P) (arrays broadcast).

    Returns
    -------
    dict
        Name -> array, plus ``'T'``, ``'V'`` and the identity residuals
        ``'residual_CP_CV'`` = |C_P - C_V - T V alpha^2/kappa_T| / (|C_P| + |C_V|) and
        ``'residual_kT_kS'`` = |kappa_T - kappa_S - T V alpha^2/C_P| / (|kappa_T| + |kappa_S|).
        C_V and kappa_S are exact zeros when they vanish identically.
    """
    d = _partials(th, x, P)
    T, V = d["T"], d["V"]
    Tx, TP, Sx, SP, Vx, VP = d["T_x"], d["T_P"], d["S_x"], d["S_P"], d["V_x"], d["V_P"]
    with np.errstate(all="ignore"):
        C_P = T * Sx / Tx
        kappa_T = (Vx * TP - VP * Tx) / (V * Tx)
        alpha_P = Vx / (V * Tx)
        if cv_vanishes(th):
            C_V = np.zeros_like(C_P)
            kappa_S = np.zeros_like(C_P)
        else:
            C_V = T * (Sx * VP - SP * Vx) / (Tx * VP - TP * Vx)
            kappa_S = (Vx * SP - VP * Sx) / (V * Sx)
        tva2 = T * V * alpha_P**2
        r1 = np.abs(C_P - C_V - tva2 / kappa_T) / (np.abs(C_P) + np.abs(C_V))
        r2 = np.abs(kappa_T - kappa_S - tva2 / C_P) / (np.abs(kappa_T) + np.abs(kappa_S))
    return {"C_P": C_P, "C_V": C_V, "kappa_T": kappa_T, "kappa_S": kappa_S,
            "alpha_P": alpha_P, "T": T, "V": V,
            "residual_CP_CV": r1, "residual_kT_kS": r2}


def _denominators(th: Thermodynamics, x, P) -> dict:
    """Each distinct denominator, normalised to be dimensionless and O(1) away from zeros,
    with its numerators (normalised likewise) for the functions that share it."""
    d = _partials(th, x, P)
    x = np.broadcast_to(np.asarray(x, float), d["T"].shape)
    Tx, TP, Sx, SP, Vx, VP, T, V, S = (d[k] for k in ("T_x", "T_P", "S_x", "S_P", "V_x",
                                                     "V_P", "T", "V", "S"))
    with np.errstate(all="ignore"):
        # T_x relative to the terms of T: x T_x / |T| (the scale used by critical.py)
        out = {"T_x": (x * Tx / np.abs(T),
                       {"C_P": np.abs(Sx * x / S), "alpha_P": np.abs(Vx * x / V),
                        "kappa_T": np.abs(Vx * TP * x / (V * np.abs(T)))})}
        if not cv_vanishes(th):
            den = Tx * VP - TP * Vx
            scale = np.abs(Tx * VP) + np.abs(TP * Vx)
            num = Sx * VP - SP * Vx
            nscale = np.abs(Sx * VP) + np.abs(SP * Vx)
            out["d(T,V)/d(x,P)"] = (den / scale, {"C_V": np.abs(num) / nscale})
            out["S_x"] = (x * Sx / np.abs(S),
                          {"kappa_S": np.abs(Vx * SP - VP * Sx) / (np.abs(Vx * SP) + np.abs(VP * Sx))})
    return out


# -- paths ------------------------------------------------------------------------------------
def _critical_points(th: Thermodynamics):
    return find_critical_points(th).physical  # computed once per bound family


def _default_window(th: Thermodynamics) -> tuple[float, float]:
    cps = _critical_points(th)
    if cps:
        x_c = cps[0].x
        span = 25.0 if th.derivation.state.name == "S" else 5.0
        return x_c / span ** 0.7, x_c * span
    x0 = th.typical_state()
    return x0 * 0.1, x0 * 10.0


def _search_range(th: Thermodynamics, P: float) -> tuple[float, float]:
    return state_range(th, P)


@dataclass(frozen=True)
class Divergence:
    """Where response functions diverge along a path.

    Attributes
    ----------
    kind : str
        'spinodal' (simple zero of the denominator), 'critical point' (a double zero
        at a critical point of the family) or 'double zero' (a double zero at no known
        critical point).
    denominator : str
        'T_x', 'd(T,V)/d(x,P)' or 'S_x'.
    quantities : tuple of str
        The response functions that diverge there (numerator non-zero).
    x, T, P, v : float
        The state (v None when the family has no specific volume).
    residual : float
        |normalised denominator| at the reported state.
    """

    kind: str
    denominator: str
    quantities: tuple
    x: float
    T: float
    P: float
    v: float | None
    residual: float

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True, repr=False)
class ResponseCurve(Result):
    """Response functions along one isobar or isotherm.

    Attributes
    ----------
    path : str
        'isobar' or 'isotherm'.
    value : float
        The fixed pressure (isobar) or temperature (isotherm).
    x, P, T, V, v : ndarray
        The states of the path (NaN where the path has no physical state).
    values : dict
        Name -> ndarray for C_P, C_V, kappa_T, kappa_S, alpha_P.
    vanishing : tuple of str
        Response functions that vanish identically for this family (C_V and kappa_S
        when d(S, V)/d(x, P) = 0 symbolically).
    divergences : tuple of Divergence
        Over the whole physical search range of the path, not only the window of x.
    max_identity_residual : float
        Largest residual of the two identities of the module docstring on the path.
    notes : tuple of str
    """

    family: str
    parameters: dict
    path: str
    value: float
    x: np.ndarray
    P: np.ndarray
    T: np.ndarray
    V: np.ndarray
    v: np.ndarray | None
    values: dict
    vanishing: tuple
    divergences: tuple
    max_identity_residual: float
    notes: tuple = field(default_factory=tuple)

    def to_dict(self) -> dict:
        """A JSON-ready summary (divergences, vanishing functions, identity residual)."""
        return {"family": self.family, "parameters": self.parameters, "path": self.path,
                "value": self.value, "vanishing": list(self.vanishing),
                "divergences": [d.to_dict() for d in self.divergences],
                "max_identity_residual": self.max_identity_residual,
                "notes": list(self.notes)}


def _path_states(th: Thermodynamics, path: str, value: float, xs: np.ndarray, P_guess: float):
    if path == "isobar":
        P = np.full(xs.shape, float(value))
    else:
        P = isotherm_pressure(th, xs, value, P_guess)
    with np.errstate(all="ignore"):
        ok = np.isfinite(P) & th.physical(xs, np.where(np.isfinite(P), P, 1.0)) & (P > 0)
    return P, ok


def isotherm_guess(th: Thermodynamics) -> float:
    """A starting pressure for isotherm solves: P_c of the first physical critical point,
    else the family's typical pressure."""
    cps = _critical_points(th)
    return cps[0].P if cps else th.typical_pressure()


def _pressure_at(th, path, value, x, P_guess):
    if path == "isobar":
        return float(value)
    P = float(isotherm_pressure(th, np.array([x]), value, P_guess)[0])
    return P


def find_divergences(th: Thermodynamics, path: str, value: float, x_range=None,
                     n: int = 6000) -> tuple:
    """Every divergence of the response functions along an isobar (``value`` = P) or an
    isotherm (``value`` = T) over the physical part of ``x_range`` (default: the wide
    search range of the isobar analysis).  See the module docstring for the method."""
    if path not in ("isobar", "isotherm"):
        raise BhchemError(f"path must be 'isobar' or 'isotherm', not {path!r}")
    P_guess = value if path == "isobar" else isotherm_guess(th)
    lo, hi = x_range if x_range else _search_range(th, P_guess)
    xs = np.geomspace(lo, hi, n)
    P, ok = _path_states(th, path, value, xs, P_guess)
    Pg = np.where(ok, P, 1.0)
    dens = _denominators(th, xs, Pg)
    found = []
    cps = _critical_points(th)
    for name, (D, _nums) in dens.items():
        D = np.where(ok & np.isfinite(D), D, np.nan)

        def f(u, name=name):
            x = math.exp(u)
            Pp = _pressure_at(th, path, value, x, P_guess)
            if not np.isfinite(Pp):
                return float("nan")
            return float(_denominators(th, np.array([x]), np.array([Pp]))[name][0][0])

        good = np.isfinite(D)
        s = np.sign(D)
        idx = np.nonzero(good[1:] & good[:-1] & (s[1:] * s[:-1] < 0))[0]
        roots = []
        for i in idx:
            a, b = math.log(xs[i]), math.log(xs[i + 1])
            try:
                u = brentq(f, a, b, xtol=1e-15, rtol=1e-15, maxiter=200)
            except ValueError:
                continue
            roots.append((math.exp(u), "spinodal"))
        # double zeros: local minima of |D| that do not change sign
        A = np.abs(D)
        interior = good[1:-1] & good[:-2] & good[2:] & (A[1:-1] <= A[:-2]) & (A[1:-1] <= A[2:]) \
            & (s[1:-1] == s[:-2]) & (s[1:-1] == s[2:]) & (A[1:-1] < 1e-2)
        for i in np.nonzero(interior)[0] + 1:
            a, b = math.log(xs[i - 1]), math.log(xs[i + 1])
            res = minimize_scalar(lambda u: abs(f(u)), bounds=(a, b), method="bounded",
                                  options={"xatol": 1e-14})
            if abs(res.fun) <= DOUBLE_ZERO_TOLERANCE:
                roots.append((math.exp(res.x), "double zero"))
        for x, kind in roots:
            Pp = _pressure_at(th, path, value, x, P_guess)
            D1, nums = _denominators(th, np.array([x]), np.array([Pp]))[name]
            diverging = tuple(q for q, v in nums.items() if float(v[0]) > 1e-8)
            T = float(th.T(x, Pp))
            if kind == "double zero":
                for cp in cps:
                    if abs(x / cp.x - 1) < 1e-4 and abs(Pp / cp.P - 1) < 1e-6:
                        kind = "critical point"
                        x, Pp, T = cp.x, cp.P, cp.T
            v = float(th.v(x, Pp)) if th.has("v") else None
            found.append(Divergence(kind=kind, denominator=name, quantities=diverging,
                                    x=float(x), T=T, P=float(Pp), v=v,
                                    residual=abs(float(D1[0]))))
    # a critical point lying on the path is reported even if the grid missed the double zero
    for cp in cps:
        on = abs(value / cp.P - 1) < 1e-8 if path == "isobar" else abs(value / cp.T - 1) < 1e-8
        if on and lo <= cp.x <= hi and not any(
                dv.kind == "critical point" and dv.denominator == "T_x" and
                abs(dv.x / cp.x - 1) < 1e-4 for dv in found):
            nums = _denominators(th, np.array([cp.x]), np.array([cp.P]))["T_x"][1]
            found.append(Divergence(kind="critical point", denominator="T_x",
                                    quantities=tuple(q for q, v in nums.items() if float(v[0]) > 1e-8),
                                    x=cp.x, T=cp.T, P=cp.P, v=cp.v, residual=0.0))
    found.sort(key=lambda dv: (dv.x, dv.denominator))
    return tuple(found)


def _along(th: Thermodynamics, path: str, value: float, x_range=None, n: int = 800) -> ResponseCurve:
    if not (np.isfinite(value) and value > 0):
        what = "pressure" if path == "isobar" else "temperature"
        raise StateDomainError(f"the {what} of an {path} must be positive and finite, not {value}")
    lo, hi = x_range if x_range else _default_window(th)
    if not (0 < lo < hi):
        raise BhchemError(f"state range must satisfy 0 < x1 < x2, not [{lo}, {hi}]")
    xs = np.geomspace(lo, hi, n)
    P_guess = value if path == "isobar" else isotherm_guess(th)
    P, ok = _path_states(th, path, value, xs, P_guess)
    if not np.any(ok):
        raise StateDomainError(
            f"no physical state of {th.family.name} on the {path} "
            f"{'P' if path == 'isobar' else 'T'} = {value:g} for "
            f"{th.derivation.state.name} in [{lo:.4g}, {hi:.4g}]")
    Pg = np.where(ok, P, np.nan)
    rf = response_functions(th, xs, Pg)
    values = {k: np.where(ok, rf[k], np.nan) for k in RESPONSE_NAMES}
    res = np.concatenate([rf["residual_CP_CV"][ok], rf["residual_kT_kS"][ok]])
    res = res[np.isfinite(res)]
    vanishing = ("C_V", "kappa_S") if cv_vanishes(th) else ()
    notes = []
    if vanishing:
        notes.append("C_V and kappa_S vanish identically: S and V are functions of one "
                     "variable (d(S,V)/d(x,P) = 0 symbolically), so isochores are adiabats")
    divs = find_divergences(th, path, value)
    return ResponseCurve(
        family=th.family.name, parameters=dict(th.values), path=path, value=float(value),
        x=xs, P=Pg, T=np.where(ok, rf["T"], np.nan), V=np.where(ok, rf["V"], np.nan),
        v=np.where(ok, th.v(xs, np.where(ok, P, 1.0)), np.nan) if th.has("v") else None,
        values=values, vanishing=vanishing, divergences=divs,
        max_identity_residual=float(np.max(res)) if res.size else float("nan"),
        notes=tuple(notes))


def along_isobar(th: Thermodynamics, P: float, x_range=None, n: int = 800) -> ResponseCurve:
    """Response functions along the isobar P (see :class:`ResponseCurve`).

    Parameters
    ----------
    th : Thermodynamics
    P : float
        The pressure.
    x_range : (float, float), optional
        Window of the state variable for the returned arrays (default: around the
        critical point, else the family's typical state).  Divergences are searched
        over the whole physical isobar regardless.
    n : int
        Number of states (logarithmically spaced).
    """
    return _along(th, "isobar", P, x_range, n)


def along_isotherm(th: Thermodynamics, T: float, x_range=None, n: int = 800) -> ResponseCurve:
    """Response functions along the isotherm T, P(x) solved from T(x, P) = T (see
    :func:`along_isobar`; states with no positive pressure are NaN)."""
    return _along(th, "isotherm", T, x_range, n)


def local_exponent(th: Thermodynamics, quantity: str, divergence: Divergence,
                   side: float = 0.0, steps=(1e-4, 1e-5)) -> float:
    """Effective exponent lambda of |Q| ~ |T - T_d|^(-lambda) approaching a divergence
    along its isobar: the log-slope between the states at relative distances ``steps``
    in x on one side (``side`` = +1 or -1), or the mean of both sides (``side`` = 0, which
    cancels the leading correction).  Mean-field values: 1/2 at a spinodal, 2/3 along
    the critical isobar (use steps ~ (3e-3, 1e-3) there: T - T_c ~ (x - x_c)^3 loses
    digits below)."""
    if side == 0:
        return 0.5 * (local_exponent(th, quantity, divergence, 1.0, steps)
                      + local_exponent(th, quantity, divergence, -1.0, steps))
    x0, P = divergence.x, divergence.P
    pts = []
    for h in steps:
        x = x0 * (1 + side * h)
        q = abs(float(response_functions(th, np.array([x]), P)[quantity][0]))
        dT = abs(float(th.T(x, P)) - divergence.T)
        pts.append((math.log(dT), math.log(q)))
    (a1, b1), (a2, b2) = pts
    return -(b2 - b1) / (a2 - a1)
