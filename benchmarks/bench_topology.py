"""Thermodynamic-topology benchmark (printed figures): winding numbers of every bundled
family at 100 values of tau, side by side with a hand-written notebook approach.

* tool: :func:`bhchem.analysis.topology.zeros_at` at 100 values of tau spread over the
  range where the family has black holes (branches found once per family): every zero's
  winding number by an adaptive contour integral *and* the sign formula, and W by one
  contour around the whole physical domain.
* hand: what a notebook does for one tau: F_x = M_x - S_x/tau on a 20 000-point
  logarithmic grid, sign changes refined by brentq, and the winding number of each zero from
  the field's angle on a fixed square contour of 4 x 500 samples (np.unwrap).

Target: all families, 100 tau each, <= 2 s (derivation and compilation excluded: both
sides use the same compiled functions, built before the clocks start).
Run:  python benchmarks/bench_topology.py
"""
from __future__ import annotations

import math
import time

import numpy as np
from scipy.optimize import brentq

from bhchem import available_families, bind, find_critical_points
from bhchem.analysis.isobar import find_branches
from bhchem.analysis.topology import search_range, zeros_at


def pressure(th):
    cps = find_critical_points(th).physical
    return 0.5 * cps[0].P if cps else th.typical_pressure()


def taus_for(th, P, branches, n=100):
    Ts = [t for b in branches for t in (b.T_at_x_min, b.T_at_x_max) if 0 < t < math.inf]
    lo, hi = min(Ts), max(Ts)
    lo = max(lo, hi * 1e-4)
    return 1.0 / np.geomspace(lo * 1.0001, hi * 0.9999, n)


def hand(th, P, tau, xr):
    xs = np.geomspace(xr[0], xr[1], 20000)
    f = lambda x: th.d("M", "x", x, P) - th.d("S", "x", x, P) / tau  # noqa: E731
    v = f(xs)
    ok = th.physical(xs, P) & np.isfinite(v)
    out = []
    for i in np.nonzero(ok[:-1] & ok[1:] & (np.sign(v[:-1]) != np.sign(v[1:])))[0]:
        x0 = brentq(lambda x: float(f(x)), xs[i], xs[i + 1], xtol=1e-14 * xs[i])
        h = 0.01 * x0
        s = np.linspace(0, 1, 500, endpoint=False)
        X = np.concatenate([x0 - h + 2 * h * s, np.full(500, x0 + h), x0 + h - 2 * h * s,
                            np.full(500, x0 - h)])
        Th = np.concatenate([np.full(500, -0.5), -0.5 + s, np.full(500, 0.5), 0.5 - s])
        Th = Th + math.pi / 2
        ang = np.unwrap(np.arctan2(-np.cos(Th) / np.sin(Th) ** 2, f(X)))
        ang = np.append(ang, ang[0] + 2 * math.pi * round((ang[-1] - ang[0]) / (2 * math.pi)))
        out.append((x0, int(round((ang[-1] - ang[0]) / (2 * math.pi)))))
    return out


def main() -> None:
    print("== thermodynamic topology: winding numbers at 100 tau per family ==")
    setups = []
    for name in sorted(available_families()):
        th = bind(name)
        P = pressure(th)
        xr = search_range(th, P)
        branches = find_branches(th, P, xr)
        taus = taus_for(th, P, branches)
        zeros_at(th, P, float(taus[0]), branches)             # compile outside the clock
        hand(th, P, float(taus[0]), xr)
        setups.append((name, th, P, xr, branches, taus))
    t_tool = t_hand = 0.0
    for name, th, P, xr, branches, taus in setups:
        t0 = time.perf_counter()
        res = [zeros_at(th, P, float(t), branches) for t in taus]
        dt = time.perf_counter() - t0
        t0 = time.perf_counter()
        hd = [hand(th, P, float(t), xr) for t in taus]
        dh = time.perf_counter() - t0
        t_tool += dt
        t_hand += dh
        nz = sum(len(r.zeros) for r in res)
        agree = sum(r.agree for r in res)
        same = sum(sorted(z.winding for z in r.zeros) == sorted(w for _, w in h)
                   for r, h in zip(res, hd))
        Ws = sorted({r.W for r in res})
        print(f"{name:<18} tool {dt:6.3f} s  hand {dh:6.3f} s  zeros {nz:4d}  "
              f"contour = sign formula at {agree}/100 tau  W in {Ws}  hand agrees at {same}/100")
    print(f"all families: tool {t_tool:.2f} s (target <= 2 s), hand {t_hand:.2f} s")


if __name__ == "__main__":
    main()
