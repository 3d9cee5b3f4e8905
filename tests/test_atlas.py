"""Parameter atlas: scale invariance, signature boundaries, resuming, Dask."""
import json
import math

import pytest

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


@pytest.mark.parametrize("lo, hi, edge, tol, steps", [
    (0.34, 0.37, 1 / math.sqrt(8), 0.03 / 2**7, 7),
    # the reentrant pressure window closes as bQ -> 1/2; within ~1e-3 of the edge it is
    # narrower than the isobar anchors resolve, so the boundary is good to 1e-3 there
    (0.49, 0.51, 0.5, 1e-3, 5)])
def test_born_infeld_boundaries_match_thresholds(tmp_path, lo, hi, edge, tol, steps):
    """Signature boundaries along bQ (Q = 1) agree with the critical-point threshold
    bQ = 1/sqrt(8) (critical-point module; Gunasekaran, Kubiznak & Mann 2012) and with the
    upper edge 1/2 of the reentrant window (same paper, from memory)."""
    doc = scan("born-infeld-ads", [parse_grid(f"b={lo}:{hi}:2")], {"Q": 1.0}, tmp_path / "b",
               refine=steps)
    (b,) = doc["boundaries"]
    assert abs(b["point"]["b"] - edge) <= tol
    assert b["between"][0] in ("no-transition", "reentrant+vdw-like")


def _csv(folder):
    return (folder / "atlas.csv").read_text()


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
])
def test_cli_scan_bad_input(capsys, tmp_path, argv, match):
    argv = [a if a != "x" else str(tmp_path / "x") for a in argv]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert match in err and err.count("\n") == 1


def test_cli_scan_unreachable_scheduler(capsys, tmp_path):
    pytest.importorskip("distributed")
    assert main(["scan", "rn-ads", "--grid", "Q=1:2:2", "-o", str(tmp_path / "s"),
                 "--scheduler", "tcp://127.0.0.1:9"]) == 2
    assert "cannot reach the Dask scheduler" in capsys.readouterr().err
