"""Issue 21: the Python API as a notebook user meets it.

Item 2: results that rest on the first law carry a failed verdict (a ``warnings`` entry,
a WARNING line / ``warnings`` key in the CLI output and a Python warning of a named
category); residuals above their promised bound are warnings too.
"""
from __future__ import annotations

import json
import warnings
from pathlib import Path

import pytest

from bhchem import bind, load_family_file
from bhchem.analysis.coexistence_line import coexistence_curve
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.critical_branch import find_critical_points_on_branches
from bhchem.analysis.exponents import critical_exponents
from bhchem.analysis.isobar import analyze_isobar
from bhchem.analysis.phases import phase_diagram
from bhchem.cli.main import main
from bhchem.core.checks import first_law_verdict
from bhchem.declare import registry
from bhchem.errors import BhchemWarning, InconsistentFamilyWarning, ResidualBoundWarning
from bhchem.present.phase_text import diagram_json, diagram_text, isobar_json, isobar_text

ROOT = Path(__file__).resolve().parents[1]
BARDEEN = ROOT / "examples" / "families" / "bardeen_area_law.py"


@pytest.fixture(scope="module")
def bardeen():
    """Bardeen-AdS with S = pi r^2 and T from the surface gravity (metric: Tzikas, Phys.
    Lett. B 788 (2019) 219): the pair fails the first law (tests/test_checks_faults.py
    derives the size of the mismatch)."""
    with registry.registry_scope():
        (fam,) = load_family_file(BARDEEN)
        yield bind(fam)


@pytest.fixture(scope="module")
def bardeen_diagram(bardeen):
    with pytest.warns(BhchemWarning) as record:
        pd = phase_diagram(bardeen)
    return pd, [(w.category, str(w.message)) for w in record]


def _first_law(messages) -> bool:
    return any(m.startswith("the family fails the first law") for m in messages)


def test_first_law_verdict_is_computed_once_per_bound_family(bardeen):
    a = first_law_verdict(bardeen)
    assert a.holds is False
    assert first_law_verdict(bardeen) is a
    assert not any("first_law" in k for k in vars(bardeen))  # nothing stored on the object


def test_phase_diagram_of_an_inconsistent_family_warns(bardeen_diagram):
    pd, record = bardeen_diagram
    assert _first_law(pd.warnings)
    assert any(c is InconsistentFamilyWarning and _first_law([m]) for c, m in record)
    # the equal-area and Clapeyron residuals (~1e-1, promised 1e-10) are warnings, not
    # only numbers in the checks
    fo = [line for line in pd.lines if line.kind == "first-order"]
    assert fo and fo[0].checks["max_equal_area_residual"] > 1e-10
    bound = [m for m in pd.warnings if "max_equal_area_residual" in m]
    assert bound and "promised bound" in bound[0]
    assert any(c is ResidualBoundWarning and "max_clapeyron_residual" in m for c, m in record)
    assert len(pd.warnings) == len(set(pd.warnings))  # the isobars' copies are merged
    assert "WARNING: the family fails the first law" in diagram_text(pd)
    assert _first_law(diagram_json(pd)["warnings"])


def test_isobar_critical_exponents_and_coexistence_of_an_inconsistent_family_warn(bardeen):
    with pytest.warns(InconsistentFamilyWarning):
        res = analyze_isobar(bardeen, 0.5 * find_critical_points(bardeen).physical[0].P)
    assert _first_law(res.warnings)
    assert "WARNING: the family fails the first law" in isobar_text(res)
    assert _first_law(isobar_json(res)["warnings"])
    with pytest.warns(InconsistentFamilyWarning):
        search = find_critical_points_on_branches(bardeen)
    assert _first_law(search.warnings)
    cp = search.physical[0]
    with pytest.warns(InconsistentFamilyWarning):
        assert _first_law(critical_exponents(bardeen, cp).warnings)
    with pytest.warns(BhchemWarning) as record:
        curve = coexistence_curve(bardeen, [0.3 * cp.P, 0.5 * cp.P], critical_point=cp,
                                  checks=True)
    assert {w.category for w in record} == {InconsistentFamilyWarning, ResidualBoundWarning}
    assert _first_law(curve.warnings)
    assert any("max_equal_area_residual" in m for m in curve.warnings)


