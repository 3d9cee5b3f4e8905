"""Figures: P-v isotherms, G-T isobars, the P-T phase diagram, T-r+ isobars, C_P.

Every plot function returns a :class:`PlotResult`: the matplotlib figure and the
data it drew (so tests can check the content, not just that a file exists).
Default ranges come from the family's own scales (its critical point when there
is one).  A figure with nothing to show raises :class:`EmptyFigureError` rather
than coming out blank.

The look (``STYLE``): a muted palette readable in print, and line *styles* that
carry the meaning in greyscale too: globally preferred = thick solid; locally
stable but not preferred (metastable) = thin dashed; unstable (C_P < 0) = dotted
grey.  Lines of the phase diagram: first order solid, zeroth order dashed,
Hawking-Page dash-dot.  Critical points are filled circles, triple points
triangles, terminal points squares.
"""
from __future__ import annotations

import math
import os
from contextlib import contextmanager
from dataclasses import dataclass, field

import numpy as np

from bhchem.errors import BhchemError
from cycler import cycler
from bhchem.fileio import atomic_file
from bhchem.analysis.critical_branch import find_critical_points_on_branches
from bhchem.analysis.coexistence import _isotherm_pressure, coexistence_near_critical
from scipy.optimize import brentq
from bhchem.analysis.critical import loop_side
from bhchem.analysis.isobar import analyze_isobar
from bhchem.analysis.isobar import _x_of_T
from bhchem.analysis.phases import phase_diagram

KINDS = ("pv", "gt", "pt", "tr", "cp")

PALETTE = ["#1f4e79", "#b03a2e", "#b9770e", "#1d8348", "#6c3483", "#515a5a"]
STABLE_GREY = "#222222"
UNSTABLE_GREY = "#8c8c8c"
LINE_STYLE = {"first-order": "-", "zeroth-order": "--", "hawking-page": "-."}
LINE_COLOR = {"first-order": PALETTE[0], "zeroth-order": PALETTE[1], "hawking-page": PALETTE[3]}

STYLE = {
    "font.family": "serif",
    "font.serif": ["DejaVu Serif"],
    "mathtext.fontset": "dejavuserif",
    "font.size": 10,
    "axes.titlesize": 10,
    "axes.labelsize": 10,
    "axes.linewidth": 0.8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.prop_cycle": None,  # set below
    "xtick.direction": "in",
    "ytick.direction": "in",
    "xtick.labelsize": 9,
    "ytick.labelsize": 9,
    "legend.frameon": False,
    "legend.fontsize": 8,
    "figure.dpi": 110,
    "savefig.dpi": 200,
    "savefig.bbox": "tight",
    "lines.linewidth": 1.4,
}


class EmptyFigureError(BhchemError):
    """A figure would have come out empty."""


@dataclass
class PlotResult:
    """A figure and the data it drew.

    ``figure`` is a :class:`matplotlib.figure.Figure` made without pyplot: it is not
    registered with pyplot's global figure list, so drawing any number of figures never
    accumulates open figures, and the caller owns it (``figure.savefig(...)``, or
    ``display(figure)`` in a notebook; freed like any object when no longer referenced).
    """

    figure: object
    kind: str
    data: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)


class FigureFactory:
    """What :func:`styled` yields: ``subplots`` like pyplot's, but the figure is a plain
    :class:`matplotlib.figure.Figure` (no pyplot state, no backend chosen or changed)."""

    @staticmethod
    def subplots(nrows: int = 1, ncols: int = 1, *, figsize=None, **kw):
        """``(figure, axes)`` as :func:`matplotlib.pyplot.subplots` returns them."""
        from matplotlib.figure import Figure
        fig = Figure(figsize=figsize)
        return fig, fig.subplots(nrows, ncols, **kw)


def _style() -> dict:
    style = dict(STYLE)
    style["axes.prop_cycle"] = cycler(color=PALETTE)
    return style


