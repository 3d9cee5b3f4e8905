"""Figures of the analysis commands: the Ruppeiner sign map and the heat-engine cycle.

Drawing only: the curvature map comes from
:func:`bhchem.analysis.curvature.curvature_map`, the cycle and its reference isotherms
from :func:`bhchem.analysis.figure_data.cycle_curves`.  Both return a
:class:`~bhchem.present.plots.PlotResult` and accept ``ax=`` to draw into the caller's
axes.
"""
from __future__ import annotations

import numpy as np

from bhchem.core.compiled import Thermodynamics
from bhchem.analysis.curvature import CurvatureMap
from bhchem.analysis.figure_data import CycleCurves
from bhchem.present.plots import EmptyFigureError, PlotResult, canvas
from bhchem.present.style import PALETTE, figure_title, styled
from bhchem.analysis.expansion import END_PRESSURE_MAX, END_PRESSURE_MIN, ExpansionResult

#: palette index of each kind of side of a cycle
SIDE_COLOR = {"isobar": 0, "isochore": 1, "isotherm": 3, "adiabat": 4}


# -- curvature ------------------------------------------------------------------------------------
def plot_curvature(cmap: CurvatureMap, th: Thermodynamics, ax=None) -> PlotResult:
    """Sign map of R_N on the T-v plane (attractive R_N < 0, repulsive R_N > 0), with the
    sign-changing curve R_N = 0, the coexistence and spinodal curves.

    Parameters
    ----------
    cmap : CurvatureMap
        From :func:`bhchem.analysis.curvature.curvature_map`.
    th : Thermodynamics
        The family of the map (its name, parameters and variable names label the axes).
    ax : matplotlib.axes.Axes, optional
        Draw into these axes (default: a new figure).

    Returns
    -------
    PlotResult
        ``data`` holds ``R_N``, ``spinodal`` and ``coexistence``.
    """
    from matplotlib.colors import ListedColormap  # lazy: matplotlib only for a figure
    from matplotlib.patches import Patch  # lazy: as above
    from matplotlib.lines import Line2D  # lazy: as above
    from matplotlib.ticker import (  # lazy: as above
        FixedLocator, NullFormatter, StrMethodFormatter)
    if not np.any(np.isfinite(cmap.R_N)):
        raise EmptyFigureError("nothing to plot: no physical state on the T-v grid")
    cp = cmap.critical_point
    vu = cp.v if (cp is not None and cp.v is not None) else 1.0
    Tu = cp.T if cp is not None else 1.0
    vname = "v" if th.has("v") else th.derivation.state.name
    data = {"R_N": cmap.R_N}
    with canvas(ax, figsize=(5.6, 4.0)) as (fig, ax):
        sign = np.sign(cmap.R_N)
        cm = ListedColormap(["#c6dbef", "#f4c7c3"])
        ax.pcolormesh(cmap.v / vu, cmap.T / Tu, np.where(np.isfinite(sign), (sign > 0) * 1.0, np.nan),
                      cmap=cm, vmin=0, vmax=1, shading="nearest", rasterized=True)
        ax.contour(cmap.v / vu, cmap.T / Tu, cmap.R_N, levels=[0.0], colors=[PALETTE[4]],
                   linewidths=1.0, linestyles="-.")
        if len(cmap.spinodal):
            sp_ = cmap.spinodal[np.argsort(cmap.spinodal[:, 0])]
            ax.plot(sp_[:, 0] / vu, sp_[:, 1] / Tu, "--", color=PALETTE[1], lw=1.3)
            data["spinodal"] = sp_
        if len(cmap.coexistence):
            c = cmap.coexistence
            vv = np.concatenate([c[:, 1], c[::-1, 2]])
            TT = np.concatenate([c[:, 0], c[::-1, 0]])
            ax.plot(vv / vu, TT / Tu, "-", color=PALETTE[0], lw=1.6)
            data["coexistence"] = c
        if cp is not None and cp.v is not None:
            ax.plot([1.0], [1.0], "o", color="black", ms=5, zorder=5)
        ax.set_xscale("log")
        lo, hi = cmap.v[0] / vu, cmap.v[-1] / vu
        ax.set_xlim(lo, hi)
        nice = [t for t in (0.05, 0.1, 0.2, 0.3, 0.5, 1, 2, 3, 5, 10, 20, 30, 50, 100)
                if lo <= t <= hi]
        if len(nice) >= 3:
            ax.xaxis.set_major_locator(FixedLocator(nice))
            ax.xaxis.set_major_formatter(StrMethodFormatter("{x:g}"))
            ax.xaxis.set_minor_formatter(NullFormatter())
        ax.set_ylim(cmap.T[0] / Tu, cmap.T[-1] / Tu)
        ax.set_xlabel(rf"${vname}/{vname}_c$" if cp is not None else rf"${vname}$")
        ax.set_ylabel(r"$T/T_c$" if cp is not None else r"$T$")
        ax.set_title(figure_title(th, r": sign of $R_N$"))
        both = bool(np.nanmax(cmap.R_N) > 0 and np.nanmin(cmap.R_N) < 0)
        handles = [Patch(facecolor="#c6dbef", label=r"$R_N<0$ (attractive)"),
                   Patch(facecolor="#f4c7c3", label=r"$R_N>0$ (repulsive)"),
                   Patch(facecolor="white", edgecolor="#bbbbbb",
                         label="no physical state with $P>0$")]
        if not np.nanmax(cmap.R_N) > 0:
            handles.pop(1)
        if both:
            handles.append(Line2D([], [], color=PALETTE[4], ls="-.", lw=1.0, label=r"$R_N=0$"))
        handles += [Line2D([], [], color=PALETTE[0], lw=1.6, label="coexistence"),
                    Line2D([], [], color=PALETTE[1], ls="--", lw=1.3, label="spinodal")]
        if cp is not None:
            handles.append(Line2D([], [], color="black", marker="o", ls="", ms=5,
                                  label="critical point"))
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0))
        if cmap.amplitude is not None:
            a = cmap.amplitude
            ax.text(1.03, 0.02, "$R_N(1-T/T_c)^2\\to$\n" + f"{a.small.amplitude:.6f} (small)\n"
                    f"{a.large.amplitude:.6f} (large)", transform=ax.transAxes, fontsize=8,
                    va="bottom")
    table = {"R_N": np.column_stack([np.broadcast_to(cmap.v[None, :], cmap.R_N.shape).ravel(),
                                     np.broadcast_to(cmap.T[:, None], cmap.R_N.shape).ravel(),
                                     np.ravel(cmap.R_N)])}
    nan = np.full(len(data.get("spinodal", ())), np.nan)
    if "spinodal" in data:
        table["spinodal"] = np.column_stack([data["spinodal"][:, 0], data["spinodal"][:, 1], nan])
    if "coexistence" in data:
        c = data["coexistence"]
        nan = np.full(len(c), np.nan)
        table["coexistence_small"] = np.column_stack([c[:, 1], c[:, 0], nan])
        table["coexistence_large"] = np.column_stack([c[:, 2], c[:, 0], nan])
    return PlotResult(fig, "curvature", data, list(cmap.notes), columns=("v", "T", "R_N"),
                      table_data=table)


