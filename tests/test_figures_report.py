"""Figures check content (the drawn data equal the computed values) and the report bundle."""
import json
import math
import os
import re

import numpy as np
import pytest

from bhchem import bind
from bhchem.cli.main import main
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.figure_data import pt_diagram
from bhchem.analysis.isobar import analyze_isobar as bhchem_isobar
from bhchem.analysis.phases import phase_diagram
from bhchem.present.plots import EmptyFigureError, save
from bhchem.workflows.figures import make_figure

PC = 1 / (96 * math.pi)
TC = math.sqrt(6) / (18 * math.pi)


@pytest.fixture(scope="module")
def rn():
    return bind("rn-ads", Q=1.0)


def _nonblank(path):
    import matplotlib.image as mpimg
    img = mpimg.imread(path)
    assert img.ndim == 3 and img.shape[0] > 200 and img.shape[1] > 200
    assert float(np.std(img[..., :3])) > 0.05  # not a blank canvas


def test_pt_diagram_draws_the_computed_lines(rn, tmp_path):
    pd = phase_diagram(rn)
    res = make_figure(rn, "pt", diagram=pd)
    lines = {k: v for k, v in res.data.items() if k.startswith("line")}
    assert len(lines) == len(pd.lines) == 1
    (drawn,) = lines.values()
    np.testing.assert_array_equal(drawn, np.array(pd.lines[0].points))
    # the matplotlib artist carries exactly that curve
    ax = res.figure.axes[0]
    art = [ln for ln in ax.get_lines() if len(ln.get_xdata()) == len(drawn)]
    np.testing.assert_allclose(art[0].get_xdata(), drawn[:, 0])
    assert res.data["critical_points"][0] == pytest.approx([TC, PC], rel=1e-12)
    save(res, tmp_path / "pt.png")
    _nonblank(tmp_path / "pt.png")
    # every region holding a phase is named, the one above P_c as what it is
    assert {t.get_text() for t in res.figure.axes[0].texts} == {"small", "large", "supercritical"}
    data = pt_diagram(rn, diagram=pd)
    (Tsc, Psc, _), = [r for r in data.regions if r[2] == "supercritical"]
    assert Psc > PC and Tsc < data.limits[0]
    for T, P, name in data.regions:  # each name is written where that phase is preferred
        if name != "supercritical":
            assert [ph for lo, hi, ph in bhchem_isobar(rn, P).preferred if lo <= T <= hi] == [name]
    # the text of 'bhchem phases' names the regions as the figure does (one naming, the
    # diagram's): no "black hole" for the supercritical region
    from bhchem.present.phase_text import diagram_json, diagram_text
    assert "  regions: small, large, supercritical" in diagram_text(pd).splitlines()
    assert {r["name"] for r in diagram_json(pd)["regions"]} == \
        {t.get_text() for t in res.figure.axes[0].texts}
    # the legend sits below the plane, not beside it
    legend = res.figure.axes[0].get_legend()
    assert legend.get_bbox_to_anchor().y0 < res.figure.axes[0].bbox.y0
    # the notebook view of the same diagram: one row per line, its ends
    columns, rows = pd.table_rows()
    assert len(rows) == 1 and rows[0][0] == "first-order" and rows[0][2] == len(drawn)
    assert rows[0][6:8] == pytest.approx(tuple(drawn[-1])) and rows[0][8] == "critical point"
    assert "<table>" in pd._repr_html_() and len(repr(pd)) < 200


def test_pv_isotherms_are_the_equation_of_state(rn, tmp_path):
    """Every drawn isotherm point satisfies P = T/v - 1/(2 pi v^2) + 2/(pi v^4)
    (Kubiznak & Mann 2012), and the equal-area segments sit at the coexistence pressure."""
    res = make_figure(rn, "pv")
    Ts = [f * TC for f in (0.85, 0.92, 0.97, 1.0, 1.05, 1.12)]
    for i, T in enumerate(Ts):
        v, P = res.data[f"isotherm_{i}"].T
        ok = np.isfinite(v)
        ref = T / v[ok] - 1 / (2 * np.pi * v[ok] ** 2) + 2 / (np.pi * v[ok] ** 4)
        np.testing.assert_allclose(P[ok], ref, rtol=1e-12)
    for i in range(3):  # subcritical isotherms have the Maxwell segment
        seg = res.data[f"equal_area_{i}"]
        p = seg[0, 1] / PC
        T = TC * math.sqrt(p * (3 - math.sqrt(p)) / 2)  # closed-form coexistence curve
        assert T == pytest.approx(Ts[i], rel=1e-9)
    save(res, tmp_path / "pv.svg")
    assert (tmp_path / "pv.svg").read_text().startswith("<?xml")