@contextmanager
def styled():
    """Draw in the bhchem style: ``with styled() as mk: fig, ax = mk.subplots()``.

    The style is applied with :func:`matplotlib.rc_context`, so the caller's rcParams
    are restored on exit; the backend is never touched (a library must not call
    ``matplotlib.use``).
    """
    import matplotlib
    with matplotlib.rc_context(_style()):
        yield FigureFactory()


_styled = styled  # the name other modules of the package import


def save(result: PlotResult, path) -> str:
    """Write the figure atomically (format from the extension: png, pdf, svg).

    Written through :func:`bhchem.present.serialize.atomic_file`, so the file ends with
    0666 & ~umask like any other file; the figure itself stays the caller's.
    """
    import matplotlib
    path = os.fspath(path)
    ext = os.path.splitext(path)[1].lower().lstrip(".")
    if ext not in ("png", "pdf", "svg"):
        raise BhchemError(f"output {path}: use a .png, .pdf or .svg file name")
    directory = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(directory):
        raise BhchemError(f"output {path}: directory {directory} does not exist")
    with atomic_file(path, "wb") as fh, matplotlib.rc_context(_style()):
        result.figure.savefig(fh, format=ext, metadata=_metadata(ext))
    return path


def _metadata(ext):
    # fixed metadata so that the same figure gives the same file
    if ext == "png":
        return {"Software": "bhchem"}
    if ext == "pdf":
        return {"Creator": "bhchem", "Producer": "bhchem", "CreationDate": None}
    return {"Creator": "bhchem", "Date": None}


def _check_nonempty(data: dict, what: str):
    n = sum(int(np.sum(np.isfinite(np.asarray(v, float)))) for v in data.values()
            if isinstance(v, (list, tuple, np.ndarray)) and len(v))
    if n == 0:
        raise EmptyFigureError(f"nothing to plot for the {what}: no physical state in range")


def figure_title(th, extra=""):
    """The title of a figure: family name and parameter values, then ``extra``."""
    params = ", ".join(f"{k}={v:g}" for k, v in th.values.items())
    return f"{th.family.name} ({params}){extra}"


_title = figure_title  # the name other modules of the package import


def _scales(th):
    """The critical point that sets the figure scales: the first (by pressure) that lies
    on the globally preferred branch; else the first physical one; else None."""
    cps = find_critical_points_on_branches(th).physical
    return next((cp for cp in cps if cp.on_preferred_branch), cps[0] if cps else None)


