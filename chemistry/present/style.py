"""The look of every bhchem figure: palette, line conventions, rc style, titles.

A muted palette readable in print, and line *styles* that carry the meaning in
greyscale too: globally preferred = thick solid; locally stable but not preferred
(metastable) = thin dashed; unstable (C_P < 0) = dotted grey.  Lines of the phase
diagram: first order solid, zeroth order dashed, Hawking-Page dash-dot.  Critical
points are filled circles, triple points triangles, terminal points squares.

Figures are plain :class:`matplotlib.figure.Figure` objects made without pyplot, drawn
inside :func:`styled` (a :func:`matplotlib.rc_context`: the caller's rcParams and
backend are left as they were).  matplotlib itself is imported only when a figure is
drawn, so ``import bhchem`` and the commands without figures do not pay for it.
"""
from __future__ import annotations

from contextlib import contextmanager

from cycler import cycler

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
    "axes.prop_cycle": None,  # set by rc_style()
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


def rc_style() -> dict:
    """The rcParams of the bhchem style (:data:`STYLE` with the palette as colour cycle).

    Returns
    -------
    dict
        A fresh dict, suitable for :func:`matplotlib.rc_context`.
    """
    style = dict(STYLE)
    style["axes.prop_cycle"] = cycler(color=PALETTE)
    return style


class FigureFactory:
    """What :func:`styled` yields: ``subplots`` like pyplot's, but the figure is a plain
    :class:`matplotlib.figure.Figure` (no pyplot state, no backend chosen or changed)."""

    @staticmethod
    def subplots(nrows: int = 1, ncols: int = 1, *, figsize=None, **kw):
        """``(figure, axes)`` as :func:`matplotlib.pyplot.subplots` returns them."""
        from matplotlib.figure import Figure  # lazy: matplotlib only when a figure is drawn
        fig = Figure(figsize=figsize)
        return fig, fig.subplots(nrows, ncols, **kw)


@contextmanager
def styled():
    """Draw in the bhchem style: ``with styled() as mk: fig, ax = mk.subplots()``.

    The style is applied with :func:`matplotlib.rc_context`, so the caller's rcParams
    are restored on exit; the backend is never touched (a library must not call
    ``matplotlib.use``).

    Yields
    ------
    FigureFactory
    """
    import matplotlib  # lazy: matplotlib only when a figure is drawn
    with matplotlib.rc_context(rc_style()):
        yield FigureFactory()


def figure_title(source, extra: str = "") -> str:
    """The title of a figure: family name and parameter values, then ``extra``.

    Parameters
    ----------
    source : Thermodynamics or result object
        A bound family (``family.name`` and ``values``), or any result that carries
        ``family`` (the name) and ``parameters`` (a mapping), like the figure data of
        :mod:`bhchem.analysis.figure_data` and :class:`~bhchem.analysis.engines.EngineResult`.
    extra : str
        Appended to the title as given.

    Returns
    -------
    str
    """
    family = source.family
    if isinstance(family, str):
        name, values = family, source.parameters
    else:
        name, values = family.name, source.values
    params = ", ".join(f"{k}={v:g}" for k, v in values.items())
    return f"{name} ({params}){extra}"



def symbol_tex(name: str) -> str:
    """A parameter name in math mode (figures and LaTeX tables alike): one letter stays
    italic (``Q``), a longer name is upright (``\\mathrm{alpha}``), so a coupling named alpha
    is never typeset like the critical exponent alpha, nor as a product of five letters.

    Examples
    --------
    >>> print(symbol_tex("Q"), symbol_tex("alpha"), symbol_tex("Phi_Q"))
    Q \\mathrm{alpha} \\mathrm{Phi}_{Q}
    """
    base, sep, sub = name.partition("_")
    body = base if len(base) <= 1 else f"\\mathrm{{{base}}}"
    return f"{body}_{{{sub}}}" if sep else body
