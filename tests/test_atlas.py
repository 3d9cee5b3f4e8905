"""Parameter atlas: scale invariance, signature boundaries, resuming, Dask."""
import functools
import json
import math

import numpy as np
import pytest
import sympy as sp

from bhchem.workflows.atlas import parse_grid, scan
from bhchem.cli.main import main
from bhchem.analysis.critical import find_critical_points


def test_rn_ads_scale_free_values_are_constant(tmp_path):
    """Kubiznak & Mann 2012: P_c Q^2, T_c Q, v_c/Q do not depend on Q.  The atlas computes
    one point (scale invariance) and it equals an independent search at another Q."""
    doc = scan("rn-ads", [parse_grid("Q=log:0.01:100:9")], {}, tmp_path / "a", refine=0)
    assert doc["distinct_scale_free_points"] == 1
    ref = find_critical_points("rn-ads", Q=3.7).physical[0].scale_free
    for row in doc["rows"]:
        assert row["n_critical"] == 1 and row["structure"] == "vdw-like"
        for k, v in ref.items():
            assert row[f"cp1:{k}"] == pytest.approx(v, rel=1e-12)
    assert (tmp_path / "a" / "atlas.png").stat().st_size > 1000


# The Born-Infeld thresholds bQ = 1/sqrt(8) and 1/2 (Gunasekaran, Kubiznak & Mann 2012), once
# located here by bisection of full diagrams (to 1e-3 near 1/2, ~25 s), are now events located
# to 1e-12 with the structures on both sides from full diagrams:
# tests/test_structure_events.py.


def _csv(folder):
    return (folder / "atlas.csv").read_text()


@pytest.mark.slow
def test_interrupted_scan_resumes_to_identical_table(tmp_path):
    grid = [parse_grid("d=4:9:6")]
    full = scan("schwarzschild-ads", grid, {}, tmp_path / "full", chunk_size=2, refine=0)
    part = scan("schwarzschild-ads", grid, {}, tmp_path / "part", chunk_size=2, refine=0,
                stop_after_chunks=1)
    assert part["interrupted"] and not (tmp_path / "part" / "atlas.csv").exists()
    assert len(list((tmp_path / "part" / "chunks").iterdir())) == 1
    scan("schwarzschild-ads", grid, {}, tmp_path / "part", chunk_size=2, refine=0)
    assert _csv(tmp_path / "part") == _csv(tmp_path / "full")
    assert json.loads((tmp_path / "full" / "atlas.json").read_text())["structures"] == ["hawking-page"]
    assert full["errors"] == 0


def test_process_workers_give_identical_table(tmp_path):
    grid = [parse_grid("d=4:7:4")]
    scan("schwarzschild-ads", grid, {}, tmp_path / "one", chunk_size=1, refine=0)
    scan("schwarzschild-ads", grid, {}, tmp_path / "two", chunk_size=1, refine=0, workers=2)
    assert _csv(tmp_path / "one") == _csv(tmp_path / "two")


@pytest.mark.slow
def test_dask_local_cluster_gives_identical_table(tmp_path):
    distributed = pytest.importorskip(
        "distributed", reason="Dask is an optional extra (pip install 'bhchem[dask]'); CI installs it")
    grid = [parse_grid("d=4:7:4")]
    scan("schwarzschild-ads", grid, {}, tmp_path / "local", chunk_size=1, refine=0)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        scan("schwarzschild-ads", grid, {}, tmp_path / "dask", chunk_size=1, refine=0,
             executor=client)
    assert _csv(tmp_path / "dask") == _csv(tmp_path / "local")


def test_failed_points_are_recorded(tmp_path):
    """A point that fails is a row with its error, never dropped."""
    import bhchem.workflows.atlas as atlas
    doc = scan("schwarzschild-ads", [parse_grid("d=4:5:2")], {}, tmp_path / "f", refine=0)
    assert all(r["error"] == "" for r in doc["rows"])
    row = atlas.analyse_point("rn-ads", None, {"Q": -1.0})
    assert row["structure"] == "error" and "outside its domain" in row["error"]


