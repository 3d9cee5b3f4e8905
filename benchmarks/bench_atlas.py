"""Atlas benchmark (printed figures): throughput on 2 cores, worker scaling, Dask, memory.

* grid points per second for rn-ads (one scale: every point is the same scale-free point),
  born-infeld-ads and gauss-bonnet-ads (genuine 1D grids), with 1 and 2 local workers and
  on a 2-worker Dask LocalCluster;
* peak resident memory of the main process for a 10^4-point rn-ads scan (flat: rows are
  streamed to chunk files);
* the straightforward approach for comparison: the same analyse_point called in a plain
  loop (no chunking, no scale invariance).
Target (issue): a 10^4-point born-infeld-ads atlas in <= 60 s on 2 cores.
Run:  python benchmarks/bench_atlas.py
"""
from __future__ import annotations

import resource
import shutil
import sys
import tempfile
import time
from pathlib import Path


from bhchem.workflows.atlas import analyse_point, parse_grid, scan  # noqa: E402

CASES = [("rn-ads", "Q=log:0.1:10:200", {}),
         ("born-infeld-ads", "b=0.36:0.6:12", {"Q": 1.0}),
         ("gauss-bonnet-ads", "Q=0.2:0.6:12", {"d": 6, "alpha": 1 / 6})]


def timed(**kw):
    d = tempfile.mkdtemp()
    try:
        t0 = time.perf_counter()
        doc = scan(out_dir=Path(d) / "a", refine=0, chunk_size=1, **kw)
        return time.perf_counter() - t0, doc
    finally:
        shutil.rmtree(d)


def main() -> None:
    print("== atlas benchmark ==")
    for fam, grid, fixed in CASES:
        axes = [parse_grid(grid)]
        n = len(axes[0].values)
        t1, doc = timed(family_name=fam, axes=axes, fixed=fixed, workers=1)
        t2, _ = timed(family_name=fam, axes=axes, fixed=fixed, workers=2)
        line = (f"{fam:<17} {n:4d} pts ({doc['distinct_scale_free_points']} distinct): "
                f"1 worker {n / t1:7.2f} pts/s, 2 workers {n / t2:7.2f} pts/s "
                f"(x{t1 / t2:.2f})")
        try:
            import distributed
            with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                          dashboard_address=None) as c, distributed.Client(c) as cl:
                td, _ = timed(family_name=fam, axes=axes, fixed=fixed, executor=cl)
            line += f", Dask 2 workers {n / td:7.2f} pts/s"
        except ImportError:
            line += ", Dask not installed"
        if doc["distinct_scale_free_points"] > 1:
            t0 = time.perf_counter()
            for v in axes[0].values[:4]:
                analyse_point(fam, None, {**fixed, axes[0].name: v})
            loop = (time.perf_counter() - t0) / 4
            line += f"; plain loop {1 / loop:6.2f} pts/s"
            if fam == "born-infeld-ads":
                line += f"; 10^4 points on 2 workers ~ {1e4 / (n / t2):.0f} s (target 60 s)"
        print(line)
    t0 = time.perf_counter()
    d = tempfile.mkdtemp()
    scan("rn-ads", [parse_grid("Q=log:0.01:100:10000")], {}, Path(d) / "big", refine=0)
    shutil.rmtree(d)
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"10^4-point rn-ads scan: {time.perf_counter() - t0:.1f} s, peak RSS {rss:.0f} MB")


if __name__ == "__main__":
    main()