# -- heat-engine cycle ----------------------------------------------------------------------------
def plot_cycle(data: CycleCurves, ax=None) -> PlotResult:
    """The cycle in the P-V plane, sides coloured by kind, the direction of traversal
    marked, and the isotherms T_hot and T_cold of the Carnot bound.

    Parameters
    ----------
    data : CycleCurves
        From :func:`bhchem.analysis.figure_data.cycle_curves`.
    ax : matplotlib.axes.Axes, optional
        Draw into these axes (default: a new figure).

    Returns
    -------
    PlotResult
        ``data`` holds ``isotherm_hot``, ``isotherm_cold`` (rows V, P) and ``side_k``.
    """
    from matplotlib.lines import Line2D  # lazy: matplotlib only for a figure
    if not isinstance(data, CycleCurves):
        raise TypeError(f"plot_cycle draws CycleCurves (bhchem.analysis.figure_data."
                        f"cycle_curves(th, result)), not {type(data).__name__}")
    res = data.result
    drawn = {}
    with canvas(ax, figsize=(5.4, 4.0)) as (fig, ax):
        Vall = np.concatenate([s.V_path for s in res.sides])
        Pall = np.concatenate([s.P_path for s in res.sides])
        Vlo, Vhi = float(np.min(Vall)), float(np.max(Vall))
        Plo, Phi = float(np.min(Pall)), float(np.max(Pall))
        padV, padP = 0.18 * (Vhi - Vlo), 0.22 * (Phi - Plo)
        # reference isotherms T_hot, T_cold (thin grey)
        for name in ("hot", "cold"):
            if name in data.isotherms:
                iso = data.isotherms[name]
                ax.plot(iso[:, 0], iso[:, 1], color="#9a9a9a", lw=0.8, ls="--", zorder=1)
                drawn[f"isotherm_{name}"] = iso
        seen = set()
        for k, s in enumerate(res.sides):
            color = PALETTE[SIDE_COLOR[s.kind]]
            ax.plot(s.V_path, s.P_path, "-", color=color, lw=2.0, zorder=3,
                    label=s.kind + (f" (= {', '.join(s.also)})" if s.also else "")
                    if s.kind not in seen else None)
            seen.add(s.kind)
            drawn[f"side_{k}"] = np.column_stack([s.V_path, s.P_path])
            m = len(s.V_path) // 2
            ax.annotate("", xy=(s.V_path[m + 1], s.P_path[m + 1]), xytext=(s.V_path[m - 1], s.P_path[m - 1]),
                        arrowprops=dict(arrowstyle="-|>", color=color, lw=1.2, mutation_scale=12),
                        zorder=4)
        for c in res.corners:
            ax.plot([c.V], [c.P], "o", color="black", ms=4, zorder=5)
            ax.annotate(str(c.index), (c.V, c.P), xytext=(5, 4), textcoords="offset points",
                        fontsize=9)
        ax.set_xlim(Vlo - padV, Vhi + padV)
        ax.set_ylim(max(Plo - padP, 0.0), Phi + padP)
        ax.set_xlabel(r"thermodynamic volume $V$")
        ax.set_ylabel(r"pressure $P$")
        ax.set_title(figure_title(data, ": heat engine cycle"))
        handles, labels = ax.get_legend_handles_labels()
        handles.append(Line2D([], [], color="#9a9a9a", lw=0.8, ls="--"))
        labels.append(r"isotherms $T_{\rm hot}$, $T_{\rm cold}$")
        ax.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.01, 1.0))
        txt = (rf"$W = {res.work:.5g}$" + "\n" + rf"$\eta = {res.efficiency:.5g}$" + "\n"
               + rf"$\eta_C = {res.carnot:.5g}$")
        ax.text(1.03, 0.05, txt, transform=ax.transAxes, ha="left", va="bottom", fontsize=9)
    return PlotResult(fig, "engine", drawn, list(data.notes))