def test_consistent_family_gives_no_warning():
    th = bind("rn-ads", Q=1.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error", BhchemWarning)
        cp = find_critical_points_on_branches(th).physical[0]
        res = analyze_isobar(th, 0.5 * cp.P)
        curve = coexistence_curve(th, [0.3 * cp.P, 0.5 * cp.P], critical_point=cp, checks=True)
    assert res.warnings == () and curve.warnings == ()


@pytest.mark.parametrize("command", ["critical", "isobar", "phases"])
def test_cli_shows_the_failed_verdict(command, capsys):
    extra = ["--pressure", "0.5Pc"] if command == "isobar" else []
    base = [command, "bardeen-area-law", "--family-file", str(BARDEEN), *extra]
    with registry.registry_scope():
        assert main(base) == 0
        out = capsys.readouterr()
        assert "WARNING: the family fails the first law" in out.out
        assert "Warning:" not in out.err  # shown once, in the output
        assert main(base + ["--json"]) == 0
        doc = json.loads(capsys.readouterr().out)
    assert _first_law(doc["warnings"])


# -- item 5: the API validates its arguments, with one-line messages ------------------
from bhchem.analysis.critical import resolve_pressure  # noqa: E402
from bhchem.errors import BhchemError, InvalidArgumentError  # noqa: E402


@pytest.fixture(scope="module")
def rn():
    return bind("rn-ads", Q=1.0)


@pytest.mark.parametrize("call, words", [
    (lambda th: phase_diagram(th, pressure_range=(1e-3, 1e-4)), "P1 < P2"),
    (lambda th: phase_diagram(th, pressure_range=(1e-3,)), "two pressures"),
    (lambda th: analyze_isobar(th, None), "must be a number"),
    (lambda th: analyze_isobar(th, [1e-3, 2e-3]), "one pressure"),
    (lambda th: analyze_isobar(th, __import__("numpy").array([1e-3, 2e-3])), "one pressure"),
    (lambda th: analyze_isobar(th, "half"), "must look like"),
    (lambda th: analyze_isobar(th, "0.5Pc3"), "only 1 critical point"),
])
def test_bad_arguments_get_one_line_messages(rn, call, words):
    with pytest.raises(InvalidArgumentError) as info:
        call(rn)
    assert isinstance(info.value, BhchemError)
    assert isinstance(info.value, ValueError) and isinstance(info.value, TypeError)
    assert words in str(info.value) and "\n" not in str(info.value)
    assert "ufunc" not in str(info.value) and "ambiguous" not in str(info.value)


def test_relative_pressures_work_in_the_api_as_in_the_cli(rn):
    Pc = find_critical_points(rn).physical[0].P
    assert resolve_pressure(rn, "0.5Pc") == 0.5 * Pc
    assert resolve_pressure(rn, "Pc") == Pc
    assert analyze_isobar(rn, "0.5Pc").pressure == 0.5 * Pc
    pd = phase_diagram(rn, pressure_range=("0.1Pc", "2Pc"), n_anchor=8, n_dense=8)
    assert pd.pressure_range == (0.1 * Pc, 2 * Pc)


def test_the_cli_uses_the_api_pressure_parser(rn, capsys):
    assert main(["isobar", "rn-ads", "-p", "Q=1", "--pressure", "0.5Pc", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["pressure"] == resolve_pressure(rn, "0.5Pc")
    assert main(["isobar", "rn-ads", "--pressure", "0.5Pc3"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "only 1 critical point" in err


# -- item 7: every result type has a short repr and a JSON-ready to_dict() ----------------
import bhchem  # noqa: E402
from bhchem.analysis import curvature, engines, expansion, figure_data, response  # noqa: E402
from bhchem.present.serialize import to_json  # noqa: E402


def _strict(text: str):
    def refuse(token):
        raise ValueError(f"non-standard JSON token {token}")
    return json.loads(text, parse_constant=refuse)


def _results(th):
    """One instance of every result type, on the 4D charged AdS black hole."""
    cp = find_critical_points(th).physical[0]
    P = 0.5 * cp.P
    curve = coexistence_curve(th, [0.3 * cp.P, P], critical_point=cp, checks=True)
    pd = phase_diagram(th, n_anchor=8, n_dense=8)
    v = lambda T: float(th.V(cp.x, cp.P))  # noqa: E731
    corners = [(P, 0.6 * v(0)), (P, 3 * v(0)), (0.3 * cp.P, 3 * v(0)), (0.3 * cp.P, 0.6 * v(0))]
    return [
        bhchem.check_first_law(th), bhchem.check_smarr(th), find_critical_points(th), cp,
        critical_exponents(th, cp), analyze_isobar(th, P), curve, curve.points[0], pd,
        pd.lines[0], bhchem.critical_scan("rn-ads", "Q", [0.5, 1.0]),
        figure_data.pv_curves(th), figure_data.gt_curves(th), figure_data.pt_diagram(th, pd),
        figure_data.tr_curves(th), figure_data.cp_curves(th),
        bhchem.make_figure(th, "gt"), response.along_isobar(th, P, n=100),
        curvature.critical_amplitude(th), curvature.curvature_map(th, nx=20, nT=20,
                                                                  with_amplitude=False),
        engines.analyze_cycle(th, corners), expansion.inversion_curve(th, n_P=20),
        expansion.joule_thomson_expansion(th, masses=[2.0]),
    ]


@pytest.mark.slow
def test_every_result_has_a_short_repr_and_a_strict_json_dict(rn):
    kinds = set()
    for res in _results(rn):
        text = repr(res)
        assert len(text) < 200 and "\n" not in text, text
        assert text.startswith(type(res).__name__ + "(")
        doc = res.to_dict()
        assert isinstance(doc, dict)
        _strict(to_json(doc))
        kinds.add(type(res).__name__)
    assert len(kinds) == 23


# -- item 8: the default G-T axes contain every cusp of the swallowtails they show --------
def _cusps(th, P):
    """Spinodal temperatures (the swallowtail's cusps: a locally stable branch meets an
    unstable one there, C_P changes sign) of the isobar at P."""
    res = analyze_isobar(th, P, warn=False)
    by_index = {b.index: b for b in res.branches}
    out = []
    for b in res.branches:
        for side, (end, T) in enumerate(zip(b.ends, (b.T_at_x_min, b.T_at_x_max))):
            if end != "spinodal" or not T > 0:
                continue
            other = by_index.get(b.index + (1 if side else -1))
            assert other is not None and other.stable != b.stable  # a stable-unstable pair
            out.append(T)
    return sorted(set(out))  # each cusp ends two branches


def _assert_cusps_inside(th, panels):
    n = 0
    for panel in panels:
        lo, hi = panel.T_window
        for T in _cusps(th, panel.pressure):
            assert lo <= T <= hi, (panel.pressure, T, panel.T_window)
            n += 1
    return n


def test_gt_window_contains_the_cusps_rn_ads(rn):
    P = resolve_pressure(rn, "0.5Pc")
    assert _assert_cusps_inside(rn, figure_data.gt_curves(rn, [P]).panels) == 2


def test_gt_window_contains_the_cusps_bardeen(bardeen):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", BhchemWarning)  # the family is inconsistent on purpose
        panels = figure_data.gt_curves(bardeen).panels
    assert _assert_cusps_inside(bardeen, panels) >= 2
