"""What ``bhchem topology`` and ``bhchem landscape`` print.

JSON keys (a contract with external scripts):

* ``topology``: ``family``, ``parameters``, ``pressure``, ``state_variable``,
  ``convention``, ``class`` ('W^{1-}' | 'W^{0+}' | 'W^{0-}' | 'W^{1+}' | null), ``W``
  (the class's topological number, null when it depends on tau), ``tau_limits``
  {small, large} ('0', 'inf' or a number), ``branches`` [{x_min, x_max, tau_at_x_min,
  tau_at_x_max, winding, label, ends}], ``events`` [{tau, x, kind ('generation' |
  'annihilation' | 'boundary'), W_below, W_above, W_conserved}], ``samples`` [{tau, W,
  W_contour, agree, zeros [{x, r, branch, winding (contour integral), sign_formula,
  agree}]}], ``critical_points`` [{T, P, x, r, kind, topological_charge {charge,
  sign_formula, agree, kind, note}}], ``critical_charge_total``, ``converged``,
  ``message``, ``warnings``;
* ``landscape``: ``family``, ``parameters``, ``temperature`` (T_E), ``pressure``,
  ``state_variable``, ``convention``, ``extrema`` [{kind ('well' | 'barrier'), x, r, G_L,
  curvature (G_L''), edge}], ``message``, ``converged``, ``first_passage`` (null without two
  wells and a barrier, else {start, target, target_kind, wall, barrier_height (units of
  T_E), mfpt_integral, mfpt_time_dependent, relative_difference, log10_mfpt, kramers_rate,
  kramers_time, time_unit, converged, message, warnings}).

Formatting only: every number comes from the analysis results given.
"""
from __future__ import annotations

import math

from bhchem.analysis.topology import TopologyResult
from bhchem.analysis.critical import counts_as_critical_point
from bhchem.analysis.landscape import FirstPassage, Landscape
from bhchem.core.results import plain


def _g(v, fmt: str = ".10g") -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-"
    return format(v, fmt)


def _s(n) -> str:
    """A signed integer (0 without a sign), or '-' for None."""
    return "-" if n is None else ("0" if n == 0 else f"{n:+d}")


def _tau(v) -> str:
    return "infinity" if v is not None and v == math.inf else _g(v, ".6g")


def _lim(v) -> str:
    if isinstance(v, str):
        return {"0": "0", "inf": "infinity"}.get(v, v)
    return f"{_g(v)} (finite)"


# -- topology --------------------------------------------------------------------------------------
def topology_json(res: TopologyResult, critical=()) -> dict:
    """The JSON document of ``bhchem topology``; ``critical`` is a sequence of
    (CriticalPoint, CriticalCharge)."""
    cps = [{"T": cp.T, "P": cp.P, "x": cp.x, "r": cp.r, "kind": cp.kind,
            "physical": cp.physical, "topological_charge": plain(ch)} for cp, ch in critical]
    charges = [ch.charge for cp, ch in critical
               if counts_as_critical_point(cp) and ch.charge is not None]
    return {"family": res.family, "parameters": res.parameters, "pressure": res.pressure,
            "state_variable": res.state_variable, "convention": res.convention,
            "class": res.topological_class, "W": res.W, "tau_limits": res.tau_limits,
            "branches": plain(res.branches), "events": plain(res.events),
            "samples": plain(res.samples), "critical_points": cps,
            "critical_charge_total": sum(charges) if charges else None,
            "converged": res.converged, "message": res.message,
            "warnings": list(res.warnings)}