@pytest.mark.parametrize("argv, match", [
    (["scan", "rn-ads", "--grid", "Q=1:2", "-o", "x"], "NAME=START:STOP:N"),
    (["scan", "rn-ads", "--grid", "Q=log:-1:2:3", "-o", "x"], "positive"),
    (["scan", "rn-ads", "--grid", "Q=-1:2:3", "-o", "x"], "outside its domain"),
    (["scan", "rn-ads", "--grid", "X=1:2:3", "-o", "x"], "no parameter 'X'"),
    (["scan", "rn-ads", "--grid", "Q=1:2:3", "-o", "x", "--checks", "-1"], "0 or more"),
])
def test_cli_scan_bad_input(capsys, tmp_path, argv, match):
    argv = [a if a != "x" else str(tmp_path / "x") for a in argv]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert match in err and err.count("\n") == 1


def test_cli_scan_unreachable_scheduler(capsys, tmp_path):
    pytest.importorskip("distributed")
    assert main(["scan", "rn-ads", "--grid", "Q=1:2:2", "-o", str(tmp_path / "s"),
                 "--scheduler", "tcp://127.0.0.1:9", "--scheduler-timeout", "1s"]) == 2
    assert "cannot reach the Dask scheduler" in capsys.readouterr().err


# -- issue 12 item 1: the pool lives through boundary refinement ---------------------------------
def _rn_ads_threshold_check(doc, steps):
    """rn-ads along Q in [0, 1]: exact analytic result derived here.  P = T/v - 1/(2 pi v^2)
    + 2 Q^2/(pi v^4) (Kubiznak & Mann, JHEP 07 (2012) 033); at Q = 0, dP/dv = 0 gives
    T = 1/(pi v) and then d2P/dv2 = 2T/v^3 - 3/(pi v^4) = -1/(pi v^4) != 0: no critical point.
    For every Q > 0 there is exactly one (v_c = 2 sqrt(6) Q, same paper).  So the only change
    of n_critical on [0, 1] is at Q = 0+, and bisection must keep the lower end at Q = 0:
    its bracket is exactly [0, 2^-steps]."""
    (b,) = doc["boundaries"]
    assert b["bracket"] == [0.0, 2.0 ** -steps]
    assert b["lower"]["n_critical"] == 0 and b["upper"]["n_critical"] == 1
    assert "n_critical" in b["changed"] and b["converged"]
    assert set(b["between"]) <= set(doc["structures"])


def test_two_workers_with_refinement(tmp_path):
    """Issue 12 item 1: workers=2 with refinement used to end in 'cannot schedule new futures
    after shutdown' (the scan's own pool was shut down before the boundary search)."""
    doc = scan("rn-ads", [parse_grid("Q=0:1:2")], {}, tmp_path / "w2", refine=3, workers=2)
    _rn_ads_threshold_check(doc, 3)
    assert [r["n_critical"] for r in doc["rows"]] == [0, 1]


def test_caller_executor_is_left_running(tmp_path):
    """A caller-supplied executor serves the chunks and the refinement and is never shut down
    by the scan (common practice: whoever creates an executor shuts it down)."""
    from concurrent.futures import ProcessPoolExecutor
    with ProcessPoolExecutor(max_workers=2) as pool:
        doc = scan("rn-ads", [parse_grid("Q=0:1:2")], {}, tmp_path / "ex", refine=2,
                   executor=pool)
        _rn_ads_threshold_check(doc, 2)
        assert pool.submit(math.sqrt, 4.0).result() == 2.0


def test_unrefined_changes_are_still_boundaries(tmp_path):
    """With refine=0 a change between neighbouring grid points is still listed, bracketed by
    the grid edge itself (0 bisection steps); same exact threshold as above."""
    doc = scan("rn-ads", [parse_grid("Q=0:1:2")], {}, tmp_path / "r0", refine=0)
    _rn_ads_threshold_check(doc, 0)
    assert doc["boundaries"][0]["steps"] == 0


# -- issue 12 item 7: every change of a classified column is a boundary --------------------------
EH_FILE = "examples/families/euler_heisenberg_ads.toml"


