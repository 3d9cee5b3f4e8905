"""Fuzzed CLI input, numerical edge cases, deterministic output."""
import json
import math
import os
import subprocess
import sys

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bhchem import bind
from bhchem.cli.main import main
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.isobar import analyze_isobar

NASTY = ["nan", "NaN", "inf", "-inf", "1e308", "-1e308", "1e-400", "-0", "0", "", " ", "１",
         "٣", "0x10", "1_000", "1e", "--1", "Q", "=", "é", "😀", "1,2", "None", "1e309",
         "4.0000000000000001", "3.9999999999999999"]


def run(capsys, argv):
    try:
        code = main(argv)
    except SystemExit as exc:  # --help and friends
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


def _ok(code, err):
    assert code in (0, 2), (code, err)
    assert "Traceback" not in err and "internal error" not in err, err
    if code == 2:
        assert err.count("\n") == 1 and err.startswith("bhchem: error: "), err


@pytest.mark.parametrize("value", NASTY)
@pytest.mark.parametrize("cmd", [["show", "rn-ads", "-p"], ["critical", "rn-ads", "-p"]])
def test_parameter_values(capsys, cmd, value):
    code, out, err = run(capsys, cmd + [f"Q={value}"])
    _ok(code, err)


@pytest.mark.parametrize("value", NASTY + ["0.5Pc", "Pc", "0.5Pc9", "xPc", "1e-300"])
def test_pressures(capsys, value):
    code, out, err = run(capsys, ["isobar", "rn-ads", "--pressure", value])
    _ok(code, err)


@pytest.mark.parametrize("d", NASTY + ["4", "11", "4.5"])
def test_dimension_values(capsys, d):
    code, out, err = run(capsys, ["critical", "rn-ads", "-p", f"d={d}", "--json"])
    _ok(code, err)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.text(max_size=12))
def test_random_parameter_text(value):
    """Any text as a parameter value ends in a result or one clean line (exit 2)."""
    import contextlib
    import io
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        code = main(["show", "schwarzschild-ads", "-p", f"d={value}"])
    _ok(code, err.getvalue())


@pytest.mark.parametrize("content", ["", "\x00\x01\x02", "FAMILY = None", "import sys; sys.exit(3)",
                                     "from bhchem import Family\nFAMILY = Family()",
                                     "\ufeffFAMILY = 1", "def f(:\n"])
def test_garbage_python_family_files(capsys, tmp_path, content):
    path = tmp_path / "garbage.py"
    path.write_bytes(content.encode("utf-8", "surrogatepass"))
    code, out, err = run(capsys, ["show", "x", "--family-file", str(path)])
    assert code == 2
    _ok(code, err)


# -- numerical edge cases ------------------------------------------------------------------------
@pytest.mark.parametrize("Q", [1e-8, 1e-4, 1.0, 1e4, 1e8])
def test_charges_over_sixteen_decades(Q):
    """Relative accuracy does not degrade with the charge (Kubiznak & Mann 2012 closed form)."""
    (cp,) = find_critical_points("rn-ads", Q=Q).physical
    assert cp.T == pytest.approx(math.sqrt(6) / (18 * math.pi * Q), rel=1e-12)
    assert cp.P == pytest.approx(1 / (96 * math.pi * Q**2), rel=1e-12)
    assert cp.v == pytest.approx(2 * math.sqrt(6) * Q, rel=1e-12)


@pytest.mark.parametrize("frac", [1e-12, 1e-6, 1.0 - 1e-6, 1.0, 1.0 + 1e-9, 1e3, 1e6])
def test_pressures_from_1e_minus_12_to_1e6_Pc(frac):
    th = bind("rn-ads", Q=1.0)
    Pc = 1 / (96 * math.pi)
    res = analyze_isobar(th, frac * Pc, critical_points=find_critical_points(th).physical)
    kinds = [t.kind for t in res.transitions]
    if frac < 1:
        assert kinds == ["first-order"]
        p = frac
        T = math.sqrt(6) / (18 * math.pi) * math.sqrt(p * (3 - math.sqrt(p)) / 2)
        assert res.transitions[0].T == pytest.approx(T, rel=1e-9)
    elif frac == 1.0:
        assert kinds == ["second-order"]
    else:
        assert kinds == []


def test_temperatures_within_1e_minus_10_of_Tc():
    """1 - T/T_c ~ 1e-10: the near-critical solver returns an accurate T or nothing."""
    from bhchem.analysis.coexistence import coexistence_near_critical
    th = bind("rn-ads", Q=1.0)
    cp = find_critical_points(th).points[0]
    for s in (3e-10, 1e-10):
        res = coexistence_near_critical(th, cp.x, cp.P, cp.P * (1 - s))
        if res is not None:
            p = 1 - s
            assert res[0] == pytest.approx(cp.T * math.sqrt(p * (3 - math.sqrt(p)) / 2), rel=1e-12)


@pytest.mark.parametrize("d", range(4, 12))
def test_dimensions_4_to_11(d):
    """rho_c = (2d-5)/(4d-8) (Gunasekaran, Kubiznak & Mann 2012) up to d = 11."""
    (cp,) = find_critical_points("rn-ads", Q=0.7, d=d).physical
    assert cp.ratio == pytest.approx((2 * d - 5) / (4 * d - 8), rel=1e-12)


def test_coupling_exactly_at_window_boundary():
    """bQ = 1/sqrt(8) exactly, where two Born-Infeld critical points are born together: no
    crash, and any point reported satisfies the critical equations."""
    s = find_critical_points("born-infeld-ads", b=1 / math.sqrt(8), Q=1.0)
    assert s.converged
    assert len(s.physical) in (0, 1, 2)


# -- determinism ------------------------------------------------------------------------------------
@pytest.mark.parametrize("argv", [["critical", "born-infeld-ads", "-p", "b=0.4", "--json"],
                                  ["phases", "rn-ads", "--json", "--quiet"],
                                  ["isobar", "gauss-bonnet-ads", "--pressure", "0.5Pc", "--json"]])
@pytest.mark.slow
def test_same_command_same_bytes(argv):
    env = dict(os.environ, SOURCE_DATE_EPOCH="1700000000")
    outs = [subprocess.run([sys.executable, "-m", "bhchem", *argv], capture_output=True,
                           env=env, timeout=600).stdout for _ in range(2)]
    assert outs[0] == outs[1] and len(outs[0]) > 100
    json.loads(outs[0])
