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
from bhchem.analysis.figure_data import gt_curves
from bhchem.present.ensemble_report import plot_compare
from bhchem.present.plots import PLOTTERS, PlotResult

KINDS = FIGURE_KINDS


def make_figure(th, kind: str, ax=None, **options) -> PlotResult:
    """Compute and draw the figure ``kind`` for the bound family ``th``.

    Parameters
    ----------
    th : Thermodynamics
    kind : str
        ``pv``, ``gt``, ``pt``, ``tr`` or ``cp``.
    ax : matplotlib.axes.Axes, optional
        Draw into these axes (for ``gt``: a sequence of axes, one per pressure); default
        a new figure.
    **options
        For the data: ``temperatures`` (pv), ``pressures`` (gt, tr), ``pressure`` (cp),
        ``diagram`` (pt: a phase diagram already computed).

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
    return PLOTTERS[kind](FIGURE_DATA[kind](th, **options), ax=ax)



def compare_figure(charge_bound, potential_bound, pressure: float) -> PlotResult:
    """Two G-T panels at one pressure, the fixed-charge ensemble left and the
    fixed-potential one right (:func:`~bhchem.analysis.figure_data.gt_curves` for each, then
    :func:`~bhchem.present.ensemble_report.plot_compare`)."""
    return plot_compare(gt_curves(charge_bound, pressures=[pressure]),
                        gt_curves(potential_bound, pressures=[pressure]))
