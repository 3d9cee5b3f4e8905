"""Structure-map benchmark (printed figures; issue 17): events versus per-point diagrams.

Born-Infeld-AdS, Q = 1 (Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251;
their b and Q, which the bundled family uses: only bQ matters), 10^4 values of b in
[0.3, 0.6]:

* the map from the events (``scan(..., method="events")``: events by continuation + Newton,
  full diagrams for one representative per interval and a seeded check sample of 8), on 2
  local workers;
* today's per-point atlas (``method="diagrams"``, no refinement) on a small subset of the same
  grid on 2 local workers, extrapolated linearly in the number of distinct points to 10^4
  (every point of the b axis is a distinct scale-free point, so the per-point cost does not
  shrink with the grid);
* the events with their accuracy: 1/sqrt(8) and 1/2 against the exact values, the lower edge
  b1 (the lower critical point reaches P = 0) against mpmath's 30-digit solution of
  T_r = T_rr = 0 at P = 0 from GKM's T, and against bisection of the full diagram's structure
  signature (``--no-bisection`` skips that part, about 24 full diagrams); the two must
  agree to 1e-8 (issue 17).  The critical search finds the extrema of the explicit spinodal
  curve P*(x) at any P > 0 (it used to count only those above its grid floor P0 * 1e-5, which
  put the diagrams' edge 1.7e-7 below the event).

With ``--2d``: third-order Lovelock, d = 7, k = -1, Q = 0, a 100 x 100 grid over
(alpha3, alpha2) (bare couplings; alpha~2 = 12 alpha2, alpha~3 = 24 alpha3 in Dolan et al.'s
normalisation, CQG 31 (2014) 242001); events along alpha3 at every alpha2, each curve traced
by pseudo-arclength continuation in alpha2 from its first row (the kinds whose system is not
continuable are chained row by row); printed: time on 2 workers, cells, checks, and the
largest distance of the isolated-critical-point curve from alpha~3 = alpha~2^2 / 3
(alpha3 = 2 alpha2^2).  Q = 0 is kept for that curve (Dolan et al.'s setting): there the only
scale-free coupling is alpha3/alpha2^2, so the map is scale-redundant; with Q != 0 (two
scale-free couplings) the denominator's double root of T stays at alpha3 = 2 alpha2^2 but the
two critical points are born at a nearby fold of the critical polynomial instead (Q = 0.1,
alpha2 = 1: alpha3 = 1.99999994), which this benchmark does not map.

Run:  python benchmarks/bench_structure_map.py [--subset N] [--no-bisection] [--2d [--only-2d]]
"""
from __future__ import annotations

import argparse
import math
import shutil
import tempfile
import time
import warnings
from pathlib import Path

import mpmath as mp
import sympy as sp

from bhchem.errors import BhchemWarning
from bhchem.workflows.atlas import analyse_point, parse_grid, scan

N = 10_000
LO, HI = 0.3, 0.6


def timed_scan(**kw):
    d = tempfile.mkdtemp()
    try:
        t0 = time.perf_counter()
        doc = scan(out_dir=Path(d) / "a", **kw)
        return time.perf_counter() - t0, doc
    finally:
        shutil.rmtree(d)


def b1_mpmath():
    """The lower edge from GKM's T at 30 digits: T_r = T_rr = 0 at P = 0 (Q = 1)."""
    r, b = sp.symbols("r b", positive=True)
    T = (1 + 2 * b**2 * r**2 - 2 * b * sp.sqrt(b**2 * r**4 + 1)) / (4 * sp.pi * r)
    f1 = sp.lambdify((r, b), sp.diff(T, r), "mpmath")
    f2 = sp.lambdify((r, b), sp.diff(T, r, 2), "mpmath")
    mp.mp.dps = 30
    return mp.findroot(lambda x, y: [f1(x, y), f2(x, y)], (1.0, 0.42))[1]


