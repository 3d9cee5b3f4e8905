"""One call for one figure: compute its data (analysis), then draw it (presentation)::

    th = bhchem.bind("rn-ads", Q=1.0)
    result = bhchem.make_figure(th, "tr", pressures=[0.002])
    bhchem.save(result, "tr.png")

is :func:`bhchem.analysis.figure_data.tr_curves` followed by
:func:`bhchem.present.plots.plot_tr`.  Used by ``bhchem plot`` and the report bundle.
"""
from __future__ import annotations

from bhchem.errors import BhchemError
from bhchem.analysis.figure_data import FIGURE_DATA, FIGURE_KINDS
from bhchem.present.plots import PLOTTERS, PlotResult, adjust, parse_range, parse_width

KINDS = FIGURE_KINDS


def adjust_check(xlim=None, ylim=None, width=None) -> None:
    """Raise :class:`BhchemError` for a bad axis range or width (before any computing)."""
    if xlim is not None:
        parse_range(xlim, "x range")
    if ylim is not None:
        parse_range(ylim, "y range")
    if width is not None:
        parse_width(width)


def make_figure(th, kind: str, ax=None, xlim=None, ylim=None, width=None,
                **options) -> PlotResult:
    """Compute and draw the figure ``kind`` for the bound family ``th``.

    Parameters
    ----------
    th : Thermodynamics
    kind : str
        ``pv``, ``gt``, ``pt``, ``tr`` or ``cp``.
    ax : matplotlib.axes.Axes, optional
        Draw into these axes (for ``gt``: a sequence of axes, one per pressure); default
        a new figure.
    xlim, ylim : (float, float) or 'A:B', optional
        Axis ranges of every panel.
    width : 'column', 'page' or float, optional
        Figure width in inches (a journal column 3.4, a page 7.0); see
        :func:`bhchem.present.plots.adjust`.
    **options
        For the data: ``temperatures`` (pv; absolute or like ``'0.9Tc'``), ``pressures``
        (gt, tr), ``pressure`` (cp), ``diagram`` (pt: a phase diagram already computed).

    Returns
    -------
    PlotResult

    Raises
    ------
    BhchemError
        For an unknown kind; :class:`~bhchem.present.plots.EmptyFigureError` when the
        figure would be empty.
    """
    if kind not in FIGURE_DATA:
        raise BhchemError(f"unknown plot kind {kind!r}; choose one of {', '.join(KINDS)}")
    adjust_check(xlim, ylim, width)  # a bad range or width is refused before computing
    res = PLOTTERS[kind](FIGURE_DATA[kind](th, **options), ax=ax)
    return adjust(res, xlim=xlim, ylim=ylim, width=width)
