"""What ``bhchem compare`` prints and draws: both ensembles of a family at one pressure
(text, JSON, a two-panel G-T figure).  Formatting only: the numbers come from
:func:`bhchem.analysis.ensembles.compare_ensembles` and
:func:`bhchem.analysis.figure_data.gt_curves`.

JSON keys: ``pressure``, ``message``, ``converged``, ``warnings``, ``ensembles``: a list
(the fixed-charge ensemble first) of {``family``, ``ensemble`` {``label``, ``held_fixed``,
``swapped``, ``parent``}, ``parameters``, ``critical_points`` ({``T``, ``P``, ``v``, ``kind``,
...}), ``completeness``, ``isobar`` (as ``bhchem isobar --json``)}.
"""
from __future__ import annotations

from bhchem.analysis.ensembles import EnsembleComparison
from bhchem.analysis.figure_data import GtCurves
from bhchem.present.critical_report import ensemble_line
from bhchem.present.phase_text import isobar_json
from bhchem.present.plots import PlotResult, plot_gt
from bhchem.present.style import figure_title, styled


def compare_json(cmp: EnsembleComparison) -> dict:
    """The JSON document of ``bhchem compare``."""
    return {
        "pressure": cmp.pressure,
        "message": cmp.message,
        "converged": cmp.converged,
        "warnings": list(cmp.warnings),
        "ensembles": [{"family": s.family, "ensemble": s.ensemble, "parameters": s.parameters,
                       "critical_points": [cp.to_dict() for cp in s.critical_points],
                       "completeness": s.completeness, "isobar": isobar_json(s.isobar)}
                      for s in cmp.sides],
    }


def compare_text(cmp: EnsembleComparison) -> str:
    """Plain text of ``bhchem compare``: one block per ensemble."""
    lines = [f"both ensembles at P = {cmp.pressure:.12g}"]
    for s in cmp.sides:
        params = ", ".join(f"{k} = {v:g}" for k, v in s.parameters.items())
        lines.append(f"{s.family} ({params})")
        lines.append(f"  {ensemble_line(s.ensemble)}")
        if s.critical_points:
            for cp in s.critical_points:
                lines.append(f"  critical point ({cp.kind}): T_c = {cp.T:.12g}   "
                             f"P_c = {cp.P:.12g}   v_c = {cp.v:.12g}")
        else:
            lines.append(f"  no critical point (search complete: {s.completeness})")
        lines.append("  preferred phase at this pressure:")
        for lo, hi, ph in s.isobar.preferred:
            lines.append(f"    T in [{lo:.10g}, {hi:.10g}]: {ph}")
        if s.isobar.transitions:
            for t in s.isobar.transitions:
                lines.append(f"  transition {t.kind:<14} T = {t.T:.12g}  "
                             f"{t.from_phase} -> {t.to_phase}")
        else:
            lines.append("  no transition at this pressure")
    for w in cmp.warnings:
        lines.append(f"  WARNING: {w}")
    return "\n".join(lines)


def plot_compare(left: GtCurves, right: GtCurves) -> PlotResult:
    """Two G-T panels side by side, one per ensemble, each titled by its family and the
    variables it holds fixed."""
    with styled() as mk:
        fig, axes = mk.subplots(1, 2, figsize=(7.4, 3.2), squeeze=False)
        drawn = {}
        notes = []
        for side, data, ax in (("left", left, axes[0][0]), ("right", right, axes[0][1])):
            res = plot_gt(data, ax=[ax])
            drawn.update({f"{side}_{k}": v for k, v in res.data.items()})
            notes.extend(res.notes)
            ax.set_title(figure_title(data), fontsize="small")
        P = left.panels[0].pressure if left.panels else float("nan")
        fig.suptitle(f"both ensembles at $P={P:.4g}$", y=1.0)
        fig.tight_layout()
    return PlotResult(fig, "compare", drawn, notes)
