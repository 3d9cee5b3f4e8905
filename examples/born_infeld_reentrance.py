"""Born-Infeld-AdS (Q = 1): the reentrant window in P, and where in b the reentrance stops.

Reentrance (large -> small -> large on one isobar) needs a zeroth-order line: the preferred
large black hole jumps to the small one where the small branch begins (its lower spinodal).
That line runs between two events of the scalar functions of bhchem.analysis.phases:

* P_low : the small/large crossing reaches the lower spinodal of the small branch
          (G_large = G_small there);
* P_high: the lower spinodals of the small and large branches are at equal T.  With Q = 1
          and 8 pi P = b (1 - 2b) the isobar is symmetric under r -> 1/(b r) (derived in
          tests/test_born_infeld_ads.py), so P_high = b (1 - 2b)/(8 pi).

Part 1 prints the window for b = 0.40 ... 0.48 (full phase diagrams).  Part 2 finds where the
reentrance stops, two ways:

(a) dense sampling over b: the structure of the full phase diagram ('reentrant' or not) on a
    grid of b, refined by bisection on that structure;
(b) as an event: the window exists while F(b) = G_large - G_small at the two lower spinodals,
    taken at P_high(b), is positive (the small phase is preferred just inside the window's
    upper end).  F is continuous in b; the window's two ends meet where F reaches 0.  It is
    bracketed (scalar functions only, no isobar walk) and compared with the threshold
    bQ = 1/sqrt(8) where the two critical points appear (Gunasekaran, Kubiznak & Mann 2012).

Run from the repository root:  python examples/born_infeld_reentrance.py
Costs are counts (diagrams, skeletons), printed with the results.
"""
from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bhchem import bind  # noqa: E402
from bhchem.analysis.critical import find_critical_points  # noqa: E402
from bhchem.analysis.isobar import isobar_skeleton  # noqa: E402
from bhchem.analysis.phases import phase_diagram, pressure_events  # noqa: E402

B0 = 1 / math.sqrt(8)


def window(b: float):
    """(P_low, P_high) of the zeroth-order line of the full phase diagram, or None."""
    pd = phase_diagram(bind("born-infeld-ads", b=b, Q=1.0), n_dense=4)
    z = [ln for ln in pd.lines if ln.kind == "zeroth-order"]
    if not z:
        return None, pd
    return (min(ln.ends["low"]["P"] for ln in z), max(ln.ends["high"]["P"] for ln in z)), pd


def window_events(b: float):
    """(P_low, P_high, F, skeletons) from the scalar functions alone, over a narrow range
    around b(1 - 2b)/(8 pi); P_low is None when the small/large crossing never reaches the
    small branch's end (no window)."""
    th = bind("born-infeld-ads", b=b, Q=1.0)
    cps = find_critical_points(th).physical
    if len(cps) < 2:
        return None, None, None, 0
    lo = min(cp.P for cp in cps) * (1 - 1e-3)
    hi = max(cp.P for cp in cps) * (1 + 1e-3)
    events, n = pressure_events(th, lo, hi, cps, n_scan=16)
    p_high = [e for e in events if e.kind == "branch ends meet" and set(e.phases) == {"small", "large"}]
    p_low = [e for e in events if e.kind == "crossing meets branch end"
             and e.phases == ("small", "large")]
    if not p_high:
        return None, None, None, n
    Pb = p_high[0].P
    sk = isobar_skeleton(th, Pb, cps)
    small = next(b_ for b_ in sk.branches if b_.label == "small")
    large = next(b_ for b_ in sk.branches if b_.label == "large")
    # the lower spinodals: the small branch's end at the lower T, the large branch's start
    e_small = min((e for e in sk.ends if e.branch == small.index), key=lambda e: e.T)
    e_large = min((e for e in sk.ends if e.branch == large.index), key=lambda e: e.T)
    F = e_large.G - e_small.G
    return (p_low[0].P if p_low else None), Pb, F, n


