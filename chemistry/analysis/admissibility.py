"""Which states a binding excludes, and why: the ranges each named condition removes.

An isobar or a phase diagram keeps only the states that satisfy every *active* condition of
the binding (:attr:`Thermodynamics.admissibility`, see :mod:`bhchem.declare.conditions`).
This module reports the other states: for each active condition, the maximal ranges of the
state variable x (r+ for black holes) where it fails at a pressure, the temperatures there,
and the same over a range of pressures.  Nothing here changes which states count.

Edges are located by bisection on the condition itself (a boolean), 60 halvings at most,
to 1e-13 relative in x; T over a range is the extent of T at 2000 states across it (finite
values only; ``T_unbounded`` says that T is not finite, or grows past 1e6 times its
median, inside the range: a pole of T).

Example
-------
>>> from bhchem import bind
>>> th = bind("gauss-bonnet-ads", d=5, k=-1, alpha=0.5, Q=0.0)
>>> rep = excluded_states(th, 0.01)
>>> sorted({r.condition for r in rep.ranges})[:1]
['horizon-on-gb-branch']
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bhchem.core.compiled import Thermodynamics
from bhchem.core.results import Result
from bhchem.numerics import state_range, true_runs

#: states sampled across the search range to find where each condition fails
N_SAMPLES = 4000


@dataclass(frozen=True)
class ExcludedRange:
    """A range of states that one condition excludes at one pressure.

    Attributes
    ----------
    condition : str
        The condition's name (``finite`` for states where T, S or G is not finite).
    relation : str
        Its relation as declared (short form).
    reason : str
        Why a physical state satisfies it.
    pressure : float
    x_min, x_max : float
        The range of the state variable where the condition fails (closed at a search-range
        end, open at an edge where it starts to hold).
    T_min, T_max : float or None
        Extent of T over the range (None when T is nowhere finite there).
    T_unbounded : str or None
        ``"above"`` or ``"below"`` when T diverges inside the range (a pole) towards
        +infinity or -infinity; ``T_min``/``T_max`` are then the extent of the sampled
        finite values only.
    at_range_end : tuple of bool
        Whether each end is the end of the search range (the exclusion may continue beyond).
    """

    condition: str
    relation: str
    reason: str
    pressure: float
    x_min: float
    x_max: float
    T_min: float | None
    T_max: float | None
    T_unbounded: str | None
    at_range_end: tuple = (False, False)

    def to_dict(self) -> dict:
        return {"condition": self.condition, "relation": self.relation, "reason": self.reason,
                "pressure": self.pressure, "x_min": self.x_min, "x_max": self.x_max,
                "T_min": self.T_min, "T_max": self.T_max, "T_unbounded": self.T_unbounded,
                "at_range_end": list(self.at_range_end)}


@dataclass(frozen=True, repr=False)
class Exclusions(Result):
    """The states a binding excludes at one pressure (see module docstring).

    Attributes
    ----------
    pressure : float
    state_range : tuple
        The x range searched.
    ranges : tuple of ExcludedRange
        In order of condition (declaration order), then x.
    admissibility : dict
        The binding's selection (``Admissibility.to_dict()``).
    converged : bool
        Every edge was located to 1e-13 relative within the bisection count.
    message : str
    """

    pressure: float
    state_range: tuple
    ranges: tuple
    admissibility: dict
    converged: bool
    message: str

    def by_condition(self) -> dict:
        """Condition name -> its ranges."""
        out: dict = {}
        for r in self.ranges:
            out.setdefault(r.condition, []).append(r)
        return out


@dataclass(frozen=True, repr=False)
class ExclusionSummary(Result):
    """What each condition excludes across a pressure range (a phase diagram's pressures).

    Attributes
    ----------
    pressures : tuple of float
        The pressures examined.
    conditions : tuple of dict
        One entry per active condition that excludes something: ``condition``,
        ``relation``, ``reason``, ``P_min``/``P_max`` (pressures where it excludes states),
        ``x_min``/``x_max`` and ``T_min``/``T_max`` (envelopes of its excluded ranges),
        ``T_unbounded`` (``"above"``, ``"below"``, ``"both"`` or None).
    admissibility : dict
    message : str
    """

    pressures: tuple
    conditions: tuple
    admissibility: dict
    message: str


def _edge(holds, a: float, b: float, inside_a: bool) -> tuple[float, bool]:
    """Bisection on a boolean between a (value ``inside_a``) and b (the other value)."""
    for _ in range(60):
        if abs(b - a) <= 1e-13 * max(abs(a), abs(b)):
            return (a, True)
        m = 0.5 * (a + b)
        if bool(holds(m)) == inside_a:
            a = m
        else:
            b = m
    return (a, False)


def excluded_states(th: Thermodynamics, P: float, x_range=None,
                    n: int = N_SAMPLES) -> Exclusions:
    """The ranges of states each active condition excludes at pressure P.

    Parameters
    ----------
    th : Thermodynamics
    P : float
    x_range : (float, float), optional
        Default: the isobar search range (:func:`bhchem.analysis.isobar.state_range`).
    n : int
        States sampled (geometric spacing) before the edges are bisected.

    Returns
    -------
    Exclusions
    """
    lo, hi = x_range if x_range else state_range(th, P)
    xs = np.geomspace(lo, hi, n)
    P = float(P)
    ranges, converged = [], True
    with np.errstate(all="ignore"):
        T_all = th.T(xs, P)
        finite = np.isfinite(T_all) & np.isfinite(th.S(xs, P)) & np.isfinite(th.G(xs, P))
    checks = [("finite", "T, S and G finite", "a state needs a finite temperature, entropy "
               "and Gibbs free energy", lambda z: _finite(th, z, P), finite)]
    for c in th.active_conditions:
        checks.append((c.name, c.description, c.reason,
                       (lambda name: lambda z: th.condition_holds(name, z, P))(c.name),
                       th.condition_holds(c.name, xs, P)))
    for name, relation, reason, holds, mask in checks:
        bad = ~np.asarray(mask, dtype=bool)  # each condition on its own (ranges may overlap)
        for k, j in true_runs(bad):
            a_end, b_end = k == 0, j == n - 1
            if a_end:
                xa, ok_a = float(xs[0]), True
            else:
                xa, ok_a = _edge(holds, float(xs[k]), float(xs[k - 1]), False)
            if b_end:
                xb, ok_b = float(xs[-1]), True
            else:
                xb, ok_b = _edge(holds, float(xs[j]), float(xs[j + 1]), False)
            converged &= ok_a and ok_b
            ranges.append(_range(th, P, name, relation, reason, xa, xb, (a_end, b_end)))
    adm = th.admissibility
    names = sorted({r.condition for r in ranges})
    msg = (f"{len(ranges)} excluded range(s) at P = {P:.6g} ({adm.label()})"
           + (f": {', '.join(names)}" if names else ""))
    return Exclusions(pressure=P, state_range=(float(lo), float(hi)), ranges=tuple(ranges),
                      admissibility=adm.to_dict(), converged=bool(converged), message=msg)


def _finite(th, z, P) -> bool:
    with np.errstate(all="ignore"):
        return bool(np.isfinite(th.T(z, P)) and np.isfinite(th.S(z, P))
                    and np.isfinite(th.G(z, P)))


def _range(th, P, name, relation, reason, xa, xb, at_end) -> ExcludedRange:
    xs = np.geomspace(xa, xb, 2000) if xb > xa else np.array([xa])
    with np.errstate(all="ignore"):
        T = th.T(xs, P)
    fin = T[np.isfinite(T)]
    unbounded = None
    if fin.size:
        med = float(np.median(np.abs(fin)))
        extreme = float(fin[int(np.argmax(np.abs(fin)))])
        if fin.size < T.size or (med > 0 and abs(extreme) > 1e6 * med):
            unbounded = "above" if extreme > 0 else "below"
        T_min, T_max = float(np.min(fin)), float(np.max(fin))
    else:
        T_min = T_max = None
    short = relation if len(relation) <= 100 else relation[:97] + "..."
    return ExcludedRange(name, short, reason, float(P), float(xa), float(xb), T_min, T_max,
                         unbounded, tuple(bool(e) for e in at_end))


def exclusion_summary(th: Thermodynamics, pressures, x_ranges=None) -> ExclusionSummary:
    """Envelopes of the excluded ranges of each condition over several pressures.

    Parameters
    ----------
    th : Thermodynamics
    pressures : sequence of float
    x_ranges : sequence of (float, float), optional
        One search range per pressure (default: each isobar's own).
    """
    table: dict = {}
    for i, P in enumerate(pressures):
        rep = excluded_states(th, P, x_ranges[i] if x_ranges else None)
        for r in rep.ranges:
            e = table.setdefault(r.condition, {
                "condition": r.condition, "relation": r.relation, "reason": r.reason,
                "P_min": r.pressure, "P_max": r.pressure, "x_min": r.x_min, "x_max": r.x_max,
                "T_min": r.T_min, "T_max": r.T_max, "T_unbounded": r.T_unbounded})
            e["P_min"], e["P_max"] = min(e["P_min"], r.pressure), max(e["P_max"], r.pressure)
            e["x_min"], e["x_max"] = min(e["x_min"], r.x_min), max(e["x_max"], r.x_max)
            for key, pick in (("T_min", min), ("T_max", max)):
                vals = [v for v in (e[key], getattr(r, key)) if v is not None]
                e[key] = pick(vals) if vals else None
            if r.T_unbounded and e["T_unbounded"] not in (None, r.T_unbounded):
                e["T_unbounded"] = "both"
            else:
                e["T_unbounded"] = e["T_unbounded"] or r.T_unbounded
    order = ["finite"] + [c.name for c in th.active_conditions]
    conds = tuple(table[n] for n in order if n in table)
    adm = th.admissibility
    msg = (f"{len(conds)} condition(s) exclude states between P = {min(pressures):.6g} and "
           f"{max(pressures):.6g} ({adm.label()})")
    return ExclusionSummary(pressures=tuple(float(p) for p in pressures), conditions=conds,
                            admissibility=adm.to_dict(), message=msg)


def describe_range(r: ExcludedRange, state: str = "x") -> str:
    """One line: ``regular-exterior excludes r in (3.46, 1.1e5] (T from 0.11 to +infinity)``."""
    lo = "[" if r.at_range_end[0] else "("
    hi = "]" if r.at_range_end[1] else ")"
    if r.T_min is None:
        temps = "T not finite"
    else:
        bottom = "-infinity" if r.T_unbounded == "below" else f"{r.T_min:.6g}"
        top = "+infinity" if r.T_unbounded == "above" else f"{r.T_max:.6g}"
        temps = f"T from {bottom} to {top}"
    return (f"{r.condition} excludes {state} in {lo}{r.x_min:.6g}, {r.x_max:.6g}{hi} "
            f"({temps})")
