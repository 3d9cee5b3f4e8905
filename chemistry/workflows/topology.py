"""Issue 16 orchestration: the pressure, ensemble temperature and start well that
``bhchem topology``, ``bhchem landscape`` and ``bhchem report --topology`` use by default.

Runs analyses and chooses among their results; computes nothing of its own.
"""
from __future__ import annotations

from dataclasses import dataclass

from bhchem.core.compiled import Thermodynamics
from bhchem.errors import BhchemError
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.isobar import analyze_isobar
from bhchem.analysis.landscape import FirstPassage, Landscape, first_passage, free_energy_landscape


def default_pressure(th: Thermodynamics) -> float:
    """Half the lowest physical critical pressure, or the family's typical pressure."""
    cps = find_critical_points(th).physical
    return 0.5 * cps[0].P if cps else th.typical_pressure()


@dataclass(frozen=True)
class LandscapeRun:
    """A landscape, its first passage (None without a barrier between two wells) and a
    note on how T_E was chosen."""

    landscape: Landscape
    passage: FirstPassage | None
    note: str


def landscape_run(th: Thermodynamics, P: float, T_E: float | None = None, start: str = "auto",
                  target: str = "barrier") -> LandscapeRun:
    """The landscape at (T_E, P) and the first passage across its highest inner barrier.

    T_E defaults to the temperature of the first first-order or Hawking-Page transition
    at P (raises :class:`BhchemError` when there is none); ``start='auto'`` starts in the
    small well unless it is the edge of the domain (the thermal AdS side of Hawking-Page),
    then in the large one.
    """
    note = ""
    if T_E is None:
        iso = analyze_isobar(th, P, warn=False)
        tr = next((t for t in iso.transitions if t.kind in ("first-order", "hawking-page")),
                  None)
        if tr is None:
            raise BhchemError(f"no first-order or Hawking-Page transition at P = {P:g}: "
                              f"give the ensemble temperature (--temperature)")
        T_E = tr.T
        note = f"the {tr.kind} transition temperature at this P"
    ls = free_energy_landscape(th, T_E, P)
    ext = ls.extrema
    inner = [i for i, e in enumerate(ext) if e.kind == "barrier" and 0 < i < len(ext) - 1]
    fp = None
    if inner:
        if start == "auto":
            ib = max(inner, key=lambda i: ext[i].G_L)
            start = "large" if ext[ib - 1].edge else "small"
        fp = first_passage(th, T_E, P, start=start, target=target, landscape=ls)
    return LandscapeRun(ls, fp, note)