def test_gt_panels_show_swallowtail_and_preferred_branch(rn, tmp_path):
    res = make_figure(rn, "gt")
    # below P_c: three branches (a swallowtail) and the preferred curve is the minimum
    branches = [k for k in res.data if k.startswith("P0_branch")]
    assert len(branches) == 3
    pref = res.data["P0_preferred"]
    for k in branches:
        T, G = res.data[k].T
        Gp = np.interp(T, pref[:, 0], pref[:, 1], left=np.nan, right=np.nan)
        ok = np.isfinite(Gp)
        assert np.all(G[ok] >= Gp[ok] - 1e-9 * np.abs(Gp[ok]).max())
    save(res, tmp_path / "gt.png")
    _nonblank(tmp_path / "gt.png")


@pytest.mark.parametrize("kind", ["tr", "cp"])
def test_tr_and_cp(rn, kind, tmp_path):
    res = make_figure(rn, kind)
    for k, arr in res.data.items():
        x, y = arr.T
        ref = rn.T(x, 0.5 * PC if kind == "cp" else None) if False else None  # noqa
    if kind == "tr":
        x, T = res.data["P0_branch0"].T
        np.testing.assert_allclose(T, rn.T(x, 0.5 * PC), rtol=1e-14)
    else:
        x, C = res.data["branch0"].T
        np.testing.assert_allclose(C, rn.quantity("C_P", x, 0.5 * PC), rtol=1e-14)
    save(res, tmp_path / f"{kind}.png")
    _nonblank(tmp_path / f"{kind}.png")


def test_empty_figure_is_refused():
    th = bind("schwarzschild-ads")
    with pytest.raises(EmptyFigureError):
        make_figure(th, "pt", diagram=_empty_diagram(th))


def _empty_diagram(th):
    pd = phase_diagram(th, pressure_range=(1e-3, 1e-2), n_anchor=4)
    pd.lines = []
    return pd


def test_cli_plot_bad_output(capsys, tmp_path):
    assert main(["plot", "pt", "rn-ads", "-o", str(tmp_path / "x.jpg")]) == 2
    assert "use a .png, .pdf or .svg" in capsys.readouterr().err
    assert not list(tmp_path.iterdir())  # nothing half written


# -- the report bundle -----------------------------------------------------------------
@pytest.fixture(scope="module")
def bundle(tmp_path_factory):
    out = tmp_path_factory.mktemp("rep") / "rn"
    os.environ["SOURCE_DATE_EPOCH"] = "1700000000"
    try:
        assert main(["report", "rn-ads", "-p", "Q=1", "-o", str(out), "--quiet"]) == 0
    finally:
        os.environ.pop("SOURCE_DATE_EPOCH")
    return out


def test_report_bundle_contents(bundle):
    names = sorted(p.name for p in bundle.iterdir())
    for kind in ("pv", "gt", "pt", "tr", "cp"):
        assert f"{kind}.png" in names and f"{kind}.pdf" in names
    for f in ("report.md", "tables.tex", "results.json"):
        assert f in names
    md = (bundle / "report.md").read_text()
    assert "![P-T phase diagram](pt.png)" in md and "vdw-like" in md


def test_results_json_round_trips_with_provenance(bundle):
    text = (bundle / "results.json").read_text()
    doc = json.loads(text)
    from bhchem.workflows.report import dumps
    assert dumps(doc) == text  # round trip, byte for byte
    prov = doc["provenance"]
    assert prov["family_source"] == "rn_ads.py" and len(prov["family_source_sha256"]) == 64
    assert prov["date"] == "2023-11-14T22:13:20+00:00"
    cp = doc["critical"]["critical_points"][0]
    assert cp["T"] == pytest.approx(TC, rel=1e-12)
    assert doc["first_law"]["holds"] and doc["smarr"]["holds"]


def test_tables_tex_balanced_and_equal_to_json(bundle):
    tex = (bundle / "tables.tex").read_text()
    for env in ("table", "tabular"):
        assert tex.count(f"\\begin{{{env}}}") == tex.count(f"\\end{{{env}}}") >= 1
    assert tex.count("\\toprule") == tex.count("\\bottomrule")
    assert tex.count("{") == tex.count("}")
    doc = json.loads((bundle / "results.json").read_text())
    cp = doc["critical"]["critical_points"][0]
    row = next(ln for ln in tex.splitlines() if ln.startswith("1 & standard"))
    nums = [float(n) for n in re.findall(r"\$([-0-9.]+)\$", row)]
    for key, value in zip(("T", "P", "v", "ratio"), nums):
        assert value == pytest.approx(cp[key], rel=5e-6)  # 6 significant digits
    assert "\\label{tab:rn-ads-exponents}" in tex


def test_report_refuses_existing_folder_and_leaves_nothing(tmp_path, capsys):
    out = tmp_path / "exists"
    out.mkdir()
    assert main(["report", "rn-ads", "-o", str(out), "--quiet"]) == 2
    assert "exists" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == [out]


@pytest.mark.slow
def test_failed_report_leaves_no_folder(tmp_path, monkeypatch):
    import bhchem.workflows.report as rep

    def boom(*a, **k):
        raise RuntimeError("simulated failure in the middle")
    monkeypatch.setattr(rep, "tables_tex", boom)
    with pytest.raises(RuntimeError):
        rep.write_report(bind("rn-ads"), tmp_path / "out")
    assert list(tmp_path.iterdir()) == []


