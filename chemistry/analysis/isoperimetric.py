r"""The reverse isoperimetric ratio of black hole states.

Cvetic, Gibbons, Kubiznak & Pope, PRD 84 (2011) 024037, arXiv:1012.2888 (CGKP11):

.. math::

    \mathcal R = \Bigl(\frac{(d-1)\,V}{\Omega_{d-2}}\Bigr)^{1/(d-1)}
                 \Bigl(\frac{\Omega_{d-2}}{A}\Bigr)^{1/(d-2)},

with V the thermodynamic volume and A the horizon area.  CGKP11 conjecture R >= 1 (the
Euclidean ball maximises the entropy at given thermodynamic volume), with equality for
the static spherical holes; states with R < 1 are *super-entropic* (Hennigar, Kubiznak &
Mann, PRL 115 (2015) 031101, arXiv:1411.4309).

Area.  When the family's state variable is the horizon radius r+ itself (static holes),
r+ is the areal radius and A = Omega_{d-2} r+^(d-2), the geometric area whatever the
entropy (the Wald entropy of Gauss-Bonnet and Lovelock gravity is not A/4).  Otherwise
(e.g. the rotating families, state variable S, where r+ is a Boyer-Lindquist radius) the
area law A = 4 S is used.  Non-gravitational systems (fluids) have no ratio.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from bhchem.core.results import Result
from bhchem.core.compiled import Thermodynamics
from bhchem.core.sampling import physical_sample

#: R below 1 by more than this (relative) is super-entropic; closer is R = 1 within rounding
TOLERANCE = 1e-12

CONVENTION = {
    "ratio": "R = ((d-1) V/Omega_{d-2})^(1/(d-1)) (Omega_{d-2}/A)^(1/(d-2)), A = 4 S "
             "(Cvetic, Gibbons, Kubiznak & Pope, PRD 84 (2011) 024037)",
    "super_entropic": "R < 1 (Hennigar, Kubiznak & Mann, PRL 115 (2015) 031101)",
    "area": "A = Omega_{d-2} r+^(d-2) when the state variable is r+ (static holes; any "
            "entropy), else the area law A = 4 S",
}


def _omega(d: int) -> float:
    return 2 * math.pi ** ((d - 1) / 2) / math.gamma((d - 1) / 2)


def _areal_state(th: Thermodynamics) -> bool:
    """The state variable is r+ itself (the areal radius of a static horizon)."""
    return th.has("r_plus") and th.derivation.quantities["r_plus"] == th.derivation.state


def isoperimetric_ratio(th: Thermodynamics, x, P) -> np.ndarray:
    """R at states (x, P); NaN where V or A is not positive (A: see module docstring).

    Examples
    --------
    A static hole has R = 1 (CGKP11):

    >>> from bhchem import bind
    >>> float(isoperimetric_ratio(bind("schwarzschild-ads"), 2.0, 0.01))
    1.0
    """
    d = th.derivation.dimension
    om = _omega(d)
    V = np.asarray(th.V(x, P), float)
    if _areal_state(th):
        A = om * np.asarray(x, float) ** (d - 2) * np.ones_like(V)
    else:
        A = 4 * np.asarray(th.S(x, P), float)
    with np.errstate(all="ignore"):
        R = ((d - 1) * V / om) ** (1.0 / (d - 1)) * (om / A) ** (1.0 / (d - 2))
    return np.where((V > 0) & (A > 0), R, np.nan)


@dataclass(frozen=True, repr=False)
class IsoperimetricSurvey(Result):
    """R over physical states of the bound family (at its parameter values).

    Attributes
    ----------
    R_min, R_max : float or None
    n_states : int
    super_entropic : bool or None
        Some state has R < 1 - TOLERANCE (None: no ratio for this family).
    worst : dict or None
        {x, P, R} of the state with the smallest R.
    message : str
    """

    family: str
    parameters: dict
    R_min: float | None
    R_max: float | None
    n_states: int
    super_entropic: bool | None
    worst: dict | None
    message: str
    convention: dict = field(default_factory=lambda: dict(CONVENTION))


def isoperimetric_survey(th: Thermodynamics, n_points: int = 64) -> IsoperimetricSurvey:
    """The reverse isoperimetric ratio at up to ``n_points`` random physical states of the
    bound family (its own parameter values; state and pressure around its scales)."""
    if not th.family.gravitational:
        return IsoperimetricSurvey(th.family.name, dict(th.values), None, None, 0, None, None,
                                   "no reverse isoperimetric ratio: not a black hole")
    sample = physical_sample(th, n_points, n_draws=1, vary_parameters=False)
    xs, Ps = [], []
    for _, x, P in sample.points:
        xs.append(x)
        Ps.append(P)
    if not xs:
        return IsoperimetricSurvey(th.family.name, dict(th.values), None, None, 0, None, None,
                                   "no physical state sampled: no ratio")
    x, P = np.concatenate(xs), np.concatenate(Ps)
    R = isoperimetric_ratio(th, x, P)
    ok = np.isfinite(R)
    if not np.any(ok):
        return IsoperimetricSurvey(th.family.name, dict(th.values), None, None, 0, None, None,
                                   "V or S not positive at the sampled states: no ratio")
    x, P, R = x[ok], P[ok], R[ok]
    i = int(np.argmin(R))
    low = bool(R[i] < 1 - TOLERANCE)
    worst = {"x": float(x[i]), "P": float(P[i]), "R": float(R[i])}
    if low:
        verdict = (f"SUPER-ENTROPIC: R < 1 at {int(np.sum(R < 1 - TOLERANCE))} of {len(R)} "
                   f"sampled states (smallest R = {R[i]:.10g} at "
                   f"{th.derivation.state.name} = {x[i]:.6g}, P = {P[i]:.6g})")
    elif float(np.max(R)) <= 1 + TOLERANCE:
        verdict = f"R = 1 at all {len(R)} sampled states (within {TOLERANCE:g})"
    else:
        verdict = (f"R >= 1 at all {len(R)} sampled states (min {R[i]:.10g}, max "
                   f"{float(np.max(R)):.10g}): the conjecture R >= 1 holds here")
    return IsoperimetricSurvey(th.family.name, dict(th.values), float(R[i]), float(np.max(R)),
                               int(len(R)), low, worst, verdict)
