r"""The phase diagram over a pressure range, and the phase graph.

Algorithm (family-agnostic):

1. *Scalar functions along P* (:func:`pressure_events`).  At fixed P, which transitions the
   globally preferred phase has is fixed by the signs of a few scalar functions of the
   isobar's skeleton (:func:`bhchem.analysis.isobar.skeleton_margins`): the differences of the
   end temperatures (spinodals, domain edges) of the stable branches, the free-energy
   differences G_j - G_i at those ends, and, with three stable phases, G_k - G_i at the
   crossing of i and j.  Between pressures where the branches themselves change (critical
   points, domain edges) every branch keeps its index, so each function is continuous in
   P.  They are sampled on a dense logarithmic grid (``n_scan`` skeletons; no temperature
   grid, no walk of the preferred phase), every sign change is bracketed and solved by
   Brent's method to ~1e-14 relative in P, and a change of the branches is placed at the
   known critical pressure or located by bisection.  A function that exists on only part of
   a grid cell (its partner branch appears there) is evaluated just beside the event that
   bounds it, and a function whose samples dip towards zero is minimised between them, so
   a window whose two ends fall in one grid cell is still found.  These *events* are the
   only pressures where a line can start or end.
2. *Anchors*: the isobar analysis (:mod:`bhchem.analysis.isobar`) at logarithmically spaced
   pressures, at both ends of the range, and just beside every event (relative offset
   1e-7; 1e-3 beside a critical pressure, where the swallowtail must stay resolvable).
3. *Lines*: transitions at neighbouring anchors with no event between are the same line
   when they have the same kind and phases; across an event, when they have the same kind
   and continuous T and states.  An event where transitions stop or start is *relevant*.
   If neighbouring anchors disagree with no event between (the scalar functions missed
   something), a local search follows: a denser scan of that cell, then bisection on the
   isobar analysis; an end found only by the latter is ``unexplained`` and the diagram
   carries a warning naming its pressure -- a line never silently 'vanishes'.
4. *Ends*, each explained: ``critical point`` (a first-order line whose states merge at a
   physical critical point); ``triple point`` (three states with equal T, P, G, refined
   jointly by Newton to machine precision); ``terminal point`` (a crossing reaches the end
   of one of its branches, or one of the line's branches stops existing at the transition
   temperature; the branch and the partner lines meeting there are named); ``domain edge``
   (a branch ends at a state condition, which is named, or there is no physical state
   beyond); ``zero temperature`` (found by bisection, with the coexistence temperature below
   1e-2 of the line's median: the line meets the T = 0 axis); ``range end``.
5. *Densify*: first-order lines by the vectorised Newton solver of
   :mod:`bhchem.analysis.coexistence` seeded from the anchors, approaching a critical end down
   to 1 - P/P_c = 1e-10 with the near-critical solver; a zeroth-order line is the end
   temperature of the branch that ends, read from the skeleton; Hawking-Page lines by
   Newton on G(x, P) = G_background(P).  Every line's points run from its low end to its
   high end, both included (critical, triple, terminal points and range ends exactly).

:func:`line_transition_at` solves a line's own equations at any pressure between its
ends (coexistence, spinodal or Hawking-Page condition, seeded from its points), so the
diagram can be compared with an independent isobar analysis at any pressure.

The phase graph (networkx MultiGraph) has the phases as nodes (stable branches
named by size order, and the background phase) and one edge per line, with its
kind and ends; triple points and critical points are graph attributes.  Its
*structure signature* names the features present (``no-transition``,
``hawking-page``, ``vdw-like``, ``reentrant``, ``triple-point``,
``isolated-critical-point``, ``multiple-critical-points``) and carries a
Weisfeiler-Lehman hash of the graph, so two diagrams can be compared.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

import math
from dataclasses import dataclass, field, replace

import numpy as np

from bhchem.core.results import Result
from bhchem.analysis.coexistence import (CoexistencePoint, coexistence_near_critical, coexistence_newton,
                          make_point)
from bhchem.core.compiled import Thermodynamics
from bhchem.core.implicit import (UNSOLVED_PREFIX, counting, numerical_potentials,
                                  unsolved_warning)
from bhchem.analysis.critical import find_critical_points
from bhchem.errors import StateDomainError
from bhchem.analysis.isobar import (Transition, analyze_isobar, branch_state_at, isobar_skeleton,
                     skeleton_margins)
from bhchem.analysis.critical import loop_side, resolve_pressure_range
from bhchem.analysis.consistency import emit, first_law_warnings, line_check_warnings
from bhchem.numerics import brentq, minimize_scalar
from bhchem.analysis.admissibility import exclusion_summary

#: a line end found only by bisection whose temperature is below this fraction of the line's
#: median temperature is where the line meets T = 0 ("zero temperature")
ZERO_T_FRACTION = 1e-2

#: pressures (geometric across the diagram's range) at which the excluded states are reported
N_EXCLUSION_PRESSURES = 12

if TYPE_CHECKING:  # annotations only; networkx itself is loaded when a graph is built
    import networkx as nx


def _networkx():
    """The networkx module, imported when a phase graph is first built or queried."""
    import networkx  # lazy: ~0.1 s of start-up that commands without a phase graph skip
    return networkx


#: relative offset of the skeletons evaluated on both sides of an event
_ETA = 1e-9
#: ... of a change of the branches (the focused branch grid resolves the swallowtail there)
_ETA_TOPOLOGY = 1e-6
#: relative offset of the anchor isobars beside an event, and beside a critical pressure
_DELTA = 1e-7
_DELTA_CRITICAL = 1e-3
#: events closer than this (relative) are one cluster
_COINCIDENT = 1e-11
#: largest number of skeletons one diagram may evaluate (bounds the work by a count)
MAX_SKELETONS = 3000

_MARGIN_KINDS = {"ends": "branch ends meet", "gibbs": "crossing meets branch end",
                 "triple": "triple point"}


@dataclass(repr=False)
class PhaseLine(Result):
    """A transition line in the P-T plane.

    ``points`` run from the low end to the high end (both included); ``states`` hold the
    state variable of the two phases, (P, x_from, x_to), NaN for the background phase;
    ``phases`` the names of the two phases over each pressure interval (stable branches are
    named by size order, so a name can change where another branch appears)."""

    kind: str
    between: tuple
    points: list  # [(T, P)] in increasing P
    ends: dict  # {'low': {...}, 'high': {...}}
    coexistence: list = field(default_factory=list)  # CoexistencePoint for first-order lines
    checks: dict = field(default_factory=dict)
    states: list = field(default_factory=list)
    phases: list = field(default_factory=list)  # [(P_lo, P_hi, from, to)]
    critical_point: object = None
    info: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {"kind": self.kind, "between": list(self.between),
                "points": [[float(T), float(P)] for T, P in self.points],
                "ends": self.ends, "checks": self.checks,
                "phases": [[float(a), float(b), f, t] for a, b, f, t in self.phases]}

    def phases_at(self, P: float) -> tuple:
        """(from, to) names of the line's phases at pressure P."""
        for a, b, f, t in self.phases:
            if a <= P <= b:
                return f, t
        return self.between


@dataclass(frozen=True)
class TriplePoint:
    T: float
    P: float
    phases: tuple
    states: tuple  # x of each phase
    G: float
    residual: float


@dataclass
class PressureEvent:
    """A pressure where the structure of the isobars changes (module docstring, step 1).

    ``kind``: 'critical point', 'branch ends meet' (two branch-end temperatures are equal),
    'crossing meets branch end' (G_j = G_i at an end of branch i), 'triple point',
    'branch structure' (branches appear or disappear without a physical critical point),
    'existence' (a phase leaves the search range at another's end temperature) or
    'unexplained' (found only by bisection on the isobar analysis).  ``residual`` is the
    scalar function at P relative to its terms, ``bracket`` the relative width of the final
    bracket."""

    P: float
    kind: str
    T: float | None
    phases: tuple
    note: str
    key: tuple | None = None
    residual: float | None = None
    bracket: float | None = None
    states: tuple = ()
    critical_point: object = None
    relevant: bool = False
    anchors: tuple = ()
    also: list = field(default_factory=list)  # keys of coincident scalar functions

    def stands_for(self, key) -> bool:
        return key == self.key or key in self.also

    def to_dict(self) -> dict:
        def num(v):
            return None if v is None or not math.isfinite(v) else float(v)
        return {"P": self.P, "kind": self.kind, "T": num(self.T), "phases": list(self.phases),
                "note": self.note, "residual": num(self.residual), "bracket": num(self.bracket)}


