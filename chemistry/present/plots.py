"""Figures: P-v isotherms, G-T isobars, the P-T phase diagram, T-r+ isobars, C_P.

Each plot function draws the data it is given and computes nothing: the curves come
from :mod:`bhchem.analysis.figure_data` (``pv_curves``, ``gt_curves``, ``pt_diagram``,
``tr_curves``, ``cp_curves``), and :func:`bhchem.workflows.figures.make_figure` does
both steps::

    data = pv_curves(th)             # analysis: numpy arrays and numbers
    result = plot_pv(data)           # presentation: a new figure
    plot_pv(data, ax=my_axes)        # or into the caller's axes

Every plot function returns a :class:`PlotResult`: the matplotlib figure and the
data it drew (so tests can check the content, not just that a file exists).  A
figure with nothing to show raises :class:`EmptyFigureError` rather than coming out
blank.  The look (palette, line conventions, rc style) is :mod:`bhchem.present.style`.
"""
from __future__ import annotations

import base64
import csv
import html
import io
import math
import textwrap
import os
from contextlib import contextmanager
from dataclasses import dataclass, field, replace

import numpy as np

from bhchem.core.results import Result
from bhchem.errors import BhchemError
from bhchem.fileio import atomic_file
from bhchem.analysis.figure_data import (FIGURE_KINDS, INSET_AXES, CpCurves, GtCurves,
                                         OverlayData, PtDiagram, PvCurves, TrCurves)
from bhchem.present.style import (LINE_COLOR, LINE_STYLE, PALETTE, STABLE_GREY, STYLE,
                                  UNSTABLE_GREY, FigureFactory, figure_title, rc_style,
                                  styled, symbol_tex)

KINDS = FIGURE_KINDS

__all__ = ["KINDS", "PLOTTERS", "EmptyFigureError", "PlotResult", "FigureTable", "COLUMNS",
           "figure_table", "table_path", "save", "adjust", "parse_width", "parse_range", "WIDTHS",
           "canvas", "figure_of",
           "plot_pv", "plot_gt", "plot_pt", "plot_tr", "plot_cp", "plot_overlay",
           "value_style",
           # the style, re-exported for the callers of this module
           "figure_title", "styled", "FigureFactory", "PALETTE", "STYLE", "STABLE_GREY",
           "UNSTABLE_GREY", "LINE_STYLE", "LINE_COLOR"]



class EmptyFigureError(BhchemError):
    """A figure would have come out empty."""


@dataclass(repr=False)
class PlotResult(Result):
    """A figure and the data it drew.

    ``figure`` is a :class:`matplotlib.figure.Figure` made without pyplot: it is not
    registered with pyplot's global figure list, so drawing any number of figures never
    accumulates open figures, and the caller owns it (``figure.savefig(...)``, or
    ``display(figure)`` in a notebook; freed like any object when no longer referenced).
    When the plot function drew into the caller's axes, it is the figure of those axes.

    Attributes
    ----------
    figure : matplotlib.figure.Figure
    kind : str
    data : dict
        Name -> ndarray of every curve or point set drawn.
    notes : list of str
    """

    figure: object
    kind: str
    data: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)
    #: names of the table's coordinate columns (default: :data:`COLUMNS` of ``kind``)
    columns: tuple = ()
    #: curve name -> what it is (its temperature, pressure, parameter value), for the table
    labels: dict = field(default_factory=dict)
    #: name -> rows in the order of ``columns``, when ``data`` is not already in that form
    table_data: dict | None = None
    #: the width asked for (inches); the file is then exactly this wide (see :func:`adjust`)
    width: float | None = None

    @property
    def table(self) -> "FigureTable":
        """The curves drawn, as one table (see :class:`FigureTable`)."""
        return figure_table(self)

    def to_csv(self, path) -> str:
        """Write :attr:`table` as CSV to ``path`` atomically; returns the path."""
        path = os.fspath(path)
        with atomic_file(path, "w") as fh:
            fh.write(self.table.csv())
        return path

    def to_frame(self):
        """:attr:`table` as a :class:`pandas.DataFrame` (needs pandas: ``bhchem[notebook]``)."""
        return self.table.to_frame()

    def table_rows(self):
        return self.table.columns, self.table.rows

    def _repr_html_(self) -> str:
        """The figure itself (PNG) and its notes: what a notebook shows."""
        buf = io.BytesIO()
        import matplotlib  # lazy: matplotlib only when a figure is shown
        with matplotlib.rc_context(rc_style()):
            self.figure.savefig(buf, format="png", dpi=100)
        img = base64.b64encode(buf.getvalue()).decode("ascii")
        notes = "".join(f"<br>{html.escape(n)}" for n in self.notes)
        sup = getattr(self.figure, "get_suptitle", None)
        title = (sup() if sup else "") or \
            next((t for a in self.figure.axes if (t := a.get_title())), "")
        alt = html.escape(f"{self.kind} figure" + (f": {title}" if title else ""), quote=True)
        return f"<div><img src='data:image/png;base64,{img}' alt='{alt}'>{notes}</div>"


#: units of every figure table
UNITS = "G = c = hbar = k_B = 1"

#: column name -> what it holds (the conventions of the README)
COLUMN_MEANING = {
    "v": "specific volume (4 r_+/(d-2) unless the family states otherwise)",
    "P": "pressure P = -Lambda/(8 pi)",
    "T": "Hawking temperature",
    "G": "Gibbs free energy G = M - T S (M the enthalpy)",
    "C_P": "heat capacity at constant pressure T (dS/dT)_P",
    "V": "thermodynamic volume (dM/dP) at fixed S and charges",
    "r_plus": "horizon radius r_+",
    "R_N": "normalised Ruppeiner curvature",
    "tau": "tau = 1/T (inverse temperature of the off-shell free energy)",
    "G_L": "landscape free energy G_L = M - T_E S",
    "t": "time in units of the friction zeta",
    "F": "first-passage-time distribution F(t)",
    "T/T_c": "temperature over the critical temperature",
    "r_plus/r_plus_c": "horizon radius over its value at the critical point",
    "P/P_c": "pressure over the critical pressure",
    "v/v_c": "specific volume over the critical one",
    "G/(T_c S_c)": "Gibbs free energy over T_c S_c (critical temperature times the entropy there)",
    "C_P/S_c": "heat capacity at constant pressure over the entropy at the critical point",
    "jump_scaled": "jump (large minus small) divided by its largest magnitude",
}

