"""The notebook gallery (examples/*.ipynb) runs, cell by cell, in a Jupyter kernel on every
suite run (nbclient; a failing cell fails its test), and computes what the papers say.

The kernel is ``python3``: ipykernel's own kernelspec, which starts the interpreter running
the tests (checked in every test by a cell appended in memory).  The notebooks are stored
without outputs (checked too).  No time limit is set on a cell: nothing here depends on
elapsed time.
"""
import math
import re
import sys
from pathlib import Path

import pytest

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")
pytest.importorskip("ipykernel")

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
NOTEBOOKS = sorted(p.name for p in EXAMPLES.glob("*.ipynb"))


def test_the_gallery_is_there_and_stored_without_outputs():
    assert NOTEBOOKS == ["01_new_family_from_a_file.ipynb",
                         "02_critical_points_and_exponents.ipynb",
                         "03_phase_diagram_with_a_triple_point.ipynb",
                         "04_scan_over_a_coupling.ipynb", "05_beyond_equilibrium.ipynb"]
    for name in NOTEBOOKS:
        nb = nbformat.read(EXAMPLES / name, as_version=4)
        nbformat.validate(nb)
        assert nb.metadata.kernelspec.name == "python3"
        for cell in nb.cells:
            if cell.cell_type == "code":
                assert cell.outputs == [] and cell.execution_count is None, name
    readme = (EXAMPLES.parent / "README.md").read_text()
    for name in NOTEBOOKS:
        assert f"(examples/{name})" in readme, f"the README does not link {name}"


def execute(name):
    """Run a notebook in the examples folder (its relative paths work as in Jupyter);
    return the executed notebook, its printed text and its rich outputs (HTML)."""
    nb = nbformat.read(EXAMPLES / name, as_version=4)
    nb.cells.append(nbformat.v4.new_code_cell("import sys; print('KERNEL', sys.executable)"))
    client = nbclient.NotebookClient(nb, kernel_name="python3", timeout=None,
                                     startup_timeout=600,
                                     resources={"metadata": {"path": str(EXAMPLES)}})
    client.execute()   # raises CellExecutionError, naming the cell, when a cell fails
    text, rich = [], []
    for cell in nb.cells:
        for out in cell.get("outputs", ()):
            if out.output_type == "stream" and out.name == "stdout":
                text.append(out.text)
            elif out.output_type in ("execute_result", "display_data"):
                rich.append(out.data.get("text/html", "") +
                            ("<widget>" if "application/vnd.jupyter.widget-view+json"
                             in out.data else ""))
    text = "".join(text)
    assert f"KERNEL {sys.executable}\n" in text   # the kernel is this interpreter
    return nb, text, rich


def number(pattern, text):
    m = re.search(pattern, text)
    assert m, f"no match for {pattern!r} in the notebook's output:\n{text}"
    return float(m.group(1))


def rel(a, b):
    return abs(a / b - 1)


def check_new_family(text, rich):
    assert text.count("holds") >= 2 and "3 Phi_mu mu" in text
    # the toy family's critical point, derived here independently with sympy from its
    # equation of state P = T/v - 1/(2 pi v^2) + 2 Q^2/(pi v^4) + 8 mu/(pi v^5) (Q=1, mu=0.1):
    # dP/dv = d2P/dv2 = 0
    import sympy as sp
    T, v = sp.symbols("T v", positive=True)
    Q, mu = 1, sp.Rational(1, 10)
    P = T / v - 1 / (2 * sp.pi * v**2) + 2 * Q**2 / (sp.pi * v**4) + 8 * mu / (sp.pi * v**5)
    Tv = sp.solve(sp.diff(P, v), T)[0]
    vc = [r for r in sp.Poly(sp.numer(sp.together(sp.diff(P, v, 2).subs(T, Tv))), v)
          .nroots(n=30) if r.is_real and r > 0]
    (vc,) = vc
    Tc = float(Tv.subs(v, vc))
    assert any(f"<td>{Tc:.6g}</td>" in page for page in rich), Tc
    assert any("<img src='data:image/png;base64," in page for page in rich)  # the figure