def test_tables_tex_math_has_no_e_notation(bundle):
    """LaTeX math mode has no 'e' exponent notation (common practice): a fitted exponent
    is typeset as $0.5000 \\pm 2\\times10^{-10}$, never $0.5000\\pm2e-10$."""
    tex = (bundle / "tables.tex").read_text()
    spreads = re.findall(r"\\pm ([^$]*)\$", tex)
    assert len(spreads) >= 3  # beta, gamma, delta of the rn-ads point are fitted
    for s in spreads:
        assert re.fullmatch(r"\d(\.\d+)?(\\times10\^\{-?\d+\})?", s), s
    for math_text in re.findall(r"\$([^$]*)\$", tex):
        assert not re.search(r"\d[eE][-+]?\d", math_text), math_text


def test_results_json_is_strict_json(bundle):
    """RFC 8259: NaN/Infinity are not JSON; results.json parses with a strict parser."""
    def refuse(token):
        raise ValueError(token)
    doc = json.loads((bundle / "results.json").read_text(), parse_constant=refuse)
    assert doc["convention"]["pressure"].startswith("P = -Lambda/(8 pi)")


# -- presentation draws what it is given ----------------------------------------------------
@pytest.fixture(scope="module")
def figure_inputs(rn):
    """The data of every figure, computed once (analysis layer)."""
    import bhchem
    from bhchem.analysis.curvature import curvature_map
    from bhchem.analysis.engines import analyze_cycle
    from bhchem.analysis.figure_data import cycle_curves
    cycle = analyze_cycle(rn, [(0.01, 400.0), (0.01, 600.0), (0.005, 600.0), (0.005, 400.0)])
    return {"pv": bhchem.pv_curves(rn), "gt": bhchem.gt_curves(rn),
            "pt": bhchem.pt_diagram(rn), "tr": bhchem.tr_curves(rn), "cp": bhchem.cp_curves(rn),
            "cycle": cycle_curves(rn, cycle),
            "curvature": curvature_map(rn, nx=60, nT=50, with_amplitude=False)}


def test_plot_pt_draws_into_the_given_axes(figure_inputs, monkeypatch):
    """``ax=``: the diagram goes into the caller's axes; no figure is created."""
    import matplotlib.figure
    from bhchem import plot_pt
    fig = matplotlib.figure.Figure()
    ax = fig.add_subplot(1, 2, 2)

    def no_new_figure(*args, **kwargs):
        raise AssertionError("a plot function made a figure although it was given axes")
    monkeypatch.setattr(matplotlib.figure, "Figure", no_new_figure)
    data = figure_inputs["pt"]
    res = plot_pt(data, ax=ax)
    assert res.figure is fig and res.kind == "pt"
    assert fig.axes == [ax]  # rn-ads has no small features, so no inset either
    (line,) = [ln for ln in ax.get_lines() if len(ln.get_xdata()) == len(data.lines[0].points)]
    np.testing.assert_array_equal(line.get_xdata(), data.lines[0].points[:, 0])
    assert ax.get_xlabel() == "temperature $T$" and ax.get_title().startswith("rn-ads")


def test_plot_functions_never_call_analyses(rn, figure_inputs, monkeypatch, tmp_path):
    """Drawing reads the precomputed data: with every function of the analysis layer
    (wherever a module imported it), root finding and every evaluation of the family's
    thermodynamics made to fail, all figures still draw and hold the computed curves."""
    import inspect
    import sys
    import bhchem
    import scipy.optimize
    from bhchem.core.compiled import Thermodynamics
    from bhchem.present.analysis_plots import plot_curvature, plot_cycle

    def forbidden(*args, **kwargs):
        raise AssertionError("presentation called an analysis")
    loaded = {name: mod for name, mod in sys.modules.items()
              if name == "bhchem" or name.startswith("bhchem.")}
    analyses = {id(obj) for name, mod in loaded.items() if name.startswith("bhchem.analysis")
                for obj in vars(mod).values()
                if inspect.isfunction(obj) and obj.__module__.startswith("bhchem.analysis")}
    patched = 0
    for mod in loaded.values():
        for attr, obj in list(vars(mod).items()):
            if inspect.isfunction(obj) and id(obj) in analyses:
                monkeypatch.setattr(mod, attr, forbidden)
                patched += 1
    assert patched > 100
    monkeypatch.setattr(scipy.optimize, "brentq", forbidden)
    for method in ("T", "S", "M", "V", "G", "v", "quantity", "d", "physical", "state",
                   "potential", "typical_state", "typical_pressure"):
        monkeypatch.setattr(Thermodynamics, method, forbidden)
    plotters = {"pv": bhchem.plot_pv, "gt": bhchem.plot_gt, "pt": bhchem.plot_pt,
                "tr": bhchem.plot_tr, "cp": bhchem.plot_cp}
    for kind, plot in plotters.items():
        res = plot(figure_inputs[kind])
        assert res.kind == kind and res.data
        bhchem.save(res, tmp_path / f"{kind}.png")
    pv = figure_inputs["pv"]
    assert bhchem.plot_pv(pv).data["isotherm_0"] is pv.isotherms[0]  # drawn as given
    res = plot_cycle(figure_inputs["cycle"])
    assert set(res.data) >= {"side_0", "side_3"}
    res = plot_curvature(figure_inputs["curvature"], rn)
    assert res.data["R_N"] is figure_inputs["curvature"].R_N