# -- P-v isotherms --------------------------------------------------------------------
def plot_pv(th, temperatures=None) -> PlotResult:
    """P-v isotherms around T_c with the equal-area (Maxwell) construction drawn."""
    cp = _scales(th)
    if cp is not None:
        Ts = temperatures or [f * cp.T for f in (0.85, 0.92, 0.97, 1.0, 1.05, 1.12)]
        x = cp.x * np.geomspace(0.45, 4.0, 800)
        P_ref = cp.P
    else:
        x0, P0 = th.typical_state(), th.typical_pressure()
        T0 = float(th.T(x0, P0))
        Ts = temperatures or [f * T0 for f in (0.7, 1.0, 1.5, 2.2)]
        x = x0 * np.geomspace(0.3, 6.0, 800)
        P_ref = P0
    data, notes = {}, []
    with styled() as mk:
        fig, ax = mk.subplots(figsize=(5.2, 3.8))
        for i, T in enumerate(Ts):
            P = _isotherm_pressure(th, x, T, P_ref)
            ok = th.physical(x, P) & (P > 0) & np.isfinite(P)
            v = th.v(x, P)
            vv, PP = np.where(ok, v, np.nan), np.where(ok, P, np.nan)
            color = PALETTE[i % len(PALETTE)]
            label = f"$T/T_c={T / cp.T:.3g}$" if cp is not None else f"$T={T:.4g}$"
            coex = None
            if cp is not None and T < cp.T:
                coex = _coexistence_at_temperature(th, cp, T, coexistence_near_critical)
            if coex is not None:
                Pco, x1, x2 = coex
                v1, v2 = float(th.v(x1, Pco)), float(th.v(x2, Pco))
                inside = (vv > v1) & (vv < v2)
                ax.plot(np.where(inside, np.nan, vv), np.where(inside, np.nan, PP), "-",
                        color=color, label=label)
                ax.plot(np.where(inside, vv, np.nan), np.where(inside, PP, np.nan), ":",
                        color=color, lw=1.0)
                ax.plot([v1, v2], [Pco, Pco], "-", color=color, lw=0.9)
                data[f"equal_area_{i}"] = np.array([[v1, Pco], [v2, Pco]])
            else:
                ax.plot(vv, PP, "-", color=color, label=label)
            data[f"isotherm_{i}"] = np.column_stack([vv, PP])
        if cp is not None and cp.v is not None:
            ax.plot([cp.v], [cp.P], "o", color="black", ms=5, zorder=5, label="critical point")
            data["critical_point"] = np.array([cp.v, cp.P])
            ax.set_ylim(0, 2.0 * cp.P)
        _check_nonempty({k: v[:, 1] if np.ndim(v) == 2 else v for k, v in data.items()},
                        "P-v isotherms")
        ax.set_xlabel(r"specific volume $v$")
        ax.set_ylabel(r"pressure $P$")
        ax.set_title(_title(th))
        ax.legend(loc="upper right", ncol=1)
        if cp is None:
            notes.append("no critical point: isotherms at multiples of the family's typical T")
    return PlotResult(fig, "pv", data, notes)


def _coexistence_at_temperature(th, cp, T, solver):
    """(P, x1, x2) of the first-order transition ending at ``cp`` that occurs at temperature
    T: Brent's method in log P on the transition temperature of the isobar (full isobar
    analysis far from P_c, the near-critical solver close to it)."""
    side = loop_side(th, cp)

    def transition(P):
        if abs(1 - P / cp.P) < 1e-3:
            return solver(th, cp.x, cp.P, P)
        tr = [t for t in analyze_isobar(th, P).transitions if t.kind == "first-order"]
        if not tr:
            return None
        t = min(tr, key=lambda t: abs(t.T - cp.T))
        return t.T, t.states[0].x, t.states[1].x

    def f(u):
        res = transition(cp.P * (1 + side * u))
        return np.nan if res is None else res[0] - T

    grid = np.geomspace(1e-6, 0.999, 40)
    vals = np.array([f(u) for u in grid])
    ok = np.isfinite(vals)
    idx = np.nonzero(ok[:-1] & ok[1:] & (np.sign(vals[:-1]) != np.sign(vals[1:])))[0]
    if not len(idx):
        return None
    try:
        u = brentq(f, grid[idx[0]], grid[idx[0] + 1], xtol=1e-15, rtol=1e-12)
    except ValueError:
        return None
    P = cp.P * (1 + side * u)
    res = transition(P)
    if res is None:
        return None
    return P, min(res[1], res[2]), max(res[1], res[2])


# -- G-T isobars -----------------------------------------------------------------------
def _default_pressures(th, cp):
    if cp is not None:
        return [f * cp.P for f in (0.5, 0.8, 1.0, 1.4)]
    P0 = th.typical_pressure()
    return [f * P0 for f in (0.3, 1.0, 3.0, 10.0)]


