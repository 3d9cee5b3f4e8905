"""Phase-structure benchmark (printed figures).

1. Charged AdS 4D (Q = 1), 200 pressures from 0.01 P_c to 0.999 P_c: the tool's
   coexistence line (``coexistence_curve``) versus the hand approach (dense sampling
   of each isobar to bracket the spinodals, then scipy ``fsolve`` on equal T and G),
   both timed in this run, both compared with the closed-form curve
   T/T_c = sqrt(p (3 - sqrt p)/2) (checked against a 50-digit mpmath solve in
   tests/test_phases.py).  Targets: no slower, error <= 1e-12.
2. Wall time of a full ``bhchem phases`` run for each bundled family.

Run:  python benchmarks/bench_phases.py
"""
from __future__ import annotations

import math
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
from scipy.optimize import fsolve


from bhchem import bind  # noqa: E402
from bhchem.analysis.coexistence import coexistence_curve  # noqa: E402
from bhchem.analysis.critical import find_critical_points  # noqa: E402
from bhchem.declare.registry import available_families  # noqa: E402

PC = 1 / (96 * math.pi)
TC = math.sqrt(6) / (18 * math.pi)


def closed_form(P):
    p = P / PC
    return TC * np.sqrt(p * (3 - np.sqrt(p)) / 2)


def hand(pressures):
    def T(r, P):
        return 2 * P * r + 1 / (4 * np.pi * r) - 1 / (4 * np.pi * r**3)

    def G(r, P):
        return r / 4 - 2 * np.pi * P * r**3 / 3 + 3 / (4 * r)

    out = []
    rs = np.geomspace(0.5, 200, 20000)
    for P in pressures:
        Tr = T(rs, P)
        d = np.diff(Tr)
        i_max = np.argmax(d < 0)                     # first spinodal (local max)
        i_min = i_max + np.argmax(d[i_max:] > 0)     # second spinodal (local min)
        guess = (rs[i_max] * 0.8, rs[i_min] * 1.5)
        sol = fsolve(lambda z: [T(z[0], P) - T(z[1], P), G(z[0], P) - G(z[1], P)], guess,
                     xtol=1e-14)
        out.append(T(sol[0], P))
    return np.array(out)


def main() -> None:
    th = bind("rn-ads", Q=1.0)
    cp = find_critical_points(th).points[0]
    pressures = PC * np.linspace(0.01, 0.999, 200)
    coexistence_curve(th, pressures[:3], critical_point=cp)  # compile outside timing
    t0 = time.perf_counter()
    curve = coexistence_curve(th, pressures, critical_point=cp)
    pts = curve.points
    t_tool = time.perf_counter() - t0
    T_tool = np.array([p.T for p in pts])
    P_tool = np.array([p.P for p in pts])
    err_tool = np.max(np.abs(T_tool - closed_form(P_tool)) / TC)
    t0 = time.perf_counter()
    T_hand = hand(pressures)
    t_hand = time.perf_counter() - t0
    err_hand = np.max(np.abs(T_hand - closed_form(pressures)) / TC)
    print("== phase-structure benchmark ==")
    print(f"coexistence line, 200 pressures 0.01-0.999 P_c (rn-ads 4D):")
    print(f"  tool: {1e3 * t_tool:7.1f} ms, {len(pts)} points, max |dT|/T_c = {err_tool:.1e}")
    print(f"  hand: {1e3 * t_hand:7.1f} ms, {len(T_hand)} points, max |dT|/T_c = {err_hand:.1e}")
    print(f"  speed ratio hand/tool = {t_hand / t_tool:.1f} (target >= 1); error target <= 1e-12")
    print("full 'bhchem phases' wall time per bundled family (default parameters):")
    for name in available_families():
        t0 = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "bhchem", "phases", name, "--quiet"],
                              capture_output=True, text=True)
        dt = time.perf_counter() - t0
        status = "ok" if proc.returncode == 0 else f"exit {proc.returncode}: {proc.stderr.strip()}"
        structure = [ln for ln in proc.stdout.splitlines() if "structure:" in ln]
        print(f"  {name:<20} {dt:6.1f} s  {status}  {structure[-1].strip() if structure else ''}")


if __name__ == "__main__":
    main()