#: coordinate columns of each figure kind (a state variable other than r_+ keeps its name)
COLUMNS = {"pv": ("v", "P"), "gt": ("T", "G"), "pt": ("T", "P"), "tr": ("r_plus", "T"),
           "cp": ("r_plus", "C_P"), "engine": ("V", "P"), "expansion": ("P", "T"),
           "curvature": ("v", "T", "R_N"), "tau": ("r_plus", "tau"),
           "landscape": ("r_plus", "G_L"), "first-passage": ("t", "F"),
           "photon-jumps": ("T/T_c", "jump_scaled")}


@dataclass(frozen=True, eq=False, repr=False)
class FigureTable(Result):
    """The data of one figure as a long table: one row per drawn point.

    Attributes
    ----------
    columns : tuple of str
        ``("curve", x, y, ...)``: the curve's name (a key of ``PlotResult.data``) and the
        coordinates; a NaN row value is a gap in a drawn line.
    rows : list of tuple
    comments : list of str
        Written as ``# `` lines before the header: the figure's title, the units, what each
        column means, what each curve is, and what was drawn but is not a curve.
    """

    columns: tuple
    rows: list
    comments: list

    def csv(self) -> str:
        """The table as CSV text (``#`` comment lines, then the header, then the rows;
        ``pandas.read_csv(path, comment="#")`` and ``numpy.genfromtxt`` read it)."""
        buf = io.StringIO()
        for c in self.comments:
            buf.write(f"# {c}\n")
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(self.columns)
        for row in self.rows:
            w.writerow([row[0]] + [repr(float(v)) for v in row[1:]])
        return buf.getvalue()

    def to_frame(self):
        """The table as a :class:`pandas.DataFrame` (needs pandas)."""
        try:
            import pandas as pd  # lazy: pandas is optional (bhchem[notebook]), only when asked
        except ImportError:
            raise BhchemError("to_frame() needs pandas: pip install 'bhchem[notebook]' "
                              "(or pip install pandas)") from None
        return pd.DataFrame(self.rows, columns=list(self.columns))

    def summary(self) -> str:
        curves = len({r[0] for r in self.rows})
        return f"{len(self.rows)} rows, {curves} curves, columns {', '.join(self.columns)}"


def figure_table(result: PlotResult) -> FigureTable:
    """The table of a :class:`PlotResult`: every array of ``table_data`` (else ``data``)
    whose rows have as many values as there are coordinate columns (a single point: one
    row); other arrays (a zoom box, a grid) are named in the comments, not tabulated."""
    cols = tuple(result.columns) or COLUMNS.get(result.kind, ("x", "y"))
    source = result.data if result.table_data is None else result.table_data
    rows, skipped = [], []
    for name, value in source.items():
        a = np.asarray(value, dtype=float)
        if a.size == 0:
            continue
        if a.ndim == 1 and a.size == len(cols):
            a = a[None, :]
        if a.ndim != 2 or a.shape[1] != len(cols):
            skipped.append(name)
            continue
        rows.extend((name, *map(float, r)) for r in a)
    comments = [f"bhchem figure {result.kind}: {t}" for t in _titles(result.figure)]
    comments.append(f"units: {UNITS}")
    comments += [f"column {c}: {COLUMN_MEANING.get(c, c)}" for c in cols]
    comments += [f"curve {k}: {v}" for k, v in result.labels.items()]
    if skipped:
        comments.append(f"drawn but not tabulated here: {', '.join(skipped)}")
    return FigureTable(("curve",) + cols, rows, comments)


def _titles(figure) -> list:
    if figure is None:
        return []
    titles = []
    sup = getattr(figure, "get_suptitle", None)
    if sup is not None and sup():
        titles.append(sup())
    titles += [ax.get_title() for ax in figure.axes if ax.get_title()]
    return [" ".join(t.split()) for t in titles[:1]] or [""]


def table_path(path) -> str:
    """The CSV written beside the figure ``path``: same stem, ``.csv``."""
    return os.path.splitext(os.fspath(path))[0] + ".csv"


def save(result: PlotResult, path, table: bool = False) -> str:
    """Write the figure atomically (format from the extension: png, pdf, svg).

    Written through :func:`bhchem.fileio.atomic_file`, so the file ends with
    0666 & ~umask like any other file; the figure itself stays the caller's.

    Parameters
    ----------
    result : PlotResult
    path : str or os.PathLike
    table : bool
        Also write the curves drawn (:attr:`PlotResult.table`) beside the figure, same
        stem, ``.csv`` (:func:`table_path`).  Both files are renamed into place only
        after both were written; a failure leaves neither.

    Returns
    -------
    str
        The path written.
    """
    import matplotlib  # lazy: matplotlib only when a figure is written
    path = os.fspath(path)
    ext = os.path.splitext(path)[1].lower().lstrip(".")
    if ext not in ("png", "pdf", "svg"):
        raise BhchemError(f"output {path}: use a .png, .pdf or .svg file name")
    directory = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(directory):
        raise BhchemError(f"output {path}: directory {directory} does not exist")
    # a width asked for is the width of the file: no tight bounding box (the layout fits)
    rc = rc_style()
    if result.width is not None:
        rc["savefig.bbox"] = "standard"
    if table:
        text = result.table.csv()
        with atomic_file(path, "wb") as fh, atomic_file(table_path(path), "w") as tf, \
                matplotlib.rc_context(rc):
            result.figure.savefig(fh, format=ext, metadata=_metadata(ext))
            tf.write(text)
        return path
    with atomic_file(path, "wb") as fh, matplotlib.rc_context(rc):
        result.figure.savefig(fh, format=ext, metadata=_metadata(ext))
    return path