def plot_expansion(res: ExpansionResult, th: Thermodynamics):
    """Isenthalps and the inversion curve in the T-P plane (left), and the low-pressure
    end of the inversion curve in units of the critical point, with T_i,min (right).
    Returns a PlotResult."""
    inv = res.inversion
    data = {}
    if inv.T.size == 0 and not any(c.T.size for c in res.isenthalps):
        raise EmptyFigureError("nothing to plot: no inversion state and no isenthalp in range")
    with styled() as plt:
        fig, (ax, az) = plt.subplots(1, 2, figsize=(8.6, 3.7),
                                     gridspec_kw={"width_ratios": [1.45, 1.0]})
        Pshow = inv.pressure_range[1]
        Tmax_seen = 0.0
        for i, c in enumerate(res.isenthalps):
            if c.T.size == 0:
                continue
            color = PALETTE[(i + 1) % len(PALETTE)]
            ax.plot(c.P, c.T, "-", color=color, lw=1.3, label=f"$M={c.M:.4g}$")
            data[f"isenthalp_{i}"] = np.column_stack([c.P, c.T])
            Tmax_seen = max(Tmax_seen, float(np.max(c.T)))
            if c.T_max is not None:
                ax.plot([c.P_at_T_max], [c.T_max], "o", ms=3, color=color, zorder=6)
        if inv.T.size:
            for i, b in enumerate(inv.branches):  # one line per branch: no jump across gaps
                ax.plot(b.P, b.T, "-", color="black", lw=2.0 if b.reaches_zero_pressure else 1.4,
                        label="inversion curve" if i == 0 else None)
                data[f"inversion_branch_{i}"] = np.column_stack([b.P, b.T])
                if i + 1 < len(inv.branches) and b.ends[1] in (END_PRESSURE_MAX, END_PRESSURE_MIN):
                    c = inv.branches[i + 1]  # the two branches meet at the turning point
                    ax.plot([b.P[-1], c.P[0]], [b.T[-1], c.T[0]], "-", color="black", lw=1.4)
            data["inversion"] = np.column_stack([inv.P, inv.T])
            Tmax_seen = max(Tmax_seen, float(np.max(inv.T)))
        ax.set_xlim(0, Pshow)
        ax.set_ylim(0, 1.4 * Tmax_seen if Tmax_seen > 0 else None)  # room for the legend
        ax.set_xlabel(r"pressure $P$")
        ax.set_ylabel(r"temperature $T$")
        ax.set_title("isenthalps and the inversion curve $\\mu = 0$")
        ax.legend(loc="upper left", fontsize=7.5, ncol=2)
        # right: the low-pressure end, in units of the critical point when there is one
        if inv.T.size:
            Tu = inv.T_c if inv.T_c else 1.0
            has_cp = res.critical_pressure is not None
            Pu = res.critical_pressure if has_cp else 1.0
            m = inv.P <= (10 * Pu if has_cp else 0.1 * Pshow)
            for b in inv.branches:
                mb = b.P <= (10 * Pu if has_cp else 0.1 * Pshow)
                az.plot(b.P[mb] / Pu, b.T[mb] / Tu, "-", color="black", lw=2.0)
            if inv.T_min is not None:
                az.plot([inv.P_at_min / Pu], [inv.T_min / Tu], "o", color=PALETTE[1], ms=5,
                        zorder=5, label=r"$T_{i,\min}$")
                az.axhline(inv.T_min / Tu, color=PALETTE[1], lw=0.7, ls=":")
            if has_cp:
                az.axhline(1.0, color=PALETTE[0], lw=0.8, ls="--", label=r"$T_c$")
                az.plot([1.0], [1.0], "s", ms=4, color=PALETTE[0], label="critical point")
                if inv.ratio_to_Tc is not None:
                    txt = rf"$T_{{i,\min}}/T_c = {inv.ratio_to_Tc:.6g}$"
                    az.text(0.97, 0.06, txt, transform=az.transAxes, ha="right", fontsize=8.5)
            az.set_xlim(0, None)
            az.set_ylim(0, max(1.25, 1.1 * float(np.max(inv.T[m] / Tu))) if np.any(m) else None)
            az.set_xlabel(r"$P/P_c$" if has_cp else r"$P$")
            az.set_ylabel(r"$T/T_c$" if has_cp else r"$T$")
            az.set_title("low-pressure end of the inversion curve")
            az.legend(loc="center right", fontsize=7.5)
        else:
            az.set_visible(False)
        side = res.cooling_side
        note = "dots: maxima of the isenthalps (they lie on the inversion curve)"
        if side is not None:
            note = (f"$\\mu>0$ (cooling on expansion) {side} the inversion curve, $\\mu<0$ "
                    f"(heating) {'below' if side == 'above' else 'above'} it; " + note)
        fig.suptitle(figure_title(th, ": Joule-Thomson expansion at fixed M"), y=1.0)
        fig.text(0.5, -0.02, note, ha="center", va="top", fontsize=8, color="#404040")
        fig.tight_layout()
    return PlotResult(fig, "expansion", data, list(res.notes))