def topology_text(res: TopologyResult, critical=()) -> str:
    """The text of ``bhchem topology``."""
    params = ", ".join(f"{k} = {v:g}" for k, v in res.parameters.items())
    x = res.state_variable
    out = [f"{res.family} ({params}): thermodynamic topology at P = {res.pressure:.10g}",
           f"  off-shell free energy F = M - S/tau, field phi = (dF/d{x}, -cot(Theta) "
           f"csc(Theta)) (Wei, Liu & Mann 2022)",
           f"  tau({x}) -> {_lim(res.tau_limits['small'])} at the small end, "
           f"{_lim(res.tau_limits['large'])} at the large end"]
    if res.topological_class:
        out.append(f"  topological class {res.topological_class} (Wei, Liu & Mann 2024), "
                   f"topological number W = {_s(res.W)}")
    else:
        out.append("  outside the four topological classes of Wei, Liu & Mann 2024: W depends "
                   "on tau")
    out.append("  branches (winding number: +1 stable, -1 unstable):")
    for b in res.branches:
        out.append(f"    [{b.index}] {x} in [{b.x_min:.6g}, {b.x_max:.6g}], tau from "
                   f"{_tau(b.tau_at_x_min)} to {_tau(b.tau_at_x_max)}: "
                   f"w = {_s(b.winding)} ({b.label})")
    if res.events:
        out.append("  where the number of zeros changes (as tau increases):")
        for e in res.events:
            check = ("W conserved" if e.W_conserved else "W CHANGES") if e.kind != "boundary" \
                else f"domain edge: W {_s(e.W_below)} -> {_s(e.W_above)}"
            out.append(f"    tau = {e.tau:.10g} ({x} = {e.x:.6g}): {e.kind}; W below "
                       f"{_s(e.W_below)}, above {_s(e.W_above)} ({check})")
    out.append("  W(tau): zeros (winding by contour integral / by sign formula):")
    for s in res.samples:
        zs = ", ".join(f"{x} = {z.x:.6g}: {_s(z.winding)}/{_s(z.sign_formula)}"
                       for z in s.zeros) or "no black hole"
        agree = "contour and sign formula agree" if s.agree else "DISAGREE"
        out.append(f"    tau = {s.tau:.6g}: W = {_s(s.W)} (whole-domain contour "
                   f"{_s(s.W_contour)}; {agree}); {zs}")
    if critical:
        out.append("  critical points (topological charge: conventional -1, novel +1; "
                   "Wei & Liu 2022):")
        charges = []
        for cp, ch in critical:
            if ch.charge is None:
                what = ch.note
            else:
                what = (f"charge {_s(ch.charge)} ({ch.kind}; "
                        + ("contour integral and sign formula agree)" if ch.agree else
                           "contour integral only: " + ch.note + ")"
                           if ch.sign_formula is None else
                           f"sign formula {_s(ch.sign_formula)} DISAGREES)"))
                if counts_as_critical_point(cp):
                    charges.append(ch.charge)
            flag = "" if cp.physical else " (unphysical)"
            flag += " (degenerate: not a critical point)" if cp.kind == "degenerate" else ""
            out.append(f"    T_c = {cp.T:.10g}, P_c = {cp.P:.10g}, {x}_c = {cp.x:.6g}"
                       f"{flag}: {what}")
        if charges:
            out.append(f"    total charge of the physical critical points: {_s(sum(charges))}")
    out.append(f"  {res.message}")
    for w in res.warnings:
        out.append(f"  WARNING: {w}")
    return "\n".join(out)


# -- landscape -------------------------------------------------------------------------------------
def _passage_json(fp: FirstPassage | None):
    if fp is None:
        return None
    return {"start": plain(fp.start), "target": plain(fp.target), "target_kind": fp.target_kind,
            "wall": fp.wall, "barrier_height": fp.barrier_height,
            "mfpt_integral": fp.mfpt_integral, "mfpt_time_dependent": fp.mfpt_time_dependent,
            "relative_difference": fp.relative_difference, "log10_mfpt": fp.log10_mfpt,
            "kramers_rate": fp.kramers_rate, "kramers_time": fp.kramers_time,
            "time_unit": fp.time_unit, "converged": fp.converged, "message": fp.message,
            "warnings": list(fp.warnings)}


def landscape_json(ls: Landscape, fp: FirstPassage | None, note: str = "") -> dict:
    """The JSON document of ``bhchem landscape``."""
    return {"family": ls.family, "parameters": ls.parameters, "temperature": ls.temperature,
            "pressure": ls.pressure, "state_variable": ls.state_variable,
            "convention": ls.convention, "extrema": plain(ls.extrema),
            "message": ls.message, "converged": ls.converged, "note": note,
            "first_passage": _passage_json(fp)}


def landscape_text(ls: Landscape, fp: FirstPassage | None, note: str = "") -> str:
    """The text of ``bhchem landscape``."""
    params = ", ".join(f"{k} = {v:g}" for k, v in ls.parameters.items())
    x = ls.state_variable
    out = [f"{ls.family} ({params}): free-energy landscape G_L = M - T_E S",
           f"  T_E = {ls.temperature:.10g}, P = {ls.pressure:.10g}" + (f" ({note})" if note else "")]
    for e in ls.extrema:
        where = f"{x} -> 0 (edge of the domain)" if (e.edge and e.x == 0.0) else \
            f"{x} = {e.x:.10g}" + (" (edge of the domain)" if e.edge else "")
        curv = "" if e.curvature is None else f", G_L'' = {e.curvature:.6g}"
        out.append(f"  {e.kind:<8} at {where}: G_L = {e.G_L:.10g}{curv}")
    out.append(f"  {ls.message}")
    if fp is None:
        out.append("  no barrier between two wells: no first-passage time")
        return "\n".join(out)
    out.append(f"  {fp.message}")
    out.append(f"  times in units of the friction zeta (D = T_E/zeta); reflecting wall at "
               f"{x} = {fp.wall:.6g}, absorbing at {x} = {fp.target.x:.6g}")
    td = "-" if fp.mfpt_time_dependent is None else f"{fp.mfpt_time_dependent:.8g}"
    dbl = f"{fp.mfpt_integral:.8g}" if fp.mfpt_integral is not None else \
        f"10^{fp.log10_mfpt:.2f}"
    out.append(f"  mean first-passage time: {dbl} (double integral), {td} (time-dependent "
               f"Fokker-Planck solution)"
               + ("" if fp.relative_difference is None
                  else f"; relative difference {fp.relative_difference:.1e}"))
    if fp.kramers_time is not None:
        out.append(f"  Kramers: rate {fp.kramers_rate:.6g}/zeta, time {fp.kramers_time:.6g} "
                   f"(barrier {fp.barrier_height:.4g} T_E)")
    for w in fp.warnings:
        out.append(f"  WARNING: {w}")
    return "\n".join(out)