@dataclass(repr=False)
class PhaseDiagram(Result):
    family: str
    parameters: dict
    pressure_range: tuple
    lines: list
    critical_points: tuple
    triple_points: list
    #: one dict per preferred phase: ``phase`` (the isobars' label), ``name`` (what text and
    #: figures call the region, see :func:`region_name`), ``P_range``, ``sample``
    regions: list
    graph: nx.MultiGraph
    structure: str
    structure_hash: str
    message: str
    warnings: list = field(default_factory=list)
    events: list = field(default_factory=list)
    #: the binding's admissibility selection (``Admissibility.to_dict()``)
    admissibility: dict = field(default_factory=dict)
    #: what each active condition leaves out across the pressure range (ExclusionSummary)
    exclusions: object = None
    #: which variables are held fixed (``Family.ensemble_record()``)
    ensemble: dict = field(default_factory=dict)

    @property
    def n_distinct_phases(self) -> int:
        """How many phases the diagram distinguishes (:func:`distinct_phases` of its graph)."""
        return distinct_phases(self.graph)

    def lines_at(self, P: float) -> list:
        """The lines whose pressure interval contains P."""
        return [ln for ln in self.lines if ln.ends["low"]["P"] <= P <= ln.ends["high"]["P"]]

    def table_rows(self):
        """One row per line: kind, the phases it separates, its number of points and its
        lowest and highest point (T, P) with the type of each end."""
        rows = []
        for line in self.lines:
            pts = list(line.points)
            lo, hi = (pts[0], pts[-1]) if pts else ((None, None), (None, None))
            ends = line.ends or {}
            rows.append((line.kind, " / ".join(map(str, line.between)), len(pts),
                         lo[0], lo[1], (ends.get("low") or {}).get("type"),
                         hi[0], hi[1], (ends.get("high") or {}).get("type")))
        return (("kind", "between", "points", "T_low", "P_low", "low_end", "T_high",
                 "P_high", "high_end"), rows)


# -- the scalar functions along P: events -----------------------------------------------
class _Skeletons:
    """Skeletons and scalar functions by pressure (cached), with a count of evaluations."""

    def __init__(self, th: Thermodynamics, cps):
        self.th, self.cps = th, tuple(cps)
        self._sk, self._m = {}, {}
        self.count = 0

    @property
    def exhausted(self) -> bool:
        return self.count >= MAX_SKELETONS

    def get(self, P):
        P = float(P)
        sk = self._sk.get(P)
        if sk is None:
            self.count += 1
            sk = isobar_skeleton(self.th, P, self.cps)
            self._sk[P] = sk
        return sk

    def topology(self, P):
        return self.get(P).topology

    def margins(self, P) -> dict:
        P = float(P)
        m = self._m.get(P)
        if m is None:
            m = skeleton_margins(self.th, self.get(P))
            self._m[P] = m
        return m

    def value(self, P, key, topo):
        sk = self.get(P)
        if sk.topology != topo:
            return None
        m = self._m.get(float(P))
        v = m.get(key) if m is not None else skeleton_margins(self.th, sk, keys=[key]).get(key)
        return None if v is None else v[0]


def _sign(v: float) -> int:
    return 1 if v >= 0 else -1


def _end_of(sk, i, s):
    return next((e for e in sk.ends if e.branch == i and e.side == s), None)


def _margin_event(sks, key, topo, P, width) -> PressureEvent:
    th = sks.th
    sk = sks.get(P)
    m = skeleton_margins(th, sk, keys=[key]).get(key) if sk.topology == topo else None
    v, T, scale = m if m is not None else (math.nan, math.nan, 1.0)
    states, phases, note = (), (), ""
    if key[0] == "ends":
        (i, s), (j, t) = key[1], key[2]
        ei, ej = _end_of(sk, i, s), _end_of(sk, j, t)
        phases = (sk.label(i), sk.label(j))
        states = tuple(e.x for e in (ei, ej) if e is not None)
        note = (f"the {ei.kind if ei else '?'} end of the {phases[0]} branch and the "
                f"{ej.kind if ej else '?'} end of the {phases[1]} branch are at the same T")
    elif key[0] == "gibbs":
        (i, s), j = key[1], key[2]
        ei = _end_of(sk, i, s)
        phases = (sk.label(i), sk.label(j))
        xj = sk.gibbs(th, j, T)[1] if math.isfinite(T) else None
        states = (ei.x if ei else math.nan, math.nan if xj is None else xj)
        note = (f"the {phases[0]}/{phases[1]} crossing reaches the {ei.kind if ei else '?'} "
                f"end of the {phases[0]} branch")
    else:
        (i, j), k = key[1], key[2]
        phases = (sk.label(i), sk.label(j), sk.label(k))
        xs = [sk.gibbs(th, q, T)[1] if math.isfinite(T) else None for q in (i, j, k)]
        states = tuple(math.nan if x is None else x for x in xs)
        note = f"G of {phases[2]} equals G at the {phases[0]}/{phases[1]} crossing"
    return PressureEvent(P=float(P), kind=_MARGIN_KINDS[key[0]], T=float(T), phases=phases,
                         note=note, key=key, residual=abs(v) / (scale + 1e-300),
                         bracket=width, states=states)


class _Undefined(Exception):
    pass


def _locate_zero(sks, key, topo, Pa, Pb) -> PressureEvent:
    """Brent's method on a scalar function in log P (to 1e-14 relative); bisection on its
    sign where Brent cannot be used (the function is undefined somewhere inside)."""
    def f(u):
        v = sks.value(math.exp(u), key, topo)
        if v is None:
            raise _Undefined
        return v
    lo, hi = math.log(Pa), math.log(Pb)
    try:
        u = brentq(f, lo, hi, xtol=1e-14, rtol=4 * np.finfo(float).eps, maxiter=200)
        width = 1e-14
    except (_Undefined, ValueError):
        sa = _sign(sks.value(Pa, key, topo))
        for _ in range(200):
            if hi - lo <= 1e-14:
                break
            mid = 0.5 * (lo + hi)
            v = sks.value(math.exp(mid), key, topo)
            if v is None:
                break
            lo, hi = (mid, hi) if _sign(v) == sa else (lo, mid)
        u, width = 0.5 * (lo + hi), hi - lo
    return _margin_event(sks, key, topo, math.exp(u), width)


def _locate_boundary(sks, key, topo, Pa, Pb, defined_at_a: bool) -> PressureEvent:
    """Where a scalar function stops being defined inside a cell with no other event
    (a phase leaves the search range): bisection to 1e-10 relative."""
    lo, hi = math.log(Pa), math.log(Pb)
    while hi - lo > 1e-10 and not sks.exhausted:
        mid = 0.5 * (lo + hi)
        ok = sks.value(math.exp(mid), key, topo) is not None
        lo, hi = (mid, hi) if ok == defined_at_a else (lo, mid)
    P = math.exp(0.5 * (lo + hi))
    return PressureEvent(P=P, kind="existence", T=None, phases=(), key=key, bracket=hi - lo,
                         note=f"the scalar function {key} stops being defined (a phase leaves "
                              "the search range or its temperature range)")


def _probe_minima(sks, key, topo, seq, known) -> list:
    """A function whose samples dip towards zero without changing sign may cross zero twice
    between them: where a parabola through three samples predicts a sign change, minimise
    it (bounded Brent, at most 40 evaluations) and bracket both zeros."""
    out = []
    for (Pa, va), (Pm, vm), (Pc, vc) in zip(seq[:-2], seq[1:-1], seq[2:]):
        if va is None or vm is None or vc is None:
            continue
        s = _sign(vm)
        if not (_sign(va) == s == _sign(vc) and abs(vm) < abs(va) and abs(vm) < abs(vc)):
            continue
        ua, um, uc = math.log(Pa), math.log(Pm), math.log(Pc)
        A = np.array([[ua**2, ua, 1], [um**2, um, 1], [uc**2, uc, 1]])
        try:
            a2, a1, a0 = np.linalg.solve(A, np.array([va, vm, vc]))
        except np.linalg.LinAlgError:
            continue
        if a2 == 0:
            continue
        u0 = -a1 / (2 * a2)
        if not (ua < u0 < uc) or _sign(a0 + a1 * u0 + a2 * u0**2) == s:
            continue
        if any(e.stands_for(key) and Pa < e.P < Pc for e in known + out):
            continue

        def g(u):
            v = sks.value(math.exp(u), key, topo)
            return math.inf if v is None else s * v
        r = minimize_scalar(g, bounds=(ua, uc), method="bounded",
                            options={"xatol": 1e-10, "maxiter": 40})
        if not (np.isfinite(r.fun) and r.fun < 0):
            continue
        Pmin = math.exp(r.x)
        out.append(_locate_zero(sks, key, topo, Pa, Pmin))
        out.append(_locate_zero(sks, key, topo, Pmin, Pc))
    return out


def _describe(sk) -> str:
    if not sk.branches:
        return "no physical state"
    return ", ".join(b.label.split(" (")[0] for b in sk.branches)


def _topology_changes(sks, a, b, all_cps) -> list:
    """Events where the branches change between pressures a < b: at a known critical
    pressure when the branches on its two sides match, else by bisection (1e-10)."""
    out = []
    cur, tb = a, sks.topology(b)
    for _ in range(6):
        tc = sks.topology(cur)
        found = None
        for cp in sorted(all_cps, key=lambda c: c.P):
            if not (cur < cp.P < b):
                continue
            eta = min([_ETA_TOPOLOGY, 0.25 * math.log(cp.P / cur), 0.25 * math.log(b / cp.P)]
                      + [0.25 * abs(math.log(o.P / cp.P)) for o in all_cps
                         if o.P > 0 and o.P != cp.P])
            left, right = cp.P * (1 - eta), cp.P * (1 + eta)
            if left > cur and sks.topology(left) == tc and sks.topology(right) != tc:
                found = (cp.P, left, right, cp)
                break
        if found is None:
            lo, hi = math.log(cur), math.log(b)
            while hi - lo > 1e-10 and not sks.exhausted:
                mid = 0.5 * (lo + hi)
                lo, hi = (mid, hi) if sks.topology(math.exp(mid)) == tc else (lo, mid)
            found = (math.exp(0.5 * (lo + hi)), math.exp(lo), math.exp(hi), None)
        P, left, right, cp = found
        skl, skr = sks.get(left), sks.get(right)
        physical_cp = cp is not None and cp.physical and cp.kind != "degenerate"
        ev = PressureEvent(
            P=P, kind="critical point" if physical_cp else "branch structure",
            T=cp.T if cp is not None else None, phases=(),
            note=f"branches {_describe(skl)} -> {_describe(skr)}",
            bracket=0.0 if cp is not None else math.log(right / left),
            critical_point=cp, states=(cp.x,) if cp is not None else ())
        out.append(ev)
        cur = right
        if sks.topology(cur) == tb or cur >= b:
            break
    return out