def plot_gt(th, pressures=None) -> PlotResult:
    """G-T isobars: every branch, the globally preferred one emphasised."""
    cp = _scales(th)
    pressures = pressures or _default_pressures(th, cp)
    data, notes = {}, []
    n = len(pressures)
    cols = 2 if n > 1 else 1
    rows = math.ceil(n / cols)
    with styled() as mk:
        fig, axes = mk.subplots(rows, cols, figsize=(3.3 * cols, 2.7 * rows), squeeze=False)
        for i, P in enumerate(pressures):
            ax = axes[i // cols][i % cols]
            res = analyze_isobar(th, P)
            T_lo, T_hi = _gt_window(th, res, cp)
            spin = [T for b in res.branches for e, T in zip(b.ends, (b.T_at_x_min, b.T_at_x_max))
                    if e == "spinodal" and T_lo <= T <= T_hi]
            spin += [t.T for t in res.transitions if t.kind != "second-order"]
            # frame G on the swallowtail only when it spans a visible part of the window
            # (just off a critical pressure it is infinitesimal)
            if len(spin) >= 2 and max(spin) - min(spin) < 0.05 * (T_hi - T_lo):
                spin = []
            core = (min(spin), max(spin)) if len(spin) >= 2 else (T_lo, T_hi)
            G_all, G_core = [], []
            for b in res.branches:
                xs = np.geomspace(b.x_min, b.x_max, 1500)
                T, G = th.T(xs, P), th.G(xs, P)
                m = (T >= T_lo) & (T <= T_hi)
                if not np.any(m):
                    continue
                style = dict(color=STABLE_GREY, ls="--", lw=0.9) if b.stable else \
                    dict(color=UNSTABLE_GREY, ls=":", lw=1.0)
                ax.plot(np.where(m, T, np.nan), np.where(m, G, np.nan), **style)
                data[f"P{i}_branch{b.index}"] = np.column_stack([T[m], G[m]])
                G_all.append(G[m])
                G_core.append(G[(T >= core[0]) & (T <= core[1])])
            # the preferred phase
            for lo, hi, ph in res.preferred:
                lo, hi = max(lo, T_lo), min(hi, T_hi)
                if hi <= lo:
                    continue
                Tg = np.linspace(lo, hi, 400)
                Gg = _preferred_G(th, res, P, Tg, ph)
                ax.plot(Tg, Gg, "-", color=PALETTE[0], lw=2.4, solid_capstyle="butt")
                data.setdefault(f"P{i}_preferred", []).append(np.column_stack([Tg, Gg]))
                G_all.append(Gg)
            for t in res.transitions:
                if T_lo <= t.T <= T_hi and t.kind != "second-order":
                    ax.plot([t.T], [t.states[0].G], "o", ms=3.5, color=PALETTE[1], zorder=5)
            if G_all:
                Gc = np.concatenate([np.ravel(g) for g in (G_core if len(spin) >= 2 else G_all)])
                Gc = Gc[np.isfinite(Gc)]
                if Gc.size:
                    lo_, hi_ = float(np.min(Gc)), float(np.max(Gc))
                    pad = (0.5 if len(spin) >= 2 else 0.08) * (hi_ - lo_ + 1e-300)
                    ax.set_ylim(lo_ - pad, hi_ + pad)
            ax.set_xlim(T_lo, T_hi)
            from matplotlib.ticker import MaxNLocator
            ax.xaxis.set_major_locator(MaxNLocator(4))
            lbl = f"$P/P_c={P / cp.P:.3g}$" if cp is not None else f"$P={P:.3g}$"
            ax.set_title(lbl)
            ax.set_xlabel(r"$T$")
            ax.set_ylabel(r"$G$")
        for j in range(n, rows * cols):
            axes[j // cols][j % cols].set_visible(False)
        _check_nonempty({k: (v[:, 1] if isinstance(v, np.ndarray) else np.concatenate([a[:, 1] for a in v]))
                         for k, v in data.items()}, "G-T isobars")
        from matplotlib.lines import Line2D
        handles = [Line2D([], [], color=PALETTE[0], lw=2.4, label="globally preferred"),
                   Line2D([], [], color=STABLE_GREY, ls="--", lw=0.9, label="metastable"),
                   Line2D([], [], color=UNSTABLE_GREY, ls=":", label="unstable ($C_P<0$)")]
        fig.legend(handles=handles, loc="lower center", ncol=3, bbox_to_anchor=(0.5, -0.02))
        fig.suptitle(_title(th), y=1.0)
        fig.tight_layout(rect=(0, 0.05, 1, 1))
    data = {k: (np.vstack(v) if isinstance(v, list) else v) for k, v in data.items()}
    return PlotResult(fig, "gt", data, notes)


def _gt_window(th, res, cp):
    """A temperature window that frames the transitions (else the swallowtails)."""
    trans = [t.T for t in res.transitions if t.kind != "second-order"]
    if trans:
        lo, hi = min(trans), max(trans)
        pad = max(0.6 * (hi - lo), 0.06 * hi)
        return max(lo - pad, 0.0), hi + pad
    temps = []
    for b in res.branches:
        for e, T in zip(b.ends, (b.T_at_x_min, b.T_at_x_max)):
            if e == "spinodal":
                temps.append(T)
    temps = [t for t in temps if np.isfinite(t) and t > 0]
    if len(temps) >= 2:
        lo, hi = min(temps), max(temps)
        span = hi - lo
        return max(lo - 0.45 * span, 0.0), hi + 0.45 * span
    centre = temps[0] if temps else (cp.T if cp is not None else
                                     min(b.T_max for b in res.branches))
    return 0.85 * centre, 1.15 * centre


def _preferred_G(th, res, P, Ts, phase):
    if phase == res.background:
        return np.full(Ts.shape, float(th.quantity("G_background", 1.0, P)))
    br = next(b for b in res.branches if b.label == phase)
    out = np.array([np.nan if (x := _x_of_T(th, P, br, T)) is None else float(th.G(x, P))
                    for T in Ts])
    return out


# -- P-T phase diagram ---------------------------------------------------------------------
def plot_pt(th, diagram=None) -> PlotResult:
    """The P-T phase diagram: lines by kind, special points, regions labelled by phase."""
    pd = diagram or phase_diagram(th)
    data = {}
    with styled() as mk:
        fig, ax = mk.subplots(figsize=(5.2, 3.8))
        seen = set()
        for i, line in enumerate(pd.lines):
            pts = np.array(line.points, float)
            if pts.size == 0:
                continue
            lab = line.kind.replace("-", " ") if line.kind not in seen else None
            seen.add(line.kind)
            ax.plot(pts[:, 0], pts[:, 1], LINE_STYLE.get(line.kind, "-"),
                    color=LINE_COLOR.get(line.kind, "black"), lw=1.8, label=lab)
            data[f"line{i}_{line.kind}"] = pts
            for side in ("low", "high"):
                e = line.ends[side]
                if e["type"] == "terminal point":
                    ax.plot([e["T"]], [e["P"]], "s", ms=4.5, color=PALETTE[1], zorder=6)
        preferred = {(c.x, c.P): c.on_preferred_branch
                     for c in find_critical_points_on_branches(th).points}
        first = {True: True, False: True}
        for cp in pd.critical_points:
            on = bool(preferred.get((cp.x, cp.P), cp.on_preferred_branch))
            ax.plot([cp.T], [cp.P], "o", ms=6, zorder=7, color="black",
                    markerfacecolor="black" if on else "white",
                    label=("critical point" if on else "critical point (not on the preferred "
                           "branch)") if first[on] else None)
            first[on] = False
        data["critical_points"] = np.array([[cp.T, cp.P] for cp in pd.critical_points])
        for j, tp in enumerate(pd.triple_points):
            ax.plot([tp.T], [tp.P], "^", ms=7, color=PALETTE[2], zorder=7,
                    label="triple point" if j == 0 else None)
        data["triple_points"] = np.array([[tp.T, tp.P] for tp in pd.triple_points])
        _check_nonempty({k: v for k, v in data.items() if k.startswith("line")} or {"none": []},
                        "P-T phase diagram")
        allpts = np.vstack([v for k, v in data.items() if k.startswith("line")])
        Tmax = float(np.nanmax(allpts[:, 0])) * 1.25
        Pmax = float(np.nanmax(allpts[:, 1])) * 1.25
        ax.set_xlim(0, Tmax)
        ax.set_ylim(0, Pmax)
        _label_regions(ax, th, pd, Tmax, Pmax)
        _zoom_inset(ax, pd, Tmax, Pmax, data)
        ax.set_xlabel(r"temperature $T$")
        ax.set_ylabel(r"pressure $P$")
        ax.set_title(_title(th))
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0))
    return PlotResult(fig, "pt", data, [])