#: figure widths of a journal page, inches (one column, the full two-column page)
WIDTHS = {"column": 3.4, "page": 7.0}


def parse_width(value) -> float:
    """``'column'`` (3.4 in), ``'page'`` (7.0 in) or a number of inches (1 to 20)."""
    if isinstance(value, str) and value.strip().lower() in WIDTHS:
        return WIDTHS[value.strip().lower()]
    try:
        w = float(value)
    except (TypeError, ValueError):
        raise BhchemError(f"width {value!r}: use column, page or a number of inches") from None
    if not 1.0 <= w <= 20.0:
        raise BhchemError(f"width {value!r}: give between 1 and 20 inches (or column, page)")
    return w


def parse_range(value, what: str = "range") -> tuple:
    """``'A:B'`` or ``(A, B)`` with finite A < B, as a pair of floats."""
    parts = value.split(":") if isinstance(value, str) else list(value)
    try:
        lo, hi = (float(v) for v in parts)
    except (TypeError, ValueError):
        raise BhchemError(f"{what} {value!r}: give two numbers, like 0.01:0.05") from None
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise BhchemError(f"{what} {value!r}: needs finite A < B")
    return lo, hi


def adjust(result: PlotResult, xlim=None, ylim=None, width=None) -> PlotResult:
    """Axis ranges and the figure width of a drawn figure.

    Parameters
    ----------
    result : PlotResult
    xlim, ylim : (float, float) or 'A:B', optional
        Applied to every panel (not to a zoom inset).
    width : 'column', 'page' or float, optional
        Inches (:data:`WIDTHS`); the height keeps the figure's proportions (at least 0.62
        of the width for one panel), and the saved file is exactly this wide.

    Returns
    -------
    PlotResult
        A new result over the same (adjusted) figure.
    """
    fig = result.figure
    panels = [a for a in fig.axes if a.get_visible()]
    if xlim is not None:
        lo, hi = parse_range(xlim, "x range")
        for a in panels:
            a.set_xlim(lo, hi)
    if ylim is not None:
        lo, hi = parse_range(ylim, "y range")
        for a in panels:
            a.set_ylim(lo, hi)
    if width is None:
        return result
    w = parse_width(width)
    W0, H0 = fig.get_size_inches()
    h = H0 * w / W0
    if len(panels) == 1:
        h = max(h, 0.62 * w)
    fig.set_size_inches(w, h)
    with styled():
        fig.set_layout_engine("constrained")
        for leg in list(fig.legends):  # a figure legend goes below the panels, in the layout
            handles, labels = leg.legend_handles, [t.get_text() for t in leg.get_texts()]
            leg.remove()
            fig.legend(handles, labels, loc="outside lower center", ncol=len(labels))
        title = fig.get_suptitle() if hasattr(fig, "get_suptitle") else ""
        if title:
            fig.suptitle(title)  # at its automatic place, above the panels' titles
    return replace(result, width=w)



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


def _expect(data, cls, kind: str):
    if not isinstance(data, cls):
        raise TypeError(f"plot_{kind} draws {cls.__name__} (bhchem.{_DATA_FUNCTION[kind]}(th)), "
                        f"not {type(data).__name__}; bhchem.make_figure(th, {kind!r}) computes "
                        f"and draws in one call")


_DATA_FUNCTION = {"pv": "pv_curves", "gt": "gt_curves", "pt": "pt_diagram", "tr": "tr_curves",
                  "cp": "cp_curves"}


def figure_of(ax):
    """The (top-level) figure that holds the axes ``ax``."""
    try:
        return ax.get_figure(root=True)
    except TypeError:  # matplotlib < 3.10: no subfigure distinction
        return ax.figure


@contextmanager
def canvas(ax=None, figsize=(5.2, 3.8)):
    """``(figure, axes)`` to draw on in the bhchem style: ``ax`` and its figure when given,
    else a new :class:`matplotlib.figure.Figure` of size ``figsize`` with one axes."""
    with styled() as mk:
        if ax is None:
            yield mk.subplots(figsize=figsize)
        else:
            yield figure_of(ax), ax


def _column(state: str) -> str:
    """The table column of a state variable (``r`` is the horizon radius ``r_plus``)."""
    return "r_plus" if state == "r" else state


def _value_label(name: str, value, critical) -> str:
    """'T = 0.0425 (T/T_c = 0.9)' for a table's curve."""
    text = f"{name} = {value:.10g}"
    if critical is not None:
        text += f" ({name}/{name}_c = {value / critical:.6g})"
    return text


def _state_label(state: str) -> str:
    return "r_+" if state == "r" else state