def _margin_zeros(sks, pts, events) -> list:
    """Sign changes (and dips) of every scalar function between consecutive samples of
    equal branch structure, each solved to an event."""
    new = []
    runs = []
    for P in pts:
        t = sks.topology(P)
        if runs and runs[-1][0] == t:
            runs[-1][1].append(P)
        else:
            runs.append((t, [P]))
    for topo, run in runs:
        if topo == ("no state",) or len(run) < 2:
            continue
        ms = [sks.margins(P) for P in run]
        keys = sorted(set().union(*ms), key=repr)
        for key in keys:
            if sks.exhausted:
                return new
            seq = [(P, m[key][0] if key in m else None) for P, m in zip(run, ms)]
            for (Pa, va), (Pb, vb) in zip(seq[:-1], seq[1:]):
                if va is not None and vb is not None:
                    if _sign(va) == _sign(vb):
                        continue
                    if any(e.stands_for(key) and Pa < e.P < Pb for e in events + new):
                        continue
                    new.append(_locate_zero(sks, key, topo, Pa, Pb))
                elif (va is None) != (vb is None):
                    if any(Pa < e.P < Pb for e in events + new):
                        continue  # the event's neighbours (next pass) resolve it
                    new.append(_locate_boundary(sks, key, topo, Pa, Pb, va is not None))
            new.extend(_probe_minima(sks, key, topo, seq, events + new))
    return new


def _scan(sks, lo, hi, samples, all_cps, events, max_passes: int = 6) -> list:
    """Add to ``events`` every event in (lo, hi) revealed by skeletons at ``samples``."""
    pts = sorted(set(float(P) for P in samples if lo <= P <= hi))
    samples = set(pts)
    found = []

    def beside(e, eta):
        for f in (1 - eta, 1 + eta):
            if lo <= e.P * f <= hi:
                samples.add(e.P * f)

    for a, b in zip(pts[:-1], pts[1:]):
        if sks.exhausted:
            break
        if sks.topology(a) != sks.topology(b):
            known = [e for e in events if a < e.P < b and e.kind in
                     ("critical point", "branch structure")]
            new = known or _topology_changes(sks, a, b, all_cps)
            for e in new:
                beside(e, _ETA_TOPOLOGY)
                if e not in events:
                    events.append(e)
                    found.append(e)
    for e in events:  # neighbours of events found before (a local scan of a cell)
        if lo < e.P < hi:
            beside(e, _ETA_TOPOLOGY if e.kind in ("critical point", "branch structure")
                   else _ETA)
    for _ in range(max_passes):
        if sks.exhausted:
            break
        new = _margin_zeros(sks, sorted(samples), events)
        new = [e for e in new if lo < e.P < hi]
        if not new:
            break
        for e in new:
            beside(e, _ETA)
            # one event per coincidence (the three scalar functions of a triple point)
            same = [o for o in events if o.kind == e.kind and
                    abs(math.log(o.P / e.P)) < _COINCIDENT]
            if same:
                same[0].also.append(e.key)
                continue
            events.append(e)
            found.append(e)
    return found


def pressure_events(th: Thermodynamics, lo: float, hi: float, critical_points=None,
                    n_scan: int = 96) -> tuple:
    """Every pressure in (lo, hi) where the structure of the isobars changes (module
    docstring, step 1), from ``n_scan`` log-spaced skeletons plus the neighbours of every
    critical pressure.

    Returns
    -------
    events : list of PressureEvent, by pressure (``relevant`` is decided by
        :func:`phase_diagram`, which compares the isobars on both sides)
    n_skeletons : int
        The number of skeletons evaluated (the cost, as a count).
    """
    search = find_critical_points(th) if critical_points is None else None
    cps = search.physical if search is not None else tuple(critical_points)
    all_cps = search.points if search is not None else cps
    sks = _Skeletons(th, cps)
    events = []
    _scan(sks, lo, hi, _scan_pressures(lo, hi, n_scan, all_cps), all_cps, events)
    events.sort(key=lambda e: e.P)
    return events, sks.count


def _scan_pressures(lo, hi, n, cps) -> list:
    """The log-spaced scan, the neighbours of every critical pressure, and eight pressures
    between each two neighbouring critical pressures: the branches change only at those
    (and at domain edges), so a branch that exists only between two close critical
    pressures is sampled however narrow its interval is."""
    Ps = set(np.geomspace(lo, hi, max(n, 2)).tolist())
    Pcs = sorted({cp.P for cp in cps if lo < cp.P < hi})
    for k, Pc in enumerate(Pcs):
        gaps = [math.log(Pc / q) for q in Pcs[k - 1:k] if q < Pc] + \
               [math.log(q / Pc) for q in Pcs[k + 1:k + 2] if q > Pc]
        for eps in (1e-2, 1e-3):
            eps = min([eps] + [0.25 * g for g in gaps])
            for f in (1 - eps, 1 + eps):
                if lo <= Pc * f <= hi:
                    Ps.add(Pc * f)
    for a, b in zip(Pcs[:-1], Pcs[1:]):
        if b > a * (1 + 1e-12):
            Ps.update(np.geomspace(a, b, 10)[1:-1].tolist())
    return sorted(Ps)


# -- anchors and lines -------------------------------------------------------------------------
def _transitions(iso) -> list:
    return [] if iso is None else [t for t in iso.transitions if t.kind != "second-order"]


def _distance(t: Transition, u: Transition) -> tuple:
    dT = abs(math.log(u.T / t.T)) if t.T > 0 and u.T > 0 else abs(u.T - t.T)
    dx = 0.0
    for a, b in zip(t.states, u.states):
        if math.isnan(a.x) != math.isnan(b.x):
            return math.inf, math.inf
        if not math.isnan(a.x):
            dx = max(dx, abs(math.log(b.x / a.x)))
    return dT, dx


def _match(ta, tb, across_event: bool, ratio: float) -> tuple:
    """Pairs (i, j) of transitions at two neighbouring anchors that belong to one line, and
    the unmatched ones of each side.  With no event between, kind and phases must agree;
    across an event (names may change there) kind, T and states must be continuous."""
    # with no event between, the branches keep their indices and names: the same kind and
    # phases are the same line however far apart the anchors are
    tol_T = max(1e-5, 20 * ratio) if across_event else math.inf
    tol_x = 0.05 + 20 * ratio if across_event else math.inf
    cands = []
    for i, t in enumerate(ta):
        for j, u in enumerate(tb):
            if u.kind != t.kind:
                continue
            if not across_event and (u.from_phase, u.to_phase) != (t.from_phase, t.to_phase):
                continue
            dT, dx = _distance(t, u)
            if dT <= tol_T and dx <= tol_x:
                cands.append((max(dT, dx), i, j))
    pairs, ua, ub = [], set(range(len(ta))), set(range(len(tb)))
    for _, i, j in sorted(cands):
        if i in ua and j in ub:
            pairs.append((i, j))
            ua.discard(i)
            ub.discard(j)
    return pairs, sorted(ua), sorted(ub)


def _assemble(anchors, isos, events):
    """Raw lines: members [(P, transition)] and their end descriptors; marks the events
    where transitions stop or start as relevant; returns the cells where a line ends with no
    event between its anchors."""
    for e in events:
        e.relevant = False
    done, open_, missed = [], [], []
    for k, P in enumerate(anchors):
        ts = _transitions(isos[P])
        if k == 0:
            open_ = [{"members": [(P, t)], "low": ("range", P)} for t in ts]
            continue
        Pp = anchors[k - 1]
        between = [e for e in events if Pp < e.P < P]
        prev = [ln["members"][-1][1] for ln in open_]
        pairs, ua, ub = _match(prev, ts, bool(between), P / Pp - 1)
        if (ua or ub) and between:
            for e in between:
                e.relevant = True
        nxt = []
        for i, j in pairs:
            open_[i]["members"].append((P, ts[j]))
            nxt.append(open_[i])
        for i in ua:
            ln = open_[i]
            ln["high"] = ("event", between) if between else ("missed", Pp, P)
            done.append(ln)
        for j in ub:
            nxt.append({"members": [(P, ts[j])],
                        "low": ("event", between) if between else ("missed", Pp, P)})
        if not between and (ua or ub):
            missed.append((Pp, P))
        open_ = nxt
    for ln in open_:
        ln["high"] = ("range", anchors[-1])
        done.append(ln)
    done.sort(key=lambda ln: (ln["members"][0][0], ln["members"][0][1].T))
    return done, sorted(set(missed))