def _zoom_inset(ax, pd, Tmax, Pmax, data):
    """An inset around small features (zeroth-order lines, triple and terminal points) that
    would otherwise be unreadable at the scale of the whole diagram."""
    feats = []
    for line in pd.lines:
        if line.kind == "zeroth-order":
            feats += list(line.points)
        for side in ("low", "high"):
            if line.ends[side]["type"] in ("terminal point", "triple point"):
                feats.append((line.ends[side]["T"], line.ends[side]["P"]))
    feats += [(tp.T, tp.P) for tp in pd.triple_points]
    if not feats:
        return
    f = np.array(feats, float)
    t0, t1 = f[:, 0].min(), f[:, 0].max()
    p0, p1 = f[:, 1].min(), f[:, 1].max()
    if (t1 - t0) > 0.15 * Tmax or (p1 - p0) > 0.15 * Pmax:
        return
    dt = max(t1 - t0, 0.01 * Tmax)
    dp = max(p1 - p0, 0.01 * Pmax)
    box = (t0 - 0.6 * dt, t1 + 0.6 * dt, p0 - 0.6 * dp, p1 + 0.6 * dp)
    ins = ax.inset_axes([0.17, 0.56, 0.34, 0.36])
    for line in pd.lines:
        pts = np.array(line.points, float)
        if pts.size:
            ins.plot(pts[:, 0], pts[:, 1], LINE_STYLE.get(line.kind, "-"),
                     color=LINE_COLOR.get(line.kind, "black"), lw=1.4)
        for side in ("low", "high"):
            e = line.ends[side]
            if e["type"] == "terminal point":
                ins.plot([e["T"]], [e["P"]], "s", ms=3.5, color=PALETTE[1])
    for tp in pd.triple_points:
        ins.plot([tp.T], [tp.P], "^", ms=5, color=PALETTE[2])
    for cp in pd.critical_points:
        ins.plot([cp.T], [cp.P], "o", ms=4, color="black")
    ins.set_xlim(box[0], box[1])
    ins.set_ylim(box[2], box[3])
    ins.tick_params(labelsize=6)
    from matplotlib.ticker import MaxNLocator
    ins.xaxis.set_major_locator(MaxNLocator(3))
    ins.yaxis.set_major_locator(MaxNLocator(3))
    ax.indicate_inset_zoom(ins, edgecolor="#707070")
    data["inset_box"] = np.array(box)