@functools.lru_cache(maxsize=None)
def _eh_critical_polynomial():
    """Euler-Heisenberg-AdS, 4D (metric form of Magos & Breton, PRD 102 (2020) 084011, as
    declared in EH_FILE): with v = 2 r_+ the declared T gives the equation of state
    P = T/v - 1/(2 pi v^2) + 2 Q^2/(pi v^4) - 8 a Q^4/(pi v^8).  Derived here: dP/dv = 0 fixes
    T_c(v); d2P/dv2 = 0 then becomes, in y = v^2, the cubic y^3 - 24 Q^2 y^2 + 448 a Q^4 = 0."""
    T, v, y, a, Q = sp.symbols("T v y a Q", real=True)
    P = T / v - 1 / (2 * sp.pi * v**2) + 2 * Q**2 / (sp.pi * v**4) - 8 * a * Q**4 / (sp.pi * v**8)
    T_c = sp.solve(sp.diff(P, v), T)[0]
    second = sp.numer(sp.together(sp.diff(P, v, 2).subs(T, T_c)))
    cubic = sp.expand(-second.subs(v, sp.sqrt(y)))
    assert sp.expand(cubic - (y**3 - 24 * Q**2 * y**2 + 448 * a * Q**4)) == 0
    return sp, cubic, T_c.subs(v, sp.sqrt(y)), P.subs(T, T_c).subs(v, sp.sqrt(y)), (y, a, Q)


def _eh_counts(a_value):
    """(positive real roots y of the cubic, those with T_c > 0 and P_c > 0) at Q = 1."""
    _, cubic, T_c, P_c, (y, a, Q) = _eh_critical_polynomial()
    a_exact = sp.nsimplify(a_value, rational=True)
    roots = [r for r in sp.Poly(cubic.subs({a: a_exact, Q: 1}), y).real_roots() if r > 0]
    sub = {a: a_exact, Q: 1}
    physical = [r for r in roots if T_c.subs(sub).subs(y, r).evalf(30) > 0
                and P_c.subs(sub).subs(y, r).evalf(30) > 0]
    return len(roots), len(physical)


def _eh_thresholds():
    """Exact n_critical thresholds in a/Q^2 (derived here).  The cubic f(y) has f(0) = 448 a Q^4
    and turning points y = 0 and y = 16 Q^2 (f' = 3y^2 - 48 Q^2 y); its positive roots merge
    and disappear when f(16 Q^2) = 0: a = 32 Q^2/7.  On the cubic, P_c = 3(y - 8Q^2)/(8 pi y^2),
    so the smaller root becomes physical (P_c > 0) at y = 8 Q^2: a = 16 Q^2/7.  (T_c on the cubic
    is 2(3y - 16 Q^2)/(7 pi y^(3/2)), positive already from y = 16 Q^2/3 < 8 Q^2.)"""
    sp, cubic, T_c, P_c, (y, a, Q) = _eh_critical_polynomial()
    assert sp.solve(sp.diff(cubic, y), y) == [0, 16 * Q**2]
    (merge,) = sp.solve(cubic.subs(y, 16 * Q**2), a)
    on_cubic = {a: sp.solve(cubic, a)[0]}
    assert sp.simplify(P_c.subs(on_cubic) - 3 * (y - 8 * Q**2) / (8 * sp.pi * y**2)) == 0
    assert sp.simplify(T_c.subs(on_cubic) - 2 * (3 * y - 16 * Q**2) / (7 * sp.pi * y**sp.Rational(3, 2))) == 0
    (appear,) = sp.solve(cubic.subs(y, 8 * Q**2), a)
    return merge.subs(Q, 1), appear.subs(Q, 1)


def test_eh_thresholds_derived():
    merge, appear = _eh_thresholds()
    assert (merge, appear) == (sp.Rational(32, 7), sp.Rational(16, 7))


@pytest.mark.parametrize("lo, hi, which", [
    # this edge also holds earlier changes of the structure signature alone (the reentrant
    # window closes near a = 4.51): the bisection used to stop there and miss a = 32/7
    (4.50, 4.60, "merge"),
    (2.24, 2.30, "appear")])
