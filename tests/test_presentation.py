"""Presentation contracts (issue 12 items 8-11): strict JSON with conventions from every
command, file permissions of everything written, unambiguous text and LaTeX, and
figures that never accumulate in pyplot or change matplotlib's global state."""
import copy
import json
import os
import re
import stat
import warnings

import numpy as np
import pytest

from bhchem import bind
from bhchem.cli.main import main
from bhchem.conventions import convention_record
from bhchem.declare.registry import get_family


def strict(text):
    """RFC 8259 JSON only: NaN, Infinity and -Infinity are not JSON (common practice:
    strict parsers such as JavaScript's JSON.parse reject them)."""
    def refuse(token):
        raise ValueError(f"non-standard JSON token {token}")
    return json.loads(text, parse_constant=refuse)


def run_json(capsys, argv):
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 0, err
    return strict(out)


# -- item 8: one serializer ------------------------------------------------------------------
@pytest.mark.parametrize("argv", [
    ["show", "vdw-fluid", "--json"],          # Smarr does not apply to a fluid: NaN residual
    ["show", "rn-ads", "-p", "Q=1", "--json"],
    ["critical", "kerr-ads", "--json"],
    ["exponents", "rn-ads", "-p", "Q=1", "--json"],
    ["isobar", "rn-ads", "-p", "Q=1", "--pressure", "0.5Pc", "--json"],
    ["phases", "rn-ads", "-p", "Q=1", "--json", "--quiet"],
    ["expansion", "rn-ads", "-p", "Q=1", "--json"],
    ["engine", "rn-ads", "-p", "Q=1", "--cycle", "0.01,400 0.01,600 0.005,600 0.005,400",
     "--json"],
    ["curvature", "rn-ads", "-p", "Q=1", "--json"],
], ids=lambda a: a[0] + "-" + a[1])
def test_every_json_command_is_strict_json_with_the_family_convention(capsys, argv):
    doc = run_json(capsys, argv)
    # README, "Conventions": every JSON result carries them under `convention` (an analysis
    # may add its own entries, e.g. the curvature's sign convention)
    assert doc["convention"].items() >= convention_record(get_family(argv[1])).items()
    for pointer in doc.get("non_finite", []):  # what was non-finite is null, and named
        node = doc
        for token in pointer.split("/")[1:]:
            token = token.replace("~1", "/").replace("~0", "~")
            node = node[int(token)] if isinstance(node, list) else node[token]
        assert node is None


def test_fluid_smarr_residual_is_null_and_named(capsys):
    """The Smarr relation has no meaning for the van der Waals fluid (no length
    dimensions; common practice), so its residual is not a number: null, listed."""
    doc = run_json(capsys, ["show", "vdw-fluid", "--json"])
    assert doc["smarr"]["holds"] is None and doc["smarr"]["max_residual"] is None
    assert "/smarr/max_residual" in doc["non_finite"]


def test_families_json_entries_carry_their_conventions(capsys):
    doc = run_json(capsys, ["families", "--json"])
    assert "convention" not in doc  # the keys are family names only
    for name, entry in doc.items():
        assert entry["convention"] == convention_record(get_family(name))


def test_to_json_numpy_and_non_finite():
    """Exact: numpy scalars and arrays become plain JSON; NaN/inf become null and are
    listed as JSON Pointers (RFC 6901); keys sorted; the conventions added."""
    from bhchem.present.serialize import to_json
    doc = {"b": np.array([1.5, np.inf, -np.inf]), "a": np.float32("nan"),
           "c": (np.int64(3), np.bool_(True)), "d/e": {"x": float("nan")}}
    text = to_json(doc)
    out = strict(text)
    assert out["a"] is None and out["b"] == [1.5, None, None]
    assert out["c"] == [3, True] and type(out["c"][0]) is int
    assert out["non_finite"] == ["/a", "/b/1", "/b/2", "/d~1e/x"]
    assert out["convention"] == convention_record()
    assert list(json.loads(text)) == sorted(out)
    assert to_json(out) == text  # a document read back serializes to the same bytes


def test_critical_point_api_carries_preferred_branch_like_the_json(capsys):
    """Kubiznak & Mann, JHEP 07 (2012) 033 (arXiv:1205.0559): the one critical point of
    4D charged AdS ends the small/large first-order line of the preferred phase."""
    from bhchem.analysis.critical_branch import find_critical_points_on_branches
    th = bind("rn-ads", Q=1.0)
    (cp,) = find_critical_points_on_branches(th).points
    assert cp.on_preferred_branch is True
    doc = run_json(capsys, ["critical", "rn-ads", "-p", "Q=1", "--json"])
    assert doc["critical_points"][0]["on_preferred_branch"] is True
    # T_c < 0 (lovelock3-ads, k = -1; Frassino, Kubiznak, Mann & Simovic 2014): not a
    # physical point, so it lies on no branch -- undecided by definition
    s = find_critical_points_on_branches(bind("lovelock3-ads", k=-1))
    assert s.points and all(p.T < 0 and p.on_preferred_branch is None for p in s.points)


