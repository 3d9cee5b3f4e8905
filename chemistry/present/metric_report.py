"""What ``bhchem metric`` prints and draws: the metric route of a family (its first-law
diagnosis, the photon sphere at the critical point, the jumps of the photon-sphere
quantities along the coexistence line, optionally the comparison of routes).

JSON keys (a contract with external scripts): ``family``, ``parameters``, ``metric``
(the family's conventions: ``f``, ``temperature``, ``entropy``, ``mass_root``),
``diagnosis`` {``holds``, ``max_relative_difference``, ``worst_state``, ``example_state``,
``consistent_entropy``, ``remedies``, ``message``}, ``photon_sphere`` {``r_ps``, ``u_ps``,
``lyapunov``, ``converged``, ``x``, ``P``} at the critical point (null without one),
``jumps`` {``P``, ``T``, ``delta_r_ps``, ``delta_u_ps``, ``delta_lyapunov``, ``exponent``,
``exponent_error``, ``fit_range``, ``critical_point``, ``converged``, ``message``} and
``comparison`` (with ``--compare``: ``metric``, ``area`` {``P_c``, ``T_c``, ``V_c``,
``T_coexistence_half``, ...}, ``shifts``) and ``line_jumps`` (with ``--all-lines``: one
``jumps`` record per first-order line of the phase diagram).

Formatting and drawing only: every number comes from the analysis results given.
"""
from __future__ import annotations

import math

import numpy as np

from bhchem.analysis.metric_route import (MetricDiagnosis, PhotonJumps, PhotonSphere,
                                          RouteComparison)
from bhchem.core.compiled import Thermodynamics
from bhchem.present.plots import EmptyFigureError, PlotResult, canvas
from bhchem.present.style import PALETTE, figure_title


def _num(v, fmt=".6g") -> str:
    return "-" if v is None or not math.isfinite(v) else format(v, fmt)


def _jumps_json(jumps: PhotonJumps) -> dict:
    return {"P": list(jumps.P), "T": list(jumps.T), "delta_r_ps": list(jumps.delta_r_ps),
            "delta_u_ps": list(jumps.delta_u_ps), "delta_lyapunov": list(jumps.delta_lyapunov),
            "exponent": jumps.exponent, "exponent_error": jumps.exponent_error,
            "fit_range": list(jumps.fit_range), "critical_point": jumps.critical_point,
            "converged": jumps.converged, "message": jumps.message}


def metric_json(th: Thermodynamics, diag: MetricDiagnosis, ps: PhotonSphere | None,
                jumps: PhotonJumps, comparison: RouteComparison | None = None,
                line_jumps=None) -> dict:
    """The JSON document of ``bhchem metric`` (keys in the module docstring)."""
    conv = th.family.conventions
    doc = {"family": th.family.name, "parameters": dict(th.values),
           "metric": {"f": conv.get("metric", th.family.metric.text),
                      "temperature": conv.get("temperature", "declared"),
                      "entropy": conv.get("entropy", "declared"),
                      "mass_root": conv.get("mass_root")},
           "diagnosis": {k: v for k, v in diag.to_dict().items()
                         if k in ("holds", "max_relative_difference", "worst_state",
                                  "example_state", "consistent_entropy", "remedies",
                                  "message", "n_points")},
           "photon_sphere": None if ps is None else
           {"x": ps.x[0], "P": ps.P[0], "r_ps": ps.r_ps[0], "u_ps": ps.u_ps[0],
            "lyapunov": ps.lyapunov[0], "converged": ps.converged[0]},
           "jumps": _jumps_json(jumps),
           "warnings": list(jumps.warnings)}
    if comparison is not None:
        doc["comparison"] = comparison.to_dict()
    if line_jumps is not None:
        doc["line_jumps"] = [_jumps_json(j) for j in line_jumps]
        doc["warnings"] += [w for j in line_jumps for w in j.warnings
                            if w not in doc["warnings"]]
    return doc


