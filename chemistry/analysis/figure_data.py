"""The curves of every figure kind, computed once and handed to the drawing code.

One function per kind, each returning a frozen result of numpy arrays and numbers and
nothing drawn: :mod:`bhchem.present.plots` draws them, and
:func:`bhchem.workflows.figures.make_figure` does both.

==========  =======================  ==================================================
kind        function                 result
==========  =======================  ==================================================
``pv``      :func:`pv_curves`        P-v isotherms with the equal-area segments
``gt``      :func:`gt_curves`        G-T isobars: branches, preferred phase, transitions
``pt``      :func:`pt_diagram`       the P-T phase diagram with its region names
``tr``      :func:`tr_curves`        T along isobars against the state variable
``cp``      :func:`cp_curves`        C_P along one isobar, spinodals
``cycle``   :func:`cycle_curves`     a heat-engine cycle with its T_hot, T_cold isotherms
==========  =======================  ==================================================

Default ranges come from the family's own scales: the first critical point (by
pressure) on the globally preferred branch, else the first physical one, else the
family's typical state and pressure.  The framing of each panel (temperature window,
limits, inset box) is part of the data, since it follows from the analyses (where the
transitions and spinodals are), so that drawing is reading.

Every result carries ``family`` (the name), ``parameters`` (the values), ``state``
(the name of the state variable) and ``notes``.  Curves that leave the physical range
hold NaN there (a gap when drawn).
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from bhchem.core.compiled import bind
from bhchem.core.results import Result
from bhchem.errors import BhchemError
from bhchem.analysis.critical import (loop_side, resolve_pressure, resolve_temperature,
                                      scale_free_combinations, scale_free_key)
from bhchem.analysis.critical_branch import find_critical_points_on_branches
from bhchem.analysis.coexistence import coexistence_near_critical
from bhchem.numerics import brentq, isotherm_pressure
from bhchem.analysis.isobar import analyze_isobar, branch_state_at
from bhchem.analysis.phases import phase_diagram
from bhchem.analysis.isoperimetric import TOLERANCE as ISO_TOLERANCE, isoperimetric_ratio


FIGURE_KINDS = ("pv", "gt", "pt", "tr", "cp")


# -- results --------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False, repr=False)
class PvCurves(Result):
    """P-v isotherms around T_c with the equal-area (Maxwell) construction.

    Attributes
    ----------
    family, parameters, state : str, dict, str
        Which family at which parameter values; the state variable's name.
    temperatures : tuple of float
        One isotherm per temperature.
    isotherms : tuple of ndarray (n, 2)
        Rows (v, P) of each isotherm; NaN outside the physical states with P > 0.
    equal_area : tuple of (ndarray (2, 2) or None)
        Per isotherm, the coexistence segment ``[[v1, P], [v2, P]]`` (None above T_c or
        when no first-order transition ends at the critical point at that temperature).
    T_c : float or None
        Temperature of the critical point setting the scales (labels are T/T_c).
    critical_point : ndarray (2,) or None
        (v_c, P_c) when the critical point has a specific volume.
    notes : tuple of str
    """

    family: str
    parameters: dict
    state: str
    temperatures: tuple
    isotherms: tuple
    equal_area: tuple
    T_c: float | None
    critical_point: np.ndarray | None
    notes: tuple = ()
    #: in units of the critical point (v/v_c, P/P_c, T/T_c): see :func:`reduced`
    reduced: bool = False


@dataclass(frozen=True, eq=False)
class ExcludedCurve:
    """States one condition excludes, along one isobar, for drawing faintly.

    Attributes
    ----------
    panel : int
        Index of the isobar (pressure) it belongs to.
    condition : str
        The condition's name.
    curve : ndarray (n, 2)
        Rows (x, T) for the T-x figure, (T, G) for the G-T figure; finite values only.
    """

    panel: int
    condition: str
    curve: np.ndarray


def _excluded_curves(th, res, panel: int, x_window, kind: str, T_window=None) -> list:
    """The excluded ranges of an isobar (``res.excluded``) as curves inside a window."""
    out = []
    if res.excluded is None:
        return out
    P = res.pressure
    for rg in res.excluded.ranges:
        lo, hi = max(rg.x_min, x_window[0]), min(rg.x_max, x_window[1])
        if hi <= lo:
            continue
        xs = np.geomspace(lo, hi, 400)
        with np.errstate(all="ignore"):
            T = th.T(xs, P)
            rows = np.column_stack([xs, T]) if kind == "tr" else \
                np.column_stack([T, th.G(xs, P)])
        keep = np.all(np.isfinite(rows), axis=1)
        if T_window is not None:
            keep &= (T >= T_window[0]) & (T <= T_window[1])
        if np.count_nonzero(keep) >= 2:
            out.append(ExcludedCurve(panel, rg.condition, rows[keep]))
    return out


def _selection_notes(th) -> tuple:
    adm = th.admissibility
    return () if adm.is_default else (f"states: {adm.label()}",)


@dataclass(frozen=True, eq=False)
class GtBranch:
    """One branch of an isobar in the G-T plane.

    Attributes
    ----------
    index : int
        The branch index of :class:`~bhchem.analysis.isobar.IsobarResult`.
    stable : bool
        C_P > 0 along it (locally stable).
    curve : ndarray (n, 2)
        Rows (T, G); NaN outside the temperature window of the panel.
    """

    index: int
    stable: bool
    curve: np.ndarray


@dataclass(frozen=True, eq=False)
class GtPanel:
    """One isobar of the G-T figure.

    Attributes
    ----------
    pressure : float
    branches : tuple of GtBranch
        The branches with at least one state inside the window.
    preferred : tuple of ndarray (m, 2)
        Rows (T, G) of the globally preferred phase, one array per interval.
    transitions : ndarray (k, 2)
        (T, G) of the zeroth- and first-order transitions inside the window.
    T_window : (float, float)
        The temperature window: the cusps and transitions of the swallowtail with 30 % of
        their extent on each side (GT_SWALLOWTAIL_PAD; at least 1 % of T).
    G_window : (float, float) or None
        The G range to show: the swallowtail (cusps and crossing) with 30 % of its extent on
        each side when it spans 5 % of the T window or more, else every curve drawn.
    """

    pressure: float
    branches: tuple
    preferred: tuple
    transitions: np.ndarray
    T_window: tuple
    G_window: tuple | None


@dataclass(frozen=True, eq=False, repr=False)
class GtCurves(Result):
    """G-T isobars, one panel per pressure.

    Attributes
    ----------
    family, parameters, state : str, dict, str
    panels : tuple of GtPanel
    P_c : float or None
        Pressure of the critical point setting the scales (labels are P/P_c).
    notes : tuple of str
    """

    family: str
    parameters: dict
    state: str
    panels: tuple
    P_c: float | None
    notes: tuple = ()
    #: states excluded by a condition (ExcludedCurve, rows T, G), when asked for
    excluded: tuple = ()
    #: in units of the critical point (T/T_c, G/(T_c S_c), P/P_c): see :func:`reduced`
    reduced: bool = False


@dataclass(frozen=True, eq=False)
class PtLine:
    """One line of the phase diagram.

    Attributes
    ----------
    kind : str
        ``first-order``, ``zeroth-order`` or ``hawking-page``.
    points : ndarray (n, 2)
        Rows (T, P) (empty when the line has no points).
    terminal_points : ndarray (k, 2)
        (T, P) of its ends that are terminal points.
    """

    kind: str
    points: np.ndarray
    terminal_points: np.ndarray


@dataclass(frozen=True, eq=False, repr=False)
class PtDiagram(Result):
    """The P-T phase diagram as drawn.

    Attributes
    ----------
    family, parameters, state : str, dict, str
    lines : tuple of PtLine
        Every line of the phase diagram, in its order.
    critical_points : ndarray (k, 2)
        (T, P) of the diagram's critical points.
    critical_on_preferred : tuple of bool
        Per critical point: does it lie on the globally preferred branch.
    triple_points : ndarray (m, 2)
        (T, P) of the triple points.
    limits : (float, float) or None
        (T_max, P_max) of the axes (None when no line has a point).
    regions : tuple of (float, float, str)
        (T, P, name) where the name of each region holding a preferred phase is written:
        the phase's name, or ``supercritical`` for a phase that no line separates from
        another and that lies above a critical point (the continuation of the phases that
        meet there).  Never inside the inset (:data:`INSET_AXES`).
    inset_box : (float, float, float, float) or None
        (T_lo, T_hi, P_lo, P_hi) of a zoom inset around small features (zeroth-order
        lines, triple and terminal points), or None when they are readable as they are.
    notes : tuple of str
    pointers : tuple of (float, float, str, float, float)
        (T, P, name, T_text, P_text): a region too narrow for its name, named from
        (T_text, P_text) with an arrow to (T, P).
    """

    family: str
    parameters: dict
    state: str
    lines: tuple
    critical_points: np.ndarray
    critical_on_preferred: tuple
    triple_points: np.ndarray
    limits: tuple | None
    regions: tuple
    inset_box: tuple | None
    notes: tuple = ()
    pointers: tuple = ()
    #: in units of a critical point (T/T_c, P/P_c): see :func:`reduced`
    reduced: bool = False


#: where the zoom inset of a P-T figure sits, in axes fractions (x0, y0, width, height)
INSET_AXES = (0.17, 0.56, 0.34, 0.36)


@dataclass(frozen=True, eq=False)
class StateBranch:
    """One branch of an isobar against the state variable.

    Attributes
    ----------
    index : int
    stable : bool
        C_P > 0 along it.
    curve : ndarray (n, 2)
        Rows (x, y): y = T for :class:`TrCurves`, y = C_P for :class:`CpCurves`.
    last : bool
        The last branch of its isobar (the one the legend names).
    spinodals : tuple of float
        States x where the branch ends at a spinodal.
    """

    index: int
    stable: bool
    curve: np.ndarray
    last: bool
    spinodals: tuple = ()


@dataclass(frozen=True, eq=False, repr=False)
class TrCurves(Result):
    """T along isobars against the horizon radius (or the state variable).

    Attributes
    ----------
    family, parameters, state : str, dict, str
    pressures : tuple of float
    isobars : tuple of tuple of StateBranch
        Per pressure, its branches inside the x range shown.
    P_c : float or None
        Pressure of the critical point setting the scales (labels are P/P_c).
    critical_point : ndarray (2,) or None
        (x_c, T_c).
    notes : tuple of str
    super_entropic : ndarray (k, 2)
        Rows (x, T) of the drawn states with a reverse isoperimetric ratio R < 1
        (:mod:`bhchem.analysis.isoperimetric`); empty for most families.
    """

    family: str
    parameters: dict
    state: str
    pressures: tuple
    isobars: tuple
    P_c: float | None
    critical_point: np.ndarray | None
    notes: tuple = ()
    #: states excluded by a condition (ExcludedCurve, rows x, T), when asked for
    excluded: tuple = ()
    super_entropic: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))
    #: in units of the critical point (x/x_c, T/T_c, P/P_c): see :func:`reduced`
    reduced: bool = False


@dataclass(frozen=True, eq=False, repr=False)
class CpCurves(Result):
    """C_P along one isobar, with the spinodals.

    Attributes
    ----------
    family, parameters, state : str, dict, str
    pressure : float
    branches : tuple of StateBranch
        Rows (x, C_P) of each branch inside the x range shown.
    P_c : float or None
    linthresh : float or None
        Linear range of the symmetric-log C_P axis (the 20th percentile of |C_P|); None
        when there is no finite value.
    notes : tuple of str
    """

    family: str
    parameters: dict
    state: str
    pressure: float
    branches: tuple
    P_c: float | None
    linthresh: float | None
    notes: tuple = ()
    #: in units of the critical point (x/x_c, C_P/S_c, P/P_c): see :func:`reduced`
    reduced: bool = False


@dataclass(frozen=True, eq=False, repr=False)
class CycleCurves(Result):
    """A heat-engine cycle and the isotherms of its Carnot bound.

    Attributes
    ----------
    family, parameters, state : str, dict, str
    result : EngineResult
        The analysed cycle (sides with their P-V paths, corners, work, efficiencies).
    isotherms : dict
        ``'hot'``, ``'cold'`` -> ndarray (n, 2) of rows (V, P) on the isotherms T_hot and
        T_cold (NaN where the isotherm has no positive pressure); a key is missing when
        that isotherm has no such state in range.
    notes : tuple of str
    """

    family: str
    parameters: dict
    state: str
    result: object
    isotherms: dict
    notes: tuple = ()


def _identity(th) -> dict:
    return {"family": th.family.name, "parameters": dict(th.values),
            "state": th.derivation.state.name}


def scale_point(th):
    """The critical point that sets the figure scales: the first (by pressure) that lies
    on the globally preferred branch; else the first physical one; else None."""
    cps = find_critical_points_on_branches(th).physical
    return next((cp for cp in cps if cp.on_preferred_branch), cps[0] if cps else None)


def default_pressures(th, cp=None) -> list:
    """Pressures of the isobar figures: 0.5, 0.8, 1, 1.4 P_c (or multiples of the
    family's typical pressure without a critical point)."""
    if cp is not None:
        return [f * cp.P for f in (0.5, 0.8, 1.0, 1.4)]
    P0 = th.typical_pressure()
    return [f * P0 for f in (0.3, 1.0, 3.0, 10.0)]


# -- P-v isotherms --------------------------------------------------------------------------
def pv_curves(th, temperatures=None) -> PvCurves:
    """P-v isotherms around T_c with their equal-area (Maxwell) segments.

    Parameters
    ----------
    th : Thermodynamics
    temperatures : sequence of float or str, optional
        Absolute, or relative to a critical point like pressures (``'0.9Tc'``, see
        :func:`bhchem.analysis.critical.resolve_temperature`).  Default 0.85, 0.92, 0.97, 1,
        1.05, 1.12 T_c (without a critical point: 0.7, 1, 1.5, 2.2 times the family's
        typical temperature).

    Returns
    -------
    PvCurves
    """
    if temperatures is not None:
        temperatures = [resolve_temperature(th, T) for T in temperatures]
    cp = scale_point(th)
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
    isotherms, segments = [], []
    for T in Ts:
        P = isotherm_pressure(th, x, T, P_ref, allow_negative=True)
        ok = th.physical(x, P) & (P > 0) & np.isfinite(P)
        v = th.v(x, P)
        isotherms.append(np.column_stack([np.where(ok, v, np.nan), np.where(ok, P, np.nan)]))
        coex = None
        if cp is not None and T < cp.T:
            coex = coexistence_at_temperature(th, cp, T)
        if coex is None:
            segments.append(None)
        else:
            Pco, x1, x2 = coex
            v1, v2 = float(th.v(x1, Pco)), float(th.v(x2, Pco))
            segments.append(np.array([[v1, Pco], [v2, Pco]]))
    notes = () if cp is not None else \
        ("no critical point: isotherms at multiples of the family's typical T",)
    return PvCurves(**_identity(th), temperatures=tuple(float(T) for T in Ts),
                    isotherms=tuple(isotherms), equal_area=tuple(segments),
                    T_c=cp.T if cp is not None else None,
                    critical_point=np.array([cp.v, cp.P])
                    if cp is not None and cp.v is not None else None,
                    notes=notes)


def coexistence_at_temperature(th, cp, T, solver=coexistence_near_critical):
    """The first-order transition ending at ``cp`` that occurs at temperature T.

    Brent's method in log P on the transition temperature of the isobar (full isobar
    analysis far from P_c, ``solver`` -- the near-critical solver -- close to it).

    Returns
    -------
    (P, x1, x2) or None
        The pressure and the coexisting states (x1 < x2); None when no such transition
        is bracketed.
    """
    side = loop_side(th, cp)

    def transition(P):
        if abs(1 - P / cp.P) < 1e-3:
            return solver(th, cp.x, cp.P, P)
        tr = [t for t in analyze_isobar(th, P, report_excluded=False).transitions if t.kind == "first-order"]
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


# -- G-T isobars -----------------------------------------------------------------------------
def gt_curves(th, pressures=None, show_excluded: bool = False) -> GtCurves:
    """G-T isobars: every branch, the globally preferred phase and the transitions.

    Parameters
    ----------
    th : Thermodynamics
    pressures : sequence of float or str, optional
        Absolute, or relative to a critical point (``'0.5Pc'``, see
        :func:`bhchem.analysis.critical.resolve_pressure`).  Default :func:`default_pressures`.
    show_excluded : bool
        Also return the states the binding's conditions exclude (``excluded``), inside
        each panel's temperature window, to be drawn faintly and labelled by condition.

    Returns
    -------
    GtCurves
    """
    cp = scale_point(th)
    pressures = [resolve_pressure(th, P) for P in pressures] if pressures else \
        default_pressures(th, cp)
    panels, excluded = [], []
    for i, P in enumerate(pressures):
        panel = _gt_panel(th, P, cp)
        panels.append(panel)
        if show_excluded:
            res = analyze_isobar(th, P)
            excluded += _excluded_curves(th, res, i, res.state_range, "gt", panel.T_window)
    return GtCurves(**_identity(th), panels=tuple(panels),
                    P_c=cp.P if cp is not None else None, notes=_selection_notes(th),
                    excluded=tuple(excluded))


def _gt_panel(th, P, cp) -> GtPanel:
    res = analyze_isobar(th, P)
    tail = _swallowtail_points(th, res, P)
    T_lo, T_hi = _gt_window(res, cp, tail)
    tail = [(T, G) for T, G in tail if T_lo <= T <= T_hi]
    Ts = [T for T, _ in tail]
    # frame G on the swallowtail only when it spans a visible part of the window
    # (just off a critical pressure it is infinitesimal)
    framed = len(Ts) >= 2 and max(Ts) - min(Ts) >= 0.05 * (T_hi - T_lo)
    G_all, branches, preferred = [], [], []
    for b in res.branches:
        xs = np.geomspace(b.x_min, b.x_max, 1500)
        T, G = th.T(xs, P), th.G(xs, P)
        m = (T >= T_lo) & (T <= T_hi)
        if not np.any(m):
            continue
        branches.append(GtBranch(b.index, bool(b.stable),
                                 np.column_stack([np.where(m, T, np.nan),
                                                  np.where(m, G, np.nan)])))
        G_all.append(G[m])
    for lo, hi, ph in res.preferred:
        lo, hi = max(lo, T_lo), min(hi, T_hi)
        if hi <= lo:
            continue
        Tg = np.linspace(lo, hi, 400)
        Gg = _preferred_G(th, res, P, Tg, ph)
        preferred.append(np.column_stack([Tg, Gg]))
        G_all.append(Gg)
    marks = [(t.T, t.states[0].G) for t in res.transitions
             if T_lo <= t.T <= T_hi and t.kind != "second-order"]
    G_window = None
    if framed:
        G_window = _padded([G for _, G in tail], GT_SWALLOWTAIL_PAD)
    elif G_all:
        Gc = np.concatenate([np.ravel(g) for g in G_all])
        Gc = Gc[np.isfinite(Gc)]
        if Gc.size:
            G_window = _padded(Gc, 0.08)
    return GtPanel(pressure=float(P), branches=tuple(branches), preferred=tuple(preferred),
                   transitions=np.array(marks, float).reshape(-1, 2),
                   T_window=(T_lo, T_hi), G_window=G_window)


#: margin on each side of the swallowtail, as a fraction of its extent: the swallowtail
#: then fills 1/(1 + 2 * 0.3) = 62 % of the window along T and G (a paper's framing), the
#: rest shows the neighbouring branches leaving it
GT_SWALLOWTAIL_PAD = 0.3
#: least margin along T, as a fraction of the temperature (a swallowtail just off a
#: critical pressure is infinitesimal: it is still drawn with its branches around it)
GT_LEAST_T_PAD = 0.01


def _padded(values, pad: float) -> tuple:
    lo, hi = float(np.min(values)), float(np.max(values))
    width = hi - lo if hi > lo else max(abs(hi), 1e-300)
    return lo - pad * width, hi + pad * width


def _swallowtail_points(th, res, P) -> list:
    """(T, G) of the cusps (spinodal ends of branches, T > 0) and of the zeroth- and
    first-order transitions (the crossings of the preferred phase) of the isobar."""
    pts = []
    for b in res.branches:
        for e, T, x in zip(b.ends, (b.T_at_x_min, b.T_at_x_max), (b.x_min, b.x_max)):
            if e == "spinodal" and np.isfinite(T) and T > 0:
                pts.append((float(T), float(th.G(x, P))))
    pts += [(t.T, t.states[0].G) for t in res.transitions if t.kind != "second-order"]
    return [(T, G) for T, G in pts if np.isfinite(T) and np.isfinite(G)]


def _gt_window(res, cp, tail=()):
    """A temperature window framing the swallowtails: every cusp (spinodal) and every
    zeroth-/first-order transition, ``tail`` as from :func:`_swallowtail_points`, with a
    margin of GT_SWALLOWTAIL_PAD of their extent (at least GT_LEAST_T_PAD of T) each side;
    one transition alone is framed by +-6 %, one cusp alone by +-15 %."""
    temps = sorted({T for T, _ in tail})
    if len(temps) >= 2:
        lo, hi = temps[0], temps[-1]
        pad = max(GT_SWALLOWTAIL_PAD * (hi - lo), GT_LEAST_T_PAD * hi)
        return max(lo - pad, 0.0), hi + pad
    trans = [t.T for t in res.transitions if t.kind != "second-order"]
    if trans:
        return max(0.94 * trans[0], 0.0), 1.06 * trans[0]
    centre = temps[0] if temps else (cp.T if cp is not None else
                                     min(b.T_max for b in res.branches))
    return 0.85 * centre, 1.15 * centre


def _preferred_G(th, res, P, Ts, phase):
    if phase == res.background:
        return np.full(Ts.shape, float(th.quantity("G_background", 1.0, P)))
    br = next(b for b in res.branches if b.label == phase)
    return np.array([np.nan if (x := branch_state_at(th, P, br, T)) is None
                     else float(th.G(x, P)) for T in Ts])


# -- P-T phase diagram -----------------------------------------------------------------------
def pt_diagram(th, diagram=None) -> PtDiagram:
    """The P-T phase diagram with the names of the preferred phases placed in their regions.

    Parameters
    ----------
    th : Thermodynamics
    diagram : PhaseDiagram, optional
        A diagram already computed for ``th`` (default: :func:`phase_diagram`).

    Returns
    -------
    PtDiagram
    """
    pd = diagram or phase_diagram(th)
    lines = []
    for line in pd.lines:
        ends = [(line.ends[s]["T"], line.ends[s]["P"]) for s in ("low", "high")
                if line.ends[s]["type"] == "terminal point"]
        lines.append(PtLine(line.kind, np.array(line.points, float),
                            np.array(ends, float).reshape(-1, 2)))
    preferred = {(c.x, c.P): c.on_preferred_branch
                 for c in find_critical_points_on_branches(th).points}
    on_preferred = tuple(bool(preferred.get((cp.x, cp.P), cp.on_preferred_branch))
                         for cp in pd.critical_points)
    drawn = [ln.points for ln in lines if ln.points.size]
    allpts = np.vstack(drawn) if drawn else np.zeros((0, 2))
    limits, regions, box, pointers = None, (), None, ()
    if np.any(np.isfinite(allpts)):
        Tmax = float(np.nanmax(allpts[:, 0])) * 1.25
        Pmax = float(np.nanmax(allpts[:, 1])) * 1.25
        limits = (Tmax, Pmax)
        box = _inset_box(pd, Tmax, Pmax)
        regions, pointers = _regions(th, pd, Tmax, Pmax, box is not None)
    return PtDiagram(**_identity(th), lines=tuple(lines),
                     critical_points=np.array([[cp.T, cp.P] for cp in pd.critical_points]),
                     critical_on_preferred=on_preferred,
                     triple_points=np.array([[tp.T, tp.P] for tp in pd.triple_points]),
                     limits=limits, regions=regions, inset_box=box, pointers=pointers)


def _inset_box(pd, Tmax, Pmax):
    """The box of an inset around small features (zeroth-order lines, triple and terminal
    points) that would otherwise be unreadable at the scale of the whole diagram."""
    feats = []
    for line in pd.lines:
        if line.kind == "zeroth-order":
            feats += list(line.points)
        for side in ("low", "high"):
            if line.ends[side]["type"] in ("terminal point", "triple point"):
                feats.append((line.ends[side]["T"], line.ends[side]["P"]))
    feats += [(tp.T, tp.P) for tp in pd.triple_points]
    if not feats:
        return None
    f = np.array(feats, float)
    t0, t1 = f[:, 0].min(), f[:, 0].max()
    p0, p1 = f[:, 1].min(), f[:, 1].max()
    if (t1 - t0) > 0.15 * Tmax or (p1 - p0) > 0.15 * Pmax:
        return None
    dt = max(t1 - t0, 0.01 * Tmax)
    dp = max(p1 - p0, 0.01 * Pmax)
    return (t0 - 0.6 * dt, t1 + 0.6 * dt, p0 - 0.6 * dp, p1 + 0.6 * dp)


def _regions(th, pd, Tmax, Pmax, inset: bool):
    """Where to name each region that holds a preferred phase: ``(regions, pointers)``.

    For every phase of ``pd.regions``, isobars across its pressure range give the widest
    T interval where it is preferred (clipped to the axes, outside the inset); a name is
    written there when the interval is at least a tenth of the T axis, else pointed at
    from free space.  The name is the diagram's (:func:`bhchem.analysis.phases.region_name`:
    ``supercritical`` for a phase no line separates from another, above a critical point),
    the same that ``bhchem phases`` prints."""
    cache = {}

    def preferred(P):
        if P not in cache:
            try:
                cache[P] = analyze_isobar(th, P).preferred
            except BhchemError:
                cache[P] = ()
        return cache[P]

    def in_inset(T, P):
        x0, y0, w, h = INSET_AXES
        return inset and x0 - 0.05 <= T / Tmax <= x0 + w + 0.05 and \
            y0 - 0.05 <= P / Pmax <= y0 + h + 0.05

    regions, pointers, placed = [], [], []
    for reg in pd.regions:
        ph = reg["phase"]
        lo, hi = max(reg["P_range"][0], 0.04 * Pmax), min(reg["P_range"][1], 0.96 * Pmax)
        if not lo < hi:
            continue
        name = reg["name"]  # the diagram's own name (phases.region_name)
        best = None
        for f in (0.5, 0.3, 0.7, 0.12, 0.88):  # ties keep the middle
            P = lo + f * (hi - lo)
            for a, b, p in preferred(P):
                a, b = max(a, 0.0), min(b, Tmax)
                if p != ph or b <= a:
                    continue
                for u in (0.5, 0.75, 0.25):  # the middle, else beside the inset or a label
                    T = a + u * (b - a)
                    if in_inset(T, P) or any(abs(T - t) < 0.12 * Tmax and abs(P - q) < 0.08 * Pmax
                                             for t, q in placed):
                        continue
                    if best is None or b - a > best[0]:
                        best = (b - a, T, P)
                    break
        if best is None:
            continue
        width, T, P = best
        placed.append((T, P))
        if width >= 0.1 * Tmax:
            regions.append((T, P, name))
        else:  # too narrow for its name: written away from it, with an arrow
            spots = [(T + dx * Tmax, P + dy * Pmax) for dx, dy in
                     ((0.14, -0.25), (-0.2, -0.25), (0.14, 0.2), (-0.2, 0.2), (-0.3, -0.4),
                      (0.14, -0.12), (-0.2, -0.12))]
            free = [(tx, ty) for tx, ty in spots
                    if 0.12 * Tmax <= tx <= 0.88 * Tmax and 0.05 * Pmax <= ty <= 0.95 * Pmax
                    and not in_inset(tx, ty)
                    and all(abs(tx - t) >= 0.2 * Tmax or abs(ty - q) >= 0.1 * Pmax
                            for t, q in placed[:-1])]
            tx, ty = free[0] if free else spots[0]
            placed.append((tx, ty))
            pointers.append((T, P, name, tx, ty))
    return tuple(regions), tuple(pointers)


# -- T-r+ isobars and C_P --------------------------------------------------------------------
def tr_curves(th, pressures=None, show_excluded: bool = False) -> TrCurves:
    """T along isobars against the state variable, over 0.2 to 6 times x_c.

    Parameters
    ----------
    th : Thermodynamics
    pressures : sequence of float, optional
        Default :func:`default_pressures`.
    show_excluded : bool
        Also return the states the binding's conditions exclude (``excluded``), to be
        drawn faintly and labelled by condition.

    Returns
    -------
    TrCurves
    """
    cp = scale_point(th)
    pressures = [resolve_pressure(th, P) for P in pressures] if pressures else \
        default_pressures(th, cp)
    x_c = cp.x if cp is not None else th.typical_state()
    isobars, excluded = [], []
    low = []
    for i, P in enumerate(pressures):
        res = analyze_isobar(th, P)
        if show_excluded:
            excluded += _excluded_curves(th, res, i, (0.2 * x_c, 6 * x_c), "tr")
        branches = []
        for b in res.branches:
            lo, hi = max(b.x_min, 0.2 * x_c), min(b.x_max, 6 * x_c)
            if hi <= lo:
                continue
            xs = np.geomspace(lo, hi, 500)
            T = th.T(xs, P)
            branches.append(StateBranch(b.index, bool(b.stable), np.column_stack([xs, T]),
                                        last=b is res.branches[-1]))
            if th.family.gravitational:
                with np.errstate(invalid="ignore"):
                    sel = isoperimetric_ratio(th, xs, P) < 1 - ISO_TOLERANCE
                low.append(np.column_stack([xs[sel], T[sel]]))
        isobars.append(tuple(branches))
    return TrCurves(**_identity(th), pressures=tuple(float(P) for P in pressures),
                    isobars=tuple(isobars), P_c=cp.P if cp is not None else None,
                    critical_point=np.array([cp.x, cp.T]) if cp is not None else None,
                    notes=_selection_notes(th), excluded=tuple(excluded),
                    super_entropic=np.concatenate(low) if low else np.zeros((0, 2)))


def cp_curves(th, pressure=None) -> CpCurves:
    """C_P along one isobar over 0.2 to 6 times x_c, with the spinodal states.

    Parameters
    ----------
    th : Thermodynamics
    pressure : float, optional
        Default 0.5 P_c (without a critical point: the family's typical pressure).

    Returns
    -------
    CpCurves
    """
    cp = scale_point(th)
    P = resolve_pressure(th, pressure) if pressure is not None else \
        (0.5 * cp.P if cp is not None else th.typical_pressure())
    res = analyze_isobar(th, P)
    x_c = cp.x if cp is not None else th.typical_state()
    branches = []
    for b in res.branches:
        lo, hi = max(b.x_min, 0.2 * x_c), min(b.x_max, 6 * x_c)
        if hi <= lo:
            continue
        xs = np.geomspace(lo, hi, 600)[1:-1]
        C = th.quantity("C_P", xs, P)
        spin = tuple(x for e, x in zip(b.ends, (b.x_min, b.x_max)) if e == "spinodal")
        branches.append(StateBranch(b.index, bool(b.stable), np.column_stack([xs, C]),
                                    last=b is res.branches[-1], spinodals=spin))
    linthresh = None
    if branches:
        allC = np.concatenate([b.curve[:, 1] for b in branches])
        finite = np.abs(allC[np.isfinite(allC)])
        if finite.size:
            linthresh = float(np.nanpercentile(finite, 20) or 1.0)
    return CpCurves(**_identity(th), pressure=float(P), branches=tuple(branches),
                    P_c=cp.P if cp is not None else None, linthresh=linthresh)


# -- heat-engine cycle -----------------------------------------------------------------------
def cycle_curves(th, result) -> CycleCurves:
    """A cycle of :func:`~bhchem.analysis.engines.analyze_cycle` with the isotherms at
    its extreme temperatures T_hot and T_cold (over x from a third of the smallest corner
    state to three times the largest).

    Parameters
    ----------
    th : Thermodynamics
        The family the cycle was analysed for.
    result : EngineResult

    Returns
    -------
    CycleCurves
    """
    Pall = np.concatenate([s.P_path for s in result.sides])
    xs_all = np.array([c.x for c in result.corners])
    isotherms = {}
    for T, name in ((result.T_hot, "hot"), (result.T_cold, "cold")):
        xs = np.geomspace(np.min(xs_all) / 3, np.max(xs_all) * 3, 600)
        P = isotherm_pressure(th, xs, T, np.full(xs.shape, np.mean(Pall)))
        ok = np.isfinite(P) & (P > 0)
        if np.any(ok):
            V = np.where(ok, th.V(xs, np.where(ok, P, 1.0)), np.nan)
            isotherms[name] = np.column_stack([V, np.where(ok, P, np.nan)])
    return CycleCurves(**_identity(th), result=result, isotherms=isotherms,
                       notes=tuple(result.notes))


FIGURE_DATA = {"pv": pv_curves, "gt": gt_curves, "pt": pt_diagram, "tr": tr_curves,
               "cp": cp_curves}


def figure_data(th, kind: str, **options):
    """The data of the figure ``kind`` (one of :data:`FIGURE_KINDS`).

    Parameters
    ----------
    th : Thermodynamics
    kind : str
    **options
        Passed to the kind's function (``temperatures``, ``pressures``, ``pressure``,
        ``diagram``).

    Returns
    -------
    PvCurves, GtCurves, PtDiagram, TrCurves or CpCurves

    Raises
    ------
    BhchemError
        For an unknown kind.
    """
    if kind not in FIGURE_DATA:
        raise BhchemError(f"unknown plot kind {kind!r}; choose one of {', '.join(FIGURE_KINDS)}")
    return FIGURE_DATA[kind](th, **options)


# -- overlays over a parameter -------------------------------------------------------------------
@dataclass(frozen=True, eq=False, repr=False)
class OverlayData(Result):
    """The data of one figure kind at several values of one parameter (one curve family
    per value, drawn on the same axes by :func:`bhchem.present.plots.plot_overlay`).

    Attributes
    ----------
    family : str
    parameters : dict
        The parameters held fixed (the varied one is left out).
    kind : str
    name : str
        The varied parameter.
    values : tuple of float
    members : tuple
        The figure data (:class:`PvCurves`, ...) at each value, in the order of ``values``.
    notes : tuple of str
    """

    family: str
    parameters: dict
    kind: str
    name: str
    values: tuple
    members: tuple
    notes: tuple = ()


def overlay_data(th, kind: str, name: str, values, reduced_units: bool = False,
                 **options) -> OverlayData:
    """The data of the figure ``kind`` at each value of the parameter ``name``.

    Relative temperatures and pressures (``'0.9Tc'``, ``'0.5Pc'``) are resolved at each
    value against that value's own critical point, so the curves compare corresponding
    states.  Defaults: ``pv`` one isotherm at 0.9 T_c; ``gt``, ``tr``, ``cp`` one pressure,
    0.5 P_c (without a critical point: the family's first default pressure).

    Parameters
    ----------
    th : Thermodynamics
        The binding whose other parameters and condition selection are kept.
    kind : str
    name : str
    values : sequence of float
    reduced_units : bool
        Each member in units of its own critical point (:func:`reduced`): values that only
        set the scale then give one curve.
    **options
        ``temperatures`` (pv), ``pressures`` (gt, tr; one each), ``pressure`` (cp).

    Returns
    -------
    OverlayData

    Raises
    ------
    BhchemError
        An unknown kind or parameter, fewer than one or more than 8 values, or more than
        one pressure for gt, tr.
    """
    if kind not in FIGURE_DATA:
        raise BhchemError(f"unknown plot kind {kind!r}; choose one of {', '.join(FIGURE_KINDS)}")
    if name not in th.values:
        raise BhchemError(f"--vary {name}: {th.family.name} has no parameter {name!r} "
                          f"(it has {', '.join(th.values) or 'none'})")
    values = tuple(float(v) for v in values)
    if not 1 <= len(values) <= 8:
        raise BhchemError(f"--vary {name}: give 1 to 8 values, not {len(values)}")
    adm = th.admissibility
    members, bound = [], []
    for value in values:
        member = bind(th.family, conditions=adm.set_name, without=adm.removed,
                      **{**th.values, name: value})
        data = FIGURE_DATA[kind](member, **_member_options(member, kind, options))
        members.append(reduced(data, member) if reduced_units else data)
        bound.append(member)
    fixed = {k: v for k, v in th.values.items() if k != name}
    notes = _selection_notes(th)
    scale = scale_only_note(bound, name)
    if reduced_units and len(members) > 1 and _coincide(members):
        notes += (f"the curves coincide in reduced variables: {name} only sets the scale"
                  + (f" ({scale})" if scale else ""),)
    elif scale:
        notes += (f"{name} only sets the scale ({scale}): in reduced variables "
                  f"(--reduced, reduced_units=True) the curves coincide",)
    return OverlayData(th.family.name, fixed, kind, name, values, tuple(members), notes)


def scale_only_note(bound, name: str) -> str:
    """When the bindings ``bound`` (one per value of the parameter ``name``) differ only by
    scale -- equal :func:`~bhchem.analysis.critical.scale_free_key`, so every scale-free
    combination is the same at every value -- what stays fixed, named: ``'the scale-free
    combination mu/Q^3 = 0 is the same at every value'`` (or ``'Q is the only dimensionful
    parameter'``); else ``''``."""
    if len(bound) < 2 or bound[0].derivation.length_dimensions.get(name, 0) == 0:
        return ""
    keys = [scale_free_key(b) for b in bound]
    if any(k != keys[0] for k in keys[1:]):
        return ""
    combos = scale_free_combinations(bound[0], name)
    if not combos:
        return f"{name} is the only dimensionful parameter"
    listed = ", ".join(f"{k} = {v:.6g}" for k, v in combos.items())
    return (f"the scale-free combination{'s' if len(combos) > 1 else ''} {listed} "
            f"{'are' if len(combos) > 1 else 'is'} the same at every value")


def _curves(data) -> list:
    if isinstance(data, PvCurves):
        return list(data.isotherms)
    if isinstance(data, TrCurves):
        return [b.curve for iso in data.isobars for b in iso]
    if isinstance(data, PtDiagram):
        return [ln.points for ln in data.lines]
    if isinstance(data, GtCurves):
        return [b.curve for p in data.panels for b in p.branches] + \
            [seg for p in data.panels for seg in p.preferred]
    if isinstance(data, CpCurves):
        return [b.curve for b in data.branches]
    return []


def _coincide(members) -> bool:
    """Every reduced curve of every member equals the first member's (to 1e-7, 1e-9 near 0)."""
    first = _curves(members[0])
    for m in members[1:]:
        other = _curves(m)
        if len(other) != len(first) or not first:
            return False
        for a, b in zip(first, other):
            if a.shape != b.shape or not np.allclose(a, b, rtol=1e-7, atol=1e-9, equal_nan=True):
                return False
    return True


def _member_options(th, kind: str, options: dict) -> dict:
    """The options of one member of an overlay, relative values resolved for ``th``."""
    opts = dict(options)
    if kind == "pv":
        opts["temperatures"] = list(opts.get("temperatures") or ["0.9Tc"]) \
            if scale_point(th) is not None or opts.get("temperatures") else None
    elif kind in ("gt", "tr"):
        given = opts.get("pressures")
        if given is not None and len(given) != 1:
            raise BhchemError(f"an overlay of {kind} figures draws one pressure per value, "
                              f"not {len(given)}")
        opts["pressures"] = [resolve_pressure(th, given[0]) if given else
                             default_pressures(th, scale_point(th))[0]]
    elif kind == "cp":
        given = opts.get("pressure")
        opts["pressure"] = resolve_pressure(th, given) if given is not None else \
            default_pressures(th, scale_point(th))[0]
    return opts


# -- reduced variables ----------------------------------------------------------------------
def reduced(data, th=None):
    """The same figure data in units of the critical point, every axis scale-free:

    ======  ==========================================================================
    kind    axes (and the pressures or temperatures that label the curves)
    ======  ==========================================================================
    pv      v/v_c, P/P_c (T/T_c)
    tr      x/x_c, T/T_c (P/P_c)
    pt      T/T_c, P/P_c
    gt      T/T_c, G/(T_c S_c) (P/P_c): G = M - TS in units of T_c S_c, the product of
            the critical temperature and the entropy there (the dimension of G, and
            positive for every black hole, where G_c itself can be near zero or change
            sign along a coupling: 0.29 against T_c S_c = 3.4 for 5D Gauss-Bonnet at
            alpha = 0.1, Q = 1).  For 4D charged AdS T_c S_c = G_c = sqrt(6) Q/3.  The
            sign and zero of G are kept, so the background G = 0 and the crossings stay
            where they are
    cp      x/x_c, C_P/S_c (P/P_c): C_P = T (dS/dT)_P in units of the entropy at the
            critical point (C_P has the dimension of S)
    ======  ==========================================================================

    This is how papers draw families whose parameters only set the scale: in these
    variables the curves of every value coincide (e.g. Kubiznak & Mann, JHEP 07 (2012)
    033, for 4D charged AdS).  For ``pv`` and ``tr`` the critical point is the data's own;
    for ``pt``, ``gt`` and ``cp`` the scale critical point of ``th`` (see :func:`scale_point`).

    Parameters
    ----------
    data : PvCurves, TrCurves, PtDiagram, GtCurves or CpCurves
    th : Thermodynamics, optional
        Needed for a PtDiagram, GtCurves and CpCurves.

    Returns
    -------
    The same type, with ``reduced=True``.

    Raises
    ------
    BhchemError
        Without a critical point to reduce by (for gt also when T_c S_c is not positive), or for another
        kind of data.
    """
    if isinstance(data, PvCurves):
        if data.critical_point is None or data.T_c is None:
            raise BhchemError("reduced variables need a critical point; this family has "
                              "none at these parameters")
        sc = np.array(data.critical_point, float)
        return replace(data, temperatures=tuple(T / data.T_c for T in data.temperatures),
                       isotherms=tuple(i / sc for i in data.isotherms),
                       equal_area=tuple(None if e is None else e / sc for e in data.equal_area),
                       T_c=1.0, critical_point=np.ones(2), reduced=True)
    if isinstance(data, TrCurves):
        if data.critical_point is None or data.P_c is None:
            raise BhchemError("reduced variables need a critical point; this family has "
                              "none at these parameters")
        sc = np.array(data.critical_point, float)
        isobars = tuple(tuple(replace(b, curve=b.curve / sc,
                                      spinodals=tuple(x / sc[0] for x in b.spinodals))
                              for b in iso) for iso in data.isobars)
        return replace(data, pressures=tuple(P / data.P_c for P in data.pressures),
                       isobars=isobars, P_c=1.0, critical_point=np.ones(2),
                       excluded=tuple(replace(e, curve=e.curve / sc) for e in data.excluded),
                       super_entropic=np.asarray(data.super_entropic, float).reshape(-1, 2) / sc,
                       reduced=True)
    if isinstance(data, PtDiagram):
        cp = scale_point(th) if th is not None else None
        if cp is None:
            raise BhchemError("reduced variables need a critical point; this family has "
                              "none at these parameters")
        Tc, Pc = cp.T, cp.P
        sc = np.array([Tc, Pc])
        box = data.inset_box
        return replace(
            data, lines=tuple(replace(ln, points=ln.points / sc,
                                      terminal_points=ln.terminal_points / sc)
                              for ln in data.lines),
            critical_points=np.asarray(data.critical_points, float).reshape(-1, 2) / sc,
            triple_points=np.asarray(data.triple_points, float).reshape(-1, 2) / sc,
            limits=None if data.limits is None else (data.limits[0] / Tc, data.limits[1] / Pc),
            regions=tuple((T / Tc, P / Pc, n) for T, P, n in data.regions),
            pointers=tuple((T / Tc, P / Pc, n, a / Tc, b / Pc)
                           for T, P, n, a, b in data.pointers),
            inset_box=None if box is None else (box[0] / Tc, box[1] / Tc, box[2] / Pc,
                                                box[3] / Pc),
            reduced=True)
    if isinstance(data, GtCurves):
        cp = _reducing_point(th)
        Tc, Pc = cp.T, cp.P
        Gc = Tc * float(th.S(cp.x, cp.P))
        if not (np.isfinite(Gc) and Gc > 0):
            raise BhchemError("reduced G-T figures draw G/(T_c S_c); T_c S_c at the critical "
                              f"point is {Gc:g}, so there is no scale to divide by")
        sc = np.array([Tc, Gc])
        panels = tuple(replace(
            p, pressure=p.pressure / Pc,
            branches=tuple(replace(b, curve=b.curve / sc) for b in p.branches),
            preferred=tuple(seg / sc for seg in p.preferred),
            transitions=np.asarray(p.transitions, float).reshape(-1, 2) / sc,
            T_window=(p.T_window[0] / Tc, p.T_window[1] / Tc),
            G_window=None if p.G_window is None else (p.G_window[0] / Gc, p.G_window[1] / Gc))
            for p in data.panels)
        return replace(data, panels=panels, P_c=1.0,
                       excluded=tuple(replace(e, curve=e.curve / sc) for e in data.excluded),
                       reduced=True)
    if isinstance(data, CpCurves):
        cp = _reducing_point(th)
        Sc = float(th.S(cp.x, cp.P))
        sc = np.array([cp.x, Sc])
        return replace(data, pressure=data.pressure / cp.P, P_c=1.0,
                       branches=tuple(replace(b, curve=b.curve / sc,
                                              spinodals=tuple(x / cp.x for x in b.spinodals))
                                      for b in data.branches),
                       linthresh=None if data.linthresh is None else data.linthresh / Sc,
                       reduced=True)
    raise BhchemError(f"reduced variables are drawn for pv, tr, pt, gt and cp figures, not "
                      f"{type(data).__name__}")


def _reducing_point(th):
    """The scale critical point of ``th`` (:func:`scale_point`), or a BhchemError."""
    cp = scale_point(th) if th is not None else None
    if cp is None:
        raise BhchemError("reduced variables need a critical point; this family has "
                          "none at these parameters")
    return cp