# -- item 9: permissions ---------------------------------------------------------------------
@pytest.fixture
def umask():
    old = os.umask(0o022)
    os.umask(old)

    def set_(mask):
        os.umask(mask)
        return mask
    yield set_
    os.umask(old)


def _mode(path):
    return stat.S_IMODE(os.stat(path).st_mode)


@pytest.fixture(scope="module")
def rn_results():
    from bhchem.workflows.report import compute_results
    th = bind("rn-ads", Q=1.0)
    return th, compute_results(th)


@pytest.mark.parametrize("mask", [0o022, 0o077])
def test_report_folder_and_files_get_umask_permissions(tmp_path, monkeypatch, umask,
                                                       rn_results, mask):
    """Common practice (POSIX open/mkdir): a new file is 0666 & ~umask, a folder
    0777 & ~umask."""
    import bhchem.workflows.report as rep
    th, (doc, pd) = rn_results
    monkeypatch.setattr(rep, "compute_results", lambda th, progress=None:
                        (copy.deepcopy(doc), pd))
    monkeypatch.setattr(rep, "FIGURES", (("tr", "T-r isobars"),))
    umask(mask)
    out = rep.write_report(th, tmp_path / "bundle")
    assert _mode(out) == 0o777 & ~mask
    names = sorted(os.listdir(out))
    assert names == ["report.md", "results.json", "tables.tex", "tr.csv", "tr.pdf", "tr.png"]
    for name in names:
        assert _mode(os.path.join(out, name)) == 0o666 & ~mask, name
    # replacing it keeps the same rule and leaves nothing beside it
    out = rep.write_report(th, tmp_path / "bundle", force=True)
    assert _mode(out) == 0o777 & ~mask and os.listdir(tmp_path) == ["bundle"]


@pytest.mark.parametrize("mask", [0o022, 0o077])
def test_saved_figure_gets_umask_permissions(tmp_path, umask, mask):
    from bhchem.present.plots import save
    from bhchem.workflows.figures import make_figure
    res = make_figure(bind("rn-ads", Q=1.0), "tr", pressures=[0.002])
    umask(mask)
    for ext in ("png", "pdf", "svg"):
        path = save(res, tmp_path / f"f.{ext}")
        assert _mode(path) == 0o666 & ~mask
    assert sorted(os.listdir(tmp_path)) == ["f.pdf", "f.png", "f.svg"]  # no temporaries


@pytest.mark.parametrize("mask", [0o022, 0o077])
def test_atlas_files_get_umask_permissions(tmp_path, umask, capsys, mask):
    umask(mask)
    out = tmp_path / "atlas"
    assert main(["scan", "rn-ads", "--grid", "Q=0.5:2:3", "-o", str(out), "--refine", "0",
                 "--quiet"]) == 0
    capsys.readouterr()
    strict((out / "atlas.json").read_text())
    for root, dirs, files in os.walk(out):
        assert _mode(root) == 0o777 & ~mask, root
        for f in files:
            assert _mode(os.path.join(root, f)) == 0o666 & ~mask, f


@pytest.mark.parametrize("mask", [0o022, 0o077])
def test_atomic_helpers_leave_nothing_on_failure(tmp_path, umask, mask):
    from bhchem.fileio import atomic_directory, atomic_write
    umask(mask)
    p = atomic_write(tmp_path / "a.txt", "one")
    assert _mode(p) == 0o666 & ~mask
    with pytest.raises(RuntimeError):
        with atomic_directory(tmp_path / "d") as d:
            atomic_write(os.path.join(d, "x"), b"1")
            raise RuntimeError("simulated failure")
    assert sorted(os.listdir(tmp_path)) == ["a.txt"]
    with atomic_directory(tmp_path / "d") as d:
        atomic_write(os.path.join(d, "x"), b"1")
    assert _mode(tmp_path / "d") == 0o777 & ~mask
    assert (tmp_path / "a.txt").read_text() == "one"


