"""Faults: nothing lost, nothing silently wrong, nothing left behind (issue 22).

Fault injection: ``BHCHEM_FAULT_STAGE=name`` makes a subprocess kill itself with SIGKILL
at the named stage (:func:`bhchem.fileio.fault_point`, a count, never a sleep); damaged
files are written by the test; two writers are made concurrent by holding the lock in
this process; a full disk is an ``OSError(ENOSPC)`` raised through monkeypatch.
Everything uses rn-ads (fast) and tiny grids.
"""
import errno
import hashlib
import json
import os
import shutil
import signal
import subprocess
import sys

import pytest

import bhchem.workflows.atlas as atlas
import bhchem.workflows.report as report
from bhchem.cli.main import main
from bhchem.errors import BhchemError
from bhchem.fileio import output_lock
from bhchem.workflows.atlas import parse_grid, scan

HERE = os.path.dirname(os.path.abspath(__file__))
TOML = os.path.join(HERE, os.pardir, "examples", "families", "rn_ads_declarative.toml")


def bhchem(*argv, stage=None, cwd=None):
    env = dict(os.environ)
    env.pop("BHCHEM_FAULT_STAGE", None)
    if stage:
        env["BHCHEM_FAULT_STAGE"] = stage
    return subprocess.run([sys.executable, "-m", "bhchem", *argv], capture_output=True,
                          text=True, env=env, cwd=cwd)


def leftovers(folder, name):
    return sorted(f for f in os.listdir(folder) if f.startswith(f".{name}."))


def q_of(bundle):
    with open(os.path.join(bundle, "results.json"), encoding="utf-8") as fh:
        return json.load(fh)["provenance"]["parameters"]["Q"]


# -- items 1 and 10: a kill during report --force, a kill while saving a plot ------------------
@pytest.mark.slow
def test_kill_between_aside_and_swap_keeps_one_bundle_and_next_run_restores(tmp_path):
    target = tmp_path / "R"  # the earlier bundle (its content is not read by --force)
    target.mkdir()
    (target / "results.json").write_text('{"provenance": {"parameters": {"Q": 1.0}}}')
    (target / "report.md").write_text("earlier report\n")
    files = sorted(os.listdir(target))
    killed = bhchem("report", "rn-ads", "-p", "Q=2", "-o", str(target), "--force", "--quiet",
                    stage="report-swap")
    assert killed.returncode == -signal.SIGKILL
    # at the kill the old bundle is complete under its aside name, the new one complete too
    left = leftovers(tmp_path, "R")
    assert any(f.endswith(".old") for f in left) and any(f.endswith(".tmpdir") for f in left)
    # the next run (refused: the folder exists) restores the old bundle and cleans up first
    again = bhchem("report", "rn-ads", "-p", "Q=3", "-o", str(target), "--quiet")
    assert again.returncode == 2
    err = again.stderr.strip().splitlines()
    assert any("restored R from" in line for line in err)
    assert any("removed .R." in line and ".tmpdir" in line for line in err)
    assert "Traceback" not in again.stderr
    assert sorted(os.listdir(target)) == files and q_of(target) == 1.0
    assert leftovers(tmp_path, "R") == []


@pytest.mark.slow
def test_kill_while_saving_a_plot_leaves_a_temporary_that_the_next_run_removes(tmp_path):
    out = tmp_path / "pv.png"
    killed = bhchem("plot", "pv", "rn-ads", "-p", "Q=1", "-o", str(out), stage="atomic-file-open")
    assert killed.returncode == -signal.SIGKILL
    left = leftovers(tmp_path, "pv.png")  # the temporary, and the lock file of the dead run
    (tmp,) = [f for f in left if f.endswith(".tmp")]
    assert left == sorted([tmp, ".pv.png.bhchem-lock"])
    assert os.path.getsize(tmp_path / tmp) == 0 and not out.exists()
    again = bhchem("plot", "pv", "rn-ads", "-p", "Q=1", "-o", str(out))
    assert again.returncode == 0
    assert again.stderr.strip() == f"bhchem: note: removed {tmp} (left by an interrupted run)"
    assert leftovers(tmp_path, "pv.png") == [] and out.stat().st_size > 0


