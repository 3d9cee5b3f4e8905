"""One call for one figure: compute its data (analysis), then draw it (presentation)::

    th = bhchem.bind("rn-ads", Q=1.0)
    result = bhchem.make_figure(th, "tr", pressures=[0.002])
    bhchem.save(result, "tr.png")

is :func:`bhchem.analysis.figure_data.tr_curves` followed by
:func:`bhchem.present.plots.plot_tr`.  Used by ``bhchem plot`` and the report bundle.
"""
from __future__ import annotations

import math

import numpy as np

from bhchem.errors import BhchemError
from bhchem.analysis.figure_data import FIGURE_DATA, FIGURE_KINDS, overlay_data, reduced
from bhchem.analysis.figure_data import gt_curves
from bhchem.present.ensemble_report import plot_compare
from bhchem.present.plots import (PLOTTERS, PlotResult, adjust, parse_range, parse_width,
                                  plot_overlay)

KINDS = FIGURE_KINDS


def adjust_check(xlim=None, ylim=None, width=None) -> None:
    """Raise :class:`BhchemError` for a bad axis range or width (before any computing)."""
    if xlim is not None:
        parse_range(xlim, "x range")
    if ylim is not None:
        parse_range(ylim, "y range")
    if width is not None:
        parse_width(width)


def parse_vary(spec) -> tuple:
    """``'a=0,0.5,1'``, a grid ``'a=0:1:3'`` / ``'a=log:0.1:10:3'``, or ``('a', [0, 0.5])``,
    as ``(name, values)``."""
    if not isinstance(spec, str):
        name, values = spec
        return str(name), tuple(float(v) for v in values)
    name, sep, rest = spec.partition("=")
    if not sep or not name.strip() or not rest.strip():
        raise BhchemError(f"--vary {spec!r} must look like NAME=V1,V2,... or NAME=START:STOP:N")
    log = rest.startswith("log:")
    parts = (rest[4:] if log else rest).split(":" if ":" in rest else ",")
    try:
        nums = [float(v) for v in parts]
        if ":" in rest:
            lo, hi, n = nums
            if n != int(n) or not 1 <= n <= 8 or (log and min(lo, hi) <= 0):
                raise ValueError
            values = np.geomspace(lo, hi, int(n)) if log else np.linspace(lo, hi, int(n))
        else:
            values = nums
    except ValueError:
        raise BhchemError(f"--vary {spec!r} must look like NAME=V1,V2,... or NAME=START:STOP:N "
                          f"(N from 1 to 8; log: with positive ends)") from None
    if not all(math.isfinite(v) for v in values):
        raise BhchemError(f"--vary {spec!r}: the values must be finite")
    return name.strip(), tuple(float(v) for v in values)


def make_figure(th, kind: str, ax=None, xlim=None, ylim=None, width=None, vary=None,
                reduced_units: bool = False, **options) -> PlotResult:
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
    vary : str or (str, sequence of float), optional
        One curve family per value of a parameter, on one axes (``'a=0,0.5,1'`` or a grid
        ``'a=0:1:3'``; see :func:`bhchem.analysis.figure_data.overlay_data` for what each
        kind draws per value).
    reduced_units : bool
        Draw in units of the critical point: v/v_c, P/P_c, T/T_c, x/x_c, G/(T_c S_c), C_P/S_c
        (see :func:`bhchem.analysis.figure_data.reduced`).
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
    if vary is not None:
        name, values = parse_vary(vary)
        res = plot_overlay(overlay_data(th, kind, name, values, reduced_units=reduced_units,
                                        **options), ax=ax)
    else:
        data = FIGURE_DATA[kind](th, **options)
        res = PLOTTERS[kind](reduced(data, th) if reduced_units else data, ax=ax)
    return adjust(res, xlim=xlim, ylim=ylim, width=width)


def compare_figure(charge_bound, potential_bound, pressure: float) -> PlotResult:
    """Two G-T panels at one pressure, the fixed-charge ensemble left and the
    fixed-potential one right (:func:`~bhchem.analysis.figure_data.gt_curves` for each, then
    :func:`~bhchem.present.ensemble_report.plot_compare`)."""
    return plot_compare(gt_curves(charge_bound, pressures=[pressure]),
                        gt_curves(potential_bound, pressures=[pressure]))