def test_plot_functions_refuse_a_bound_family(rn):
    """``bhchem.plot_pv`` and friends take the data, and say so when given ``th``."""
    import bhchem
    with pytest.raises(TypeError, match=r"pv_curves\(th\).*make_figure\(th, 'pv'\)"):
        bhchem.plot_pv(rn)


def test_plot_gt_draws_one_panel_per_given_axes(figure_inputs):
    import matplotlib.figure
    from bhchem import plot_gt
    data = figure_inputs["gt"]
    fig = matplotlib.figure.Figure()
    axes = fig.subplots(1, len(data.panels))
    res = plot_gt(data, ax=axes)
    assert res.figure is fig and len(fig.axes) == len(data.panels)
    for i, ax in enumerate(axes):
        assert ax.get_xlim() == pytest.approx(data.panels[i].T_window)
    assert axes[-1].get_legend() is not None


# -- the data of every figure, beside it as CSV -------------------------------------------------
def _read_table(text):
    """CSV text of a figure table -> (comments, header, {curve: rows array})."""
    import csv
    import io
    lines = text.splitlines()
    comments = [ln[2:] for ln in lines if ln.startswith("# ")]
    reader = csv.reader(io.StringIO("\n".join(ln for ln in lines if not ln.startswith("#"))))
    header = next(reader)
    curves = {}
    for row in reader:
        curves.setdefault(row[0], []).append([float(v) for v in row[1:]])
    return comments, header, {k: np.array(v) for k, v in curves.items()}


def _drawn_figures(figure_inputs, rn):
    from bhchem.present.analysis_plots import plot_curvature, plot_cycle
    from bhchem.present.plots import PLOTTERS
    for kind in ("pv", "gt", "pt", "tr", "cp"):
        yield PLOTTERS[kind](figure_inputs[kind])
    yield plot_cycle(figure_inputs["cycle"])
    yield plot_curvature(figure_inputs["curvature"], rn)


def test_every_figure_table_holds_exactly_the_drawn_curves(figure_inputs, rn):
    """Each (n, 2) array a plot drew is in its table, bit for bit after a CSV round trip,
    under its own name, with the columns named by the kind's conventions."""
    for res in _drawn_figures(figure_inputs, rn):
        comments, header, curves = _read_table(res.table.csv())
        assert header[0] == "curve" and len(header) >= 3, res.kind
        assert "units: G = c = hbar = k_B = 1" in comments
        assert any(c.startswith(f"bhchem figure {res.kind}: rn-ads") for c in comments)
        source = res.data if res.table_data is None else res.table_data
        for name, arr in source.items():
            a = np.asarray(arr, float)
            if a.size == 0 or (a.ndim == 2 and a.shape[1] != len(header) - 1):
                continue
            a = a.reshape(-1, len(header) - 1)
            np.testing.assert_array_equal(curves[name], a, err_msg=f"{res.kind} {name}")
    pv = next(_drawn_figures(figure_inputs, rn))
    assert pv.kind == "pv" and pv.table.columns == ("curve", "v", "P")
    T0 = figure_inputs["pv"].temperatures[0]
    assert f"curve isotherm_0: T = {T0:.10g}" in " ".join(pv.table.comments)


def test_curvature_table_is_the_grid_and_the_curves(figure_inputs, rn):
    from bhchem.present.analysis_plots import plot_curvature
    cmap = figure_inputs["curvature"]
    t = plot_curvature(cmap, rn).table
    assert t.columns == ("curve", "v", "T", "R_N")
    grid = np.array([r[1:] for r in t.rows if r[0] == "R_N"])
    assert len(grid) == cmap.R_N.size
    j, i = 7, 11  # R_N[j, i] is at T[j], v[i]
    row = grid[j * len(cmap.v) + i]
    assert row[0] == cmap.v[i] and row[1] == cmap.T[j]
    assert row[2] == cmap.R_N[j, i] or (np.isnan(row[2]) and np.isnan(cmap.R_N[j, i]))