# -- P-v isotherms --------------------------------------------------------------------------
def plot_pv(data: PvCurves, ax=None) -> PlotResult:
    """P-v isotherms with the equal-area (Maxwell) construction drawn.

    Parameters
    ----------
    data : PvCurves
        From :func:`bhchem.analysis.figure_data.pv_curves`.
    ax : matplotlib.axes.Axes, optional
        Draw into these axes (default: a new figure).

    Returns
    -------
    PlotResult
        ``data`` holds ``isotherm_i`` (rows v, P), ``equal_area_i`` and ``critical_point``.
    """
    _expect(data, PvCurves, "pv")
    drawn = {}
    for i, (iso, seg) in enumerate(zip(data.isotherms, data.equal_area)):
        if seg is not None:
            drawn[f"equal_area_{i}"] = seg
        drawn[f"isotherm_{i}"] = iso
    if data.critical_point is not None:
        drawn["critical_point"] = data.critical_point
    _check_nonempty({k: v[:, 1] if np.ndim(v) == 2 else v for k, v in drawn.items()},
                    "P-v isotherms")
    with canvas(ax) as (fig, ax):
        for i, (T, iso, seg) in enumerate(zip(data.temperatures, data.isotherms,
                                              data.equal_area)):
            vv, PP = iso[:, 0], iso[:, 1]
            color = PALETTE[i % len(PALETTE)]
            label = f"$T/T_c={T / data.T_c:.3g}$" if data.T_c is not None else f"$T={T:.4g}$"
            if seg is not None:
                (v1, Pco), (v2, _) = seg
                inside = (vv > v1) & (vv < v2)
                ax.plot(np.where(inside, np.nan, vv), np.where(inside, np.nan, PP), "-",
                        color=color, label=label)
                ax.plot(np.where(inside, vv, np.nan), np.where(inside, PP, np.nan), ":",
                        color=color, lw=1.0)
                ax.plot([v1, v2], [Pco, Pco], "-", color=color, lw=0.9)
            else:
                ax.plot(vv, PP, "-", color=color, label=label)
        if data.critical_point is not None:
            v_c, P_c = data.critical_point
            ax.plot([v_c], [P_c], "o", color="black", ms=5, zorder=5, label="critical point")
            ax.set_ylim(0, 2.0 * P_c)
        red = getattr(data, "reduced", False)
        ax.set_xlabel(r"$v/v_c$" if red else r"specific volume $v$")
        ax.set_ylabel(r"$P/P_c$" if red else r"pressure $P$")
        ax.set_title(figure_title(data))
        ax.legend(loc="upper right", ncol=1)
    labels = {f"isotherm_{i}": _value_label("T", T, data.T_c)
              for i, T in enumerate(data.temperatures)}
    return PlotResult(fig, "pv", drawn, list(data.notes), labels=labels,
                      columns=("v/v_c", "P/P_c") if red else ())