# -- item 2: two writers into one folder --------------------------------------------------------
def test_second_writer_is_refused_while_the_first_holds_the_folder(tmp_path, capsys):
    target = tmp_path / "R"
    with output_lock(target):  # "the first writer", still running
        code = main(["report", "rn-ads", "-p", "Q=2", "-o", str(target), "--quiet"])
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and "another bhchem process" in err
    assert not target.exists() and leftovers(tmp_path, "R") == []


def test_folder_that_appears_while_waiting_for_the_lock_is_not_overwritten(tmp_path,
                                                                             monkeypatch):
    target = tmp_path / "R"

    def first_writer_finished(path):  # the other report lands after our first check
        os.mkdir(path)
        (target / "results.json").write_text("{}")
        return []
    monkeypatch.setattr(report, "clean_stale", first_writer_finished)
    monkeypatch.setattr(report, "compute_results",
                        lambda *a, **k: pytest.fail("computed into a taken folder"))
    th = __import__("bhchem").bind("rn-ads", Q=2)
    with pytest.raises(BhchemError, match="exists"):
        report.write_report(th, target)
    assert (target / "results.json").read_text() == "{}"


# -- a full disk ---------------------------------------------------------------------------------
def test_disk_full_during_a_chunk_then_resume_gives_the_same_table(tmp_path, monkeypatch):
    axes = [parse_grid("Q=0.5:1:2")]
    ref = scan("rn-ads", axes, out_dir=tmp_path / "ref", refine=0)
    real = atlas._atomic_write

    def full(path, text):
        if os.path.basename(path).startswith("chunk-"):
            raise OSError(errno.ENOSPC, "No space left on device")
        real(path, text)
    monkeypatch.setattr(atlas, "_atomic_write", full)
    with pytest.raises(OSError):
        scan("rn-ads", axes, out_dir=tmp_path / "a", refine=0)
    monkeypatch.setattr(atlas, "_atomic_write", real)
    doc = scan("rn-ads", axes, out_dir=tmp_path / "a", refine=0)
    assert doc["rows"] == ref["rows"]
    assert [f for f in os.listdir(tmp_path / "a" / "chunks") if f.startswith(".")] == []


# -- items 3, 4, 8: atlas chunks and manifest ----------------------------------------------------
@pytest.fixture(scope="module")
def atlas_run(tmp_path_factory):
    base = tmp_path_factory.mktemp("atlas")
    fam = base / "rn.toml"
    shutil.copy(TOML, fam)
    out = base / "A"
    doc = scan("rn-ads-file", [parse_grid("Q=0.5:1:2")], out_dir=out, refine=0,
               family_file=str(fam))
    return base, fam, out, doc


def _rerun(atlas_run, tmp_path, damage):
    base, fam, out, doc = atlas_run
    copy = tmp_path / "A"
    shutil.copytree(out, copy)
    damage(copy)
    notes = []
    new = scan("rn-ads-file", [parse_grid("Q=0.5:1:2")], out_dir=copy, refine=0,
               family_file=str(fam), notify=notes.append)
    return doc, new, notes


CHUNK = os.path.join("chunks", "chunk-000000.json")


def _edit_rows(folder):  # still valid JSON, wrong numbers
    path = folder / CHUNK
    rows = json.loads(path.read_text())
    rows[0]["n_critical"] = 7
    rows[0]["structure"] = "edited"
    path.write_text(json.dumps(rows))


