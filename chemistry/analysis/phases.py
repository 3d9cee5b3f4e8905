r"""The phase diagram over a pressure range, and the phase graph.

Algorithm (family-agnostic):

1. *Anchors*: the isobar analysis (:mod:`bhchem.analysis.isobar`) at logarithmically
   spaced pressures (plus pressures just off every critical pressure) lists the
   transitions of the globally preferred phase at each.
2. *Lines*: transitions at neighbouring anchors are joined into one line when they
   have the same kind and their states are continuous (|log x| and |log T| change
   by less than 0.5): so a line keeps its identity when branch names change.
3. *Densify*: first-order lines are recomputed on a dense pressure grid by the
   vectorised Newton solver of :mod:`bhchem.analysis.coexistence` (continuation from
   the anchors), and approach a critical end by the near-critical solver down to
   1 - P/P_c = 1e-10; Hawking-Page lines by Newton on G(x, P) = G_background(P).
4. *Ends*: each end is a critical point (a physical critical pressure lies in the
   gap and the states merge), a triple point (another line ends or begins in the
   same gap: three states with equal T, P, G, refined jointly by Newton on
   T1 = T2 = T3, G1 = G2 = G3 to machine precision), a terminal point (a
   zeroth-order line meets a first-order line), or the end of the requested range.

The phase graph (networkx MultiGraph) has the phases as nodes (stable branches
named by size order, and the background phase) and one edge per line, with its
kind and ends; triple points and critical points are graph attributes.  Its
*structure signature* names the features present (``no-transition``,
``hawking-page``, ``vdw-like``, ``reentrant``, ``triple-point``,
``isolated-critical-point``, ``multiple-critical-points``) and carries a
Weisfeiler-Lehman hash of the graph, so two diagrams can be compared.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import networkx as nx
import numpy as np

from bhchem.analysis.coexistence import (CoexistencePoint, coexistence_curve, coexistence_near_critical,
                          make_point)
from bhchem.core.compiled import Thermodynamics
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.isobar import IsobarResult, Transition, analyze_isobar


@dataclass
class PhaseLine:
    """A transition line in the P-T plane."""

    kind: str
    between: tuple
    points: list  # [(T, P)] in increasing P
    ends: dict  # {'low': {...}, 'high': {...}}
    coexistence: list = field(default_factory=list)  # CoexistencePoint for first-order lines
    checks: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {"kind": self.kind, "between": list(self.between),
                "points": [[float(T), float(P)] for T, P in self.points],
                "ends": self.ends, "checks": self.checks}


@dataclass(frozen=True)
class TriplePoint:
    T: float
    P: float
    phases: tuple
    states: tuple  # x of each phase
    G: float
    residual: float


@dataclass
class PhaseDiagram:
    family: str
    parameters: dict
    pressure_range: tuple
    lines: list
    critical_points: tuple
    triple_points: list
    regions: list
    graph: nx.MultiGraph
    structure: str
    structure_hash: str
    message: str
    warnings: list = field(default_factory=list)


# -- anchors and line assembly --------------------------------------------------------
def _anchor_pressures(lo, hi, n, cps):
    Ps = set(np.geomspace(lo, hi, n).tolist())
    for cp in cps:
        for f in (1 - 1e-2, 1 - 1e-3, 1 + 1e-3, 1 + 1e-2):
            if lo <= cp.P * f <= hi:
                Ps.add(cp.P * f)
    return sorted(Ps)


def _key_states(t: Transition):
    xs = [s.x for s in t.states]
    return xs


def _continuous(t1: Transition, t2: Transition) -> bool:
    if t1.kind != t2.kind:
        return False
    if abs(math.log(t2.T / t1.T)) > 0.5:
        return False
    for a, b in zip(t1.states, t2.states):
        if math.isnan(a.x) != math.isnan(b.x):
            return False
        if not math.isnan(a.x) and abs(math.log(b.x / a.x)) > 0.5:
            return False
    return True


def _assemble_lines(anchors, isobars):
    open_lines = []  # each: list of (k, transition)
    closed = []
    for k, iso in enumerate(isobars):
        used = set()
        next_open = []
        for line in open_lines:
            k_last, t_last = line[-1]
            match = None
            for i, t in enumerate(iso.transitions):
                if i in used or t.kind == "second-order":
                    continue
                if _continuous(t_last, t):
                    match = i
                    break
            if match is None:
                closed.append(line)
            else:
                used.add(match)
                line.append((k, iso.transitions[match]))
                next_open.append(line)
        for i, t in enumerate(iso.transitions):
            if i not in used and t.kind != "second-order":
                next_open.append([(k, t)])
        open_lines = next_open
    return closed + open_lines


# -- densification ------------------------------------------------------------------------
def _dense_first_order(th, members, anchors, n_dense, cp=None, ends=None):
    """The line on a dense pressure grid between its ends (terminal and triple points
    located by bisection) or, otherwise, its first and last anchors."""
    ks = [k for k, _ in members]
    P0, P1 = anchors[ks[0]], anchors[ks[-1]]
    if ends:
        if ends["low"]["type"] in ("terminal point", "triple point"):
            P0 = min(P0, ends["low"]["P"] * (1 + 1e-9))
        if ends["high"]["type"] in ("terminal point", "triple point"):
            P1 = max(P1, ends["high"]["P"] * (1 - 1e-9))
    Ps = np.geomspace(P0, P1, n_dense) if len(ks) > 1 else np.array([P0])
    curve = coexistence_curve(th, Ps, critical_point=cp, checks=True)
    # beyond the anchors (towards a triple or terminal point) a Newton-solved pair may be a
    # metastable continuation of the line: keep it only if the preferred phase has it
    a_lo, a_hi = anchors[ks[0]], anchors[ks[-1]]
    pts = []
    for p in curve.points:
        if a_lo <= p.P <= a_hi or _preferred_transition_at(th, p):
            pts.append(p)
    return pts, curve.failed_pressures


def _preferred_transition_at(th, p) -> bool:
    iso = analyze_isobar(th, p.P)
    return any(t.kind == "first-order" and abs(t.T - p.T) <= 1e-9 * p.T for t in iso.transitions)


def _dense_zeroth_order(th, members, anchors, ends, n):
    """A zeroth-order line on a denser pressure grid between its (bisected) ends: the
    transition of the same kind continuous with the anchors' one at each pressure."""
    lo = ends["low"].get("P", anchors[members[0][0]])
    hi = ends["high"].get("P", anchors[members[-1][0]])
    lo, hi = min(lo, hi), max(lo, hi)
    pts = [(t.T, anchors[k]) for k, t in members]
    jumps = [abs(t.delta_G) for _, t in members]
    ref = members[len(members) // 2][1]
    if hi > lo * (1 + 1e-9):
        for P in np.geomspace(lo, hi, max(n, 3))[1:-1]:
            iso = analyze_isobar(th, P)
            cand = [u for u in iso.transitions if u.kind == ref.kind and
                    {u.from_phase, u.to_phase} == {ref.from_phase, ref.to_phase}]
            if cand:
                u = min(cand, key=lambda u: abs(math.log(u.T / ref.T)))
                pts.append((u.T, P))
                jumps.append(abs(u.delta_G))
    pts.sort(key=lambda p: p[1])
    return pts, jumps


def _approach_critical(th, cp, P_last, direction):
    """Coexistence points from P_last towards P_c, geometrically, down to 1e-10."""
    pts = []
    gap = abs(1 - P_last / cp.P)
    for s in np.geomspace(gap, 1e-10, 40)[1:]:
        P = cp.P * (1 - direction * s)
        res = coexistence_near_critical(th, cp.x, cp.P, P)
        if res is None:
            continue
        T, x1, x2 = res
        pts.append(make_point(th, P, x1, x2, checks=s > 1e-7))
    return pts


def _dense_hawking_page(th, members, anchors, n_dense):
    ks = [k for k, _ in members]
    Ps_anchor = np.array([anchors[k] for k in ks])
    xs = np.array([[s.x for s in t.states if not math.isnan(s.x)][0] for _, t in members])
    Ps = np.geomspace(Ps_anchor[0], Ps_anchor[-1], max(n_dense, 2)) if len(ks) > 1 else Ps_anchor
    x = np.exp(np.interp(np.log(Ps), np.log(Ps_anchor), np.log(xs)))
    for _ in range(60):
        G = th.G(x, Ps) - th.quantity("G_background", x, Ps)
        Gx = -th.S(x, Ps) * th.d("T", "x", x, Ps)
        step = np.clip(G / Gx / x, -0.3, 0.3)
        x = x * np.exp(-step)
        if np.all(np.abs(step) < 1e-15):
            break
    G = th.G(x, Ps) - th.quantity("G_background", x, Ps)
    resid = np.abs(G) / (np.abs(th.M(x, Ps)) + np.abs(th.T(x, Ps) * th.S(x, Ps)))
    T = th.T(x, Ps)
    return [(float(t), float(p)) for t, p, r in zip(T, Ps, resid) if r < 1e-12], \
        float(np.max(resid)) if resid.size else 0.0


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


def phase_diagram(th: Thermodynamics, pressure_range=None, n_anchor: int = 48,
                  n_dense: int = 60, progress=None) -> PhaseDiagram:
    """The phase diagram of a bound family over a pressure range (module docstring)."""
    search = find_critical_points(th)
    cps = search.physical
    lo, hi = pressure_range if pressure_range else default_pressure_range(th, cps)
    anchors = _anchor_pressures(lo, hi, n_anchor, cps)
    isobars = []
    warnings = []
    for i, P in enumerate(anchors):
        isobars.append(analyze_isobar(th, P, critical_points=cps))
        warnings.extend(isobars[-1].warnings)
        if progress:
            progress(i + 1, len(anchors))
    raw = _assemble_lines(anchors, isobars)
    lines, triple_points = [], []
    ends_by_gap = {}
    for members in raw:
        k0, k1 = members[0][0], members[-1][0]
        ends_by_gap.setdefault(("low", k0), []).append(members)
        ends_by_gap.setdefault(("high", k1), []).append(members)

    for members in raw:
        k0, k1 = members[0][0], members[-1][0]
        t_mid = members[len(members) // 2][1]
        kind = t_mid.kind
        between = (t_mid.from_phase, t_mid.to_phase)
        ends = {"low": _end(th, members, "low", k0, anchors, cps, raw),
                "high": _end(th, members, "high", k1, anchors, cps, raw)}
        line = PhaseLine(kind=kind, between=between, points=[], ends=ends)
        if kind == "first-order":
            cp_end = ends["high"].get("_cp") or ends["low"].get("_cp")
            pts, failed = _dense_first_order(th, members, anchors, n_dense, cp_end, ends)
            if failed:
                warnings.append(f"first-order line {between[0]}/{between[1]}: no coexistence "
                                f"found at {len(failed)} of {n_dense} pressures (omitted)")
            for side in ("low", "high"):
                if ends[side]["type"] == "critical point":
                    cp = ends[side]["_cp"]
                    P_edge = anchors[k0] if side == "low" else anchors[k1]
                    direction = 1 if side == "high" else -1
                    pts += _approach_critical(th, cp, P_edge, direction)
            pts.sort(key=lambda p: p.P)
            line.coexistence = pts
            line.points = [(p.T, p.P) for p in pts]
            line.checks = _line_checks(pts)
        elif kind == "hawking-page":
            line.points, resid = _dense_hawking_page(th, members, anchors, n_dense)
            line.checks = {"max_residual_G": resid}
        else:
            line.points, jumps = _dense_zeroth_order(th, members, anchors, ends, n_dense // 3)
            line.checks = {"max_delta_G": max(jumps)}
        for side in ("low", "high"):
            e = ends[side]
            if e["type"] == "critical point":
                cp = e.pop("_cp")
                if side == "high":
                    line.points.append((cp.T, cp.P))
                else:
                    line.points.insert(0, (cp.T, cp.P))
            e.pop("_cp", None)
            if e["type"] == "triple point":
                tp = e.get("_tp")
                if tp is not None and not any(abs(tp.P - q.P) < 1e-9 * tp.P for q in triple_points):
                    triple_points.append(tp)
                e.pop("_tp", None)
        lines.append(line)

    regions = _regions(anchors, isobars)
    graph = build_graph(lines, cps, triple_points, regions, th.family.background_name
                        if th.has("G_background") else None)
    structure = structure_signature(graph, cps, lines)
    simple = nx.Graph()
    simple.add_nodes_from(graph.nodes)
    for u, v, dd in graph.edges(data=True):  # one edge per pair, kinds joined
        kinds = sorted({dd["kind"]} | set(simple.edges[u, v]["kind"].split("|"))) \
            if simple.has_edge(u, v) else [dd["kind"]]
        simple.add_edge(u, v, kind="|".join(k for k in kinds if k))
    h = nx.weisfeiler_lehman_graph_hash(simple, edge_attr="kind")
    msg = (f"{len(lines)} line(s), {len(cps)} physical critical point(s), "
           f"{len(triple_points)} triple point(s); structure: {structure}")
    return PhaseDiagram(family=th.family.name, parameters=dict(th.values),
                        pressure_range=(lo, hi), lines=lines, critical_points=cps,
                        triple_points=triple_points, regions=regions, graph=graph,
                        structure=structure, structure_hash=h, message=msg, warnings=warnings)


def takes_part_in_transition(th: Thermodynamics, cp, eps: float = 1e-4) -> bool | None:
    """Whether a critical point lies on the globally preferred branch: just off P_c, on
    the side where the isobar has a loop, the preferred phase has a first-order
    transition whose coexisting states straddle x_c and whose T tends to T_c.
    None for degenerate or unphysical points."""
    from bhchem.analysis.critical import loop_side
    if cp.kind == "degenerate" or not cp.physical:
        return None
    side = loop_side(th, cp)
    P = cp.P * (1 + side * eps)
    res = coexistence_near_critical(th, cp.x, cp.P, P)
    if res is None:
        return False
    T, x1, x2 = res
    iso = analyze_isobar(th, P)
    for t in iso.transitions:
        if t.kind == "first-order" and abs(t.T - T) <= 1e-8 * T:
            return True
    return False


def _line_checks(pts: list[CoexistencePoint]) -> dict:
    def mx(vals):
        vals = [v for v in vals if v is not None and np.isfinite(v)]
        return float(max(vals)) if vals else None
    return {"max_residual_T": mx([p.residual_T for p in pts]),
            "max_residual_G": mx([p.residual_G for p in pts]),
            "max_equal_area_residual": mx([p.equal_area_residual for p in pts]),
            "max_clapeyron_residual": mx([p.clapeyron_residual for p in pts]),
            "n_points": len(pts)}


def _end(th, members, side, k, anchors, cps, raw) -> dict:
    n = len(anchors)
    edge = k == 0 if side == "low" else k == n - 1
    _, t = members[0] if side == "low" else members[-1]
    if edge:
        return {"type": "range end", "P": anchors[k], "T": t.T}
    P_in, P_out = anchors[k], anchors[k - 1] if side == "low" else anchors[k + 1]
    lo_gap, hi_gap = min(P_in, P_out), max(P_in, P_out)
    # a critical point in the gap whose state the line's two states approach
    if t.kind == "first-order":
        for cp in cps:
            if lo_gap <= cp.P <= hi_gap:
                xs = [s.x for s in t.states]
                if min(xs) <= cp.x * 1.5 and max(xs) >= cp.x / 1.5:
                    return {"type": "critical point", "P": cp.P, "T": cp.T, "_cp": cp}
    # locate the end precisely (bisection in P on "does this transition still exist"),
    # then look for a triple point there: three states with equal T and G
    P_end, t_end, iso_end = _bisect_end(th, t, P_in, P_out)
    if t.kind in ("first-order", "hawking-page"):
        tp = _triple_at(th, t_end, iso_end)
        if tp is not None:
            return {"type": "triple point", "P": tp.P, "T": tp.T, "_tp": tp}
    # another line ending or starting in the same gap: terminal point
    others = []
    for m in raw:
        if m is members:
            continue
        for kk, tt in (m[0], m[-1]):
            if lo_gap <= anchors[kk] <= hi_gap:
                others.append((m, tt))
    if others:
        kinds = {tt.kind for _, tt in others} | {t.kind}
        if kinds <= {"first-order", "hawking-page"}:
            tp = _triple_from(th, t, [tt for _, tt in others], P_in)
            if tp is not None:
                return {"type": "triple point", "P": tp.P, "T": tp.T, "_tp": tp}
            return {"type": "triple point", "P": 0.5 * (lo_gap + hi_gap), "T": t.T,
                    "note": "not refined"}
        return {"type": "terminal point", "P": P_end, "T": t_end.T,
                "note": "where a zeroth-order line meets another line (located by bisection "
                        "in P to 1e-9)"}
    return {"type": "vanishes", "P": P_end, "T": t_end.T,
            "note": "the transition disappears here without meeting another line"}


def _bisect_end(th, t, P_in, P_out, rel: float = 1e-9, max_iter: int = 60):
    """Bisection (geometric) between an anchor where transition ``t`` exists and one where
    it does not; returns (P, transition, isobar) on the existing side, closest to the end."""
    best_iso = None
    lo, hi = P_in, P_out
    t_cur = t
    for _ in range(max_iter):
        mid = math.sqrt(lo * hi)
        iso = analyze_isobar(th, mid)
        match = next((u for u in iso.transitions if _continuous(t_cur, u)), None)
        if match is not None:
            lo, t_cur, best_iso = mid, match, iso
        else:
            hi = mid
        if abs(hi / lo - 1) < rel:
            break
    if best_iso is None:
        best_iso = analyze_isobar(th, P_in)
    return lo, t_cur, best_iso


def _triple_at(th, t, iso):
    """A triple point next to transition t on isobar ``iso``: another transition of the
    isobar (or a crossing of the swallowtail) at nearly the same T supplies the third state."""
    cands = [s.x for s in t.states if not math.isnan(s.x)]
    for u in iso.transitions:
        if u is t or abs(u.T - t.T) > 1e-3 * t.T:
            continue
        cands += [s.x for s in u.states if not math.isnan(s.x)]
    for c in iso.crossings:
        if abs(c.T - t.T) <= 1e-3 * t.T:
            for br in iso.branches:
                if br.label in c.branches and br.stable:
                    from bhchem.analysis.isobar import _x_of_T
                    x = _x_of_T(th, iso.pressure, br, c.T)
                    if x is not None:
                        cands.append(x)
    xs = sorted(set(round(math.log(x), 6) for x in cands))
    if len(xs) < 3:
        return None
    pick = [math.exp(xs[0]), math.exp(xs[len(xs) // 2]), math.exp(xs[-1])]
    res = refine_triple_point(th, iso.pressure, pick)
    if res is None:
        return None
    Pt, x1, x2, x3, r = res
    T = float(np.mean(th.T(np.array([x1, x2, x3]), Pt)))
    names = sorted({lab for br in analyze_isobar(th, Pt * (1 + 1e-9)).branches
                    for lab in [br.label] if br.stable})
    return TriplePoint(T=T, P=Pt, phases=tuple(names), states=(x1, x2, x3),
                       G=float(th.G(x1, Pt)), residual=r)


def _triple_from(th, t, others, P):
    xs = {round(math.log(s.x), 3): s.x for s in t.states if not math.isnan(s.x)}
    for tt in others:
        for s in tt.states:
            if not math.isnan(s.x):
                xs.setdefault(round(math.log(s.x), 3), s.x)
    cand = sorted(xs.values())
    if len(cand) < 3:
        return None
    # pick three well-separated states
    pick = [cand[0], cand[len(cand) // 2], cand[-1]]
    res = refine_triple_point(th, P, pick)
    if res is None:
        return None
    Pt, x1, x2, x3, r = res
    T = float(np.mean(th.T(np.array([x1, x2, x3]), Pt)))
    phases = tuple(sorted({t.from_phase, t.to_phase} | {q.from_phase for q in others}
                          | {q.to_phase for q in others}))
    G = float(th.G(x1, Pt))
    return TriplePoint(T=T, P=Pt, phases=phases, states=(x1, x2, x3), G=G, residual=r)


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
    g = nx.MultiGraph()
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
    h = nx.Graph()
    h.add_nodes_from(g.nodes)
    for u, v, data in g.edges(data=True):
        if "critical point" in data.get("ends", ()) and data["kind"] != "zeroth-order":
            h.add_edge(u, v)
    return a in h and b in h and nx.has_path(h, a, b)


def distinct_phases(g: nx.MultiGraph) -> int:
    """Number of phases that cannot be joined around critical points."""
    h = nx.Graph()
    h.add_nodes_from(g.nodes)
    for u, v, data in g.edges(data=True):
        if "critical point" in data.get("ends", ()):
            h.add_edge(u, v)
    return nx.number_connected_components(h)


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
    return nx.is_isomorphic(g1, g2, edge_match=lambda a, b: sorted(x["kind"] for x in a.values())
                            == sorted(x["kind"] for x in b.values()))


def diagram_json(pd: PhaseDiagram) -> dict:
    """JSON document of ``bhchem phases``."""
    g = pd.graph
    return {
        "family": pd.family,
        "parameters": pd.parameters,
        "pressure_range": list(pd.pressure_range),
        "lines": [line.to_dict() for line in pd.lines],
        "critical_points": [{"T": cp.T, "P": cp.P, "v": cp.v, "kind": cp.kind}
                            for cp in pd.critical_points],
        "triple_points": [{"T": tp.T, "P": tp.P, "phases": list(tp.phases),
                           "states": list(tp.states), "G": tp.G, "residual": tp.residual}
                          for tp in pd.triple_points],
        "regions": pd.regions,
        "graph": {"nodes": [{"name": n, **{k: v for k, v in d.items()}} for n, d in g.nodes(data=True)],
                  "edges": [{"between": [u, v], "kind": d["kind"], "ends": list(d["ends"])}
                            for u, v, d in g.edges(data=True)],
                  "distinct_phases": distinct_phases(g)},
        "structure": pd.structure,
        "structure_hash": pd.structure_hash,
        "message": pd.message,
        "warnings": pd.warnings,
    }


def diagram_text(pd: PhaseDiagram) -> str:
    """Plain-text report of ``bhchem phases``."""
    params = ", ".join(f"{k} = {v:g}" for k, v in pd.parameters.items())
    out = [f"{pd.family} ({params}), P in [{pd.pressure_range[0]:.4g}, {pd.pressure_range[1]:.4g}]",
           f"  {pd.message}"]
    for cp in pd.critical_points:
        out.append(f"  critical point ({cp.kind}): T = {cp.T:.12g}, P = {cp.P:.12g}")
    for tp in pd.triple_points:
        out.append(f"  triple point: T = {tp.T:.12g}, P = {tp.P:.12g}, phases "
                   f"{', '.join(tp.phases)} (residual {tp.residual:.1e})")
    for line in pd.lines:
        lo, hi = line.ends["low"], line.ends["high"]
        n_checked = line.checks.get("n_points")  # what the JSON holds: points and checks
        counted = f"{len(line.points)} points" + (
            f" ({n_checked} checked coexistence states, {len(line.points) - n_checked} "
            f"critical end point(s))" if n_checked is not None and n_checked != len(line.points)
            else "")
        out.append(f"  {line.kind} line {line.between[0]} / {line.between[1]}: "
                   f"{counted}, from {lo['type']} (P = {lo['P']:.6g}) to "
                   f"{hi['type']} (P = {hi['P']:.6g})")
        if line.checks:
            out.append("    checks: " + ", ".join(
                f"{k} = {v:.1e}" if isinstance(v, float) else f"{k} = {v}"
                for k, v in line.checks.items() if v is not None))
    out.append("  regions: " + ", ".join(r["phase"] for r in pd.regions))
    out.append(f"  distinct phases: {distinct_phases(pd.graph)}; structure: {pd.structure}")
    for w in pd.warnings:
        out.append(f"  WARNING: {w}")
    return "\n".join(out)