def bisect_diagrams(lo, hi, width):
    """Bisection of the full diagram's structure signature between lo and hi."""
    s_lo = analyse_point("born-infeld-ads", None, {"b": lo, "Q": 1.0})["structure"]
    n = 0
    while hi - lo > width:
        mid = 0.5 * (lo + hi)
        s = analyse_point("born-infeld-ads", None, {"b": mid, "Q": 1.0})["structure"]
        n += 1
        if s == s_lo:
            lo = mid
        else:
            hi = mid
    return lo, hi, n


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--subset", type=int, default=8, help="grid points for today's atlas")
    ap.add_argument("--no-bisection", action="store_true")
    ap.add_argument("--2d", dest="two_d", action="store_true")
    ap.add_argument("--only-2d", action="store_true")
    ap.add_argument("--n2d", type=int, default=100)
    args = ap.parse_args()
    warnings.simplefilter("ignore", BhchemWarning)
    if args.two_d or args.only_2d:
        lovelock_2d(args.n2d)
        if args.only_2d:
            return
    print(f"== structure map: born-infeld-ads, Q = 1, {N} values of b in [{LO}, {HI}] ==")
    axes = [parse_grid(f"b={LO}:{HI}:{N}")]
    te, doc = timed_scan(family_name="born-infeld-ads", axes=axes, fixed={"Q": 1.0},
                         workers=2, method="events")
    print(f"events map   : {te:8.1f} s on 2 workers ({doc['diagrams_computed']} full diagrams: "
          f"{len(doc['events']) + 1} interval representatives + {doc['checks']['sample']} "
          f"checks; {doc['checks']['disagreements']} disagreements)")
    sub = [parse_grid(f"b={LO}:{HI}:{args.subset}")]
    td, dd = timed_scan(family_name="born-infeld-ads", axes=sub, fixed={"Q": 1.0},
                        workers=2, method="diagrams", refine=0)
    per = td / dd["distinct_scale_free_points"]
    print(f"today's atlas: {td:8.1f} s for {args.subset} points on 2 workers = {per:.2f} s per "
          f"point; extrapolated to {N} points (linear in distinct points): {per * N:,.0f} s")
    print(f"speed-up     : x{per * N / te:,.0f}")
    exact = {"critical-count": 1 / math.sqrt(8), "small-state-asymptote": 0.5}
    b1 = b1_mpmath()
    print("events (value, |error| against the reference, largest residual):")
    for e in doc["events"]:
        ref = exact.get(e["kind"], float(b1) if e["kind"] == "critical-pressure-zero" else None)
        err = f"{abs(e['value'] - ref):.1e}" if ref is not None else "n/a"
        print(f"  {e['kind']:<24} b = {e['value']:.16f}  err {err}  "
              f"res {max(e['residuals'].values()):.1e}  {e['below']} -> {e['above']}")
    print(f"  reference b1 (mpmath, 30 digits) = {mp.nstr(b1, 20)}")
    if not args.no_bisection:
        t0 = time.perf_counter()
        lo, hi, n = bisect_diagrams(0.42, 0.43, 1e-9)
        mid = 0.5 * (lo + hi)
        ev = next(e["value"] for e in doc["events"] if e["kind"] == "critical-pressure-zero")
        print(f"lower edge by bisection of full diagrams ({n} diagrams, "
              f"{time.perf_counter() - t0:.0f} s): [{lo:.12f}, {hi:.12f}]; "
              f"|midpoint - event| = {abs(mid - ev):.1e}")
        print(f"  two ways agree to 1e-8: {abs(mid - ev) <= 1e-8}")

def lovelock_2d(n):
    import numpy as np
    print(f"== 2D structure map: lovelock3-ads d = 7, k = -1, Q = 0, {n} x {n} "
          f"(alpha3 in [0.5, 4], alpha2 in [0.6, 1.4]) ==")
    axes = [parse_grid(f"alpha3=0.5:4:{n}"), parse_grid(f"alpha2=0.6:1.4:{n}")]
    t, doc = timed_scan(family_name="lovelock3-ads", axes=axes,
                        fixed={"d": 7, "k": -1, "Q": 0.0}, workers=2, method="events")
    print(f"events map   : {t:8.1f} s on 2 workers, {doc['checks']['cells']} cells, "
          f"{doc['diagrams_computed']} full diagrams, {doc['checks']['disagreements']} of "
          f"{doc['checks']['sample']} checks disagree, {len(doc['unexplained'])} unexplained")
    for c in doc["event_curves"]:
        p = np.array(c["points"], float).reshape(-1, 2)
        line = (f"  {c['kind']:<24} {len(p):4d} points, converged {c['converged']}, "
                f"largest residual {max(c['residuals']) if len(c['residuals']) else 0:.1e}")
        if c["kind"] == "isolated-critical-point":
            dev = np.max(np.abs(p[:, 0] / (2 * p[:, 1] ** 2) - 1))
            line += f"; max |alpha3 / (2 alpha2^2) - 1| = {dev:.1e} (Dolan et al.)"
        print(line)


if __name__ == "__main__":
    main()
