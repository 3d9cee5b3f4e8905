"""Core-engine benchmark (printed figures; targets live here, not in unit tests).

1. Cold start: wall time of ``bhchem show rn-ads -p Q=1`` in a fresh interpreter
   (derivation, checks and printing included), as a ratio to the time a fresh
   interpreter takes merely to import numpy, scipy, sympy and matplotlib.  Target:
   ratio <= 1.3.  Measured with the on-disk derivation cache warm (the usual case:
   any earlier run of the same family) and cold (``BHCHEM_CACHE_DIR`` pointing at an
   empty folder), interleaved so that machine load affects both alike.
2. Evaluating T, G and V at 10^6 states.  Target <= 50 ms.  Side by side with the
   straightforward approach a researcher writes by hand: differentiate M with
   sympy and lambdify T, G, V separately without common-subexpression elimination
   or simplification, plus a pure-sympy ``subs``/``evalf`` loop (timed on 10^3
   states and scaled).

Run:  python benchmarks/bench_core.py
"""
from __future__ import annotations

import statistics
import subprocess
import sys
import time

import numpy as np
from pathlib import Path

import sympy as sp


def _wall(argv, env=None) -> float:
    t0 = time.perf_counter()
    subprocess.run(argv, check=True, capture_output=True, env=env)
    return time.perf_counter() - t0


def cold_show(repeats: int = 5) -> dict[str, list[float]]:
    """Interleaved fresh-interpreter timings: imports only, show (cache warm), show (cold)."""
    import os
    import tempfile
    show = [sys.executable, "-m", "bhchem", "show", "rn-ads", "-p", "Q=1"]
    imports = [sys.executable, "-c", "import numpy, scipy, sympy, matplotlib"]
    subprocess.run(show, check=True, capture_output=True)  # warm the derivation cache
    out = {"imports": [], "warm": [], "cold": []}
    for _ in range(repeats):
        out["imports"].append(_wall(imports))
        out["warm"].append(_wall(show))
        with tempfile.TemporaryDirectory() as empty:
            out["cold"].append(_wall(show, env={**os.environ, "BHCHEM_CACHE_DIR": empty}))
    return out


def tool_evaluation(n: int) -> tuple[float, np.ndarray]:
    from bhchem import bind
    th = bind("rn-ads", Q=1.0)
    rng = np.random.default_rng(1)
    x = rng.uniform(0.2, 5.0, n)
    P = rng.uniform(0.001, 0.01, n)
    th.T(x[:10], P[:10]); th.G(x[:10], P[:10]); th.V(x[:10], P[:10])  # compile outside timing
    best = np.inf
    for _ in range(5):
        t0 = time.perf_counter()
        T, G, V = th.T(x, P), th.G(x, P), th.V(x, P)
        best = min(best, time.perf_counter() - t0)
    return best, np.stack([T, G, V])


def hand_evaluation(n: int) -> tuple[float, np.ndarray, float]:
    r, P, Q = sp.symbols("r P Q", positive=True)
    M = r / 2 * (1 + 8 * sp.pi * P * r**2 / 3 + Q**2 / r**2)
    S = sp.pi * r**2
    T = sp.diff(M, r) / sp.diff(S, r)
    G = M - T * S
    V = sp.diff(M, P)
    fT, fG, fV = (sp.lambdify((r, P, Q), e, "numpy") for e in (T, G, V))
    rng = np.random.default_rng(1)
    x = rng.uniform(0.2, 5.0, n)
    p = rng.uniform(0.001, 0.01, n)
    best = np.inf
    for _ in range(5):
        t0 = time.perf_counter()
        out = np.stack([fT(x, p, 1.0), fG(x, p, 1.0), fV(x, p, 1.0) * np.ones_like(x)])
        best = min(best, time.perf_counter() - t0)
    # the pure-sympy loop, on 1000 states, scaled to n
    m = 1000
    t0 = time.perf_counter()
    for i in range(m):
        sub = {r: x[i], P: p[i], Q: 1.0}
        float(T.evalf(subs=sub)); float(G.evalf(subs=sub)); float(V.evalf(subs=sub))
    loop = (time.perf_counter() - t0) * n / m
    return best, out, loop


def main() -> None:
    n = 10**6
    times = cold_show()
    med = {k: statistics.median(v) for k, v in times.items()}
    print("== core engine benchmark ==")
    print(f"fresh interpreter, 'import numpy, scipy, sympy, matplotlib': median "
          f"{med['imports']:.2f} s over {len(times['imports'])} runs")
    print(f"'bhchem show rn-ads -p Q=1', derivation cache warm: median {med['warm']:.2f} s, "
          f"ratio {med['warm'] / med['imports']:.2f} (target <= 1.3)")
    print(f"'bhchem show rn-ads -p Q=1', derivation cache empty: median {med['cold']:.2f} s, "
          f"ratio {med['cold'] / med['imports']:.2f}")
    t_tool, v_tool = tool_evaluation(n)
    t_hand, v_hand, t_loop = hand_evaluation(n)
    # G = M - TS passes through zero, so compare against each quantity's own scale
    err = float(np.max(np.abs(v_tool - v_hand).max(axis=1) / np.abs(v_hand).max(axis=1)))
    print(f"T, G, V at {n:.0e} states: tool {1e3 * t_tool:.1f} ms (target <= 50 ms); "
          f"hand lambdify {1e3 * t_hand:.1f} ms; hand sympy evalf loop ~{t_loop:.0f} s "
          f"(scaled from 1e3 states)")
    print(f"max difference tool vs hand lambdify, relative to each quantity's scale: {err:.1e}")


if __name__ == "__main__":
    main()