def test_save_with_table_writes_both_or_neither(figure_inputs, tmp_path):
    from bhchem.present.plots import PLOTTERS, table_path
    res = PLOTTERS["tr"](figure_inputs["tr"])
    path = save(res, tmp_path / "tr.svg", table=True)
    assert table_path(path) == str(tmp_path / "tr.csv")
    assert (tmp_path / "tr.csv").read_text() == res.table.csv()
    assert sorted(os.listdir(tmp_path)) == ["tr.csv", "tr.svg"]

    class Broken(RuntimeError):
        pass

    def fail(*a, **k):
        raise Broken("disk full")
    res.figure.savefig = fail  # the figure fails half-way: no table, no figure, no temporary
    with pytest.raises(Broken):
        save(res, tmp_path / "again.png", table=True)
    assert sorted(os.listdir(tmp_path)) == ["tr.csv", "tr.svg"]


def test_to_frame_without_pandas_is_one_clear_line(figure_inputs, monkeypatch):
    import sys
    from bhchem.errors import BhchemError
    from bhchem.present.plots import PLOTTERS
    res = PLOTTERS["cp"](figure_inputs["cp"])
    monkeypatch.setitem(sys.modules, "pandas", None)
    with pytest.raises(BhchemError, match=r"needs pandas: pip install 'bhchem\[notebook\]'"):
        res.to_frame()


def test_bundle_and_cli_figures_come_with_their_data(bundle, tmp_path, capsys):
    for kind in ("pv", "gt", "pt", "tr", "cp"):
        comments, header, curves = _read_table((bundle / f"{kind}.csv").read_text())
        assert curves and header[0] == "curve", kind
        assert not (bundle / f"{kind}.pdf.csv").exists()
    _, header, curves = _read_table((bundle / "pt.csv").read_text())
    assert header == ["curve", "T", "P"]
    line = curves["line0_first-order"]
    assert np.all(np.diff(line[:, 0]) > 0) and line[-1, 1] == pytest.approx(PC, rel=1e-6)
    out = tmp_path / "cp.png"
    assert main(["plot", "cp", "rn-ads", "-p", "Q=1", "--pressure", "0.5Pc", "-o", str(out)]) == 0
    assert f"its data {tmp_path / 'cp.csv'}" in capsys.readouterr().out
    _, header, curves = _read_table((tmp_path / "cp.csv").read_text())
    assert header == ["curve", "r_plus", "C_P"] and len(curves) >= 2
    (tmp_path / "x.csv").mkdir()  # the data file would replace a folder: refused first
    assert main(["plot", "cp", "rn-ads", "-o", str(tmp_path / "x.png")]) == 2
    assert "would replace a folder" in capsys.readouterr().err
    assert not (tmp_path / "x.png").exists()


# -- control over what is drawn ------------------------------------------------------------------
def test_pv_temperatures_absolute_or_relative_to_tc(rn):
    import bhchem
    from bhchem.errors import BhchemError
    assert bhchem.resolve_temperature(rn, "0.9Tc") == pytest.approx(0.9 * TC, rel=1e-12)
    assert bhchem.resolve_temperature(rn, 0.045) == 0.045
    for bad in ("0.9Tq", "Tc2", "-1", None):
        with pytest.raises(BhchemError):
            bhchem.resolve_temperature(rn, bad)
    res = make_figure(rn, "pv", temperatures=["1.02Tc", 0.045])  # above T_c: no equal area
    lines = [ln for ln in res.table.comments if ln.startswith("curve isotherm")]
    assert len(lines) == 2 and "T/T_c = 1.02)" in lines[0] and "T = 0.045 " in lines[1]
    v, P = res.data["isotherm_1"].T  # the drawn isotherm is the equation of state at T
    ok = np.isfinite(P)
    T = rn.T(v[ok] / 2, P[ok])  # v = 2 r+ in 4D
    np.testing.assert_allclose(T, 0.045, rtol=1e-10)


def test_axis_ranges_and_journal_width(figure_inputs, tmp_path):
    import matplotlib.image as mpimg
    from bhchem.present.plots import PLOTTERS, adjust
    res = adjust(PLOTTERS["pt"](figure_inputs["pt"]), xlim="0:0.05", ylim=(0, 0.004),
                 width="column")
    ax = res.figure.axes[0]
    assert ax.get_xlim() == (0.0, 0.05) and ax.get_ylim() == (0.0, 0.004)
    save(res, tmp_path / "pt.png")
    assert mpimg.imread(tmp_path / "pt.png").shape[1] == round(3.4 * 200)  # savefig.dpi 200
    res = adjust(PLOTTERS["gt"](figure_inputs["gt"]), width=7.0)
    save(res, tmp_path / "gt.png")
    assert mpimg.imread(tmp_path / "gt.png").shape[1] == 1400
    _nonblank(tmp_path / "gt.png")


def test_one_gt_pressure_gets_one_full_panel(rn):
    res = make_figure(rn, "gt", pressures=[0.5 * PC])
    visible = [a for a in res.figure.axes if a.get_visible()]
    assert len(visible) == 1 and not res.figure.legends
    assert visible[0].get_legend() is not None and "P/P_c=0.5" in visible[0].get_title()
    assert tuple(res.figure.get_size_inches()) == (5.2, 3.8)