@pytest.mark.parametrize("damage", {
    "edited": _edit_rows,
    "truncated": lambda f: (f / CHUNK).write_bytes((f / CHUNK).read_bytes()[:40]),
    "empty": lambda f: (f / CHUNK).write_bytes(b""),
    "random": lambda f: (f / CHUNK).write_bytes(bytes(range(7, 250, 3))),
    "list": lambda f: (f / CHUNK).write_text("[]"),
    "wrong-rows": lambda f: (f / CHUNK).write_text('[{"index": 5}]'),
}.items(), ids=lambda kv: kv[0])
def test_damaged_or_edited_chunk_is_named_and_recomputed(atlas_run, tmp_path, damage):
    doc, new, notes = _rerun(atlas_run, tmp_path, damage[1])
    assert new["rows"] == doc["rows"]
    assert len(notes) == 1 and "chunk-000000.json" in notes[0] and "recomputing" in notes[0]


@pytest.mark.parametrize("content", [b"", b'{"family": "rn-ads-fi', b"\x00\xff\xfe garbage",
                                     b"[]"], ids=["empty", "truncated", "random", "list"])
def test_damaged_manifest_is_named_and_every_chunk_recomputed(atlas_run, tmp_path, content):
    doc, new, notes = _rerun(atlas_run, tmp_path,
                             lambda f: (f / "manifest.json").write_bytes(content))
    assert new["rows"] == doc["rows"]
    assert any("manifest.json is damaged" in n for n in notes)
    assert any("chunk-000000.json" in n and "recomputing" in n for n in notes)


@pytest.mark.filterwarnings("ignore:family file")
def test_edited_family_file_refuses_to_resume_naming_both_hashes(atlas_run, tmp_path):
    base, fam, out, doc = atlas_run
    copy = tmp_path / "A"
    shutil.copytree(out, copy)
    old = json.loads((copy / "manifest.json").read_text())
    original = fam.read_text()
    try:  # the family file is edited between the interruption and the resume
        fam.write_text(original.replace("q^2/r^(d-3)", "2*q^2/r^(d-3)"))
        with pytest.raises(BhchemError) as exc:
            scan("rn-ads-file", [parse_grid("Q=0.5:1:2")], out_dir=copy, refine=0,
                 family_file=str(fam))
    finally:
        fam.write_text(original)
    msg = str(exc.value)
    assert "family source changed" in msg and "\n" not in msg
    assert old["family_source_sha256"] in msg
    assert hashlib.sha256(original.replace("q^2/r^(d-3)", "2*q^2/r^(d-3)").encode()).hexdigest() \
        in msg


@pytest.mark.filterwarnings("ignore:family file")
def test_other_version_refuses_to_resume_naming_both(atlas_run, tmp_path):
    def older(folder):
        m = json.loads((folder / "manifest.json").read_text())
        m["version"] = "0.0.1"
        (folder / "manifest.json").write_text(json.dumps(m))
    with pytest.raises(BhchemError, match=r"bhchem 0\.0\.1.*this is bhchem"):
        _rerun(atlas_run, tmp_path, older)


# -- item 5: values that do not survive conversion to a float ------------------------------------
@pytest.mark.parametrize("argv", [
    ["show", "rn-ads", "-p", "Q=1e-400"],
    ["show", "rn-ads", "-p", "Q=1e400"],
    ["scan", "rn-ads", "--grid", "Q=1e-400:1:3", "-o", "X"],
    ["scan", "rn-ads", "--grid", "Q=0.5:1:3", "-p", "Q=abc", "-o", "X"],
], ids=["underflow", "overflow", "grid-underflow", "scan-not-a-number"])
def test_value_that_does_not_survive_float_conversion_is_refused(argv, capsys, tmp_path,
                                                                 monkeypatch):
    monkeypatch.chdir(tmp_path)
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 2 and len(err.strip().splitlines()) == 1 and "internal error" not in err
    assert not (tmp_path / "X").exists()


def test_exact_zero_is_still_accepted():
    from bhchem.core.compiled import parse_number
    assert parse_number("0") == 0.0 and parse_number("0e-400") == 0.0
    assert parse_number("4.9e-324") > 0


