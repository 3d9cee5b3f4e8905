"""Structure events: where a family's phase structure changes as a coupling moves.

An *event* is a coupling value (1D) or a curve in the plane of two couplings (2D) at which
something countable about the phase structure changes: the number of critical points in the
physical domain, a critical point crossing T = 0 or P = 0 or the boundary of a declared state
condition, a critical point leaving the globally preferred branch, a triple point appearing, the two terminal points of a
zeroth-order line meeting, a Hawking--Page line meeting a first-order line.  Each event is
located by solving its own equation (a discriminant or resultant of the critical polynomial,
or an extended system solved by Newton after pseudo-arclength continuation), not by
bisection between grid points, and carries its residuals and a convergence flag.

Two producers fill these objects:

* :mod:`bhchem.analysis.critical_polynomial` -- exact thresholds from the critical
  polynomial (discriminants and resultants, exact algebraic numbers where the couplings are
  rational);
* :mod:`bhchem.analysis.structure_events` -- events found by continuation of critical points,
  triple points and terminal points in a coupling.

The structure map (:mod:`bhchem.workflows.atlas`) classifies grid points from them.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bhchem.core.results import Result

#: the kinds of event, with a one-line meaning each (the text and JSON carry the kind's name)
EVENT_KINDS = {
    "critical-count": "the number of real critical points in the physical domain changes "
                      "(two critical points merge and disappear, or one enters the domain)",
    "critical-temperature-zero": "a critical point crosses T = 0",
    "critical-pressure-zero": "a critical point crosses P = 0",
    "critical-leaves-preferred": "a critical point leaves (or joins) the globally preferred "
                                 "branch",
    "critical-leaves-domain": "a critical point crosses the boundary of a declared state "
                              "condition (leaves or enters the physical domain)",
    "triple-point": "a triple point appears or disappears",
    "zeroth-order": "a zeroth-order line appears (its two terminal points meet)",
    "hawking-page-meets-first-order": "a Hawking--Page line meets a first-order line",
    "isolated-critical-point": "the critical points degenerate into an isolated critical "
                               "point (nonstandard exponents)",
    "small-state-asymptote": "the leading coefficient of T at the small end of the state "
                             "variable (lim x -> 0 of x T) changes sign: a branch appears or "
                             "disappears at the small end, with the lines that end on it",
}


@dataclass(frozen=True, repr=False)
class StructureEvent(Result):
    """One event along one coupling (the others held fixed).

    Attributes
    ----------
    kind : str
        One of :data:`EVENT_KINDS`.
    coupling : str
        The parameter that moves.
    value : float
        Where the event sits (the coupling's value), to the tolerance of ``method``.
    fixed : dict
        The other parameters (name -> value).
    exact : str or None
        The exact value when one is known (sympy text of an algebraic number, e.g.
        ``"sqrt(2)/4"``), else None.
    scale_free : dict
        The event's location in the family's scale-free combinations (e.g. ``{"b*Q": ...}``).
    residuals : dict
        Residuals of the equations that define the event at ``value``.
    converged : bool
        Whether the solver met its tolerance; a False event is reported, never dropped.
    method : str
        How it was located ("discriminant", "resultant", "continuation + Newton", ...).
    below, above : str or None
        The structure signature just below and just above ``value`` (filled by the structure
        map; None when not classified).
    message : str
        One line for the reader.
    system : str
        The name of the extended system solved (``fold``, ``pressure-zero``, ``on-line``,
        ``background``, ``isolated``, ...; empty for the exact thresholds), with
    unknowns : tuple of float
        its solution (the coupling last), the seed of a continuation in a second coupling.
    """

    kind: str
    coupling: str
    value: float
    fixed: dict = field(default_factory=dict)
    exact: str | None = None
    scale_free: dict = field(default_factory=dict)
    residuals: dict = field(default_factory=dict)
    converged: bool = True
    method: str = ""
    below: str | None = None
    above: str | None = None
    message: str = ""
    system: str = ""
    unknowns: tuple = ()

    def summary(self) -> str:
        where = self.exact if self.exact else f"{self.value:.12g}"
        return f"{self.kind} at {self.coupling} = {where}"


@dataclass(frozen=True, repr=False)
class EventCurve(Result):
    """One event traced as a curve in the plane of two couplings.

    Attributes
    ----------
    kind : str
        One of :data:`EVENT_KINDS`.
    couplings : tuple of str
        The two parameters (x axis, y axis).
    points : numpy.ndarray
        Shape (n, 2): points on the curve, in order along it.
    residuals : numpy.ndarray
        Shape (n,): the largest residual of the event's equations at each point.
    converged : bool
        Whether every point met the solver's tolerance.
    equation : str or None
        The curve's implicit equation when it is known in closed form (sympy text).
    method : str
    message : str
    """

    kind: str
    couplings: tuple
    points: np.ndarray
    residuals: np.ndarray
    converged: bool = True
    equation: str | None = None
    method: str = ""
    message: str = ""

    def summary(self) -> str:
        return (f"{self.kind} curve in ({self.couplings[0]}, {self.couplings[1]}): "
                f"{len(self.points)} points")