@pytest.mark.parametrize("extra, message", [
    (["--width", "wide"], "use column, page or a number of inches"),
    (["--xlim", "1:0"], "needs finite A < B"),
    (["--ylim", "a:b"], "give two numbers"),
    (["--temperature", "0.9Tc", "--kind-check"], None),
])
def test_cli_plot_view_options_refused_in_one_line(extra, message, capsys, tmp_path):
    if message is None:  # --temperature on a figure without isotherms
        args = ["plot", "gt", "rn-ads", "--temperature", "0.9Tc", "-o", str(tmp_path / "f.png")]
        message = "--temperature applies to pv plots"
    else:
        args = ["plot", "pv", "rn-ads", *extra, "-o", str(tmp_path / "f.png")]
    assert main(args) == 2
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert not list(tmp_path.iterdir())


# -- overlays over a parameter ---------------------------------------------------------------------
@pytest.fixture(scope="module")
def overlays(rn):
    """tr and pv overlays of rn-ads over Q, computed once."""
    return {kind: make_figure(rn, kind, vary="Q=0.5,1", **opts) for kind, opts in
            (("tr", {"pressures": ["0.8Pc"]}), ("pv", {"temperatures": ["0.9Tc"]}))}


def _line_data(fig):
    return [np.column_stack(l.get_data()).astype(float) for a in fig.axes for l in a.get_lines()]


def test_overlay_draws_each_values_own_curves(overlays):
    """Each drawn curve equals the one computed for its value alone, at that value's own
    P_c = 1/(96 pi Q^2) and T_c = sqrt(6)/(18 pi Q) (Kubiznak & Mann 2012)."""
    from bhchem.analysis.figure_data import tr_curves
    tr, pv = overlays["tr"], overlays["pv"]
    lines = _line_data(tr.figure)
    for Q in (0.5, 1.0):
        th = bind("rn-ads", Q=Q)
        alone = tr_curves(th, pressures=[0.8 * PC / Q**2])
        branches = alone.isobars[0]
        assert alone.pressures[0] == pytest.approx(0.8 / (96 * math.pi * Q**2), rel=1e-12)
        for b in branches:
            key = f"Q={Q:g}/branch{b.index}"
            np.testing.assert_allclose(tr.data[key], b.curve, rtol=1e-12)
            assert any(l.shape == b.curve.shape and np.allclose(l, b.curve, equal_nan=True)
                       for l in lines), key
        iso = pv.data[f"Q={Q:g}/isotherm_0"]
        ok = np.isfinite(iso[:, 1])
        np.testing.assert_allclose(th.T(iso[ok, 0] / 2, iso[ok, 1]), 0.9 * TC / Q, rtol=1e-10)
        np.testing.assert_allclose(pv.data[f"Q={Q:g}/critical_point"],
                                   [2 * math.sqrt(6) * Q, PC / Q**2], rtol=1e-9)
    legend = [t.get_text() for t in tr.figure.axes[0].get_legend().get_texts()]
    assert legend[:2] == ["$Q = 0.5$, $P/P_c=0.8$", "$Q = 1$, $P/P_c=0.8$"]
    assert "rn-ads (d=4, Q varied)" == tr.figure.axes[0].get_title()


@pytest.mark.parametrize("kind", ["gt", "pt", "cp"])
def test_overlay_of_every_kind_draws_its_members(figure_inputs, kind):
    """Drawing only (the data per value is tested above): every member curve is drawn."""
    from bhchem.analysis.figure_data import OverlayData
    from bhchem.present.plots import plot_overlay
    m = figure_inputs[kind]
    res = plot_overlay(OverlayData("rn-ads", {"d": 4}, kind, "Q", (1.0, 1.5), (m, m)))
    lines = _line_data(res.figure)
    for key, arr in res.data.items():
        a = np.asarray(arr, float)
        if key.endswith(("critical_points", "triple_points")) or a.ndim != 2 or len(a) < 2:
            continue
        assert any(l.shape == a.shape and np.allclose(l, a, equal_nan=True) for l in lines), key
    assert {k.split("/")[0] for k in res.data} == {"Q=1", "Q=1.5"}
    assert len(res.table.rows) == sum(len(np.atleast_2d(v)) for v in res.data.values()
                                      if np.size(v))


def test_overlay_styles_are_per_value_and_the_same_in_every_kind(overlays):
    from matplotlib.colors import to_hex
    from bhchem.present.plots import value_style
    for res in overlays.values():
        handles = res.figure.axes[0].get_legend().legend_handles
        for j in range(2):
            assert to_hex(handles[j].get_color()) == to_hex(value_style(j)["color"])
    assert value_style(0) != value_style(1)


def test_overlay_table_names_each_curve_by_its_value(overlays):
    _, header, curves = _read_table(overlays["tr"].table.csv())
    assert header == ["curve", "r_plus", "T"]
    assert {k.split("/")[0] for k in curves} == {"Q=0.5", "Q=1"}
    assert "curve Q=1/branch0: Q = 1.0" in overlays["tr"].table.comments


