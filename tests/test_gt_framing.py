"""The default G-T window frames the swallowtail as a paper draws it.

Before: the G window spanned every branch inside the temperature window, so where the large
branch falls steeply (Gauss-Bonnet, latent heat ~ 59 at P = P_c/2) the swallowtail filled 4 %
of the G axis.  Now the window is computed from the swallowtail -- its cusps and crossing --
with a margin of 30 % of its extent on each side (it fills 1/1.6 = 62 % of each axis).

The thresholds below: the swallowtail spans at least 40 % of the G window and 15 % of the T
window (a swallowtail drawn smaller than that is hard to read in a journal column), every
cusp and the crossing lie inside both windows, and the curves drawn inside the window reach
70 % of the G window (the swallowtail, 62 %, plus the neighbouring branches leaving it).

The cusps are checked against the exact spinodals of RN-AdS, T_r = 0 <=> 8 pi P r^4 - r^2 +
3 Q^2 = 0 (Kubiznak & Mann, JHEP 07 (2012) 033, arXiv:1205.0559, eq. of state (3.7) with
v = 2 r), solved with numpy's polynomial roots.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from bhchem import bind
from bhchem.analysis import figure_data
from bhchem.analysis.critical import resolve_pressure


def _inside(panel, T, G):
    (t0, t1), (g0, g1) = panel.T_window, panel.G_window
    return t0 <= T <= t1 and g0 <= G <= g1


def _check_framing(panel, cusps):
    """cusps: [(T, G)] of the swallowtail; the crossing is panel.transitions."""
    pts = list(cusps) + [tuple(t) for t in panel.transitions]
    assert len(panel.transitions) == 1 and len(cusps) == 2
    for T, G in pts:
        assert _inside(panel, T, G), (T, G, panel.T_window, panel.G_window)
    T = [p[0] for p in pts]
    G = [p[1] for p in pts]
    (t0, t1), (g0, g1) = panel.T_window, panel.G_window
    assert (max(T) - min(T)) / (t1 - t0) >= 0.15
    assert (max(G) - min(G)) / (g1 - g0) >= 0.40
    # the preferred phase is drawn inside the window on both sides of the crossing
    T_star = panel.transitions[0, 0]
    seen = np.vstack(panel.preferred)
    seen = seen[[_inside(panel, t, g) for t, g in seen]]
    assert np.any(seen[:, 0] < T_star) and np.any(seen[:, 0] > T_star)
    # and the drawn curves (branches) cover the G window from bottom to top
    drawn = np.vstack([b.curve for b in panel.branches])
    drawn = drawn[np.isfinite(drawn[:, 0])]
    drawn = drawn[[_inside(panel, t, g) for t, g in drawn]]
    assert (drawn[:, 1].max() - drawn[:, 1].min()) / (g1 - g0) >= 0.7


@pytest.mark.parametrize("fraction", [0.5, 0.8])
def test_gt_window_frames_the_rn_swallowtail(fraction):
    th = bind("rn-ads", Q=1.0)
    P = resolve_pressure(th, f"{fraction}Pc")
    (panel,) = figure_data.gt_curves(th, [P]).panels
    # exact spinodals: 8 pi P r^4 - r^2 + 3 Q^2 = 0 (two positive roots below P_c)
    r = np.sort([z.real for z in np.roots([8 * math.pi * P, 0, -1, 0, 3]) if z.real > 0
                 and abs(z.imag) < 1e-12])
    assert len(r) == 2
    T = (1 + 8 * math.pi * P * r**2 - 1 / r**2) / (4 * math.pi * r)
    M = r / 2 * (1 + 8 * math.pi * P * r**2 / 3 + 1 / r**2)
    G = M - T * math.pi * r**2
    _check_framing(panel, list(zip(T, G)))


def test_gt_window_frames_the_gauss_bonnet_swallowtail():
    """The brief's example: 5D Gauss-Bonnet, alpha = 0.3, Q = 1, P = P_c/2 (the large
    branch plunges: G drops by ~20 across the swallowtail's temperatures)."""
    from bhchem.analysis.isobar import analyze_isobar
    th = bind("gauss-bonnet-ads", d=5, alpha=0.3, Q=1.0)
    P = resolve_pressure(th, "0.5Pc")
    (panel,) = figure_data.gt_curves(th, [P]).panels
    res = analyze_isobar(th, P, warn=False)
    cusps = {(T, float(th.G(x, P))) for b in res.branches
             for e, T, x in zip(b.ends, (b.T_at_x_min, b.T_at_x_max), (b.x_min, b.x_max))
             if e == "spinodal" and T > 0}
    # each cusp is a spinodal: T_x = 0 there (the fold of the isobar)
    for T, _ in cusps:
        (x,) = [x for b in res.branches for e, t, x in
                zip(b.ends, (b.T_at_x_min, b.T_at_x_max), (b.x_min, b.x_max))
                if e == "spinodal" and t == T][:1]
        assert abs(x * float(th.d("T", "x", x, P))) <= 1e-8 * T
    _check_framing(panel, sorted(cusps))