# -- item 11: bad output paths -------------------------------------------------------------------
def test_bad_output_paths_are_one_line_exit_2(capsys, tmp_path, monkeypatch):
    afile = tmp_path / "afile"
    afile.write_text("x")
    readonly = tmp_path / "ro"
    readonly.mkdir()
    real_access = os.access
    monkeypatch.setattr(os, "access", lambda p, m, **k: False if os.fspath(p) == str(readonly)
                        else real_access(p, m, **k))
    # nothing may be computed before the refusal
    monkeypatch.setattr(report, "compute_results",
                        lambda *a, **k: pytest.fail("computed before refusing"))
    cases = [["report", "rn-ads", "-o", str(readonly / "R")],
             ["report", "rn-ads", "-o", str(afile)],
             ["report", "rn-ads", "-o", str(afile), "--force"],
             ["report", "rn-ads", "-o", str(afile / "sub")],
             ["plot", "pv", "rn-ads", "-o", str(tmp_path)],
             ["plot", "pv", "rn-ads", "-o", str(afile / "x.png")],
             ["scan", "rn-ads", "--grid", "Q=0.5:1:2", "-o", str(afile)],
             ["scan", "rn-ads", "--grid", "Q=0.5:1:2", "-o", str(readonly / "A")]]
    os.mkdir(tmp_path / "dir.png")
    cases.append(["plot", "pv", "rn-ads", "-o", str(tmp_path / "dir.png")])
    for argv in cases:
        code = main(argv)
        out, err = capsys.readouterr()
        assert code == 2, (argv, err)
        assert len(err.strip().splitlines()) == 1 and "internal error" not in err, (argv, err)
    assert afile.read_text() == "x" and os.listdir(readonly) == []


# -- the same faults through the command line (the symptoms of the issue) ------------------------
SCAN = ["scan", "rn-ads", "--grid", "Q=0.5:1:2", "--refine", "0", "--quiet"]


def test_cli_edited_chunk_is_not_trusted_and_garbage_is_no_internal_error(tmp_path, capsys):
    out = str(tmp_path / "A")
    assert main(SCAN + ["-o", out]) == 0
    capsys.readouterr()
    table = (tmp_path / "A" / "atlas.csv").read_text()
    chunk = tmp_path / "A" / CHUNK
    _edit_rows(tmp_path / "A")  # valid JSON, wrong rows
    assert main(SCAN + ["-o", out]) == 0
    _, err = capsys.readouterr()
    assert "chunk-000000.json" in err and "recomputing" in err
    assert (tmp_path / "A" / "atlas.csv").read_text() == table
    chunk.write_bytes(b"\x00garbage")
    assert main(SCAN + ["-o", out]) == 0
    _, err = capsys.readouterr()
    assert "internal error" not in err and "chunk-000000.json" in err
    assert (tmp_path / "A" / "atlas.csv").read_text() == table


@pytest.mark.slow
def test_kill_after_a_chunk_before_its_checksum_then_rerun_recomputes_it(tmp_path, capsys):
    out = str(tmp_path / "A")
    killed = bhchem(*SCAN, "-o", out, stage="atlas-chunk-written")
    assert killed.returncode == -signal.SIGKILL
    assert main(SCAN + ["-o", out]) == 0
    _, err = capsys.readouterr()
    assert err.strip().splitlines() == [
        f"bhchem: note: {tmp_path / 'A' / CHUNK} has no checksum in the manifest; "
        f"recomputing it"]
    assert main(SCAN + ["-o", str(tmp_path / "B")]) == 0
    assert (tmp_path / "A" / "atlas.csv").read_text() == \
        (tmp_path / "B" / "atlas.csv").read_text()


