"""The tool in a notebook: rich displays (HTML, LaTeX) of bound families and results, short
plain reprs, tables as pandas DataFrames (pandas optional, imported only when asked)."""
import math
import sys

import pytest

import bhchem
from bhchem.errors import BhchemError

PC = 1 / (96 * math.pi)
TC = math.sqrt(6) / (18 * math.pi)


@pytest.fixture(scope="module")
def results():
    th = bhchem.bind("rn-ads", Q=1.0)
    cs = bhchem.find_critical_points(th)
    iso = bhchem.analyze_isobar(th, 0.5 * PC)
    cc = bhchem.coexistence_curve(th, [0.3 * PC, 0.6 * PC], critical_point=cs.physical[0])
    return th, cs, iso, cc


def test_bound_family_shows_parameters_and_equation_of_state(results):
    th = results[0]
    page = th._repr_html_()
    assert "<b>rn-ads</b>" in page and "<td>Q</td><td>1</td>" in page
    assert "states: default conditions" in page
    assert r"P = \frac{2 Q^{2}}{\pi v^{4}} + \frac{T}{v} - \frac{1}{2 \pi v^{2}}" in page
    latex = th.derivation._repr_latex_()
    assert latex.startswith(r"$\begin{aligned}") and r"S &= \pi r^{2}" in latex
    assert r"\Phi_{Q} &=" in latex and latex.endswith(r"\end{aligned}$")
    assert len(repr(th)) < 80


def test_results_show_verdict_message_and_table(results):
    _, cs, iso, cc = results
    for res in (cs, iso, cc):
        assert len(repr(res)) <= 199 and "\n" not in repr(res)
        page = res._repr_html_()
        assert page.startswith("<div><b>" + type(res).__name__) and "<table>" in page
    page = cs._repr_html_()
    assert "converged: ✔ yes" in page and "<td>standard</td>" in page
    assert f"<td>{TC:.6g}</td>" in page and f"<td>{PC:.6g}</td>" in page
    assert "<td>first-order</td><td>" in iso._repr_html_()
    assert "complete: ✔ yes" in cc._repr_html_()


def test_to_frame_is_the_table(results):
    pandas = pytest.importorskip("pandas")
    _, cs, iso, cc = results
    df = iso.to_frame()
    assert isinstance(df, pandas.DataFrame) and list(df["kind"]) == ["first-order"]
    assert df["T"][0] == iso.transitions[0].T
    df = cc.to_frame()
    assert list(df["P"]) == [p.P for p in cc.points] and len(df) == 2
    assert cs.to_frame()["P"][0] == pytest.approx(PC, rel=1e-12)


def test_to_frame_without_pandas_or_without_a_table_is_one_clear_line(results, monkeypatch):
    th, cs, _, _ = results
    monkeypatch.setitem(sys.modules, "pandas", None)
    with pytest.raises(BhchemError, match=r"^to_frame\(\) needs pandas: pip install "
                                          r"'bhchem\[notebook\]'"):
        cs.to_frame()
    with pytest.raises(BhchemError, match="FirstLawResult has no table"):
        bhchem.check_first_law(th).to_frame()
    assert "<table>" in bhchem.check_first_law(th)._repr_html_()  # its fields instead


def test_long_tables_are_cut_and_say_so():
    from bhchem.core.results import html_table
    page = html_table(("a",), [(i,) for i in range(20)])
    assert page.count("<tr>") == 1 + 12 + 1 and "… 8 more rows (to_frame() has all)" in page


def test_figure_shows_itself(results):
    res = bhchem.make_figure(results[0], "cp", pressure=0.5 * PC)
    assert res._repr_html_().startswith("<div><img src='data:image/png;base64,")
    assert len(repr(res)) <= 199