@pytest.mark.slow
def test_eh_n_critical_boundaries_are_located(tmp_path, lo, hi, which):
    """Issue 12 item 7: both places where n_critical changes over a/Q^2 (Q = 1) are boundaries,
    located by bisection at the exact thresholds 32/7 and 16/7 derived above, within the
    bisection tolerance (edge width / 2^steps); n_critical on each side equals the number of
    positive roots of the cubic with T_c > 0 and P_c > 0."""
    steps = 4
    threshold = float(dict(zip(("merge", "appear"), _eh_thresholds()))[which])
    doc = scan("euler-heisenberg-ads", [parse_grid(f"a={lo}:{hi}:2")], {"Q": 1.0},
               tmp_path / "eh", family_file=EH_FILE, refine=steps)
    crossing = [b for b in doc["boundaries"] if "n_critical" in b["changed"]]
    assert len(crossing) == 1, doc["boundaries"]
    (b,) = crossing
    b_lo, b_hi = b["bracket"]
    assert b_lo <= threshold <= b_hi and b["converged"]
    assert b_hi - b_lo <= (hi - lo) / 2**steps * (1 + 1e-12)
    assert abs(b["point"]["a"] - threshold) <= (hi - lo) / 2**(steps + 1) * (1 + 1e-12)
    assert b["lower"]["n_critical"] == _eh_counts(b_lo)[1]
    assert b["upper"]["n_critical"] == _eh_counts(b_hi)[1]
    # every change between the two grid ends is accounted for by the chain of boundaries
    chain = sorted(doc["boundaries"], key=lambda x: x["bracket"][0])
    assert chain[0]["lower"]["structure"] == doc["rows"][0]["structure"]
    assert chain[-1]["upper"]["structure"] == doc["rows"][-1]["structure"]
    for left, right in zip(chain, chain[1:]):
        assert left["upper"] == right["lower"] and left["bracket"][1] <= right["bracket"][0]
    # every structure named anywhere in the atlas is listed
    named = {r["structure"] for r in doc["rows"]}
    named |= {s for x in doc["boundaries"] for s in x["between"]}
    assert named <= set(doc["structures"])


def test_eh_sign_change_of_a():
    """At a = 0 the cubic is y^2 (y - 24 Q^2): a double root at y = 0 and y = 24 Q^2 (the
    RN-AdS value v_c = 2 sqrt(6) Q, Kubiznak & Mann 2012).  For a < 0, f(0) = 448 a < 0 and
    f decreases then increases: one positive root.  For small a > 0 a second root leaves
    y = 0 (y ~ sqrt(56 a/3) Q^3), with P_c = 3(y - 8)/(8 pi y^2) < 0: unphysical.  So the number
    of positive roots goes 1 -> 2 at a = 0 while n_critical stays 1: no n_critical boundary."""
    _, cubic, _, _, (y, a, Q) = _eh_critical_polynomial()
    assert sp.factor(cubic.subs({a: 0, Q: 1})) == y**2 * (y - 24)
    assert [_eh_counts(x) for x in (-0.5, 0.0, 0.5)] == [(1, 1), (1, 1), (2, 1)]


def test_eh_atlas_across_a_zero(tmp_path):
    """The atlas over a = -0.5, 0, 0.5 (Q = 1): n_critical = 1 = the physical root count on each
    side (test_eh_sign_change_of_a), no boundary, and v_c/Q at a = 0 is 2 sqrt(6)
    (Kubiznak & Mann 2012); the critical search itself sees the extra unphysical root at a > 0."""
    doc = scan("euler-heisenberg-ads", [parse_grid("a=-0.5:0.5:3")], {"Q": 1.0},
               tmp_path / "eh0", family_file=EH_FILE, refine=3)
    assert [r["n_critical"] for r in doc["rows"]] == [_eh_counts(x)[1] for x in (-0.5, 0.0, 0.5)]
    assert doc["boundaries"] == []
    assert doc["rows"][1]["cp1:v_c/Q"] == pytest.approx(2 * math.sqrt(6), rel=1e-12)
    found = [len(find_critical_points("euler-heisenberg-ads", Q=1.0, a=x).points)
             for x in (-0.5, 0.5)]
    assert found == [_eh_counts(x)[0] for x in (-0.5, 0.5)]


