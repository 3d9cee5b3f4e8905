"""Ensemble benchmark (printed figures): the fixed-Phi phase diagram of charged AdS (4D)
against the fixed-Q one, both computed in this run over the same pressure range
(0.01 P_c ... 3 P_c of the fixed-Q critical point, Q = 1, Phi = 0.5), each after one
warm-up run so that derivation and compilation are not counted.  Target (issue 14): the
fixed-Phi diagram costs no more than 2x the fixed-Q one.  A benchmark, not a test: nothing
in the test suite depends on elapsed time.

Run:  python benchmarks/bench_ensemble.py
"""
from __future__ import annotations

import time

from bhchem import bind, find_critical_points, phase_diagram


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


if __name__ == "__main__":
    main()