def main() -> None:
    print("Born-Infeld-AdS, Q = 1: zeroth-order (reentrant) window in P")
    print(f"{'b':>6} {'P_low':>22} {'P_high':>22} {'b(1-2b)/(8 pi)':>22} {'P_high/P_low':>13}")
    for b in (0.40, 0.42, 0.44, 0.46, 0.48):
        (w, pd) = window(b)
        ref = b * (1 - 2 * b) / (8 * math.pi)
        if w is None:
            print(f"{b:6.2f}  no zeroth-order line ({pd.structure})")
            continue
        print(f"{b:6.2f} {w[0]:22.15g} {w[1]:22.15g} {ref:22.15g} {w[1] / w[0]:13.6f}")

    print("\n(a) dense sampling over b (full phase diagrams)")
    grid = np.concatenate([np.linspace(0.340, 0.370, 16), [B0 * (1 + 1e-4), B0 * (1 - 1e-4)]])
    rows = []
    for b in sorted(grid):
        w, pd = window(float(b))
        rows.append((float(b), w is not None, len(pd.warnings)))
    n_diagrams = len(rows)
    last_no = max(b for b, r, _ in rows if not r and b < 0.4)
    first_yes = min(b for b, r, _ in rows if r)
    for b, r, nw in rows:
        print(f"  b = {b:.6f}: {'reentrant' if r else 'no reentrance'}"
              f"{f' ({nw} warning(s))' if nw else ''}")
    lo, hi = last_no, first_yes
    unresolved = []
    for _ in range(12):  # bisection on the structure of the full diagram
        mid = 0.5 * (lo + hi)
        w, pd = window(mid)
        n_diagrams += 1
        if w is None and any("narrower than the isobars resolve" in x for x in pd.warnings):
            unresolved.append(mid)
        lo, hi = (lo, mid) if w is not None else (mid, hi)
    print(f"  the full diagrams show reentrance down to b = {hi:.9f} (last without: {lo:.9f}; "
          f"{n_diagrams} phase diagrams); 1/sqrt(8) = {B0:.9f}")
    if unresolved:
        print(f"  below that, {len(unresolved)} of the bisection's diagrams warn that the scalar "
              f"functions see a window the isobars do not resolve (e.g. b = {unresolved[0]:.9f})")

    print("\n(b) as an event: F(b) = G_large - G_small at the two lower spinodals at P_high(b)")
    n_sk = 0
    for f in (1e-1, 1e-2, 1e-3, 1e-4, 1e-5):
        b = B0 * (1 + f)
        Pa, Pb, F, n = window_events(b)
        n_sk += n
        cps = sorted(cp.P for cp in find_critical_points("born-infeld-ads", b=b, Q=1.0).physical)
        ratio = (Pb - Pa) / (cps[1] - cps[0]) if Pa is not None and len(cps) == 2 else float("nan")
        print(f"  b = 1/sqrt(8) (1 + {f:.0e}): F = {F:.6e}, window {Pa:.15g} .. {Pb:.15g}, "
              f"(P_high - P_low)/(P_c2 - P_c1) = {ratio:.4f}")
    # bracket the b where the window closes (F > 0 and both ends exist above it)
    lo, hi = B0 * (1 - 1e-3), B0 * (1 + 1e-2)
    for _ in range(40):
        if hi / lo - 1 < 1e-9:
            break
        mid = math.sqrt(lo * hi)
        Pa, Pb, F, n = window_events(mid)
        n_sk += n
        if Pa is not None and F is not None and F > 0:
            hi = mid
        else:
            lo = mid
    print(f"  the window's ends meet at b = {math.sqrt(lo * hi):.10f} (bracket [{lo:.10f}, "
          f"{hi:.10f}], {n_sk} skeletons); 1/sqrt(8) = {B0:.10f}, "
          f"difference {math.sqrt(lo * hi) / B0 - 1:.1e} relative")
    # where the two critical points appear, by bisection on their number
    lo, hi = B0 * (1 - 1e-3), B0 * (1 + 1e-2)
    for _ in range(40):
        if hi / lo - 1 < 1e-9:
            break
        mid = math.sqrt(lo * hi)
        n_cp = len(find_critical_points("born-infeld-ads", b=mid, Q=1.0).physical)
        lo, hi = (lo, mid) if n_cp >= 2 else (mid, hi)
    print(f"  the two critical points appear at b = {math.sqrt(lo * hi):.10f} "
          f"(bisection on their number)")


if __name__ == "__main__":
    main()