# -- G-T isobars -----------------------------------------------------------------------------
def plot_gt(data: GtCurves, ax=None) -> PlotResult:
    """G-T isobars, one panel per pressure: every branch, the globally preferred one
    emphasised, the transitions marked.

    Parameters
    ----------
    data : GtCurves
        From :func:`bhchem.analysis.figure_data.gt_curves`.
    ax : matplotlib.axes.Axes or sequence of Axes, optional
        One axes per panel (at least as many as pressures), for example the array that
        ``figure.subplots`` returns.  The legend then goes into the last panel used, and
        the figure's title and layout are left to the caller.  Default: a new figure
        with two columns of panels.

    Returns
    -------
    PlotResult
        ``data`` holds ``P{i}_branch{k}`` (rows T, G of branch k at the i-th pressure)
        and ``P{i}_preferred``.
    """
    _expect(data, GtCurves, "gt")
    panels = data.panels
    n = len(panels)
    drawn = {}
    for i, p in enumerate(panels):
        for b in p.branches:
            drawn[f"P{i}_branch{b.index}"] = b.curve[np.isfinite(b.curve[:, 0])]
        if p.preferred:
            drawn[f"P{i}_preferred"] = np.vstack(p.preferred)
    for e in data.excluded:
        drawn[f"P{e.panel}_excluded_{e.condition}"] = e.curve
    _check_nonempty({k: v[:, 1] for k, v in drawn.items()}, "G-T isobars")
    red = getattr(data, "reduced", False)
    cols = 2 if n > 1 else 1
    rows = math.ceil(n / cols)
    from matplotlib.lines import Line2D  # lazy: matplotlib only when a figure is drawn
    from matplotlib.ticker import MaxNLocator  # lazy: as above
    with styled() as mk:
        if ax is None:
            size = (5.2, 3.8) if n == 1 else (3.3 * cols, 2.7 * rows)  # one: full-size panel
            fig, axes = mk.subplots(rows, cols, figsize=size, squeeze=False)
            grid = [axes[j // cols][j % cols] for j in range(rows * cols)]
        else:
            grid = list(np.ravel(np.asarray(ax, dtype=object)))
            if len(grid) < n:
                raise BhchemError(f"plot_gt: {n} pressures need {n} axes, got {len(grid)}")
            fig = figure_of(grid[0])
        for i, p in enumerate(panels):
            a = grid[i]
            for b in p.branches:
                style = dict(color=STABLE_GREY, ls="--", lw=0.9) if b.stable else \
                    dict(color=UNSTABLE_GREY, ls=":", lw=1.0)
                a.plot(b.curve[:, 0], b.curve[:, 1], **style)
            for seg in p.preferred:
                a.plot(seg[:, 0], seg[:, 1], "-", color=PALETTE[0], lw=2.4,
                       solid_capstyle="butt")
            _draw_excluded(a, data.excluded, i)
            for T, G in p.transitions:
                a.plot([T], [G], "o", ms=3.5, color=PALETTE[1], zorder=5)
            if p.G_window is not None:
                a.set_ylim(*p.G_window)
            a.set_xlim(*p.T_window)
            a.xaxis.set_major_locator(MaxNLocator(4))
            P = p.pressure
            a.set_title(f"$P/P_c={P / data.P_c:.3g}$" if data.P_c is not None else f"$P={P:.3g}$")
            a.set_xlabel(r"$T/T_c$" if red else r"$T$")
            a.set_ylabel(r"$G/(T_c S_c)$" if red else r"$G$")
        handles = [Line2D([], [], color=PALETTE[0], lw=2.4, label="globally preferred"),
                   Line2D([], [], color=STABLE_GREY, ls="--", lw=0.9, label="metastable"),
                   Line2D([], [], color=UNSTABLE_GREY, ls=":", label="unstable ($C_P<0$)")]
        if ax is None and n == 1:
            a = grid[0]
            a.set_title(figure_title(data, _selection(data)) + ", " + a.get_title())
            a.legend(handles=handles, loc="best")
        elif ax is None:
            for j in range(n, rows * cols):
                grid[j].set_visible(False)
            fig.legend(handles=handles, loc="lower center", ncol=3, bbox_to_anchor=(0.5, -0.02))
            fig.suptitle(figure_title(data, _selection(data)), y=1.0)
            fig.tight_layout(rect=(0, 0.05, 1, 1))
        else:
            grid[n - 1].legend(handles=handles, loc="best")
    labels = {f"P{i}_preferred": _value_label("P", p.pressure, data.P_c)
              for i, p in enumerate(panels)}
    return PlotResult(fig, "gt", drawn, list(data.notes), labels=labels,
                      columns=("T/T_c", "G/(T_c S_c)") if red else ())


# -- P-T phase diagram -----------------------------------------------------------------------
def plot_pt(data: PtDiagram, ax=None) -> PlotResult:
    """The P-T phase diagram: lines by kind, special points, regions labelled by phase,
    and a zoom inset around small features when the data has an inset box.

    Parameters
    ----------
    data : PtDiagram
        From :func:`bhchem.analysis.figure_data.pt_diagram`.
    ax : matplotlib.axes.Axes, optional
        Draw into these axes (default: a new figure).

    Returns
    -------
    PlotResult
        ``data`` holds ``line{i}_{kind}`` (rows T, P), ``critical_points``,
        ``triple_points`` and ``inset_box`` when there is an inset.
    """
    _expect(data, PtDiagram, "pt")
    drawn = {f"line{i}_{line.kind}": line.points for i, line in enumerate(data.lines)
             if line.points.size}
    _check_nonempty(dict(drawn) or {"none": []}, "P-T phase diagram")
    drawn["critical_points"] = data.critical_points
    drawn["triple_points"] = data.triple_points
    if data.inset_box is not None:
        drawn["inset_box"] = np.array(data.inset_box)
    with canvas(ax) as (fig, ax):
        seen = set()
        for line in data.lines:
            pts = line.points
            if pts.size == 0:
                continue
            lab = line.kind.replace("-", " ") if line.kind not in seen else None
            seen.add(line.kind)
            ax.plot(pts[:, 0], pts[:, 1], LINE_STYLE.get(line.kind, "-"),
                    color=LINE_COLOR.get(line.kind, "black"), lw=1.8, label=lab)
            for T, P in line.terminal_points:
                ax.plot([T], [P], "s", ms=4.5, color=PALETTE[1], zorder=6)
        first = {True: True, False: True}
        for (T, P), on in zip(data.critical_points, data.critical_on_preferred):
            ax.plot([T], [P], "o", ms=6, zorder=7, color="black",
                    markerfacecolor="black" if on else "white",
                    label=("critical point" if on else "critical point (not on the preferred "
                           "branch)") if first[on] else None)
            first[on] = False
        for j, (T, P) in enumerate(data.triple_points):
            ax.plot([T], [P], "^", ms=7, color=PALETTE[2], zorder=7,
                    label="triple point" if j == 0 else None)
        Tmax, Pmax = data.limits
        ax.set_xlim(0, Tmax)
        ax.set_ylim(0, Pmax)
        for T, P, name in data.regions:
            ax.text(T, P, name, ha="center", va="center", fontsize=8, style="italic",
                    color="#404040")
        for T, P, name, tx, ty in getattr(data, "pointers", ()):
            ax.annotate(name, (T, P), xytext=(tx, ty), fontsize=8, style="italic",
                        color="#404040", ha="center", va="center",
                        arrowprops=dict(arrowstyle="-", color="#707070", lw=0.6))
        if data.inset_box is not None:
            _draw_inset(ax, data)
        red = getattr(data, "reduced", False)
        ax.set_xlabel(r"$T/T_c$" if red else r"temperature $T$")
        ax.set_ylabel(r"$P/P_c$" if red else r"pressure $P$")
        ax.set_title(figure_title(data))
        n = len(ax.get_legend_handles_labels()[1])  # below the axes: the plane keeps its width
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.16), ncol=n if n <= 3 else 2)
    return PlotResult(fig, "pt", drawn, list(data.notes),
                      columns=("T/T_c", "P/P_c") if red else ())


def _draw_inset(ax, data: PtDiagram):
    """The zoom inset of :func:`plot_pt` over ``data.inset_box``."""
    from matplotlib.ticker import MaxNLocator  # lazy: matplotlib only when a figure is drawn
    box = data.inset_box
    ins = ax.inset_axes(list(INSET_AXES))
    for line in data.lines:
        pts = line.points
        if pts.size:
            ins.plot(pts[:, 0], pts[:, 1], LINE_STYLE.get(line.kind, "-"),
                     color=LINE_COLOR.get(line.kind, "black"), lw=1.4)
        for T, P in line.terminal_points:
            ins.plot([T], [P], "s", ms=3.5, color=PALETTE[1])
    for T, P in data.triple_points:
        ins.plot([T], [P], "^", ms=5, color=PALETTE[2])
    for T, P in data.critical_points:
        ins.plot([T], [P], "o", ms=4, color="black")
    ins.set_xlim(box[0], box[1])
    ins.set_ylim(box[2], box[3])
    ins.tick_params(labelsize=6)
    ins.xaxis.set_major_locator(MaxNLocator(3))
    ins.yaxis.set_major_locator(MaxNLocator(3))
    ax.indicate_inset_zoom(ins, edgecolor="#707070")


