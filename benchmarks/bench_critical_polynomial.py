"""Critical points from the critical polynomial versus a hand-written fsolve loop (printed).

Born-Infeld-AdS (Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, Sec. 4), Q = 1, 10^4
values of b in [0.3, 0.6]: no critical point below bQ = 1/sqrt(8), two up to the P_c = 0
crossing near bQ = 0.4237, one above.

* tool: :func:`bhchem.analysis.critical_polynomial.critical_points_over` -- the
  rationalised critical polynomial's coefficients for all b at once, batched companion-matrix
  eigenvalues (numpy), two Newton steps on (r T_r, r^2 T_rr) = 0, residuals.  Timed twice:
  the first call (it derives the polynomial, about a second of sympy, once per family and
  process) and a second call (polynomial cached).
* hand: the equation of state written out by hand (GKM 2012 Sec. 4),
  T = 1/(4 pi r) + 2 P r + b^2 r (1 - sqrt(1 + Q^2/(b^2 r^4)))/(2 pi), its r-derivatives
  lambdified with sympy, and scipy.optimize.fsolve on (r T_r, r^2 T_rr) = 0 in (r, P) for
  each b, from 8 guesses spread over r in [0.8, 3.5] (each with the P where T_r = 0), so
  that both critical points can be found; solutions deduplicated, kept with T > 0, P > 0
  and relative residuals below 1e-9.

Printed: both times, the ratio (target >= 50x), the number of critical points each finds,
the values where the counts differ (with the engine's own search find_critical_points as the
referee at up to 10 of them), and the largest relative difference of (T_c, P_c, r_c) where
both find the same points.
Run:  python benchmarks/bench_critical_polynomial.py [n]
"""
from __future__ import annotations

import sys
import time

import numpy as np
import sympy as sp
from scipy.optimize import fsolve

from bhchem import bind
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.critical_polynomial import critical_points_over


def hand_functions():
    r, P, b, Q = sp.symbols("r P b Q", positive=True)
    T = 1 / (4 * sp.pi * r) + 2 * P * r + b**2 * r * (1 - sp.sqrt(1 + Q**2 / (b**2 * r**4))) / (
        2 * sp.pi)
    lam = lambda e: sp.lambdify((r, P, b, Q), e, modules="math")  # noqa: E731
    return (lam(T), lam(sp.diff(T, r)), lam(sp.diff(T, r, 2)), lam(sp.diff(T, r, P)))


def hand(bs, Q=1.0):
    fT, fTr, fTrr, fTrP = hand_functions()
    out = []
    for b in bs:
        found = []
        for r0 in np.geomspace(0.8, 3.5, 8):
            P0 = -fTr(r0, 0.0, b, Q) / fTrP(r0, 0.0, b, Q)   # T_r = 0 there (T linear in P)
            if not P0 > 0:
                P0 = 1e-3

            def eqs(z):
                rr, PP = z
                if rr <= 0:
                    return [1e3, 1e3]
                return [rr * fTr(rr, PP, b, Q), rr * rr * fTrr(rr, PP, b, Q)]
            sol, info, ier, msg = fsolve(eqs, (r0, P0), full_output=True, xtol=1e-14)
            rr, PP = float(sol[0]), float(sol[1])
            if ier != 1 or rr <= 0 or PP <= 0:
                continue
            T = fT(rr, PP, b, Q)
            if T <= 0 or max(abs(v) for v in eqs(sol)) > 1e-9 * abs(T):
                continue
            if not any(abs(rr / f[2] - 1) < 1e-7 for f in found):
                found.append((T, PP, rr))
        out.append(tuple(sorted(found, key=lambda t: t[1])))
    return out


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 10**4
    bs = np.linspace(0.3, 0.6, n)
    print(f"== critical points over {n} Born-Infeld couplings b in [0.3, 0.6], Q = 1 ==")
    th = bind("born-infeld-ads", b=0.45, Q=1.0)       # derive and compile outside the timings
    for wrt in ("x", "xx", "xxx", "xP", "xxP"):
        th.d("T", wrt, 1.0, 0.003)
    t0 = time.perf_counter()
    tool = critical_points_over("born-infeld-ads", "b", bs, Q=1.0)
    t_first = time.perf_counter() - t0
    t0 = time.perf_counter()
    tool = critical_points_over("born-infeld-ads", "b", bs, Q=1.0)
    t_tool = time.perf_counter() - t0
    hand_functions()                                  # lambdify outside the timing
    t0 = time.perf_counter()
    ref = hand(bs)
    t_hand = time.perf_counter() - t0
    counts_tool = tool.counts()
    counts_hand = np.array([len(p) for p in ref])
    differ = np.nonzero(counts_tool != counts_hand)[0]
    worst = 0.0
    for pts_t, pts_h in zip(tool.points, ref):
        if len(pts_t) == len(pts_h):
            for a, b in zip(pts_t, pts_h):
                worst = max(worst, max(abs(a[k] / b[k] - 1) for k in range(3)))
    maxres = max((max(r) for r in tool.residuals if r), default=0.0)
    print(f"tool (first call, derives the polynomial) {t_first:8.3f} s")
    print(f"tool (polynomial cached)                  {t_tool:8.3f} s; {tool.message}; "
          f"max residual {maxres:.1e}; converged {tool.converged}")
    print(f"hand (lambdified fsolve loop, 8 guesses)  {t_hand:8.3f} s")
    print(f"speed-up: {t_hand / t_tool:.0f}x (cached), {t_hand / t_first:.0f}x (first call); "
          f"target >= 50x")
    print(f"critical points found: tool {int(counts_tool.sum())}, hand {int(counts_hand.sum())}; "
          f"counts per b: tool 0/1/2 = {np.bincount(counts_tool, minlength=3).tolist()}, "
          f"hand = {np.bincount(counts_hand, minlength=3).tolist()}")
    if len(differ):
        more = int(np.sum(counts_tool[differ] > counts_hand[differ]))
        print(f"counts differ at {len(differ)} value(s) (tool finds more at {more}); first: "
              + ", ".join(f"b = {bs[i]:.6f}: tool {counts_tool[i]}, hand {counts_hand[i]}"
                          for i in differ[:5]))
        check = differ[:: max(1, len(differ) // 10)][:10]
        engine = [len(find_critical_points("born-infeld-ads", b=float(bs[i]), Q=1.0).physical)
                  for i in check]
        agree = sum(int(e == counts_tool[i]) for e, i in zip(engine, check))
        print(f"the engine's own search (find_critical_points, scanned) at {len(check)} of "
              f"them: agrees with the tool at {agree}, with the hand loop at "
              f"{sum(int(e == counts_hand[i]) for e, i in zip(engine, check))}")
    else:
        print("counts agree at every b")
    print(f"largest relative difference of (T_c, P_c, r_c) where the counts agree: {worst:.1e}")


if __name__ == "__main__":
    main()