# -- item 10: unambiguous text -------------------------------------------------------------
def test_exponents_cannot_be_mistaken_for_a_coupling_named_alpha(capsys):
    """Gauss-Bonnet-AdS has a coupling named alpha; the exponents keep their standard
    meaning (Kubiznak & Mann 2012, arXiv:1205.0559: C_V ~ |t|^-alpha, ...)."""
    assert main(["exponents", "gauss-bonnet-ads"]) == 0
    text = capsys.readouterr().out
    assert "alpha = 0.1" in text.splitlines()[0]  # the coupling, in the header
    lines = [ln.strip() for ln in text.splitlines()]
    exact = {"alpha": "0", "beta": "1/2", "gamma": "1", "delta": "3"}  # mean field, same paper
    from bhchem.present.report_text import EXPONENT_DEFINITIONS
    for k, v in exact.items():
        (line,) = [ln for ln in lines if ln.startswith(f"exponent {k} (")]
        assert EXPONENT_DEFINITIONS[k] in line and re.search(rf"\bexact {re.escape(v)}\b", line)
    # nowhere else is an exponent value printed as 'alpha = ...' etc.
    for ln in lines:
        if ln.startswith("exponent "):
            continue
        assert not re.search(r"\b(alpha|beta|gamma|delta) = (0|1/2|1|3)\b(?!\.)", ln), ln


def test_tables_tex_leaves_out_unphysical_points_and_says_so():
    """lovelock3-ads with k = -1 (Frassino, Kubiznak, Mann & Simovic 2014) has two
    solutions of the critical conditions, both with T_c < 0."""
    from bhchem.present.critical_report import critical_json
    from bhchem.present.report_text import tables_tex
    from bhchem.present.summary import show_json
    th = bind("lovelock3-ads", k=-1)
    crit = critical_json(th, with_exponents=True)
    assert len(crit["critical_points"]) == 2
    assert all(cp["T"] < 0 and not cp["physical"] for cp in crit["critical_points"])
    show = show_json(th)
    doc = {"family": {"name": th.family.name}, "parameters": show["parameters"],
           "critical": crit, "phases": {"triple_points": []}}
    tex = tables_tex(doc)
    assert "\\begin{table}" not in tex
    assert "% 2 unphysical critical point(s) left out" in tex
    assert "--include-unphysical" in tex
    tex = tables_tex(doc, include_unphysical=True)
    rows = [ln for ln in tex.splitlines() if re.match(r"[12] & standard & no & -- & ", ln)]
    assert len(rows) == 2 and "left out" not in tex
    # the couplings alpha2, alpha3 are upright names, never the Greek exponent letter
    assert "\\mathrm{alpha2} = 0.1" in tex and "$alpha" not in tex


def test_cli_report_flag_is_wired():
    from bhchem.cli.main import build_parser
    args = build_parser().parse_args(["report", "rn-ads", "-o", "x", "--include-unphysical"])
    assert args.include_unphysical is True


def test_phases_text_counts_what_the_json_holds():
    from bhchem.analysis.phases import phase_diagram
    from bhchem.present.phase_text import diagram_json, diagram_text
    pd = phase_diagram(bind("rn-ads", Q=1.0))
    doc, text = diagram_json(pd), diagram_text(pd)
    heads = [ln for ln in text.splitlines() if re.match(r"\s+\S+ line .* points", ln)]
    assert len(heads) == len(doc["lines"]) >= 1
    for head, line in zip(heads, doc["lines"]):
        assert re.search(rf": {len(line['points'])} points\b", head), head
        n = line["checks"].get("n_points")
        if n is not None and n != len(line["points"]):
            assert f"({n} checked coexistence states" in head, head


# -- item 11: figures -----------------------------------------------------------------------
@pytest.mark.slow
def test_thirty_figures_leave_pyplot_alone(tmp_path):
    import matplotlib
    import matplotlib.pyplot as plt
    from bhchem.present.plots import save
    from bhchem.workflows.figures import make_figure
    th = bind("rn-ads", Q=1.0)
    open_before = plt.get_fignums()
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)  # 'More than 20 figures ...'
        for i in range(30):
            res = make_figure(th, "tr", pressures=[0.002 * (1 + i / 30)])
            save(res, tmp_path / f"f{i}.svg")
    assert plt.get_fignums() == open_before
    assert len(os.listdir(tmp_path)) == 30
    assert isinstance(res.figure, matplotlib.figure.Figure)


def test_backend_and_rcparams_unchanged_after_drawing(tmp_path):
    import matplotlib
    from bhchem.present.plots import save
    from bhchem.workflows.figures import make_figure
    original = matplotlib.get_backend()
    matplotlib.use("pdf")  # a user's choice that a library must keep
    try:
        before = dict(matplotlib.rcParams)
        res = make_figure(bind("rn-ads", Q=1.0), "cp")
        save(res, tmp_path / "cp.png")
        assert matplotlib.get_backend() == "pdf"
        after = dict(matplotlib.rcParams)
        assert after == before, {k for k in before if before[k] != after.get(k)}
    finally:
        matplotlib.use(original)
    # and the styled figure used the bhchem style while it was drawn
    assert res.figure.get_dpi() == pytest.approx(110)
    assert (tmp_path / "cp.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
