"""Critical-point benchmark (printed figures): 10^4 values of a coupling, side by side.

* rn-ads, Q over 10^4 values in [0.1, 10]: the tool (critical_scan: scale invariance)
  versus the hand approach (scipy fsolve on dT/dr = d2T/dr2 = 0 from a fixed guess,
  in a loop), both against the closed form T_c = sqrt6/(18 pi Q), P_c = 1/(96 pi Q^2)
  (Kubiznak & Mann 2012).
* born-infeld-ads, b over 10^4 values in [0.36, 1.0] at Q = 1 (non-polynomial, two
  critical points below bQ ~ 0.42): the tool (critical_scan: continuation) versus fsolve
  from a fixed guess, counting the points each finds; agreement where both find one.

Targets: time ratio >= 50, max relative error <= 1e-12 (rn-ads).
Run:  python benchmarks/bench_critical.py
"""
from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np
from scipy.optimize import fsolve


from bhchem import bind  # noqa: E402
from bhchem.analysis.critical_scan import critical_scan  # noqa: E402


def hand(th_for, values, guess):
    """The straightforward loop: fsolve on (T_x, T_xx) = 0 in (r, P) from one guess."""
    found = []
    for q in values:
        th = th_for(q)
        f = lambda z: [float(th.d("T", "x", z[0], z[1])) * z[0],  # noqa: E731
                       float(th.d("T", "xx", z[0], z[1])) * z[0] ** 2]
        sol, info, ier, msg = fsolve(f, guess, full_output=True, xtol=1e-14)
        ok = ier == 1 and sol[0] > 0 and sol[1] > 0 and \
            max(abs(v) for v in f(sol)) < 1e-9 * abs(float(th.T(*sol)))
        found.append([(float(th.T(*sol)), float(sol[1]), float(sol[0]))] if ok else [])
    return found


def main() -> None:
    n = 10**4
    print("== critical-point benchmark (10^4 coupling values) ==")
    # derive and compile both families once, outside every timing (both sides use them)
    for fam, kw in (("rn-ads", {"Q": 1.0}), ("born-infeld-ads", {"b": 0.7, "Q": 1.0})):
        th = bind(fam, **kw)
        for wrt in ("x", "xx", "xxx", "xP", "xxP"):
            th.d("T", wrt, 1.0, 0.003)
    # rn-ads
    Qs = np.geomspace(0.1, 10, n)
    t0 = time.perf_counter()
    scan = critical_scan("rn-ads", "Q", Qs)
    t_tool = time.perf_counter() - t0
    Tc = np.array([p[0][0] for p in scan.points])
    Pc = np.array([p[0][1] for p in scan.points])
    err_tool = max(np.max(np.abs(Tc / (math.sqrt(6) / (18 * math.pi * Qs)) - 1)),
                   np.max(np.abs(Pc / (1 / (96 * math.pi * Qs**2)) - 1)))
    m = 500  # the hand loop is slow: time it on 500 values and scale
    sub = Qs[:: n // m]
    t0 = time.perf_counter()
    hand_pts = hand(lambda q: bind("rn-ads", Q=float(q)), sub, (2.4, 0.003))
    t_hand = (time.perf_counter() - t0) * n / len(sub)
    ok = [i for i, p in enumerate(hand_pts) if p]
    err_hand = max((abs(hand_pts[i][0][0] / (math.sqrt(6) / (18 * math.pi * sub[i])) - 1)
                    for i in ok), default=float("nan"))
    print(f"rn-ads:  tool {t_tool:8.3f} s ({scan.method}); found {sum(scan.counts())}/{n}; "
          f"max rel error {err_tool:.1e}")
    print(f"         hand {t_hand:8.1f} s (scaled from {len(sub)}); found "
          f"{len(ok)}/{len(sub)}; max rel error {err_hand:.1e}; ratio {t_hand / t_tool:.0f}x")
    # born-infeld-ads
    bs = np.linspace(0.36, 1.0, n)
    t0 = time.perf_counter()
    scan = critical_scan("born-infeld-ads", "b", bs, Q=1.0)
    t_tool = time.perf_counter() - t0
    counts = scan.counts()
    sub_idx = np.arange(0, n, n // m)
    t0 = time.perf_counter()
    hand_pts = hand(lambda b: bind("born-infeld-ads", b=float(b), Q=1.0), bs[sub_idx], (2.4, 0.0034))
    t_hand = (time.perf_counter() - t0) * n / len(sub_idx)
    hand_counts = np.array([len(p) for p in hand_pts])
    agree = []
    for j, i in enumerate(sub_idx):
        if hand_pts[j]:
            T = hand_pts[j][0][0]
            best = min(abs(T / p[0] - 1) for p in scan.points[i]) if scan.points[i] else np.inf
            agree.append(best)
    print(f"born-infeld-ads: tool {t_tool:8.2f} s ({scan.method}, {scan.full_searches} full "
          f"searches); points found: {int(counts.sum())} over {n} values "
          f"({int((counts == 2).sum())} values with two)")
    print(f"         hand {t_hand:8.1f} s (scaled from {len(sub_idx)}); points found on the "
          f"sample: {int(hand_counts.sum())} vs tool {int(counts[sub_idx].sum())}; ratio "
          f"{t_hand / t_tool:.0f}x; max rel difference where both found one: "
          f"{max(agree):.1e}")


if __name__ == "__main__":
    main()