def _label_regions(ax, th, pd, Tmax, Pmax):
    """Write each preferred phase's name at a point inside its region."""
    placed = set()
    for fy in (0.15, 0.45, 0.85):
        P = fy * Pmax
        try:
            res = analyze_isobar(th, P)
        except BhchemError:
            continue
        for lo, hi, ph in res.preferred:
            hi = min(hi, Tmax)
            if ph in placed or hi - lo < 0.12 * Tmax:
                continue
            ax.text(0.5 * (lo + hi), P, ph, ha="center", va="center", fontsize=8,
                    style="italic", color="#404040")
            placed.add(ph)


# -- T-r+ isobars and C_P ------------------------------------------------------------------
def plot_tr(th, pressures=None) -> PlotResult:
    """T along isobars against the horizon radius (or the state variable)."""
    cp = _scales(th)
    pressures = pressures or _default_pressures(th, cp)
    data = {}
    xname = "r_+" if th.derivation.state.name == "r" else th.derivation.state.name
    with styled() as mk:
        fig, ax = mk.subplots(figsize=(5.2, 3.8))
        x_c = cp.x if cp is not None else th.typical_state()
        for i, P in enumerate(pressures):
            res = analyze_isobar(th, P)
            color = PALETTE[i % len(PALETTE)]
            for b in res.branches:
                lo, hi = max(b.x_min, 0.2 * x_c), min(b.x_max, 6 * x_c)
                if hi <= lo:
                    continue
                xs = np.geomspace(lo, hi, 500)
                T = th.T(xs, P)
                ax.plot(xs, T, "-" if b.stable else ":", color=color,
                        label=(f"$P/P_c={P / cp.P:.3g}$" if cp else f"$P={P:.3g}$")
                        if b is res.branches[-1] else None)
                data[f"P{i}_branch{b.index}"] = np.column_stack([xs, T])
        _check_nonempty({k: v[:, 1] for k, v in data.items()} or {"none": []}, "T-r isobars")
        if cp is not None:
            ax.plot([cp.x], [cp.T], "o", color="black", ms=5, label="critical point")
            ax.set_ylim(0, 2.2 * cp.T)
        ax.set_xlabel(rf"${xname}$")
        ax.set_ylabel(r"temperature $T$")
        ax.set_title(_title(th, "; dotted: $C_P<0$"))
        ax.legend(loc="lower right")
    return PlotResult(fig, "tr", data, [])