@pytest.mark.parametrize("spec, message", [
    ("Q", "must look like NAME=V1,V2"), ("Q=a,b", "must look like NAME=V1,V2"),
    ("Q=0:1:20", "N from 1 to 8"), ("nope=1,2", "has no parameter 'nope'"),
])
def test_cli_vary_refused_in_one_line(spec, message, capsys, tmp_path):
    assert main(["plot", "tr", "rn-ads", "--vary", spec, "-o", str(tmp_path / "f.png")]) == 2
    err = capsys.readouterr().err
    assert message in err and len(err.strip().splitlines()) == 1
    assert not list(tmp_path.iterdir())


def test_vary_grid_spec():
    from bhchem.workflows.figures import parse_vary
    assert parse_vary("a=0:1:3") == ("a", (0.0, 0.5, 1.0))
    assert parse_vary("b=log:0.1:10:3") == ("b", pytest.approx((0.1, 1.0, 10.0)))
    assert parse_vary(("Q", [1, 2])) == ("Q", (1.0, 2.0))


def test_cp_axis_has_no_kink(figure_inputs):
    """The C_P axis is asinh (smooth): its slope is continuous where symlog's jumps."""
    from bhchem.present.plots import PLOTTERS
    data = figure_inputs["cp"]
    ax = PLOTTERS["cp"](data).figure.axes[0]
    assert ax.get_yscale() == "asinh"
    tr = ax.yaxis.get_transform()
    w, h = data.linthresh, 1e-6 * data.linthresh
    slope = [float((tr.transform([[y + h]]) - tr.transform([[y - h]]))[0, 0]) / (2 * h)
             for y in (w * 0.999, w * 1.001)]
    assert slope[0] == pytest.approx(slope[1], rel=1e-2)
    ticks = [t for t in ax.get_yticks() if t != 0]
    assert all(abs(t) >= 3 * w for t in ticks)  # no tick labels crowding the linear part


# -- reduced variables ---------------------------------------------------------------------------
def test_reduced_variables_divide_by_the_critical_point(figure_inputs, rn):
    from bhchem.analysis.figure_data import reduced
    from bhchem.present.plots import PLOTTERS
    pv = figure_inputs["pv"]
    vc, Pc = pv.critical_point
    assert vc == pytest.approx(2 * math.sqrt(6)) and Pc == pytest.approx(PC)
    red = reduced(pv)
    np.testing.assert_array_equal(red.isotherms[0], pv.isotherms[0] / np.array([vc, Pc]))
    assert red.temperatures[0] == pytest.approx(0.85)
    res = PLOTTERS["pv"](red)
    ax = res.figure.axes[0]
    assert (ax.get_xlabel(), ax.get_ylabel()) == ("$v/v_c$", "$P/P_c$")
    assert res.table.columns == ("curve", "v/v_c", "P/P_c")
    tr = reduced(figure_inputs["tr"])
    assert tr.critical_point.tolist() == [1.0, 1.0] and tr.pressures[2] == pytest.approx(1.0)
    pt = PLOTTERS["pt"](reduced(figure_inputs["pt"], rn))
    assert pt.data["critical_points"][0] == pytest.approx([1.0, 1.0], rel=1e-12)
    assert pt.table.columns == ("curve", "T/T_c", "P/P_c")
    from bhchem.errors import BhchemError
    with pytest.raises(BhchemError, match="not CycleCurves"):
        reduced(figure_inputs["cycle"])