# -- T-r+ isobars and C_P --------------------------------------------------------------------
def _selection(data) -> str:
    """'; states: conditions: ...' when the figure's binding is not the default selection."""
    return "".join(f"; {n}" for n in getattr(data, "notes", ()) if n.startswith("states:"))


def _draw_excluded(ax, curves, panel) -> None:
    """States excluded by a condition: faint, thin, labelled by the condition's name at the
    middle of each curve (``panel`` None: every curve)."""
    for e in curves:
        if panel is not None and e.panel != panel:
            continue
        ax.plot(e.curve[:, 0], e.curve[:, 1], "-", color="0.75", lw=0.8, alpha=0.8, zorder=0)
        mid = e.curve[len(e.curve) // 2]
        ax.annotate(f"excluded: {e.condition}", mid, fontsize=6, color="0.45",
                    xytext=(2, 2), textcoords="offset points", zorder=0,
                    annotation_clip=True)


def plot_tr(data: TrCurves, ax=None) -> PlotResult:
    """T along isobars against the horizon radius (or the state variable); unstable
    branches (C_P < 0) dotted.

    Parameters
    ----------
    data : TrCurves
        From :func:`bhchem.analysis.figure_data.tr_curves`.
    ax : matplotlib.axes.Axes, optional
        Draw into these axes (default: a new figure).

    Returns
    -------
    PlotResult
        ``data`` holds ``P{i}_branch{k}`` (rows x, T).
    """
    _expect(data, TrCurves, "tr")
    drawn = {f"P{i}_branch{b.index}": b.curve for i, iso in enumerate(data.isobars)
             for b in iso}
    _check_nonempty({k: v[:, 1] for k, v in drawn.items()} or {"none": []}, "T-r isobars")
    with canvas(ax) as (fig, ax):
        for i, (P, iso) in enumerate(zip(data.pressures, data.isobars)):
            color = PALETTE[i % len(PALETTE)]
            label = f"$P/P_c={P / data.P_c:.3g}$" if data.P_c is not None else f"$P={P:.3g}$"
            for b in iso:
                ax.plot(b.curve[:, 0], b.curve[:, 1], "-" if b.stable else ":", color=color,
                        label=label if b.last else None)
        _draw_excluded(ax, data.excluded, None)
        for e in data.excluded:
            drawn[f"P{e.panel}_excluded_{e.condition}"] = e.curve
        if data.critical_point is not None:
            x_c, T_c = data.critical_point
            ax.plot([x_c], [T_c], "o", color="black", ms=5, label="critical point")
            ax.set_ylim(0, 2.2 * T_c)
        low = getattr(data, "super_entropic", np.zeros((0, 2)))
        if len(low):
            ax.plot(low[::25, 0], low[::25, 1], "x", color="black", ms=3, lw=0.6,
                    label=r"super-entropic ($\mathcal{R}<1$)")
            drawn["super_entropic"] = low
        red = getattr(data, "reduced", False)
        x = _state_label(data.state)
        ax.set_xlabel(rf"${x}/{x}^{{c}}$" if red else rf"${x}$")
        ax.set_ylabel(r"$T/T_c$" if red else r"temperature $T$")
        ax.set_title(figure_title(data, "; dotted: $C_P<0$"
                                  + ("; x: super-entropic" if len(low) else "")
                                  + _selection(data)))
        ax.legend(loc="lower right")
    labels = {f"P{i}_branch{b.index}": _value_label("P", P, data.P_c)
              for i, (P, iso) in enumerate(zip(data.pressures, data.isobars)) for b in iso}
    columns = (_column(data.state) + "/" + _column(data.state) + "_c", "T/T_c") if red else \
        (_column(data.state), "T")
    return PlotResult(fig, "tr", drawn, list(data.notes), columns=columns, labels=labels)


def _asinh_axis(ax, width, values) -> None:
    """A y axis linear near 0 and logarithmic far away, smooth in between (asinh; the
    symmetric-log scale has a visible kink where it changes), ticked at 0 and at the
    powers of ten clear of the linear part (their labels would collide there)."""
    from matplotlib.ticker import FixedLocator  # lazy: matplotlib only when a figure is drawn
    width = float(width) if width and math.isfinite(width) and width > 0 else 1.0
    ax.set_yscale("asinh", linear_width=width)
    finite = np.concatenate([np.ravel(v)[np.isfinite(np.ravel(v))] for v in values] or [[]])
    top = float(np.max(np.abs(finite))) if finite.size else 10 * width
    k0 = math.ceil(math.log10(3 * width))
    k1 = max(math.ceil(math.log10(max(top, 10 * width))), k0)
    ticks = [0.0] + [s * 10.0 ** k for k in range(k0, k1 + 1) for s in (1, -1)]
    ax.yaxis.set_major_locator(FixedLocator(sorted(ticks)))


def plot_cp(data: CpCurves, ax=None) -> PlotResult:
    """C_P along one isobar (asinh scale: linear near 0, logarithmic beyond), spinodals marked.

    Parameters
    ----------
    data : CpCurves
        From :func:`bhchem.analysis.figure_data.cp_curves`.
    ax : matplotlib.axes.Axes, optional
        Draw into these axes (default: a new figure).

    Returns
    -------
    PlotResult
        ``data`` holds ``branch{k}`` (rows x, C_P).
    """
    _expect(data, CpCurves, "cp")
    drawn = {f"branch{b.index}": b.curve for b in data.branches}
    _check_nonempty({k: v[:, 1] for k, v in drawn.items()} or {"none": []}, "C_P isobar")
    with canvas(ax) as (fig, ax):
        for b in data.branches:
            ax.plot(b.curve[:, 0], b.curve[:, 1], "-" if b.stable else ":",
                    color=STABLE_GREY if b.stable else UNSTABLE_GREY)
            for x in b.spinodals:
                ax.axvline(x, color=PALETTE[1], lw=0.7, ls="--")
        _asinh_axis(ax, data.linthresh, [b.curve[:, 1] for b in data.branches])
        ax.axhline(0, color="black", lw=0.5)
        red = getattr(data, "reduced", False)
        x = _state_label(data.state)
        ax.set_xlabel(rf"${x}/{x}^{{c}}$" if red else rf"${x}$")
        ax.set_ylabel(r"$C_P/S_c$" if red else r"$C_P$")
        P = data.pressure
        lbl = f"$P/P_c={P / data.P_c:.3g}$" if data.P_c is not None else f"$P={P:.3g}$"
        ax.set_title(figure_title(data, f", {lbl}; dashed: spinodals"))
    columns = (_column(data.state) + "/" + _column(data.state) + "_c", "C_P/S_c") if red else \
        (_column(data.state), "C_P")
    return PlotResult(fig, "cp", drawn, list(data.notes), columns=columns,
                      labels={k: _value_label("P", data.pressure, data.P_c) for k in drawn})


# -- overlays over a parameter -------------------------------------------------------------------
#: dash patterns of the values of an overlay, with the colours of PALETTE (legible in grey)
VALUE_DASHES = ["-", (0, (5, 2)), (0, (1, 1.5)), (0, (6, 2, 1, 2)), (0, (3, 1, 1, 1, 1, 1))]


def value_style(j: int) -> dict:
    """Colour and dash pattern of the j-th value of an overlay: the same value index has the
    same style in every figure kind."""
    return {"color": PALETTE[j % len(PALETTE)], "ls": VALUE_DASHES[j % len(VALUE_DASHES)]}


def _reduced(value, critical, name):
    return f"${name}/{name}_c={value / critical:.3g}$" if critical is not None else \
        f"${name}={value:.3g}$"


def plot_overlay(data: OverlayData, ax=None) -> PlotResult:
    """One curve family per value of a parameter, on one axes, with a legend of values.

    Each value has one colour and dash pattern (:func:`value_style`); what the kind's own
    figure tells by line style (stable or not, line kind) is told here by line width and
    markers: the globally preferred or stable states thick, the others thin.

    Parameters
    ----------
    data : OverlayData
        From :func:`bhchem.analysis.figure_data.overlay_data`.
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    PlotResult
        ``data`` holds ``NAME=VALUE/KEY`` for every curve ``KEY`` the kind's own plot would
        draw at that value (rows as there).
    """
    if not isinstance(data, OverlayData):
        raise TypeError(f"plot_overlay draws OverlayData (bhchem.analysis.figure_data."
                        f"overlay_data), not {type(data).__name__}")
    from matplotlib.lines import Line2D  # lazy: matplotlib only when a figure is drawn
    kind, drawn, labels, handles, kinds, off = data.kind, {}, {}, [], set(), False
    fixed = ", ".join(f"{k}={v:g}" for k, v in data.parameters.items())
    with canvas(ax, figsize=(5.2, 3.8)) as (fig, ax):
        lims = []
        for j, (value, m) in enumerate(zip(data.values, data.members)):
            st = value_style(j)
            tag = f"{data.name}={value:g}"
            text = f"${symbol_tex(data.name)} = {value:g}$"

            def put(key, arr, what=""):
                drawn[f"{tag}/{key}"] = arr
                labels[f"{tag}/{key}"] = f"{data.name} = {value!r}{what}"
            if kind == "pv":
                for i, (T, iso, seg) in enumerate(zip(m.temperatures, m.isotherms,
                                                      m.equal_area)):
                    put(f"isotherm_{i}", iso, f", {_value_label('T', T, m.T_c)}")
                    vv, PP = iso[:, 0], iso[:, 1]
                    if seg is not None:
                        put(f"equal_area_{i}", seg)
                        (v1, Pco), (v2, _) = seg
                        inside = (vv > v1) & (vv < v2)
                        ax.plot(np.where(inside, np.nan, vv), np.where(inside, np.nan, PP),
                                lw=1.5, **st)
                        ax.plot([v1, v2], [Pco, Pco], color=st["color"], lw=0.9)
                    else:
                        ax.plot(vv, PP, lw=1.5, **st)
                if m.critical_point is not None:
                    put("critical_point", m.critical_point)
                    ax.plot(*m.critical_point, "o", color=st["color"], ms=4.5, zorder=5)
                    lims.append(2.0 * m.critical_point[1])
                if m.temperatures and m.T_c is not None:
                    text += ", $T/T_c$ = " + ", ".join(f"{T / m.T_c:.3g}" for T in m.temperatures)
                elif m.temperatures:
                    text += ", $T$ = " + ", ".join(f"{T:.3g}" for T in m.temperatures)
            elif kind == "gt":
                p = m.panels[0]
                for b in p.branches:
                    curve = b.curve[np.isfinite(b.curve[:, 0])]
                    put(f"branch{b.index}", curve)
                    ax.plot(curve[:, 0], curve[:, 1], color=st["color"], lw=0.7,
                            ls=st["ls"] if b.stable else ":")
                for k, seg in enumerate(p.preferred):
                    put(f"preferred_{k}", seg)
                    ax.plot(seg[:, 0], seg[:, 1], lw=2.2, solid_capstyle="butt", **st)
                for T, G in p.transitions:
                    ax.plot([T], [G], "o", ms=3.5, color=st["color"], zorder=5)
                text += ", " + _reduced(p.pressure, m.P_c, "P")
                lims.append(p.G_window)
            elif kind == "pt":
                for i, line in enumerate(m.lines):
                    if line.points.size:
                        put(f"line{i}_{line.kind}", line.points)
                        # the value by colour and dash, the kind of line by width
                        ax.plot(line.points[:, 0], line.points[:, 1],
                                lw=1.6 if line.kind == "first-order" else 0.8, **st)
                        kinds.add(line.kind)
                if len(m.critical_points):
                    put("critical_points", m.critical_points)
                    for (T, P), on in zip(m.critical_points, m.critical_on_preferred):
                        ax.plot([T], [P], "o", ms=5, color=st["color"], zorder=6,
                                markerfacecolor=st["color"] if on else "white")
                        off = off or not on
                if len(m.triple_points):
                    put("triple_points", m.triple_points)
                    ax.plot(m.triple_points[:, 0], m.triple_points[:, 1], "^", ms=6,
                            color=st["color"], zorder=6)
                lims.append(m.limits)
            elif kind == "tr":
                P = m.pressures[0]
                for b in m.isobars[0]:
                    put(f"branch{b.index}", b.curve)
                    ax.plot(b.curve[:, 0], b.curve[:, 1], color=st["color"],
                            lw=1.6 if b.stable else 0.8, ls=st["ls"] if b.stable else ":")
                if m.critical_point is not None:
                    lims.append(2.2 * m.critical_point[1])
                text += ", " + _reduced(P, m.P_c, "P")
            elif kind == "cp":
                for b in m.branches:
                    put(f"branch{b.index}", b.curve)
                    ax.plot(b.curve[:, 0], b.curve[:, 1], color=st["color"],
                            lw=1.6 if b.stable else 0.8, ls=st["ls"] if b.stable else ":")
                lims.append(m.linthresh)
                text += ", " + _reduced(m.pressure, m.P_c, "P")
            handles.append(Line2D([], [], lw=1.8, label=text, **st))
        _check_nonempty({k: np.asarray(v, float).ravel() for k, v in drawn.items()}
                        or {"none": []}, f"{kind} overlay")
        state = getattr(data.members[0], "state", "r")
        red = getattr(data.members[0], "reduced", False)
        if kind == "pv":
            if lims:
                ax.set_ylim(0, max(lims))
            ax.set_xlabel(r"$v/v_c$" if red else r"specific volume $v$")
            ax.set_ylabel(r"$P/P_c$" if red else r"pressure $P$")
        elif kind == "gt":
            win = [w for w in lims if w is not None]
            if win:
                ax.set_ylim(min(w[0] for w in win), max(w[1] for w in win))
            ax.set_xlabel(r"$T/T_c$" if red else r"temperature $T$")
            ax.set_ylabel(r"$G/(T_c S_c)$" if red else r"Gibbs free energy $G$")
            handles += [Line2D([], [], color="0.3", lw=2.2, label="globally preferred"),
                        Line2D([], [], color="0.3", lw=0.7, ls=":", label="unstable ($C_P<0$)")]
        elif kind == "pt":
            ok = [li for li in lims if li is not None]
            if ok:
                ax.set_xlim(0, max(li[0] for li in ok))
                ax.set_ylim(0, max(li[1] for li in ok))
            ax.set_xlabel(r"$T/T_c$" if red else r"temperature $T$")
            ax.set_ylabel(r"$P/P_c$" if red else r"pressure $P$")
            handles.append(Line2D([], [], color="0.3", marker="o", ls="", ms=5,
                                  label="critical point"))
            if off:
                handles.append(Line2D([], [], color="0.3", marker="o", ls="", ms=5,
                                      markerfacecolor="white",
                                      label="critical point (not on the preferred branch)"))
            thin = sorted(k.replace("-", " ") for k in kinds - {"first-order"})
            if thin:
                handles.append(Line2D([], [], color="0.3", lw=0.8,
                                      label=f"thin: {', '.join(thin)}"))
        elif kind == "tr":
            if lims:
                ax.set_ylim(0, max(lims))
            x = _state_label(state)
            ax.set_xlabel(rf"${x}/{x}^{{c}}$" if red else rf"${x}$")
            ax.set_ylabel(r"$T/T_c$" if red else r"temperature $T$")
            handles.append(Line2D([], [], color="0.3", lw=0.8, ls=":",
                                  label="unstable ($C_P<0$)"))
        elif kind == "cp":
            th_ = [t for t in lims if t]
            _asinh_axis(ax, min(th_) if th_ else 1.0,
                        [np.asarray(v, float)[:, 1] for v in drawn.values()])
            ax.axhline(0, color="black", lw=0.5)
            x = _state_label(state)
            ax.set_xlabel(rf"${x}/{x}^{{c}}$" if red else rf"${x}$")
            ax.set_ylabel(r"$C_P/S_c$" if red else r"$C_P$")
        sel = "".join(f"; {n}" for n in data.notes if n.startswith("states:"))
        same = [n for n in data.notes if "only sets the scale" in n]
        if same:  # the scale-free statement, under the plane
            ax.text(0.0, -0.2, textwrap.fill(same[0], 90), transform=ax.transAxes,
                    fontsize=7, va="top")
        ax.set_title(f"{data.family} ({fixed}{', ' if fixed else ''}{data.name} varied){sel}")
        ax.legend(handles=handles, loc="best")  # inside, where the curves leave room
    columns = {"tr": (_column(state), "T"), "cp": (_column(state), "C_P")}.get(kind, ())
    if red:
        xc = _column(state) + "/" + _column(state) + "_c"
        columns = {"pv": ("v/v_c", "P/P_c"), "pt": ("T/T_c", "P/P_c"), "tr": (xc, "T/T_c"),
                   "gt": ("T/T_c", "G/(T_c S_c)"), "cp": (xc, "C_P/S_c")}[kind]
    return PlotResult(fig, kind, drawn, list(data.notes), columns=columns, labels=labels)


PLOTTERS = {"pv": plot_pv, "gt": plot_gt, "pt": plot_pt, "tr": plot_tr, "cp": plot_cp}
