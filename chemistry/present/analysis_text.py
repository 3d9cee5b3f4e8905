"""What the analysis commands ``bhchem curvature``, ``bhchem engine`` and ``bhchem expansion`` print.

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
from bhchem.analysis.curvature import CONVENTION, CriticalAmplitude
from bhchem.analysis.response import cv_vanishes
from bhchem.analysis.engines import EngineResult
from bhchem.analysis.expansion import ExpansionResult, InversionBranch


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


# -- Joule-Thomson expansion ---------------------------------------------------------
def _branch_json(b: InversionBranch) -> dict:
    return {"points": b.points(), "ends": list(b.ends),
            "reaches_zero_pressure": b.reaches_zero_pressure, "T_min": b.T_min,
            "P_at_min": b.P_at_min, "x_at_min": b.x_at_min, "minimum_at": b.minimum_at,
            "residual": b.residual, "converged": b.converged,
            "why_no_minimum": b.why_no_minimum}


def expansion_json(res: ExpansionResult) -> dict:
    """The JSON document of ``bhchem expansion``.

    Keys: ``inversion`` {``points`` [[T, P], ...] (all branches, by x), ``T_min`` (of the
    branch reaching P = 0, null with ``why_no_T_min``), ``ratio_to_Tc``, ``T_c``,
    ``P_at_min``, ``x_at_min``, ``at_low_pressure_end``, ``residual``, ``why_no_T_min``,
    ``pressure_range`` [0, P_max], ``headline_branch`` (index or null), ``branches``
    [{``points``, ``ends``, ``reaches_zero_pressure``, ``T_min``, ``P_at_min``, ``x_at_min``,
    ``minimum_at``, ``residual``, ``converged``, ``why_no_minimum``}]}, ``isenthalps``
    [{``M``, ``points``}], ``notes`` [str].
    """
    inv = res.inversion
    return {"inversion": {"points": inv.points(), "T_min": inv.T_min,
                          "ratio_to_Tc": inv.ratio_to_Tc, "T_c": inv.T_c,
                          "P_at_min": inv.P_at_min, "x_at_min": inv.x_at_min,
                          "at_low_pressure_end": inv.at_low_pressure_end,
                          "residual": inv.residual, "why_no_T_min": inv.why_no_T_min,
                          "pressure_range": [float(p) for p in inv.pressure_range],
                          "headline_branch": inv.headline,
                          "branches": [_branch_json(b) for b in inv.branches]},
            "isenthalps": [{"M": c.M, "points": c.points()} for c in res.isenthalps],
            "notes": list(res.notes)}


def _branch_line(i: int, b: InversionBranch) -> str:
    head = f"    branch {i + 1}" + (" (reaches P -> 0)" if b.reaches_zero_pressure else "")
    rng = (f"x in [{b.x.min():.6g}, {b.x.max():.6g}], P in [{b.P.min():.6g}, {b.P.max():.6g}], "
           f"T in [{b.T.min():.6g}, {b.T.max():.6g}], {len(b.T)} points; "
           f"ends (by x): {b.ends[0]}; {b.ends[1]}")
    if b.T_min is None:
        return f"{head}: {rng}; no minimum: {b.why_no_minimum}"
    where = "at the P -> 0 end" if b.minimum_at == "P = 0 end" else f"inside, at P = {b.P_at_min:.10g}"
    flag = "" if b.converged else " (grid value, not refined)"
    return (f"{head}: {rng}; its minimum T_i = {b.T_min:.12g} {where}{flag} "
            f"(residual {b.residual:.1e})")


def expansion_text(res: ExpansionResult) -> str:
    inv = res.inversion
    params = ", ".join(f"{k} = {v:g}" for k, v in res.parameters.items())
    out = [f"{res.family} ({params}): Joule-Thomson expansion at fixed M (the enthalpy)",
           "  mu = (dT/dP)_M = (T_P M_x - T_x M_P)/M_x; inversion curve mu = 0"]
    if not inv.branches:
        out.append(f"  no inversion curve in the pressure range [0, {inv.pressure_range[1]:.6g}]")
    else:
        nb = len(inv.branches)
        out.append(f"  inversion curve: {len(inv.T)} points on {nb} branch{'es' if nb > 1 else ''}, "
                   f"P in [0, {inv.pressure_range[1]:.6g}]")
        out += [_branch_line(i, b) for i, b in enumerate(inv.branches)]
        if inv.T_min is None:
            out.append(f"  minimum inversion temperature: not given: {inv.why_no_T_min}")
        else:
            where = ("at the P -> 0 end" if inv.at_low_pressure_end
                     else f"at P = {inv.P_at_min:.10g}")
            out.append(f"  minimum inversion temperature T_i,min = {inv.T_min:.12g} "
                       f"(branch {inv.headline + 1}, {where})")
            if inv.ratio_to_Tc is not None:
                out.append(f"  T_c = {inv.T_c:.12g};  T_i,min / T_c = {inv.ratio_to_Tc:.12g}")
    for c in res.isenthalps:
        if c.T.size == 0:
            out.append(f"  isenthalp M = {c.M:.6g}: no physical state in range")
            continue
        s = f"  isenthalp M = {c.M:.6g}: {len(c.T)} points"
        if c.T_max is not None:
            s += (f", {'local ' if c.local_only else ''}maximum T = {c.T_max:.8g} at "
                  f"P = {c.P_at_T_max:.8g} (mu there {c.mu_at_max:.1e})")
        out.append(s)
    for n in res.notes:
        out.append(f"  note: {n}")
    return "\n".join(out)


# -- figure -------------------------------------------------------------------------------------
