"""What ``bhchem isobar`` and ``bhchem phases`` print: the JSON record and the text of an
isobar analysis and of a phase diagram (formatting only)."""
from __future__ import annotations

import math

from bhchem.analysis.admissibility import describe_range
from bhchem.analysis.isobar import IsobarResult, StateData
from bhchem.analysis.phases import PhaseDiagram
from bhchem.present.critical_report import admissibility_line, ensemble_line


def _excluded_lines(res: IsobarResult, state: str) -> list:
    if res.excluded is None:
        return []
    if not res.excluded.ranges:
        return ["  excluded states: none in the searched range"]
    return ["  excluded states (by condition):"] + [
        f"    {describe_range(r, state)}" for r in res.excluded.ranges]


def isobar_json(res: IsobarResult) -> dict:
    """JSON document of ``bhchem isobar`` (keys: pressure, branches, transitions, ...)."""
    def state(s: StateData):
        return {"phase": s.phase, "x": None if math.isnan(s.x) else s.x, "r": s.r, "v": s.v,
                "S": s.S, "G": s.G}
    return {
        "pressure": res.pressure,
        "parameters": res.parameters,
        "branches": [{"index": b.index, "label": b.label, "stable": b.stable,
                      "x_range": [b.x_min, b.x_max], "T_range": [b.T_min, b.T_max],
                      "ends": list(b.ends)} for b in res.branches],
        "background": res.background,
        "crossings": [{"T": c.T, "between": list(c.branches), "G": c.G,
                       "on_preferred": c.on_envelope} for c in res.crossings],
        "transitions": [{"kind": t.kind, "T": t.T, "from": t.from_phase, "to": t.to_phase,
                         "states": [state(s) for s in t.states],
                         "latent_heat": t.latent_heat, "delta_v": t.delta_v,
                         "delta_G": t.delta_G, "residual": t.residual} for t in res.transitions],
        "preferred": [{"T_range": [lo, hi], "phase": ph} for lo, hi, ph in res.preferred],
        "message": res.message,
        "warnings": list(res.warnings),
        "admissibility": res.admissibility,
        "ensemble": res.ensemble,
        "excluded": None if res.excluded is None else
        [r.to_dict() for r in res.excluded.ranges],
    }


def isobar_text(res: IsobarResult) -> str:
    """Plain-text report of ``bhchem isobar``."""
    params = ", ".join(f"{k} = {v:g}" for k, v in res.parameters.items())
    lines = [f"isobar P = {res.pressure:.12g} ({params})", f"  {res.message}",
             f"  {admissibility_line(res.admissibility)}", f"  {ensemble_line(res.ensemble)}",
             "  branches:"]
    for b in res.branches:
        lines.append(f"    [{b.index}] {b.label:<28} x in [{b.x_min:.6g}, {b.x_max:.6g}]  "
                     f"T in [{b.T_min:.6g}, {b.T_max:.6g}]  ends: {b.ends[0]}/{b.ends[1]}")
    if res.background:
        lines.append(f"    background phase: {res.background}")
    lines.append("  preferred phase:")
    for lo, hi, ph in res.preferred:
        lines.append(f"    T in [{lo:.10g}, {hi:.10g}]: {ph}")
    lines.append("  transitions:" if res.transitions else "  no transition")
    for t in res.transitions:
        extra = ""
        if t.kind == "first-order":
            extra = f"  latent heat {t.latent_heat:.10g}, dv {t.delta_v:.10g}, residual {t.residual:.1e}"
        elif t.kind == "zeroth-order":
            extra = f"  jump dG = {t.delta_G:.10g}"
        lines.append(f"    {t.kind:<13} T = {t.T:.12g}  {t.from_phase} -> {t.to_phase}{extra}")
    lines.extend(_excluded_lines(res, "x"))
    for w in res.warnings:
        lines.append(f"  WARNING: {w}")
    return "\n".join(lines)


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
        "events": [e.to_dict() for e in pd.events],
        "regions": pd.regions,
        "graph": {"nodes": [{"name": n, **{k: v for k, v in d.items()}} for n, d in g.nodes(data=True)],
                  "edges": [{"between": [u, v], "kind": d["kind"], "ends": list(d["ends"])}
                            for u, v, d in g.edges(data=True)],
                  "distinct_phases": pd.n_distinct_phases},
        "structure": pd.structure,
        "structure_hash": pd.structure_hash,
        "message": pd.message,
        "warnings": pd.warnings,
        "admissibility": pd.admissibility,
        "ensemble": pd.ensemble,
        "excluded": None if pd.exclusions is None else {
            "pressures": list(pd.exclusions.pressures),
            "conditions": [dict(e) for e in pd.exclusions.conditions]},
    }


def _end_text(e: dict) -> str:
    extra = ""
    if e["type"] == "terminal point":
        extra = "; ".join(x for x in (e.get("branch"), ", ".join(e.get("partners", ()))) if x)
    elif e["type"] == "domain edge":
        extra = e.get("condition", "")
    elif e["type"] in ("unexplained", "zero temperature"):
        extra = e.get("note", "")
    return f"{e['type']} (P = {e['P']:.12g}{'; ' + extra if extra else ''})"


def diagram_text(pd: PhaseDiagram) -> str:
    """Plain-text report of ``bhchem phases``."""
    params = ", ".join(f"{k} = {v:g}" for k, v in pd.parameters.items())
    out = [f"{pd.family} ({params}), P in [{pd.pressure_range[0]:.4g}, {pd.pressure_range[1]:.4g}]",
           f"  {pd.message}", f"  {admissibility_line(pd.admissibility)}",
           f"  {ensemble_line(pd.ensemble)}"]
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
            f"end point(s))" if n_checked is not None and n_checked != len(line.points)
            else "")
        out.append(f"  {line.kind} line {line.between[0]} / {line.between[1]}: "
                   f"{counted}, from {_end_text(lo)} to {_end_text(hi)}")
        if line.checks:
            out.append("    checks: " + ", ".join(
                f"{k} = {v:.1e}" if isinstance(v, float) else f"{k} = {v}"
                for k, v in line.checks.items() if v is not None))
    out.append("  regions: " + ", ".join(r["name"] for r in pd.regions))
    out.append(f"  distinct phases: {pd.n_distinct_phases}; structure: {pd.structure}")
    if pd.exclusions is not None and pd.exclusions.conditions:
        out.append("  excluded states (by condition, over the pressure range):")
        for e in pd.exclusions.conditions:
            out.append(f"    {_summary_text(e)}")
    for w in pd.warnings:
        out.append(f"  WARNING: {w}")
    return "\n".join(out)


def _summary_text(e: dict) -> str:
    if e["T_min"] is None:
        temps = "T not finite"
    else:
        lo = "-infinity" if e["T_unbounded"] in ("below", "both") else f"{e['T_min']:.6g}"
        hi = "+infinity" if e["T_unbounded"] in ("above", "both") else f"{e['T_max']:.6g}"
        temps = f"T from {lo} to {hi}"
    return (f"{e['condition']}: x in [{e['x_min']:.6g}, {e['x_max']:.6g}] for P in "
            f"[{e['P_min']:.6g}, {e['P_max']:.6g}] ({temps})")