def test_failed_midpoint_is_an_unlocated_boundary(tmp_path, monkeypatch):
    """A bisection point that fails stops that edge and says so (never a silent boundary)."""
    import bhchem.workflows.atlas as atlas
    real = atlas.analyse_point

    def failing(family_name, family_file, params, *rest):
        if 0.0 < params["Q"] < 1.0:
            return {"error": "RuntimeError: simulated failure", "n_critical": None,
                    "structure": "error"}
        return real(family_name, family_file, params, *rest)
    monkeypatch.setattr(atlas, "analyse_point", failing)
    doc = scan("rn-ads", [parse_grid("Q=0:1:2")], {}, tmp_path / "f", refine=3)
    (b,) = doc["boundaries"]
    assert not b["converged"] and b["bracket"] == [0.0, 1.0]
    assert "simulated failure" in b["note"] and "Q=0.5" in b["note"]


def test_cli_scan_disk_full_while_drawing(capsys, tmp_path, monkeypatch):
    """Issue 12 item 7: a figure that cannot be saved (ENOSPC) is not claimed as written; one
    line on stderr says what was not written and why; exit code non-zero."""
    import errno
    import os
    from matplotlib.figure import Figure

    def no_space(self, *args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
    monkeypatch.setattr(Figure, "savefig", no_space)
    out = tmp_path / "full"
    code = main(["scan", "rn-ads", "--grid", "Q=1:2:2", "-o", str(out), "--refine", "0", "--quiet"])
    captured = capsys.readouterr()
    assert code != 0
    assert "atlas.png" not in captured.out and "atlas.csv" in captured.out
    assert captured.err.count("\n") == 1
    assert "atlas.png" in captured.err and "No space left on device" in captured.err
    assert not (out / "atlas.png").exists()
    assert sorted(p.name for p in out.iterdir()) == ["atlas.csv", "atlas.json", "chunks",
                                                     "manifest.json"]
    assert "No space left" in json.loads((out / "atlas.json").read_text())["figure_error"]


def test_cli_scan_without_matplotlib_leaves_no_stale_figure(capsys, tmp_path, monkeypatch):
    """Without matplotlib the rerun of a finished scan says the figure was not written, exits
    non-zero and removes the figure of the earlier run (it would no longer match the table)."""
    import sys
    out = tmp_path / "nompl"
    argv = ["scan", "rn-ads", "--grid", "Q=1:2:2", "-o", str(out), "--refine", "0", "--quiet"]
    assert main(argv) == 0 and (out / "atlas.png").exists()
    capsys.readouterr()
    monkeypatch.setitem(sys.modules, "matplotlib", None)  # import matplotlib now fails
    assert main(argv) != 0
    captured = capsys.readouterr()
    assert "atlas.png" not in captured.out and captured.err.count("\n") == 1
    assert "atlas.png was not written" in captured.err and "matplotlib" in captured.err
    assert not (out / "atlas.png").exists()


def test_1d_figure_colours_change_at_the_located_events():
    """The 1D atlas figure colours runs of equal structure; a run ends at the located event
    between two grid points (where the event line is drawn), else halfway between them."""
    from bhchem.workflows.atlas import structure_runs
    x = np.array([0.0, 1.0, 2.0, 3.0])
    assert structure_runs(x, ["a", "a", "b", "b"], [1.3]) == [("a", -0.5, 1.3), ("b", 1.3, 3.5)]
    assert structure_runs(x, ["a", "a", "b", "b"], []) == [("a", -0.5, 1.5), ("b", 1.5, 3.5)]
    # an event between two points of the same structure does not cut the run
    assert structure_runs(x[::-1], ["b", "b", "a", "a"], [0.4]) == [("a", -0.5, 1.5),
                                                                    ("b", 1.5, 3.5)]