def plot_cp(th, pressure=None) -> PlotResult:
    """C_P along one isobar (symmetric-log scale), spinodals marked."""
    cp = _scales(th)
    P = pressure or (0.5 * cp.P if cp is not None else th.typical_pressure())
    res = analyze_isobar(th, P)
    data = {}
    x_c = cp.x if cp is not None else th.typical_state()
    with styled() as mk:
        fig, ax = mk.subplots(figsize=(5.2, 3.8))
        for b in res.branches:
            lo, hi = max(b.x_min, 0.2 * x_c), min(b.x_max, 6 * x_c)
            if hi <= lo:
                continue
            xs = np.geomspace(lo, hi, 600)[1:-1]
            C = th.quantity("C_P", xs, P)
            ax.plot(xs, C, "-" if b.stable else ":", color=STABLE_GREY if b.stable else UNSTABLE_GREY)
            data[f"branch{b.index}"] = np.column_stack([xs, C])
            for e, x in zip(b.ends, (b.x_min, b.x_max)):
                if e == "spinodal":
                    ax.axvline(x, color=PALETTE[1], lw=0.7, ls="--")
        _check_nonempty({k: v[:, 1] for k, v in data.items()} or {"none": []}, "C_P isobar")
        allC = np.concatenate([v[:, 1] for v in data.values()])
        lin = np.nanpercentile(np.abs(allC[np.isfinite(allC)]), 20) or 1.0
        ax.set_yscale("symlog", linthresh=lin)
        ax.axhline(0, color="black", lw=0.5)
        ax.set_xlabel(r"$r_+$" if th.derivation.state.name == "r" else th.derivation.state.name)
        ax.set_ylabel(r"$C_P$")
        lbl = f"$P/P_c={P / cp.P:.3g}$" if cp is not None else f"$P={P:.3g}$"
        ax.set_title(_title(th, f", {lbl}; dashed: spinodals"))
    return PlotResult(fig, "cp", data, [])


PLOTTERS = {"pv": plot_pv, "gt": plot_gt, "pt": plot_pt, "tr": plot_tr, "cp": plot_cp}


def make_plot(kind: str, th, **kw) -> PlotResult:
    if kind not in PLOTTERS:
        raise BhchemError(f"unknown plot kind {kind!r}; choose one of {', '.join(KINDS)}")
    return PLOTTERS[kind](th, **kw)
