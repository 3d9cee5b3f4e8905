"""What the analysis commands ``bhchem curvature`` and ``bhchem engine`` print.

JSON keys (a contract with external scripts):

* ``curvature``: ``family``, ``parameters``, ``convention`` (sign, metric, normalised,
  amplitude, C_V), ``critical_amplitude`` (None without a standard critical point, else
  ``small``, ``large``, ``fit_range``, ``critical_point`` {T, P, v, x},
  ``fit_max_residual`` {small, large});
* ``engine``: ``work``, ``heat_in``, ``heat_out``, ``efficiency``, ``carnot``, ``T_hot``,
  ``T_cold``.

Formatting only: every number comes from the analysis results given.
"""
from __future__ import annotations

from bhchem.core.compiled import Thermodynamics
from bhchem.analysis.curvature import CONVENTION, CriticalAmplitude, cv_vanishes
from bhchem.analysis.engines import EngineResult


# -- curvature ------------------------------------------------------------------------------------
def curvature_json(th: Thermodynamics, amp: CriticalAmplitude | None) -> dict:
    """The JSON document of ``bhchem curvature``."""
    conv = dict(CONVENTION)
    conv["C_V"] = "vanishes identically (R_N is the C_V -> 0 limit)" if cv_vanishes(th) \
        else "non-zero (R_N = R C_V)"
    doc = {"family": th.family.name, "parameters": dict(th.values), "convention": conv,
           "critical_amplitude": None}
    if amp is not None:
        cp = amp.critical_point
        doc["critical_amplitude"] = {
            "small": amp.small.amplitude, "large": amp.large.amplitude,
            "fit_range": list(amp.fit_range),
            "critical_point": {"T": cp.T, "P": cp.P, "v": cp.v, "x": cp.x},
            "fit_max_residual": {"small": amp.small.max_residual,
                                 "large": amp.large.max_residual}}
    return doc


def curvature_text(th: Thermodynamics, amp: CriticalAmplitude | None) -> str:
    """The text of ``bhchem curvature``: convention, which R_N, the fitted amplitudes."""
    params = ", ".join(f"{k} = {v:g}" for k, v in th.values.items())
    out = [f"{th.family.name} ({params}): Ruppeiner curvature",
           f"  sign convention: {CONVENTION['sign']}",
           f"  R_N: {CONVENTION['normalised']}"]
    out.append("  C_V vanishes identically: R diverges, R_N is its normalised limit"
               if cv_vanishes(th) else "  C_V != 0: R is finite; R_N = R C_V")
    if amp is None:
        out.append("  no standard critical point: no critical amplitude")
    else:
        out.append(f"  critical point T_c = {amp.critical_point.T:.12g}, "
                   f"P_c = {amp.critical_point.P:.12g}")
        out.append(f"  R_N (1 - T/T_c)^2 -> {amp.small.amplitude:.8f} (small), "
                   f"{amp.large.amplitude:.8f} (large)  [mean field: -1/8 = -0.125]")
        out.append(f"  fitted over t = 1 - T/T_c in [{amp.fit_range[0]:.1e}, {amp.fit_range[1]:.1e}]")
    return "\n".join(out)


# -- heat engines ---------------------------------------------------------------------------------
def engine_json(res: EngineResult) -> dict:
    """The JSON document of ``bhchem engine`` (keys exactly as documented)."""
    return {"work": res.work, "heat_in": res.heat_in, "heat_out": res.heat_out,
            "efficiency": res.efficiency, "carnot": res.carnot, "T_hot": res.T_hot,
            "T_cold": res.T_cold}


def engine_text(res: EngineResult) -> str:
    """The text of ``bhchem engine``: corners, sides, work, heats, efficiency, Carnot bound."""
    params = ", ".join(f"{k} = {v:g}" for k, v in res.parameters.items())
    out = [f"{res.family} ({params}): heat engine with {len(res.corners)} corners "
           f"({res.direction})"]
    for c in res.corners:
        out.append(f"  corner {c.index}: P = {c.P:.10g}, V = {c.V:.10g}, T = {c.T:.10g}, "
                   f"S = {c.S:.10g}, M = {c.M:.10g}")
    for s in res.sides:
        kind = s.kind + (f" (also {', '.join(s.also)})" if s.also else "")
        line = (f"  side {s.start}->{s.end}: {kind}; work {s.work:.12g}, heat {s.heat:.12g}")
        if s.exact_heat is not None:
            line += f" (exact {s.exact_heat:.12g})"
        out.append(line)
    out += [f"  work W           = {res.work:.12g}",
            f"  heat in, out     = {res.heat_in:.12g}, {res.heat_out:.12g} "
            f"(first law residual {res.first_law_residual:.1e})",
            f"  efficiency       = {res.efficiency:.12g}",
            f"  Carnot bound     = {res.carnot:.12g} (T_hot = {res.T_hot:.10g}, "
            f"T_cold = {res.T_cold:.10g})"]
    if res.exact is not None:
        out.append(f"  exact (Johnson 2016, corner enthalpies): eta = {res.exact['efficiency']:.12g}"
                   f" (difference {res.exact['difference_from_integral']:.1e})")
    for n in res.notes:
        out.append(f"  note: {n}")
    return "\n".join(out)
