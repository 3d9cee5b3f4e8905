"""Figures of ``bhchem topology`` and ``bhchem landscape``.

Drawing only: tau(x) and its zeros come from
:func:`bhchem.analysis.topology.thermodynamic_topology`, the landscape from
:func:`bhchem.analysis.landscape.free_energy_landscape` and the first-passage-time
distribution from :func:`bhchem.analysis.landscape.first_passage`.  Each returns a
:class:`~bhchem.present.plots.PlotResult` and accepts ``ax=``.
"""
from __future__ import annotations

import numpy as np

from bhchem.analysis.landscape import FirstPassage, Landscape
from bhchem.analysis.topology import TopologyResult
from bhchem.present.plots import EmptyFigureError, PlotResult, canvas
from bhchem.present.style import PALETTE, figure_title


def _label(x: str) -> str:
    return "r_+" if x == "r" else x


def plot_tau(res: TopologyResult, ax=None) -> PlotResult:
    """tau(x) = 1/T at the pressure of ``res``, with the zeros of every sampled tau marked by
    their winding numbers (+1 filled, -1 open) and the generation/annihilation points."""
    if len(res.curve) == 0:
        raise EmptyFigureError("nothing to plot: no physical state with T > 0")
    x = _label(res.state_variable)
    with canvas(ax, figsize=(5.4, 3.9)) as (fig, ax):
        ax.plot(res.curve[:, 0], res.curve[:, 1], "-", color=PALETTE[0], lw=1.5)
        for s in res.samples:
            ax.axhline(s.tau, color="#bbbbbb", lw=0.6, ls=":")
            for z in s.zeros:
                w = z.winding if z.winding is not None else z.sign_formula
                ax.plot([z.x], [s.tau], "o", ms=6, color=PALETTE[3 if w > 0 else 1],
                        mfc=PALETTE[3 if w > 0 else 1] if w > 0 else "white", zorder=4)
                ax.annotate(f"{w:+d}", (z.x, s.tau), textcoords="offset points",
                            xytext=(4, 4), fontsize=8)
        for e in res.events:
            ax.plot([e.x], [e.tau], "s", ms=4, color="black", zorder=5)
        ax.set_xscale("log")
        ax.set_yscale("log")
        marks = [s.tau for s in res.samples] + [e.tau for e in res.events]
        if marks:   # tau -> infinity at an extremal end would squash the zeros
            ax.set_ylim(min(float(np.min(res.curve[:, 1])), min(marks) / 5), max(marks) * 5)
        ax.set_xlabel(rf"${x}$")
        ax.set_ylabel(r"$\tau = 1/T$")
        cls = f"${res.topological_class}$" if res.topological_class else "no class"
        W = "" if res.W is None else f", W = {res.W:+d}"
        ax.set_title(figure_title(res, f": {cls}{W}"))
    return PlotResult(fig, "tau", {"curve": res.curve}, [],
                      columns=("r_plus" if res.state_variable == "r" else res.state_variable,
                               "tau"))


def plot_landscape(ls: Landscape, ax=None) -> PlotResult:
    """G_L(x) with its wells and barriers marked."""
    if len(ls.x) == 0:
        raise EmptyFigureError("nothing to plot: no physical state")
    x = _label(ls.state_variable)
    with canvas(ax, figsize=(5.4, 3.9)) as (fig, ax):
        ax.plot(ls.x, ls.G_L, "-", color=PALETTE[0], lw=1.5)
        for e in ls.extrema:
            c = PALETTE[3] if e.kind == "well" else PALETTE[1]
            ax.plot([e.x], [e.G_L], "o" if e.kind == "well" else "^", color=c, ms=6, zorder=4)
        ax.set_xlabel(rf"${x}$")
        ax.set_ylabel(r"$G_L = M - T_E S$")
        ax.set_title(figure_title(ls, f": $T_E$ = {ls.temperature:.4g}, P = {ls.pressure:.4g}"))
    return PlotResult(fig, "landscape", {"x": ls.x, "G_L": ls.G_L}, [],
                      columns=("r_plus" if ls.state_variable == "r" else ls.state_variable,
                               "G_L"),
                      table_data={"G_L": np.column_stack([ls.x, ls.G_L])})


def plot_first_passage(fp: FirstPassage, ax=None) -> PlotResult:
    """The first-passage-time distribution F(t) (time in units of zeta), with the mean
    first-passage time and, where justified, Kramers' time marked."""
    if len(fp.t) == 0:
        raise EmptyFigureError("no time-dependent solution (barrier beyond its resolution)")
    with canvas(ax, figsize=(5.4, 3.9)) as (fig, ax):
        ax.plot(fp.t, fp.t * fp.distribution, "-", color=PALETTE[0], lw=1.5)
        if fp.mfpt_integral is not None:
            ax.axvline(fp.mfpt_integral, color=PALETTE[3], ls="--", lw=1.0,
                       label=r"$\langle t\rangle$ (double integral)")
        if fp.kramers_time is not None:
            ax.axvline(fp.kramers_time, color=PALETTE[1], ls=":", lw=1.0, label="Kramers")
        ax.set_xscale("log")
        ax.set_xlabel(r"$t/\zeta$")
        ax.set_ylabel(r"$t\,F(t)$")
        ax.legend(loc="upper left", fontsize=8)
        ax.set_title(figure_title(fp, ": first-passage times"))
    return PlotResult(fig, "first-passage", {"t": fp.t, "F": fp.distribution}, [],
                      table_data={"F": np.column_stack([fp.t, fp.distribution])})