# -- issue 22 items 7, 12, 14 -----------------------------------------------------------------
@pytest.mark.parametrize("name", ["v", "S", "r", "M", "V", "G"])
def test_parameter_names_that_print_like_the_engine_symbols_are_refused(name):
    """A coupling named v or S printed like the specific volume or the entropy in the
    equation of state (T/v + 2*v**2/(pi*v**4) ...): such names are refused in one line."""
    from bhchem.declare import Family, Parameter
    from bhchem.declare.symbols import P, pi, r
    from bhchem.errors import MalformedFamilyError
    with pytest.raises(MalformedFamilyError, match=f"parameter name {name} is reserved"):
        Family(name="clash", summary="s", reference="test", dimension=4,
               parameters=(Parameter(name, 1.0, length_dimension=1),),
               enthalpy=r / 2 * (1 + 8 * pi * P * r**2 / 3), entropy=pi * r**2)


def test_a_huge_grid_is_refused_before_any_work(tmp_path):
    """10^6 x 10^6 points used to be accepted and die with MemoryError after 3.6 GB."""
    proc = bhchem("scan", "rn-ads", "--grid", "Q=0.1:1:90000", "--grid", "d=4:5:2",
                   "-o", str(tmp_path / "a"), cwd=tmp_path)
    assert proc.returncode == 2 and len(proc.stderr.strip().splitlines()) == 1, proc.stderr
    assert "at most" in proc.stderr and "Traceback" not in proc.stderr
    assert not (tmp_path / "a").exists()


def test_plugin_prints_stay_out_of_json_and_any_exception_is_one_line(tmp_path):
    """A plug-in that prints must not corrupt --json; a BaseException subclass it raises is
    one line, exit 2 (a .py plug-in runs code: the README and --help say so)."""
    good = tmp_path / "noisy.py"
    good.write_text(
        "print('hello from the plug-in')\n"
        "from bhchem.declare import Family, Parameter\n"
        "from bhchem.declare.symbols import P, parameter_symbol, pi, r\n"
        "Q = parameter_symbol('Q')\n"
        "FAMILY = Family(name='noisy', summary='s', reference='test', dimension=4,\n"
        "    parameters=(Parameter('Q', 1.0, length_dimension=1),),\n"
        "    enthalpy=r/2*(1 + 8*pi*P*r**2/3 + Q**2/r**2), entropy=pi*r**2)\n")
    proc = bhchem("show", "noisy", "--family-file", str(good), "--json", cwd=tmp_path)
    assert proc.returncode == 0
    json.loads(proc.stdout)                          # stdout is pure JSON
    assert "hello from the plug-in" in proc.stderr
    bad = tmp_path / "bad.py"
    bad.write_text("class Boom(BaseException):\n    pass\nraise Boom('no')\n")
    proc = bhchem("show", "x", "--family-file", str(bad), cwd=tmp_path)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1 and "Boom" in proc.stderr


def _worker_state(parent_pid):
    """Run inside a pool worker: the SIGINT disposition and the parent-death signal."""
    import ctypes
    import signal as sig
    libc = ctypes.CDLL(None, use_errno=True)
    out = ctypes.c_int(-1)
    libc.prctl(2, ctypes.byref(out), 0, 0, 0)   # PR_GET_PDEATHSIG
    return sig.getsignal(sig.SIGINT) == sig.SIG_IGN, out.value


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="prctl is Linux-only")
def test_scan_workers_ignore_ctrl_c_and_die_with_their_parent():
    """Issue 22 item 9: Ctrl-C printed a worker traceback per worker, and workers outlived a
    killed parent.  The scan's pool initializer makes workers ignore SIGINT (the parent says
    "interrupted" once) and asks the kernel for SIGTERM when the parent dies."""
    from concurrent.futures import ProcessPoolExecutor
    with ProcessPoolExecutor(max_workers=1, initializer=atlas.worker_setup,
                             initargs=(os.getpid(),)) as pool:
        ignores_sigint, death_signal = pool.submit(_worker_state, os.getpid()).result()
    assert ignores_sigint
    assert death_signal == signal.SIGTERM