def metric_text(th: Thermodynamics, diag: MetricDiagnosis, ps: PhotonSphere | None,
                jumps: PhotonJumps, comparison: RouteComparison | None = None,
                line_jumps=None) -> str:
    """The text of ``bhchem metric``."""
    params = ", ".join(f"{k} = {v:g}" for k, v in th.values.items())
    conv = th.family.conventions
    out = [f"{th.family.name} ({params}): the metric route",
           f"  metric: {conv.get('metric', th.family.metric.text)}"
           + (f" (d = {th.derivation.dimension})" if "d" in th.values else ""),
           f"  temperature: {conv.get('temperature', 'declared')}",
           f"  entropy: {conv.get('entropy', 'declared')}"]
    if conv.get("mass_root"):
        out.append(f"  mass parameter: {conv['mass_root']}")
    out.append("First law with the metric's T: " + diag.message)
    if diag.holds is False:
        ex = diag.example_state
        out.append(f"  example: x = {_num(ex['x'])}, P = {_num(ex['P'])}: T_metric = "
                   f"{_num(ex['T_metric'])}, (dM/dS)_P = {_num(ex['T_first_law'])} "
                   f"({_num(100 * ex['relative_difference'], '.3g')}%)")
        for r in diag.remedies:
            out.append(f"  to restore the first law: {r}")
    if ps is not None:
        out.append(f"Photon sphere at the critical point (x = {_num(ps.x[0])}, P = "
                   f"{_num(ps.P[0])}): r_ps = {_num(ps.r_ps[0], '.12g')}, u_ps = "
                   f"{_num(ps.u_ps[0], '.12g')}, lambda = {_num(ps.lyapunov[0], '.12g')}"
                   + ("" if ps.converged[0] else "  [not converged]"))
    out.append("Jumps along the coexistence line (large minus small black hole): "
               + jumps.message)
    if jumps.P:
        out.append("  " + "  ".join(f"{h:>13s}" for h in ("P", "T", "Delta r_ps",
                                                            "Delta u_ps", "Delta lambda")))
        n = len(jumps.P)
        for i in sorted({0, n // 4, n // 2, (3 * n) // 4, n - 1}):
            out.append("  " + "  ".join(f"{_num(v, '.6e'):>13s}" for v in (
                jumps.P[i], jumps.T[i], jumps.delta_r_ps[i], jumps.delta_u_ps[i],
                jumps.delta_lyapunov[i])))
    if comparison is not None:
        out.append("Routes: " + comparison.message)
        for r in (comparison.metric, comparison.area):
            out.append(f"  {r.route:6s} T = {r.temperature}, S = {r.entropy}: P_c = "
                       f"{_num(r.P_c)}, T_c = {_num(r.T_c)}, V_c = {_num(r.V_c)}, "
                       f"T_coex(0.5 P_c) = {_num(r.T_coexistence_half)}")
    warnings = list(jumps.warnings)
    if line_jumps is not None:
        out.append(f"Every first-order line of the phase diagram ({len(line_jumps)}):")
        for j in line_jumps:
            out.append(f"  {j.message}")
            warnings += [w for w in j.warnings if w not in warnings]
    for w in warnings:
        out.append(f"WARNING: {w}")
    return "\n".join(out)


def plot_photon_jumps(jumps: PhotonJumps, ax=None) -> PlotResult:
    """Delta r_ps and Delta lambda (scaled by their largest value) against T/T_c along the
    coexistence line.

    Raises
    ------
    EmptyFigureError
        When the line has no point with both photon spheres.
    """
    ok = np.isfinite(np.asarray(jumps.delta_r_ps, float)) & \
        np.isfinite(np.asarray(jumps.delta_lyapunov, float))
    if not jumps.T or not np.any(ok):
        raise EmptyFigureError("nothing to plot: no coexistence point with both photon spheres")
    Tc = jumps.critical_point["T_c"]
    t = np.asarray(jumps.T, float)[ok] / Tc
    dr = np.asarray(jumps.delta_r_ps, float)[ok]
    dl = np.asarray(jumps.delta_lyapunov, float)[ok]
    with canvas(ax, figsize=(5.4, 3.8)) as (fig, ax):
        ax.plot(t, dr / np.max(np.abs(dr)), "-", color=PALETTE[0], lw=1.8,
                label=rf"$\Delta r_{{ps}}\,/\,{np.max(np.abs(dr)):.4g}$")
        ax.plot(t, dl / np.max(np.abs(dl)), "--", color=PALETTE[1], lw=1.8,
                label=rf"$\Delta\lambda\,/\,{np.max(np.abs(dl)):.4g}$")
        ax.axhline(0.0, color="#9a9a9a", lw=0.6)
        ax.set_xlabel(r"$T/T_c$ along the coexistence line")
        ax.set_ylabel("jump (large minus small), scaled")
        title = figure_title(jumps, ": photon-sphere jumps")
        ax.set_title(title)
        if jumps.exponent is not None:
            ax.text(0.97, 0.72, rf"$\Delta r_{{ps}}\propto(1-T/T_c)^{{{jumps.exponent:.3f}}}$",
                    transform=ax.transAxes, ha="right", fontsize=9)
        ax.legend(loc="best")
    return PlotResult(fig, "photon-jumps", {"delta_r_ps": np.column_stack([t, dr]),
                                            "delta_lyapunov": np.column_stack([t, dl])}, [])
