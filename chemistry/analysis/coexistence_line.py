"""A first-order coexistence line over many pressures: the pairs of coexisting states
continued from the transitions that isobar analyses find (anchors), refined by the
vectorised Newton and near-critical solvers of :mod:`bhchem.analysis.coexistence`.

Kept apart from the solvers because it needs the isobar analysis, which itself uses
the solvers to polish its transitions (so neither imports the other in a cycle).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bhchem.core.results import Result
from bhchem.analysis.coexistence import (coexistence_near_critical,
                                         coexistence_newton, make_point)
from bhchem.analysis.isobar import analyze_isobar
from bhchem.analysis.consistency import emit, first_law_warnings, line_check_warnings
from bhchem.core.compiled import Thermodynamics


def _distance(pair, guess) -> float:
    return max(abs(math.log(pair[0] / guess[0])), abs(math.log(pair[1] / guess[1])))


def _close(pair, guess, tol: float = 0.5) -> bool:
    return _distance(pair, guess) < tol


@dataclass(frozen=True, repr=False)
class CoexistenceCurve(Result):
    """Coexistence points at the requested pressures, and the pressures that failed.

    ``warnings`` names a first-law failure of the family (the points then have no
    thermodynamic meaning) and any residual above its promised bound.
    """

    points: tuple
    failed_pressures: tuple
    message: str
    warnings: tuple = ()

    @property
    def complete(self) -> bool:
        return not self.failed_pressures

    def table_rows(self):
        """One row per coexistence point: P, T, G, latent heat, Delta v and residuals."""
        return (("P", "T", "G", "latent_heat", "delta_v", "residual_T", "residual_G"),
                [(p.P, p.T, p.G, p.latent_heat, p.delta_v, p.residual_T, p.residual_G)
                 for p in self.points])


def coexistence_curve(th: Thermodynamics, pressures, critical_point=None, n_anchor: int = 8,
                      checks: bool = False) -> CoexistenceCurve:
    """Coexistence points of one first-order transition at many pressures.

    A few anchor isobars (full isobar analysis) seed one vectorised Newton solve over
    all pressures (guesses interpolated in s = sqrt|1 - P/P_c| when the line ends at
    ``critical_point``, where the states separate like s; else in log P).  Pressures
    within 1e-3 of P_c, and any where Newton fails, go to the bracketing near-critical
    solver, then to a full isobar analysis.  A pressure that still fails is listed in
    ``failed_pressures``, never dropped silently.
    """
    Ps = np.sort(np.asarray(pressures, float))
    cp = critical_point

    def coord(P):
        return np.sqrt(np.abs(1 - np.asarray(P) / cp.P)) if cp is not None else np.log(P)

    def direct(P, guess=None):
        if cp is not None:
            res = coexistence_near_critical(th, cp.x, cp.P, P)
            if res is not None and (guess is None or _close((res[1], res[2]), guess)):
                return res[1], res[2]
        tr = [tuple(sorted((t.states[0].x, t.states[1].x)))
              for t in analyze_isobar(th, P, warn=False, report_excluded=False).transitions if t.kind == "first-order"]
        near = [pair for pair in tr if guess is not None and _close(pair, guess)]
        if near:
            # this line's pair: the one closest to the states interpolated along the line
            near.sort(key=lambda pair: _distance(pair, guess))
            return near[0]
        if cp is not None:  # else the transition whose T is nearest T_c
            tr.sort(key=lambda pair: abs(float(th.T(pair[0], P)) - cp.T))
        return tr[0] if tr else None

    near = np.abs(1 - Ps / cp.P) < 1e-3 if cp is not None else np.zeros(Ps.shape, bool)
    far = Ps[~near]
    solved = {}
    if far.size:
        anchors = np.unique(np.concatenate([np.geomspace(far[0], far[-1], min(n_anchor, far.size)),
                                            far[[0, -1]]]))
        aP, ax1, ax2 = [], [], []
        for P in anchors:
            pair = direct(P)
            if pair is not None:
                aP.append(P), ax1.append(pair[0]), ax2.append(pair[1])
        if aP:
            c, order = coord(np.array(aP)), None
            order = np.argsort(c)
            cf = coord(far)
            g1 = np.exp(np.interp(cf, c[order], np.log(ax1)[order]))
            g2 = np.exp(np.interp(cf, c[order], np.log(ax2)[order]))
            a, b, ok = coexistence_newton(th, far, g1, g2)
            # the same pair as the anchors: a solution far from its guess is another pair
            near = (np.abs(np.log(a / g1)) < 0.5) & (np.abs(np.log(b / g2)) < 0.5)
            for P, x1, x2, good in zip(far, a, b, ok & near):
                if good:
                    solved[float(P)] = (x1, x2)
    guesses = {}
    if far.size and aP:
        guesses = {float(P): (x1, x2) for P, x1, x2 in zip(far, g1, g2)}
    failed = []
    for P in Ps:
        if float(P) in solved:
            continue
        pair = direct(P, guesses.get(float(P)))
        if pair is None:
            failed.append(float(P))
        else:
            solved[float(P)] = pair
    pts = tuple(make_point(th, P, *solved[P], checks) for P in sorted(solved))
    msg = f"{len(pts)} of {len(Ps)} pressures solved"
    if failed:
        msg += f"; no coexistence found at {len(failed)} pressure(s)"
    def worst(name):
        vals = [getattr(p, name) for p in pts if getattr(p, name) is not None]
        return max(vals) if vals else None
    flagged = list(first_law_warnings(th)) + line_check_warnings("coexistence curve", {
        "max_residual_T": worst("residual_T"), "max_residual_G": worst("residual_G"),
        "max_equal_area_residual": worst("equal_area_residual"),
        "max_clapeyron_residual": worst("clapeyron_residual")})
    emit(flagged)
    return CoexistenceCurve(points=pts, failed_pressures=tuple(failed), message=msg,
                            warnings=tuple(flagged))