def _near_anchors(events, lo, hi) -> None:
    """Anchor pressures on both sides of every event (clusters of coincident events share
    them); never beyond a neighbouring event or the range."""
    evs = sorted(events, key=lambda e: e.P)
    for idx, e in enumerate(evs):
        if e.kind == "unexplained":  # its anchors are the ends of its bisection
            continue
        d = _DELTA_CRITICAL if e.kind == "critical point" else _DELTA
        for other in evs[:idx][::-1]:
            gap = math.log(e.P / other.P)
            if gap > _COINCIDENT:
                d = min(d, 0.25 * gap)
                break
        for other in evs[idx + 1:]:
            gap = math.log(other.P / e.P)
            if gap > _COINCIDENT:
                d = min(d, 0.25 * gap)
                break
        left, right = e.P * (1 - d), e.P * (1 + d)
        e.anchors = (left if left > lo else None, right if right < hi else None)


def _bisect_signature(th, cps, isobar, a, b, sig_a) -> tuple:
    """Bisection (1e-10 relative) on the isobar analysis between a and b where its
    transitions differ: the last resort of the local search."""
    lo, hi = math.log(a), math.log(b)
    while hi - lo > 1e-10:
        mid = 0.5 * (lo + hi)
        sig = _signature(isobar(math.exp(mid)))
        lo, hi = (mid, hi) if sig == sig_a else (lo, mid)
    return math.exp(lo), math.exp(hi)


def _signature(iso) -> tuple:
    return tuple((t.kind, t.from_phase, t.to_phase) for t in _transitions(iso))


# -- ends --------------------------------------------------------------------------------------------
def _pick_event(evs, t: Transition):
    rel = [e for e in evs if e.relevant] or list(evs)
    with_T = [e for e in rel if e.T is not None and math.isfinite(e.T)]
    if with_T:
        return min(with_T, key=lambda e: abs(e.T - t.T))
    return rel[0]


def _domain_condition(th, x, P, outward: float) -> str:
    """The state conditions that fail just beyond a domain end x (outward: +1 or -1)."""
    y = x * (1 + outward * 1e-6)
    failed = []
    for name in ("T", "S", "G"):
        if not np.isfinite(th.quantity(name, y, P)):
            failed.append(f"{name} finite")
    for c in th.active_conditions:
        if not bool(th.condition_holds(c.name, y, P)):
            failed.append(c.label())
    return " and ".join(failed) if failed else "the physical-state mask"


def _end_from_event(th, sks, e: PressureEvent, kind: str, t: Transition, side: str) -> dict:
    end = {"P": e.P, "T": e.T if e.T is not None and math.isfinite(e.T) else t.T,
           "event": e.kind, "_event": e}
    if e.kind == "critical point":
        cp = e.critical_point
        xs = [s.x for s in t.states if not math.isnan(s.x)]
        if kind == "first-order" and xs and min(xs) <= cp.x * 1.5 and max(xs) >= cp.x / 1.5:
            end.update(type="critical point", P=cp.P, T=cp.T, _cp=cp)
            return end
        end.update(type="terminal point", T=t.T,
                   branch="a branch taking part appears or disappears here (" + e.note + ")",
                   note="at the pressure of a critical point whose states do not take part")
        return end
    if e.kind == "crossing meets branch end":
        end.update(type="terminal point", branch=f"the {e.phases[0]} branch ends here: the "
                   f"{e.phases[0]}/{e.phases[1]} crossing reaches its end", note=e.note)
        return end
    if e.kind == "branch ends meet":
        # the line sits at the end of one branch; the other one stops existing at its T
        info = _zeroth_order_end(sks, t, t.P) if kind == "zeroth-order" else None
        if info is not None:
            own = t.from_phase if info[0] == "from" else t.to_phase
            other = t.to_phase if info[0] == "from" else t.from_phase
            branch = (f"the {other} branch ends here: its end temperature reaches the "
                      f"transition temperature (the {info[1]} end of the {own} branch)")
        else:
            branch = f"the ends of the {e.phases[0]} and {e.phases[1]} branches meet here"
        end.update(type="terminal point", branch=branch, note=e.note)
        return end
    if e.kind == "triple point":
        end.update(type="triple point", note=e.note)
        return end
    if e.kind == "branch structure":
        # a branch of the line appears or disappears: at a state condition, or no state at all
        P_out = e.anchors[1] if side == "high" else e.anchors[0]
        sk_out = sks.get(P_out) if P_out is not None else None
        if sk_out is not None and not sk_out.branches:
            end.update(type="domain edge", T=t.T,
                       condition=f"no physical state at P {'above' if side == 'high' else 'below'}"
                                 f" {e.P:.10g}", note=e.note)
            return end
        sk_in = sks.get(t.P)
        conds = []
        for s in t.states:
            if math.isnan(s.x):
                continue
            br = next((b for b in sk_in.branches if b.x_min <= s.x <= b.x_max), None)
            if br is None:
                continue
            for x_end, kind_end, out in ((br.x_min, br.ends[0], -1), (br.x_max, br.ends[1], 1)):
                if kind_end == "domain":
                    conds.append(_domain_condition(th, x_end, t.P, out))
        end.update(type="domain edge", T=t.T, note=e.note,
                   condition="; ".join(sorted(set(conds))) if conds
                   else "the branches change here: " + e.note)
        return end
    if e.kind == "existence":
        end.update(type="terminal point", T=t.T,
                   branch="a phase of the line leaves the search range", note=e.note)
        return end
    end.update(type="unexplained", T=t.T, note=e.note)
    return end


# -- densification ---------------------------------------------------------------------------
def _interp_states(line_states, Ps, coord):
    """log x of the two phases interpolated (in ``coord``) at pressures Ps."""
    arr = np.array(sorted(line_states), float)
    c = coord(arr[:, 0])
    order = np.argsort(c)
    out = []
    for col in (1, 2):
        y = np.log(arr[:, col])
        if np.all(np.isnan(y)):
            out.append(np.full(np.shape(Ps), np.nan))
        else:
            ok = np.isfinite(y)
            out.append(np.exp(np.interp(coord(np.asarray(Ps, float)), c[order][ok[order]],
                                        y[order][ok[order]])))
    return out


def _coordinate(cp):
    if cp is None:
        return np.log
    return lambda P: np.sqrt(np.abs(1 - np.asarray(P) / cp.P))


def _oriented(t: Transition) -> tuple:
    return t.states[0].x, t.states[1].x


def _dense_first_order(th, line, members, grid, warnings, isobar):
    """Coexistence points at the pressures ``grid``: Newton seeded from the line's states,
    checked (distinct, stable, near the seed), else the isobar analysis."""
    cp = line.critical_point
    coord = _coordinate(cp)
    g_from, g_to = _interp_states(line.states, grid, coord)
    lo_, hi_ = np.minimum(g_from, g_to), np.maximum(g_from, g_to)
    a, b, ok = coexistence_newton(th, grid, lo_, hi_)
    near = (np.abs(np.log(a / lo_)) < 0.3) & (np.abs(np.log(b / hi_)) < 0.3)
    # where a branch of the line stops (terminal, triple point, domain edge), T(P) has a
    # (P - P_end)^(3/2) term: the Clapeyron step stays well inside.  (Towards a critical
    # point the step stays 1e-3 P; a step that crosses P_c gives no value, as before.)
    # An isolated critical point is a stop too: its lines leave it non-analytically.
    stops = [e["P"] for e in line.ends.values() if e["type"] != "range end" and not (
        e["type"] == "critical point" and getattr(e.get("_cp"), "kind", "") != "isolated")]
    pts, failed = [], []
    for P, x1, x2, good, s1, s2 in zip(grid, a, b, ok & near, lo_, hi_):
        if not good:
            pair = None
            firsts = [t for t in _transitions(isobar(float(P))) if t.kind == "first-order"]
            named = [t for t in firsts if (t.from_phase, t.to_phase) == tuple(line.between)]
            if len(named) == 1:  # the line's own transition (its seeds may be poor, e.g.
                # where one state runs to x -> 0 as the line approaches T = 0)
                pair = tuple(sorted(_oriented(named[0])))
            for t in firsts if pair is None else ():
                q = tuple(sorted(_oriented(t)))
                if max(abs(math.log(q[0] / s1)), abs(math.log(q[1] / s2))) < 0.5:
                    pair = q
                    break
            if pair is None:
                failed.append(float(P))
                continue
            x1, x2 = pair
        dist = min((abs(math.log(P / q)) for q in stops), default=math.inf)
        pts.append(make_point(th, float(P), float(x1), float(x2), checks=True,
                              clapeyron_step=min(1e-3, 0.05 * dist)))
    if failed:
        warnings.append(f"first-order line {line.between[0]}/{line.between[1]}: no coexistence "
                        f"found at {len(failed)} of {len(grid)} pressures (omitted)")
    return pts