def check_critical(text, rich):
    Q = 2.0  # Kubiznak & Mann, JHEP 07 (2012) 033: T_c, v_c, P_c of 4D charged AdS
    paper = {"T_c": math.sqrt(6) / (18 * math.pi * Q), "v_c": 2 * math.sqrt(6) * Q,
             "P_c": 1 / (96 * math.pi * Q**2)}
    for name, value in paper.items():
        assert rel(number(rf"{name} = (\S+)", text), value) < 1e-12
    assert rel(number(r"P_c v_c / T_c = (\S+)", text), 3 / 8) < 1e-12
    assert "'beta': '1/2'" in text and "'delta': '3'" in text   # mean-field, exact
    assert abs(number(r"fitted beta: (\S+)", text) - 0.5) < 1e-3
    assert abs(number(r"fitted delta: (\S+)", text) - 3) < 1e-3
    # Born-Infeld above bQ = 1/sqrt(8): two critical points, one on the preferred branch
    # (Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110)
    assert text.count("on the preferred branch: True") == 1
    assert text.count("on the preferred branch: False") == 1


def check_triple_point(text, rich):
    # Wei & Liu, PRD 90 (2014) 044057: a triple point inside their charge window
    assert "phases small, intermediate, large" in text
    assert number(r"spread of T: (\S+),", text) <= 1e-12
    assert number(r"of G: (\S+)", text) <= 1e-12
    assert "structure: multiple-critical-points+triple-point" in text
    assert sum("<img src='data:image/png;base64," in page for page in rich) == 2


def check_scan(text, rich):
    # mu = 0 is 4D charged AdS: T_c Q = sqrt(6)/(18 pi) (Kubiznak & Mann 2012)
    assert rel(number(r"mu = 0\.00:  T_c = (\S+)", text), math.sqrt(6) / (18 * math.pi)) < 1e-7
    assert rel(number(r"mu = 0\.00: vdw-like, T_c Q = (\S+)", text),
               math.sqrt(6) / (18 * math.pi)) < 1e-7
    assert "P_c v_c/T_c = 0.375000" in text
    # T_c falls with the halo coupling (the row at mu = 1 below the one at mu = 0.5)
    assert number(r"mu = 1\.00:  T_c = (\S+)", text) < number(r"mu = 0\.50:  T_c = (\S+)", text)
    assert "Q only sets the scale" in text
    # the atlas showed its progress as a notebook bar (HTML or tqdm's widget), not as text
    assert any("<progress" in page or "<widget>" in page for page in rich)
    assert "scan:" not in text


def check_beyond(text, rich):
    # T_i,min/T_c = 1/2 (Okcu & Aydiner, EPJC 77 (2017) 24)
    assert abs(number(r"T_i,min / T_c = (\S+)", text) - 0.5) < 1e-6
    # R_N (1 - T/T_c)^2 -> -1/8 on both branches (Wei, Wei & Liu 2019, from memory)
    assert abs(number(r"small branch (\S+),", text) + 0.125) < 1e-4
    assert abs(number(r"large branch (\S+) ", text) + 0.125) < 1e-4
    # RN-AdS: W = 1, class W^{1+}; the critical point is conventional, charge -1
    # (Wei, Liu & Mann, PRL 129 (2022) 191101; Wei & Liu, PRD 105 (2022) 104003)
    assert "class W^{1+}, W = 1" in text and "critical point charge: -1" in text
    assert "first-order transition temperature" in text
    assert any("FirstPassage" in page for page in rich)


CHECKS = {"01_new_family_from_a_file.ipynb": check_new_family,
          "02_critical_points_and_exponents.ipynb": check_critical,
          "03_phase_diagram_with_a_triple_point.ipynb": check_triple_point,
          "04_scan_over_a_coupling.ipynb": check_scan,
          "05_beyond_equilibrium.ipynb": check_beyond}


@pytest.mark.parametrize("name", NOTEBOOKS)
def test_notebook_runs_and_computes_what_the_papers_say(name):
    _, text, rich = execute(name)
    CHECKS[name](text, rich)