def test_reduced_gt_and_cp_divide_by_the_critical_point(figure_inputs, rn):
    """G-T in T/T_c, G/(T_c S_c) and C_P in r/r_c, C_P/S_c, at P/P_c.  The critical point of 4D
    charged AdS (Kubiznak & Mann, JHEP 07 (2012) 033): r_c = sqrt(6) Q, T_c = sqrt(6)/(18 pi Q),
    P_c = 1/(96 pi Q^2); so S_c = pi r_c^2 = 6 pi Q^2 and T_c S_c = sqrt(6) Q/3 (derived here;
    it equals G_c, since M_c = r_c/2 + 4 pi P_c r_c^3/3 + Q^2/(2 r_c) = 2 sqrt(6) Q/3)."""
    from bhchem.analysis.figure_data import overlay_data, reduced
    from bhchem.present.plots import PLOTTERS, plot_overlay
    r_c, T_c, S_c = math.sqrt(6), math.sqrt(6) / (18 * math.pi), 6 * math.pi
    TS_c = math.sqrt(6) / 3
    gt = figure_inputs["gt"]
    red = reduced(gt, rn)
    assert red.reduced and red.P_c == 1.0
    assert [p.pressure for p in red.panels] == pytest.approx([0.5, 0.8, 1.0, 1.4], rel=1e-12)
    for p, q in zip(gt.panels, red.panels):
        for b, c in zip(p.branches, q.branches):
            np.testing.assert_allclose(c.curve, b.curve / [T_c, TS_c], rtol=1e-12)
        for a, b in zip(p.preferred, q.preferred):
            np.testing.assert_allclose(b, a / [T_c, TS_c], rtol=1e-12)
        assert q.T_window == pytest.approx((p.T_window[0] / T_c, p.T_window[1] / T_c))
    res = PLOTTERS["gt"](red)
    ax = res.figure.axes[0]
    assert (ax.get_xlabel(), ax.get_ylabel(), ax.get_title()) == ("$T/T_c$", "$G/(T_c S_c)$",
                                                                  "$P/P_c=0.5$")
    assert res.table.columns == ("curve", "T/T_c", "G/(T_c S_c)")
    cp = figure_inputs["cp"]
    red = reduced(cp, rn)
    assert red.pressure == pytest.approx(0.5, rel=1e-12)
    for b, c in zip(cp.branches, red.branches):
        np.testing.assert_allclose(c.curve, b.curve / [r_c, S_c], rtol=1e-12)
        assert c.spinodals == pytest.approx([x / r_c for x in b.spinodals], rel=1e-12)
    res = PLOTTERS["cp"](red)
    ax = res.figure.axes[0]
    assert (ax.get_xlabel(), ax.get_ylabel()) == ("$r_+/r_+^{c}$", "$C_P/S_c$")
    assert res.table.columns == ("curve", "r_plus/r_plus_c", "C_P/S_c")
    # Q only sets the scale: in these variables the G-T and C_P curves of every Q coincide
    for kind, opts, columns in (("gt", {"pressures": ["0.5Pc"]}, ("T/T_c", "G/(T_c S_c)")),
                                ("cp", {"pressure": "0.5Pc"}, ("r_plus/r_plus_c", "C_P/S_c"))):
        ov = overlay_data(rn, kind, "Q", [0.5, 2.0], reduced_units=True, **opts)
        assert "the curves coincide" in " ".join(ov.notes), kind
        assert plot_overlay(ov).table.columns == ("curve",) + columns


def test_reduced_overlay_over_a_pure_scale_is_one_curve(rn):
    """Q only sets the scale of 4D charged AdS: in reduced variables the isobars at the same
    P/P_c coincide (scale invariance, Kubiznak & Mann 2012)."""
    from bhchem.analysis.figure_data import overlay_data
    ov = overlay_data(rn, "tr", "Q", [0.5, 2.0], reduced_units=True, pressures=["0.6Pc"])
    a, b = (m.isobars[0] for m in ov.members)
    assert len(a) == len(b)
    for ba, bb in zip(a, b):
        np.testing.assert_allclose(ba.curve, bb.curve, rtol=1e-9, atol=1e-12)
    assert "the curves coincide" in " ".join(ov.notes)


def test_overlay_caption_says_when_the_values_differ_only_by_scale(rn):
    """Values that differ only by a length rescaling (equal scale-free combinations) are
    named in the caption, with the combination that stays fixed; values that change a
    scale-free combination are not.  Under q -> lambda^n q (n the length dimension) every
    combination q'/q^(n'/n) is unchanged: 4D charged AdS has Q alone; Kerr-Newman-AdS at Q = 0
    keeps Q/J^(1/2) = 0; charged Gauss-Bonnet with alpha != 0 changes alpha/Q when Q moves."""
    from bhchem.analysis.figure_data import overlay_data, scale_only_note
    from bhchem.present.plots import plot_overlay
    ov = overlay_data(rn, "gt", "Q", [0.5, 1.0, 2.0], pressures=["0.5Pc"])
    (note,) = [n for n in ov.notes if "only sets the scale" in n]
    assert note.startswith("Q only sets the scale (Q is the only dimensionful parameter)")
    assert "in reduced variables" in note
    fig = plot_overlay(ov).figure
    caption = " ".join(t.get_text() for t in fig.axes[0].texts).replace("\n", " ")
    assert "Q only sets the scale" in caption
    kn = [bind("kerr-newman-ads", J=j, Q=0.0) for j in (0.5, 2.0)]
    assert scale_only_note(kn, "J") == ("the scale-free combination Q/J^(1/2) = 0 is the same "
                                        "at every value")
    gb = [bind("gauss-bonnet-ads", d=5, alpha=0.5, Q=q) for q in (1.0, 2.0)]
    assert scale_only_note(gb, "Q") == ""
    assert scale_only_note([bind("rn-ads", Q=1.0, d=d) for d in (4, 5)], "d") == ""
    # rescaled together (alpha ~ L^2 and Q ~ L^2 in d = 5) the combination alpha/Q stays
    gb = [bind("gauss-bonnet-ads", d=5, alpha=0.5 * s, Q=s) for s in (1.0, 4.0)]
    assert scale_only_note(gb, "Q") == ("the scale-free combination alpha/Q = 0.5 is the same "
                                        "at every value")
    ov = overlay_data(rn, "tr", "Q", [0.5, 2.0], reduced_units=True, pressures=["0.6Pc"])
    assert ("the curves coincide in reduced variables: Q only sets the scale (Q is the only "
            "dimensionful parameter)") in ov.notes