def _approach_critical(th, cp, P_last, direction):
    """Coexistence points from P_last towards P_c, geometrically, down to 1e-10; checked
    (equal T, G, equal area) down to 1 - P/P_c = 1e-7.  No Clausius-Clapeyron check: its
    finite-difference step cannot stay on the line this close to P_c."""
    pts = []
    gap = abs(1 - P_last / cp.P)
    for s in np.geomspace(gap, 1e-10, 40)[1:]:
        P = cp.P * (1 - direction * s)
        res = coexistence_near_critical(th, cp.x, cp.P, P)
        if res is None:
            continue
        T, x1, x2 = res
        pts.append(make_point(th, P, x1, x2, checks=s > 1e-7, clapeyron_step=None))
    return pts


def _hawking_page_solve(th, Ps, x):
    """Newton on G(x, P) = G_background(P) in log x; returns T, x, relative residuals."""
    Ps = np.asarray(Ps, float)
    x = np.asarray(x, float).copy()
    for _ in range(60):
        G = th.G(x, Ps) - th.quantity("G_background", x, Ps)
        Gx = -th.S(x, Ps) * th.d("T", "x", x, Ps)
        with np.errstate(all="ignore"):
            step = np.clip(np.nan_to_num(G / Gx / x), -0.3, 0.3)
        x = x * np.exp(-step)
        if np.all(np.abs(step) < 1e-15):
            break
    G = th.G(x, Ps) - th.quantity("G_background", x, Ps)
    resid = np.abs(G) / (np.abs(th.M(x, Ps)) + np.abs(th.T(x, Ps) * th.S(x, Ps)))
    return th.T(x, Ps), x, resid


def _zeroth_order_end(sks, t: Transition, P: float):
    """Which state of a zeroth-order transition sits at a branch end: (which, kind, side)."""
    sk = sks.get(P)
    for which, s in (("from", t.states[0]), ("to", t.states[1])):
        if math.isnan(s.x):
            continue
        for e in sk.ends:
            if abs(e.x / s.x - 1) < 1e-8:
                return which, e.kind, e.side
    return None


def _zeroth_order_at(th, sk, info, seed_from, seed_to):
    """T, x_from, x_to, dG of a zeroth-order line on skeleton ``sk``: the end temperature of
    the branch that ends (the end of the recorded kind and side nearest the seed)."""
    which, kind, side = info
    seed_end, seed_other = (seed_from, seed_to) if which == "from" else (seed_to, seed_from)
    cands = [e for e in sk.ends if e.kind == kind and e.side == side]
    if not cands or not np.isfinite(seed_end):
        return None
    e = min(cands, key=lambda c: abs(math.log(c.x / seed_end)))
    T = e.T
    if np.isfinite(seed_other):
        stable = [b for b in sk.branches if b.stable and b.index != e.branch]
        if not stable:
            return None
        br = min(stable, key=lambda b: 0.0 if b.x_min <= seed_other <= b.x_max else
                 min(abs(math.log(seed_other / b.x_min)), abs(math.log(seed_other / b.x_max))))
        x_other = branch_state_at(th, sk.pressure, br, T)
        if x_other is None:
            return None
        G_other = float(th.G(x_other, sk.pressure))
    else:
        if sk.G_background is None:
            return None
        x_other, G_other = math.nan, sk.G_background
    if which == "from":
        return T, e.x, x_other, G_other - e.G
    return T, x_other, e.x, e.G - G_other


def _refine_event_triple(th, e: PressureEvent):
    xs = [x for x in e.states if x is not None and math.isfinite(x)]
    if len(xs) < 3:
        return None
    res = refine_triple_point(th, e.P, xs)
    if res is None:
        return None
    Pt, x1, x2, x3, r = res
    T = float(np.mean(th.T(np.array([x1, x2, x3]), Pt)))
    order = np.argsort([x1, x2, x3])
    names = [e.phases[i] for i in order] if len(e.phases) == 3 else list(e.phases)
    xs_sorted = tuple(float(v) for v in np.sort([x1, x2, x3]))
    return TriplePoint(T=T, P=Pt, phases=tuple(names), states=xs_sorted,
                       G=float(th.G(x1, Pt)), residual=r)


def _on_preferred_phase(sks, e: PressureEvent) -> bool:
    """Whether a scalar-function event lies on the preferred phase: at its temperature
    (T > 0; the walk of the preferred phase starts at T = 0) no stable phase other than the
    ones it involves has a lower G (skeleton at P_e).  Then the isobars beside it must show a
    change."""
    if e.key is None or e.T is None or not math.isfinite(e.T) or e.T <= 0:
        return False
    sk = sks.get(e.P)
    if e.key[0] == "ends":
        involved = {e.key[1][0], e.key[2][0]}
    elif e.key[0] == "gibbs":
        involved = {e.key[1][0], e.key[2]}
    else:
        involved = {*e.key[1], e.key[2]}
    G = {}
    for k in sk.stable:
        if sk.exists_at(k, e.T):
            g, _ = sk.gibbs(sks.th, k, e.T)
            if g is not None:
                G[k] = g
    mine = [G[k] for k in involved if k in G]
    if not mine:
        return False
    others = [g for k, g in G.items() if k not in involved]
    g = min(mine)
    return not others or g <= min(others) + 1e-12 * (abs(g) + 1e-300)


def _span(e: PressureEvent) -> float:
    d = [abs(math.log(a / e.P)) for a in e.anchors if a is not None]
    return max(d) if d else _DELTA


def _exact_end(end: dict) -> bool:
    """Ends whose (T, P) is known exactly from their event (or is the range end)."""
    return end["type"] in ("range end", "triple point") or (
        end["type"] == "terminal point" and end.get("event") in
        ("crossing meets branch end", "branch ends meet"))


def phase_diagram(th: Thermodynamics, pressure_range=None, n_anchor: int = 48,
                  n_dense: int = 60, n_scan: int = 96, progress=None) -> PhaseDiagram:
    """The phase diagram of a bound family over a pressure range (module docstring).

    Parameters
    ----------
    th : Thermodynamics
    pressure_range : (P1, P2), optional
        P1 < P2, each a number or relative to a critical point (``('0.1Pc', '2Pc')``);
        default: :func:`default_pressure_range`.
    n_anchor : int
        Log-spaced anchor isobars (besides those at the range ends and beside each event).
    n_dense : int
        Points per first-order and Hawking-Page line (a third of it for zeroth-order lines).
    n_scan : int
        Log-spaced skeletons on which the scalar functions are sampled (cheap).
    """
    with counting() as missed:
        pd = _phase_diagram(th, pressure_range, n_anchor, n_dense, n_scan, progress)
    # states whose charge the numerical inverse of a fixed potential could not give (one
    # total for the whole diagram; the anchor isobars' own counts were dropped)
    note = unsolved_warning(missed, numerical_potentials(th.family))
    return replace(pd, warnings=pd.warnings + [note]) if note else pd


