"""Ensemble benchmark (printed figures): the fixed-Phi phase diagram of charged AdS (4D)
against the fixed-Q one, both computed in this run over the same pressure range
(0.01 P_c ... 3 P_c of the fixed-Q critical point, Q = 1, Phi = 0.5), each after one
warm-up run so that derivation and compilation are not counted.  Target (issue 14): the
fixed-Phi diagram costs no more than 2x the fixed-Q one.  A benchmark, not a test: nothing
in the test suite depends on elapsed time.

Second part: the cost of the certified numerical inverse (bhchem.core.implicit).  Born-Infeld-
AdS (b = 1) at fixed Phi has no closed-form Q(r, Phi): every state solves Phi(r, Q) = Phi
(grid isolation + safeguarded Newton).  Printed: T and G at 10^5 states at fixed Q = 1
(closed form) against fixed Phi = 0.5 (one solve per call), and one fixed-Phi isobar.

Run:  python benchmarks/bench_ensemble.py
"""
from __future__ import annotations

import time

from bhchem import bind, find_critical_points, phase_diagram
from bhchem.analysis.isobar import analyze_isobar
from bhchem.core import implicit


def timed(th, rng, repeat=3):
    phase_diagram(th, pressure_range=rng)           # warm-up: derivation, compilation
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        pd = phase_diagram(th, pressure_range=rng)
        best = min(best, time.perf_counter() - t0)
    return best, pd


def main():
    th_q = bind("rn-ads", Q=1.0)
    th_phi = bind("rn-ads", Phi_Q=0.5)
    Pc = find_critical_points(th_q).physical[0].P
    rng = (0.01 * Pc, 3 * Pc)
    t_q, pd_q = timed(th_q, rng)
    t_phi, pd_phi = timed(th_phi, rng)
    print(f"fixed Q   = 1  : {t_q:.3f} s  structure {pd_q.structure}, {len(pd_q.lines)} line(s)")
    print(f"fixed Phi = 0.5: {t_phi:.3f} s  structure {pd_phi.structure}, "
          f"{len(pd_phi.lines)} line(s)")
    ratio = t_phi / t_q
    print(f"ratio {ratio:.2f} (target <= 2): {'met' if ratio <= 2 else 'NOT met'}")

    print("born-infeld-ads (b = 1): T and G at 10^5 states (r+ = 0.05 ... 20, P = 0.01)")
    import numpy as np
    r = np.geomspace(0.05, 20.0, 100_000)
    for label, th in (("fixed Q   = 1  ", bind("born-infeld-ads", Q=1.0)),
                      ("fixed Phi = 0.5", bind("born-infeld-ads", Phi_Q=0.5))):
        th.T(r[:10], 0.01), th.G(r[:10], 0.01)       # warm-up: compilation
        t0 = time.perf_counter()
        th.T(r, 0.01), th.G(r * (1 + 1e-16), 0.01)   # two different arrays: two solves
        dt = time.perf_counter() - t0
        print(f"  {label}: {dt:.3f} s  ({2 * r.size / dt:.0f} evaluations/s)")
    th = bind("born-infeld-ads", Phi_Q=0.5)
    analyze_isobar(th, 0.02, warn=False)            # warm-up
    before = implicit.diagnostics()["states"]
    t0 = time.perf_counter()
    iso = analyze_isobar(th, 0.01, warn=False)
    dt = time.perf_counter() - t0
    solved = implicit.diagnostics()["states"] - before
    print(f"  isobar at fixed Phi = 0.5, P = 0.01: {dt:.3f} s, "
          f"{[t.kind for t in iso.transitions]}, {solved} charges solved")


if __name__ == "__main__":
    main()
