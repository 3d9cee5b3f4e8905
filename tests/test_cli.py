"""The command line: output contracts and one-line errors with exit code 2."""
import json
import subprocess
import sys

import pytest

from bhchem.cli.main import main


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_families_lists_bundled(capsys):
    code, out, _ = run(capsys, "families")
    assert code == 0
    for name in ("rn-ads", "schwarzschild-ads", "vdw-fluid"):
        assert name in out
    code, out, _ = run(capsys, "families", "--json")
    assert "rn-ads" in json.loads(out)


def test_show_text(capsys):
    code, out, _ = run(capsys, "show", "rn-ads", "-p", "Q=1")
    assert code == 0
    assert "T            = 2*P*r - Q**2/(4*pi*r**3) + 1/(4*pi*r)" in out
    assert "First law    holds" in out and "Smarr        holds: M = 2 T S - 2 P V + Phi_Q Q" in out


def test_show_json_contract(capsys):
    code, out, _ = run(capsys, "show", "rn-ads", "-p", "Q=2,d=5", "--json")
    assert code == 0
    doc = json.loads(out)
    for key in ("family", "parameters", "convention", "quantities", "first_law", "smarr"):
        assert key in doc
    assert doc["family"] == "rn-ads"
    assert doc["parameters"]["Q"] == {"value": 2.0, "dimension": "L^2", "domain": "Q >= 0"}
    assert doc["parameters"]["d"]["value"] == 5
    assert set(doc["quantities"]["T"]) >= {"sympy", "latex"}
    assert doc["first_law"]["holds"] is True and doc["first_law"]["max_residual"] < 1e-9
    assert doc["smarr"]["holds"] is True and doc["smarr"]["missing"] == []
    assert doc["smarr"]["relation"] == "2 M = 3 T S - 2 P V + 2 Phi_Q Q"
    assert "pressure" in doc["convention"]


def test_show_fluid_smarr_not_applicable(capsys):
    code, out, _ = run(capsys, "show", "vdw-fluid", "--json")
    doc = json.loads(out)
    assert doc["smarr"]["holds"] is None and "not applicable" in doc["smarr"]["message"]


@pytest.mark.parametrize("argv, match", [
    (["show", "no-such"], "unknown family 'no-such'; known families"),
    (["show", "rn-ads", "-p", "X=1"], "has no parameter 'X'"),
    (["show", "rn-ads", "-p", "Q=-1"], "Q = -1 is outside its domain Q >= 0"),
    (["show", "rn-ads", "-p", "d=3"], "d = 3 is outside its domain 4 <= d <= 26"),
    (["show", "rn-ads", "-p", "d=4.5"], "outside its domain 4 <= d <= 26, integer"),
    (["show", "rn-ads", "-p", "d=1e308"], "outside its domain"),
    (["show", "rn-ads", "-p", "Q=nan"], "outside its domain"),
    (["show", "rn-ads", "-p", "Q=inf"], "outside its domain"),
    (["show", "rn-ads", "-p", "Q=abc"], "not a number"),
    (["show", "rn-ads", "-p", "Q"], "must look like NAME=VALUE"),
    (["show", "rn-ads", "-p", "Q=1", "-p", "Q=2"], "given twice"),
    (["show", "rn-ads", "--family-file", "/nonexistent/f.py"], "no such file"),
    (["nonsense"], "invalid choice"),
    (["show"], "required"),
])
def test_bad_input_one_line_exit_2(capsys, argv, match):
    code, out, err = run(capsys, *argv)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("bhchem: error: ")
    assert match in lines[0] or __import__("re").search(match, lines[0])
    assert "Traceback" not in err


def test_console_script_subprocess_no_traceback(tmp_path):
    bad = tmp_path / "broken.py"
    bad.write_text("FAMILY = ")
    proc = subprocess.run([sys.executable, "-m", "bhchem", "show", "x", "--family-file",
                           str(bad)], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr
    assert str(bad) in proc.stderr and "syntax error" in proc.stderr


def test_plugin_file_via_cli(tmp_path, capsys):
    path = tmp_path / "cli_family.py"
    path.write_text(
        "from bhchem import Domain, Family, Parameter\n"
        "from bhchem.declare.symbols import P, parameter_symbol, pi, r\n"
        "FAMILY = Family(name='cli-plugin-family', summary='plug-in', reference='none',\n"
        "                enthalpy=r / 2 * (1 + 8 * pi * P * r**2 / 3), entropy=pi * r**2)\n")
    code, out, err = run(capsys, "show", "cli-plugin-family", "--family-file", str(path), "--json")
    assert code == 0, err
    assert json.loads(out)["smarr"]["holds"] is True


def test_analysis_commands_through_main(capsys, tmp_path):
    """expansion / engine / curvature are wired into the main CLI: JSON keys and one-line errors."""
    assert main(["expansion", "rn-ads", "-p", "Q=1", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert set(doc) >= {"inversion", "isenthalps", "convention"}
    assert doc["inversion"]["ratio_to_Tc"] == pytest.approx(0.5, rel=1e-10)
    assert main(["engine", "rn-ads", "-p", "Q=1", "--cycle", "0.01,400 0.01,600 0.005,600 0.005,400",
                 "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert set(doc) >= {"work", "heat_in", "heat_out", "efficiency", "carnot", "T_hot", "T_cold"}
    assert doc["efficiency"] < doc["carnot"]
    assert main(["engine", "rn-ads", "--cycle", "1,2 3"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