def _phase_diagram(th, pressure_range, n_anchor, n_dense, n_scan, progress) -> PhaseDiagram:
    """The body of :func:`phase_diagram` (same arguments)."""
    search = find_critical_points(th)
    cps = search.physical
    lo, hi = resolve_pressure_range(th, pressure_range) if pressure_range is not None \
        else default_pressure_range(th, cps)
    sks = _Skeletons(th, cps)
    events: list = []
    warnings: list = []
    _scan(sks, lo, hi, _scan_pressures(lo, hi, n_scan, search.points), search.points, events)
    isos: dict = {}

    def isobar(P):
        P = float(P)
        if P not in isos:
            try:
                isos[P] = analyze_isobar(th, P, critical_points=cps, warn=False,
                                         report_excluded=False)
            except StateDomainError:
                isos[P] = None
        return isos[P]

    regular = np.geomspace(lo, hi, max(n_anchor, 2))
    for round_ in range(3):
        events.sort(key=lambda e: e.P)
        _near_anchors(events, lo, hi)
        anchors = {float(lo), float(hi)}
        for e in events:
            anchors.update(a for a in e.anchors if a is not None)
        for P in regular:
            if not any(abs(math.log(P / e.P)) <= 2 * _span(e) for e in events):
                anchors.add(float(P))
        anchors = sorted(anchors)
        todo = [P for P in anchors if P not in isos]
        for i, P in enumerate(todo):
            isobar(P)
            if progress:
                progress(i + 1, len(todo))
        raw, missed = _assemble(anchors, isos, events)
        if not missed or round_ == 2:
            break
        for a, b in missed:
            if round_ == 0:  # a denser scan of the cell
                _scan(sks, a, b, np.geomspace(a, b, 24), search.points, events)
            else:  # bisection on the isobar analysis: the end is not explained
                pa, pb = _bisect_signature(th, cps, isobar, a, b, _signature(isobar(a)))
                events.append(PressureEvent(
                    P=math.sqrt(pa * pb), kind="unexplained", T=None, phases=(),
                    note="found by bisection on the isobar analysis; none of the scalar "
                         "functions changes sign here", bracket=math.log(pb / pa),
                    anchors=(pa, pb)))
    for w in (iso.warnings for P, iso in sorted(isos.items()) if iso is not None and P in anchors):
        warnings.extend(m for m in w if UNSOLVED_PREFIX not in m)
    if sks.exhausted:
        warnings.append(f"the event scan stopped after {MAX_SKELETONS} skeletons: events "
                        "may be missing")
    for e in events:
        if not e.relevant and _on_preferred_phase(sks, e):
            d = _span(e)
            warnings.append(
                f"the scalar functions place a {e.kind} on the preferred phase at "
                f"P = {e.P:.12g} (T = {e.T:.12g}; {', '.join(e.phases)}), but the isobar "
                f"analysis at P (1 +- {d:.0e}) does not resolve the change: a structure "
                "narrower than the isobars resolve is missing from the lines")

    lines, triple_points, tp_of = [], [], {}
    for rl in raw:
        members = rl["members"]
        t_mid = members[len(members) // 2][1]
        line = PhaseLine(kind=t_mid.kind, between=(t_mid.from_phase, t_mid.to_phase),
                         points=[], ends={})
        for P, t in members:
            line.states.append((P, *_oriented(t)))
            f, to = t.from_phase, t.to_phase
            if line.phases and line.phases[-1][2:] == (f, to):
                line.phases[-1] = (line.phases[-1][0], P, f, to)
            else:
                if line.phases:  # the names change at the event between the two anchors
                    P_prev = line.phases[-1][1]
                    at = [e.P for e in events if P_prev < e.P < P]
                    cut = at[0] if at else math.sqrt(P_prev * P)
                    line.phases[-1] = (*line.phases[-1][:1], cut, *line.phases[-1][2:])
                    line.phases.append((cut, P, f, to))
                else:
                    line.phases.append((P, P, f, to))
        for side, desc, (Pm, tm) in (("low", rl["low"], members[0]),
                                     ("high", rl["high"], members[-1])):
            if desc[0] == "range":
                end = {"type": "range end", "P": desc[1], "T": tm.T}
            elif desc[0] == "event":
                e = _pick_event(desc[1], tm)
                end = _end_from_event(th, sks, e, line.kind, tm, side)
                if end["type"] == "triple point":
                    if id(e) not in tp_of:
                        tp_of[id(e)] = _refine_event_triple(th, e)
                        if tp_of[id(e)] is not None:
                            triple_points.append(tp_of[id(e)])
                    tp = tp_of[id(e)]
                    if tp is None:
                        end["note"] = "not refined: " + end.get("note", "")
                    else:
                        end.update(P=tp.P, T=tp.T, _tp=tp)
            else:
                a, b = desc[1], desc[2]
                end = {"type": "unexplained", "P": Pm, "T": tm.T,
                       "note": f"ends between the anchors P = {a:.10g} and {b:.10g}; the local "
                               "search found no cause"}
                warnings.append(f"{line.kind} line {line.between[0]}/{line.between[1]}: its "
                                f"{side} end between P = {a:.10g} and {b:.10g} is not explained")
            Ts_line = sorted(t.T for _, t in members if t.T > 0)
            if end["type"] == "unexplained" and Ts_line and \
                    0 <= end["T"] < ZERO_T_FRACTION * Ts_line[len(Ts_line) // 2]:
                end.update(type="zero temperature",
                           note=f"the coexistence temperature falls to T = {end['T']:.3g} "
                                f"({end['T'] / Ts_line[len(Ts_line) // 2]:.1e} of the line's "
                                "median) as the end is approached: the line meets the T = 0 "
                                "axis, where both phases are extremal or limiting states")
            if end["type"] == "unexplained" and desc[0] == "event":
                warnings.append(f"{line.kind} line {line.between[0]}/{line.between[1]} ends at "
                                f"P = {end['P']:.10g}, where no critical, triple or terminal "
                                "point or domain edge was found")
            if "_cp" in end:
                line.critical_point = end["_cp"]
            line.ends[side] = end
        # the ends' pressures bound the name intervals
        line.phases[0] = (line.ends["low"]["P"], *line.phases[0][1:])
        line.phases[-1] = (line.phases[-1][0], line.ends["high"]["P"], *line.phases[-1][2:])
        lines.append(line)
    _name_partners(lines)
    for line, rl in zip(lines, raw):
        _densify(th, sks, line, rl["members"], n_dense, warnings, isobar)
        for e in line.ends.values():
            for k in ("_cp", "_event", "_tp"):
                e.pop(k, None)

    # results resting on the first law, and residuals above their bound, are flagged first
    flagged = list(first_law_warnings(th))
    for line in lines:
        flagged.extend(line_check_warnings(
            f"{line.kind} line {line.between[0]}/{line.between[1]}", line.checks))
    warnings = list(dict.fromkeys(flagged + warnings))
    emit(flagged)
    iso_list = [isos[P] for P in anchors if isos[P] is not None]
    regions = _regions([iso.pressure for iso in iso_list], iso_list)
    separated = {ph for line in lines for ph in line.between}
    for r in regions:
        r["name"] = region_name(r["phase"], r["P_range"], separated, cps)
    graph = build_graph(lines, cps, triple_points, regions, th.family.background_name
                        if th.has("G_background") else None)
    structure = structure_signature(graph, cps, lines)
    simple = _networkx().Graph()
    simple.add_nodes_from(graph.nodes)
    for u, v, dd in graph.edges(data=True):  # one edge per pair, kinds joined
        kinds = sorted({dd["kind"]} | set(simple.edges[u, v]["kind"].split("|"))) \
            if simple.has_edge(u, v) else [dd["kind"]]
        simple.add_edge(u, v, kind="|".join(k for k in kinds if k))
    h = _networkx().weisfeiler_lehman_graph_hash(simple, edge_attr="kind")
    msg = (f"{len(lines)} line(s), {len(cps)} physical critical point(s), "
           f"{len(triple_points)} triple point(s); structure: {structure}")
    return PhaseDiagram(family=th.family.name, parameters=dict(th.values),
                        pressure_range=(lo, hi), lines=lines, critical_points=cps,
                        triple_points=triple_points, regions=regions, graph=graph,
                        structure=structure, structure_hash=h, message=msg, warnings=warnings,
                        events=[e for e in events if e.relevant],
                        admissibility=th.admissibility.to_dict(),
                        ensemble=th.family.ensemble_record(),
                        exclusions=exclusion_summary(th, np.geomspace(lo, hi, N_EXCLUSION_PRESSURES)))


def _name_partners(lines) -> None:
    """At a terminal or triple point, name the other lines that end there."""
    for line in lines:
        for end in line.ends.values():
            e = end.get("_event")
            if e is None or end["type"] not in ("terminal point", "triple point"):
                continue
            partners = [f"{o.kind} line {o.between[0]}/{o.between[1]}" for o in lines
                        if o is not line and any(oe.get("_event") is e for oe in o.ends.values())]
            if partners:
                end["partners"] = partners


def _densify(th, sks, line, members, n_dense, warnings, isobar) -> None:
    lo_end, hi_end = line.ends["low"], line.ends["high"]
    P_lo, P_hi = lo_end["P"], hi_end["P"]
    cp = line.critical_point
    # grid bounds: a critical end is approached by the near-critical solver from the last
    # anchor; any other end is the end itself
    g_lo = members[0][0] if lo_end["type"] == "critical point" else P_lo
    g_hi = members[-1][0] if hi_end["type"] == "critical point" else P_hi
    n = n_dense if line.kind != "zeroth-order" else max(n_dense // 3, 3)
    grid = np.geomspace(g_lo, g_hi, max(n, 2)) if g_hi > g_lo * (1 + 1e-12) else np.array([g_lo])
    keep = np.ones(grid.shape, bool)
    # the end pressure itself only where the line's equations stay regular there
    if lo_end["type"] not in ("range end",) and line.kind != "zeroth-order":
        keep[0] = lo_end["type"] == "critical point"
    if hi_end["type"] not in ("range end",) and line.kind != "zeroth-order":
        keep[-1] = keep[-1] and hi_end["type"] == "critical point"
    if line.kind == "zeroth-order":
        keep[0] = keep[0] and (_exact_end(lo_end) or g_lo == members[0][0])
        keep[-1] = keep[-1] and (_exact_end(hi_end) or g_hi == members[-1][0])
    grid = grid[keep]
    for side, end, (Pm, tm) in (("low", lo_end, members[0]), ("high", hi_end, members[-1])):
        if not _exact_end(end) and end["type"] != "critical point":
            grid = np.unique(np.append(grid, Pm))  # stop at the last anchor: within 1e-7
    grid = np.unique(grid[(grid >= min(P_lo, g_lo)) & (grid <= max(P_hi, g_hi))])

    if line.kind == "first-order":
        zero_ends = []
        pts = _dense_first_order(th, line, members, grid, warnings, isobar)
        for side, end in (("low", lo_end), ("high", hi_end)):
            if end["type"] == "critical point":
                P_edge = members[0][0] if side == "low" else members[-1][0]
                pts += _approach_critical(th, cp, P_edge, 1 if side == "high" else -1)
            elif _exact_end(end) and end["type"] != "range end":
                pair = _end_pair(end, line, members[0 if side == "low" else -1][1])
                if pair is not None and end["T"] > 0:
                    pts.append(make_point(th, end["P"], *sorted(pair), checks=False))
                elif pair is not None:  # the line reaches T = 0: no relative residual there
                    zero_ends.append((end["P"], *sorted(pair)))
        pts.sort(key=lambda p: p.P)
        line.coexistence = pts
        flip = members[0][1].states[0].x > members[0][1].states[1].x
        line.states = _merge_states(line.states, [(p.P, p.x2, p.x1) if flip else
                                                  (p.P, p.x1, p.x2) for p in pts])
        line.points = sorted([(p.T, p.P) for p in pts] + [(0.0, P) for P, _, _ in zero_ends],
                             key=lambda q: q[1])
        line.checks = _line_checks(pts)
        if cp is not None:
            line.states.append((cp.P, cp.x, cp.x))
            line.states.sort()
            if lo_end["type"] == "critical point":
                line.points.insert(0, (cp.T, cp.P))
            if hi_end["type"] == "critical point":
                line.points.append((cp.T, cp.P))
    elif line.kind == "hawking-page":
        seeds = _interp_states(line.states, grid, np.log)
        x0 = np.where(np.isfinite(seeds[0]), seeds[0], seeds[1])
        T, x, resid = _hawking_page_solve(th, grid, x0)
        bh_from = bool(np.isfinite(members[0][1].states[0].x))
        good = resid < 1e-12
        pts = [(float(t), float(P)) for t, P, g in zip(T, grid, good) if g]
        st = [(float(P), float(xx), math.nan) if bh_from else (float(P), math.nan, float(xx))
              for P, xx, g in zip(grid, x, good) if g]
        for end in (lo_end, hi_end):
            if _exact_end(end) and end["type"] != "range end":
                pts.append((end["T"], end["P"]))
        line.points = sorted(pts, key=lambda p: p[1])
        line.states = _merge_states(line.states, st)
        line.checks = {"max_residual_G": float(np.max(resid[good])) if np.any(good) else None}
    else:
        info = None
        for P, t in [members[len(members) // 2]] + members:
            info = _zeroth_order_end(sks, t, P)
            if info is not None:
                break
        if info is None:
            warnings.append(f"zeroth-order line {line.between[0]}/{line.between[1]}: the branch "
                            "end it sits at was not identified; points are the anchors only")
            line.points = [(t.T, P) for P, t in members]
            line.checks = {"max_delta_G": max(abs(t.delta_G) for _, t in members)}
            return
        line.info["end"] = info
        exact = [end for end in (lo_end, hi_end) if _exact_end(end) and end["type"] != "range end"]
        grid = np.array([P for P in grid if not any(P == end["P"] for end in exact)])
        seeds = _interp_states(line.states, grid, np.log)
        pts, st, jumps = [], [], []
        for end in exact:  # the event's own temperature and states, exactly at its pressure
            e = end.get("_event")
            xs = [x for x in (e.states if e is not None else ()) if math.isfinite(x)]
            sf, stt = (float(v[0]) for v in _interp_states(line.states, [end["P"]], np.log))
            pick = [min(xs, key=lambda x: abs(math.log(x / s))) if xs and math.isfinite(s)
                    else math.nan for s in (sf, stt)]
            pts.append((end["T"], end["P"]))
            st.append((end["P"], *pick))
            jumps.append(0.0 if e is not None and e.kind == "crossing meets branch end" else
                         math.nan)
        for P, sf, stt in zip(grid, *seeds):
            res = _zeroth_order_at(th, sks.get(P), info, sf, stt)
            if res is None:
                continue
            T, xf, xt, dG = res
            pts.append((T, float(P)))
            st.append((float(P), xf, xt))
            jumps.append(abs(dG))
        if len(pts) < len(grid) + len(exact):
            warnings.append(f"zeroth-order line {line.between[0]}/{line.between[1]}: "
                            f"{len(grid) + len(exact) - len(pts)} of {len(grid) + len(exact)} "
                            "points not solved (omitted)")
        order = np.argsort([p[1] for p in pts])
        line.points = [pts[i] for i in order]
        line.states = _merge_states(line.states, st)
        finite = [j for j in jumps if math.isfinite(j)]
        line.checks = {"max_delta_G": max(finite) if finite else
                       max(abs(t.delta_G) for _, t in members)}
    for side, end in (("low", lo_end), ("high", hi_end)):
        if end["type"] == "range end" and line.points:
            end["T"] = line.points[0][0] if side == "low" else line.points[-1][0]


def _merge_states(anchors, dense) -> list:
    """The line's states at its anchors and at its dense points, by pressure (one per P)."""
    out = {}
    for P, a, b in list(anchors) + list(dense):
        out[float(P)] = (float(P), float(a), float(b))
    return [out[P] for P in sorted(out)]


def _end_pair(end, line, t):
    """The two coexisting states at an exact (terminal or triple) end of a first-order line."""
    e = end.get("_event")
    if end["type"] == "triple point" and end.get("_tp") is not None:
        xs = list(end["_tp"].states)
    elif e is not None and e.states:
        xs = [x for x in e.states if x is not None and math.isfinite(x)]
    else:
        return None
    ref = [s.x for s in t.states]
    if len(xs) < 2 or any(math.isnan(r) for r in ref):
        return None
    pick = []
    for r in ref:
        c = min((x for x in xs if x not in pick), key=lambda x: abs(math.log(x / r)))
        pick.append(c)
    return tuple(pick) if abs(math.log(pick[0] / pick[1])) > 1e-6 else None


def line_transition_at(th: Thermodynamics, line: PhaseLine, P: float, critical_points=()):
    r"""The line's transition at pressure P, solved from its own equations, seeded from its
    states (interpolated in log P, or in sqrt|1 - P/P_c| towards a critical end):

    * first order: T(x_1, P) = T(x_2, P), G(x_1, P) = G(x_2, P) (vectorised Newton of
      :mod:`bhchem.analysis.coexistence`; the near-critical solver within 1e-3 of P_c);
    * Hawking-Page: G(x, P) = G_background(P) (Newton in log x, G_x = -S T_x);
    * zeroth order: T_x(x, P) = 0 at the spinodal (or the domain edge) where the branch ends,
      from the skeleton (:func:`bhchem.analysis.isobar.isobar_skeleton`).

    Independent of :func:`bhchem.analysis.isobar.analyze_isobar` (no temperature grid, no walk).

    Returns
    -------
    dict or None
        ``kind``, ``from``, ``to`` (the phases' names at P), ``T``, ``P``, ``x_from``,
        ``x_to`` (NaN for the background phase); None outside the line's pressure interval or
        when the solve does not converge.
    """
    lo, hi = line.ends["low"]["P"], line.ends["high"]["P"]
    if not (lo <= P <= hi) or not line.states:
        return None
    f, to = line.phases_at(P)
    cp = line.critical_point
    sf, st = (float(v[0]) for v in _interp_states(line.states, [P], _coordinate(cp)))
    if line.kind == "first-order":
        x1, x2 = sorted((sf, st))
        res = None
        if cp is not None and abs(1 - P / cp.P) < 1e-3:
            res = coexistence_near_critical(th, cp.x, cp.P, P)
        if res is not None:
            T, a, b = res
        else:
            a, b, ok = coexistence_newton(th, np.array([P]), np.array([x1]), np.array([x2]))
            a, b = float(a[0]), float(b[0])
            if not ok[0] or abs(math.log(a / x1)) > 0.3 or abs(math.log(b / x2)) > 0.3:
                return None
            T = 0.5 * float(th.T(a, P) + th.T(b, P))
        xf, xt = (a, b) if sf < st else (b, a)
    elif line.kind == "hawking-page":
        seed = sf if math.isfinite(sf) else st
        T, x, r = _hawking_page_solve(th, [P], [seed])
        if not r[0] < 1e-12:
            return None
        T = float(T[0])
        xf, xt = (float(x[0]), math.nan) if math.isfinite(sf) else (math.nan, float(x[0]))
    else:
        info = line.info.get("end")
        if info is None:
            return None
        res = _zeroth_order_at(th, isobar_skeleton(th, P, critical_points), info, sf, st)
        if res is None:
            return None
        T, xf, xt, _ = res
    return {"kind": line.kind, "from": f, "to": to, "T": float(T), "P": float(P),
            "x_from": float(xf), "x_to": float(xt)}


def diagram_transitions_at(th: Thermodynamics, pd: PhaseDiagram, P: float) -> list:
    """:func:`line_transition_at` for every line of the diagram that reaches P, by T; a line
    whose solve fails there is listed with ``T = None`` and a note (never dropped)."""
    out = []
    for ln in pd.lines_at(P):
        r = line_transition_at(th, ln, P, pd.critical_points)
        if r is None:
            f, to = ln.phases_at(P)
            r = {"kind": ln.kind, "from": f, "to": to, "T": None, "P": float(P),
                 "note": "the line's equations did not converge here"}
        out.append(r)
    return sorted(out, key=lambda o: (o["T"] is None, o["T"] or 0.0))


# -- triple points ----------------------------------------------------------------------------
def refine_triple_point(th, P, xs, max_iter: int = 50):
    """Three states with equal T and G at one pressure: Newton on (log P, log x_i).

    Returns (P, x1, x2, x3, residual) or None.
    """
    u = np.log(np.array([P, *xs], float))
    for _ in range(max_iter):
        P, x = math.exp(u[0]), np.exp(u[1:])
        T = th.T(x, P)
        G = th.G(x, P)
        S = th.S(x, P)
        V = th.V(x, P)
        Tx = th.d("T", "x", x, P) * x
        TP = th.d("T", "P", x, P) * P
        GP = (V - S * th.d("T", "P", x, P)) * P
        Gx = -S * Tx
        F = np.array([T[0] - T[1], T[1] - T[2], G[0] - G[1], G[1] - G[2]])
        J = np.zeros((4, 4))
        J[0] = [TP[0] - TP[1], Tx[0], -Tx[1], 0]
        J[1] = [TP[1] - TP[2], 0, Tx[1], -Tx[2]]
        J[2] = [GP[0] - GP[1], Gx[0], -Gx[1], 0]
        J[3] = [GP[1] - GP[2], 0, Gx[1], -Gx[2]]
        try:
            step = np.linalg.solve(J, -F)
        except np.linalg.LinAlgError:
            return None
        m = np.max(np.abs(step))
        if m > 0.2:
            step *= 0.2 / m
        u = u + step
        if m < 1e-15:
            break
    P, x = math.exp(u[0]), np.exp(u[1:])
    T, G, S = th.T(x, P), th.G(x, P), th.S(x, P)
    res = max(float(np.ptp(T) / np.mean(T)),
              float(np.ptp(G) / (np.max(np.abs(G)) + np.max(np.abs(T * S)))))
    if not np.isfinite(res) or res > 1e-10:
        return None
    return P, *x.tolist(), res


# -- the diagram ---------------------------------------------------------------------------
def default_pressure_range(th: Thermodynamics, cps) -> tuple:
    """1e-3 of the lowest to 3x the highest physical critical pressure; else around the
    family's typical pressure."""
    Pcs = [cp.P for cp in cps]
    if Pcs:
        return (1e-3 * min(Pcs), 3.0 * max(Pcs))
    P0 = th.typical_pressure()
    return (1e-3 * P0, 1e2 * P0)



def takes_part_in_transition(th: Thermodynamics, cp, eps: float = 1e-4) -> bool | None:
    """Whether a critical point lies on the globally preferred branch: just off P_c, on
    the side where the isobar has a loop, the preferred phase has a first-order
    transition whose coexisting states straddle x_c and whose T tends to T_c.
    None for degenerate or unphysical points."""
    if cp.kind == "degenerate" or not cp.physical:
        return None
    if cp.kind == "isolated":
        # every isotherm passes through the isolated point, and the lines leaving it do not
        # follow the square-root law the near-critical solver assumes: on either side, a
        # first-order transition whose states straddle x_c at 1 - P/P_c = 1e-4 and 1e-7,
        # with |T - T_c| shrinking by at least half between the two, ends at the point
        for side in (-1, 1):
            gaps = []
            for e in (eps, eps * 1e-3):
                iso = analyze_isobar(th, cp.P * (1 + side * e), warn=False,
                                     report_excluded=False)
                gap = [abs(t.T - cp.T) for t in iso.transitions if t.kind == "first-order"
                       and _straddles(t, cp.x)]
                gaps.append(min(gap) if gap else None)
            if None not in gaps and gaps[1] <= 0.5 * gaps[0]:
                return True
        return False
    side = loop_side(th, cp)
    P = cp.P * (1 + side * eps)
    res = coexistence_near_critical(th, cp.x, cp.P, P)
    if res is None:
        return False
    T, x1, x2 = res
    iso = analyze_isobar(th, P, warn=False, report_excluded=False)
    for t in iso.transitions:
        if t.kind == "first-order" and abs(t.T - T) <= 1e-8 * T:
            return True
    return False


def _straddles(t, x: float) -> bool:
    """Whether the two coexisting states of a transition lie on either side of x."""
    xs = [st.x for st in t.states if not math.isnan(st.x)]
    return len(xs) == 2 and min(xs) < x < max(xs)


def _line_checks(pts: list[CoexistencePoint]) -> dict:
    def mx(vals):
        vals = [v for v in vals if v is not None and np.isfinite(v)]
        return float(max(vals)) if vals else None
    return {"max_residual_T": mx([p.residual_T for p in pts]),
            "max_residual_G": mx([p.residual_G for p in pts]),
            "max_equal_area_residual": mx([p.equal_area_residual for p in pts]),
            "max_clapeyron_residual": mx([p.clapeyron_residual for p in pts]),
            "n_points": len(pts)}



def region_name(phase: str, P_range, separated, critical_points) -> str:
    """What a region of the phase diagram is called, in the text and the figures alike.

    A phase that no line separates from another and that lies above a critical point
    (its lowest pressure at or above the lowest critical pressure) is the continuation of
    the phases that meet there, so it is called ``'supercritical'`` (an isobar there has one
    branch, which the isobar analysis labels ``'black hole'`` or ``'fluid'``); every other
    region keeps its phase's name.

    Parameters
    ----------
    phase : str
        The phase preferred in the region (as the isobars label it).
    P_range : (float, float)
        Pressures over which it is preferred.
    separated : set of str
        Phases that some line of the diagram separates from another.
    critical_points : sequence of CriticalPoint
        The diagram's critical points.
    """
    P_crit = [cp.P for cp in critical_points]
    if phase not in separated and P_crit and P_range[0] >= min(P_crit) * (1 - 1e-6):
        return "supercritical"
    return phase


def _regions(anchors, isobars) -> list:
    out = {}
    for P, iso in zip(anchors, isobars):
        for lo, hi, ph in iso.preferred:
            if hi <= lo:
                continue
            r = out.setdefault(ph, {"phase": ph, "P_range": [P, P], "sample": None})
            r["P_range"][0] = min(r["P_range"][0], P)
            r["P_range"][1] = max(r["P_range"][1], P)
            width = hi - lo
            if r["sample"] is None or width > r["_w"]:
                r["sample"] = [0.5 * (lo + min(hi, lo * 10 if lo > 0 else hi)), P]
                r["_w"] = width
    for r in out.values():
        r.pop("_w", None)
    return list(out.values())


# -- the phase graph ---------------------------------------------------------------------------
def build_graph(lines, cps, triple_points, regions, background=None) -> nx.MultiGraph:
    """Phases as nodes, lines as edges (kind, ends), special points as attributes."""
    g = _networkx().MultiGraph()
    for r in regions:
        g.add_node(r["phase"], kind="background" if r["phase"] == background else "black hole")
    for line in lines:
        a, b = line.between
        for n in (a, b):
            if n not in g:
                g.add_node(n, kind="background" if n == background else "black hole")
        g.add_edge(a, b, kind=line.kind, ends=(line.ends["low"]["type"], line.ends["high"]["type"]))
    # the single supercritical phase is continuous with the phases of every line that
    # ends at a critical point (one can go around the end): a 'continuity' edge
    single = [n for n in g.nodes if n in ("black hole", "fluid")]
    for line in lines:
        if "critical point" in (line.ends["low"]["type"], line.ends["high"]["type"]):
            for s in single:
                for n in line.between:
                    if not g.has_edge(s, n):
                        g.add_edge(s, n, kind="supercritical-continuity",
                                   ends=("critical point", "critical point"))
    g.graph["critical_points"] = [(cp.T, cp.P, cp.kind) for cp in cps]
    g.graph["triple_points"] = [(tp.T, tp.P, tp.phases) for tp in triple_points]
    for tp in triple_points:
        for ph in tp.phases:
            if ph in g:
                g.nodes[ph].setdefault("triple_points", []).append((tp.T, tp.P))
    return g


def supercritical_connection(g: nx.MultiGraph, a: str, b: str) -> bool:
    """Can phases a and b be joined without crossing a line?  True when a chain of lines
    between them each ends at a critical point (go around it)."""
    h = _networkx().Graph()
    h.add_nodes_from(g.nodes)
    for u, v, data in g.edges(data=True):
        if "critical point" in data.get("ends", ()) and data["kind"] != "zeroth-order":
            h.add_edge(u, v)
    return a in h and b in h and _networkx().has_path(h, a, b)


def distinct_phases(g: nx.MultiGraph) -> int:
    """Number of phases that cannot be joined around critical points."""
    h = _networkx().Graph()
    h.add_nodes_from(g.nodes)
    for u, v, data in g.edges(data=True):
        if "critical point" in data.get("ends", ()):
            h.add_edge(u, v)
    return _networkx().number_connected_components(h)


def phases_at_triple_points(g: nx.MultiGraph) -> list:
    """[(T, P, phases)] for every triple point."""
    return list(g.graph.get("triple_points", []))


def structure_signature(g: nx.MultiGraph, cps, lines) -> str:
    """A readable classification of the diagram (see module docstring)."""
    feats = set()
    kinds = [line.kind for line in lines]
    if "hawking-page" in kinds:
        feats.add("hawking-page")
    if any(line.kind == "first-order" and "critical point" in
           (line.ends["low"]["type"], line.ends["high"]["type"]) for line in lines):
        feats.add("vdw-like")
    if "zeroth-order" in kinds:
        feats.add("reentrant")
    if g.graph.get("triple_points"):
        feats.add("triple-point")
    if any(cp.kind == "isolated" for cp in cps):
        feats.add("isolated-critical-point")
    if sum(1 for cp in cps if cp.kind != "degenerate") >= 2:
        feats.add("multiple-critical-points")
    if not feats and "first-order" in kinds:
        feats.add("first-order")
    return "+".join(sorted(feats)) if feats else "no-transition"


def same_structure(g1: nx.MultiGraph, g2: nx.MultiGraph) -> bool:
    """Whether two phase graphs are isomorphic with matching line kinds."""
    return _networkx().is_isomorphic(g1, g2, edge_match=lambda a, b: sorted(x["kind"] for x in a.values())
                            == sorted(x["kind"] for x in b.values()))
