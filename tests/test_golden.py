"""Golden outputs: the JSON of ``show``, ``critical``, ``isobar`` (at 0.5 P_c, or a fixed P
where there is no critical point) and ``phases`` for every bundled family, recorded with
version 0.1 before the 0.2 layout moved any code (``tests/golden/*.json``).

The layout change must not change a result.  Differences allowed, each an intended
contract fix of 0.2, and nothing else:

* the non-standard token ``NaN`` of 0.1 is ``null`` now (strict JSON);
* keys that 0.1 lacked may be added (listed in ``ADDED_KEYS``; e.g. ``convention`` on
  every result), never removed or renamed;
* numbers agree to a relative 1e-9 (the promised residual bound of the analyses; the
  shared numerical kernels of 0.2 may round differently in the last digits);
* from the domain assumptions of 0.2 (a parameter declared >= 0 is nonnegative in the
  derivation): a printed quantity may take another form if it is the same function (checked
  at random points), and a verdict message may differ in its residual's rounding;
* from the phase-diagram fix that lands with 0.2 (lines located from scalar event functions
  along P): a residual (a key naming one) only has to stay within the promised bound 1e-9,
  since it is rounding noise of order 1e-15 either way; a number that was rounding noise
  (|x| < 1e-13, e.g. the lower end of a branch's temperature range, now exactly 0 where a
  branch starts at T = 0) may now be exactly 0; and ``regions[*].sample`` (a representative
  state inside each region, not a result) may be another state of the same region;
* from the isobar fix of issue 20 (poles of T, and G sampled densely at the ends of each
  branch): an isobar no longer lists the cusp of a swallowtail -- the spinodal where two
  branches *meet* and so have equal G -- as a G-T crossing (``drop_cusps``: a listed crossing
  whose T is a spinodal end of both branches named); and two numbers that are both rounding
  noise around zero (|x| < 1e-13) may differ.

To re-record after a deliberate change of results, run ``python tests/test_golden.py``
and say in the commit what changed and why.

Re-recorded since: the ``phases`` files (issue 18), when each region gained its ``name`` --
the name the text and the P-T figure give it (``supercritical`` for the one-branch phase
above a critical point) -- beside ``phase``; no number changed beyond the rounding noise
allowed above.
"""
from __future__ import annotations

import io
import json
import math
import re
import sys
from contextlib import redirect_stdout
from pathlib import Path

import pytest

from bhchem.cli.main import main

GOLDEN = Path(__file__).resolve().parent / "golden"
FAMILIES = ("schwarzschild-ads", "rn-ads", "born-infeld-ads", "gauss-bonnet-ads",
            "lovelock3-ads", "kerr-newman-ads", "kerr-ads", "vdw-fluid")
COMMANDS = ("show", "critical", "isobar", "phases")
#: keys a 0.2 result may carry that 0.1 did not (intended additions)
ADDED_KEYS = {"convention", "non_finite", "warnings", "admissibility", "excluded",
              "conditions", "condition_sets",
              "ensemble", "topological_charge", "end_explanation", "polynomial",
              "converged", "nearby_system", "note", "events", "phases", "event",
              "isoperimetric", "critical_polynomial"}
#: promised bound of every residual the analyses report (README, "Numerical guarantees")
RESIDUAL_BOUND = 1e-9
#: below this a 0.1 number was rounding noise around zero
NOISE = 1e-13
RTOL = 1e-9


def argv(family: str, command: str) -> list[str]:
    args = [command, family, "--json"]
    if command == "isobar":
        args += ["--pressure", "0.01" if family == "schwarzschild-ads" else "0.5Pc"]
    return args


def run(family: str, command: str) -> str:
    buf = io.StringIO()
    with redirect_stdout(buf):
        code = main(argv(family, command))
    assert code == 0
    return buf.getvalue()


_NUMBER = re.compile(r"\d\.\de[-+]\d\d")
_STATE_NAMES = ("r", "S", "v")


def same_expression(old: str, new: str) -> bool:
    """Two printed sympy expressions are the same function: equal at random points (state
    variable in (5, 10), everything else in (1, 2); the family's parameters are declared with
    domains that 0.2 turns into assumptions, which removes Abs and reorders terms)."""
    import random

    import sympy as sp
    def parse(text):
        # every bare name is a plain symbol (sympy's own Q, S, E, I ... are not meant)
        names = set(re.findall(r"\b([A-Za-z_]\w*)\b(?!\s*\()", text)) - {"pi"}
        return sp.sympify(text, locals={n: sp.Symbol(n) for n in names})
    try:
        a, b = parse(old), parse(new)
    except (sp.SympifyError, TypeError, SyntaxError, ValueError):
        return False
    rng = random.Random(1)
    names = sorted({s.name for s in a.free_symbols | b.free_symbols})
    for _ in range(4):
        vals = {n: rng.uniform(5, 10) if n in _STATE_NAMES else rng.uniform(1, 2) for n in names}
        sa = {s: vals[s.name] for s in a.free_symbols}
        sb = {s: vals[s.name] for s in b.free_symbols}
        va, vb = complex(a.evalf(30, subs=sa)), complex(b.evalf(30, subs=sb))
        if abs(va - vb) > 1e-10 * max(abs(va), abs(vb), 1e-300):
            return False
    return True


def compare(old, new, path="$") -> list[str]:
    """Differences between a 0.1 golden value and a 0.2 value, as readable lines."""
    if ".quantities." in path and path.endswith(".latex"):
        return []                        # follows the .sympy form, checked next to it
    if ".quantities." in path and path.endswith(".sympy") and isinstance(old, str):
        return [] if old == new or same_expression(old, new) else [
            f"{path}: {old!r} -> {new!r} (not the same function)"]
    if path.endswith(".message") and isinstance(old, str) and isinstance(new, str):
        if _NUMBER.sub("#", old) == _NUMBER.sub("#", new):
            return []                    # the same verdict; residuals differ in rounding
    if path.endswith(".sample") and ".regions[" in path:
        return []
    if ("residual" in path.rsplit(".", 1)[-1] and isinstance(old, float)
            and isinstance(new, float) and not math.isnan(old)):
        ok = (abs(old) <= RESIDUAL_BOUND) == (abs(new) <= RESIDUAL_BOUND)
        return [] if ok else [f"{path}: {old!r} -> {new!r} (across the promised bound)"]
    if isinstance(old, float) and isinstance(new, float) and abs(old) < NOISE \
            and abs(new) < NOISE:
        return []
    if isinstance(old, float) and math.isnan(old):
        return [] if new is None or (isinstance(new, float) and math.isnan(new)) else [
            f"{path}: NaN became {new!r}"]
    if isinstance(old, bool) or old is None or isinstance(old, str):
        return [] if old == new else [f"{path}: {old!r} -> {new!r}"]
    if isinstance(old, (int, float)):
        if not isinstance(new, (int, float)) or isinstance(new, bool):
            return [f"{path}: {old!r} -> {new!r}"]
        if old == new or abs(new - old) <= RTOL * max(abs(old), abs(new)):
            return []
        return [f"{path}: {old!r} -> {new!r}"]
    if isinstance(old, list):
        if not isinstance(new, list) or len(new) != len(old):
            return [f"{path}: list of {len(old)} -> "
                    f"{len(new) if isinstance(new, list) else type(new).__name__}"]
        return [d for i, (a, b) in enumerate(zip(old, new)) for d in compare(a, b, f"{path}[{i}]")]
    if isinstance(old, dict):
        if not isinstance(new, dict):
            return [f"{path}: object -> {type(new).__name__}"]
        out = [f"{path}: key {k!r} removed" for k in old if k not in new]
        out += [f"{path}: key {k!r} added" for k in new if k not in old and k not in ADDED_KEYS]
        for k in old:
            if k in new:
                out += compare(old[k], new[k], f"{path}.{k}")
        return out
    return [f"{path}: unexpected type {type(old).__name__}"]


@pytest.mark.parametrize("family", FAMILIES)
@pytest.mark.parametrize("command", COMMANDS)
def test_output_matches_the_recorded_golden_file(family, command):
    text = run(family, command)
    new = json.loads(text, parse_constant=lambda c: pytest.fail(f"non-standard JSON {c}"))
    old = json.loads((GOLDEN / f"{family}.{command}.json").read_text())
    if command == "isobar":
        old = drop_cusps(old)
    diffs = compare(old, new)
    assert not diffs, f"{len(diffs)} difference(s):\n" + "\n".join(diffs[:30])


def drop_cusps(doc: dict) -> dict:
    """The 0.1 isobar record without crossings at a swallowtail's cusp (see module
    docstring), with the count in its message adjusted."""
    ends = {}
    for b in doc["branches"]:
        for T, kind in zip(b["T_range"], b["ends"]):
            if kind == "spinodal":
                ends.setdefault(b["label"], []).append(T)

    def cusp(c):
        return all(any(abs(c["T"] - T) <= 1e-12 * abs(T) for T in ends.get(name, ()))
                   for name in c["between"])
    kept = [c for c in doc["crossings"] if not cusp(c)]
    out = dict(doc, crossings=kept)
    out["message"] = re.sub(r"\d+ G-T crossing", f"{len(kept)} G-T crossing", doc["message"])
    return out


def test_the_comparison_is_not_vacuous():
    assert compare({"a": 1.0, "b": [1, 2]}, {"a": 1.0 + 1e-6, "b": [1, 2]})
    assert compare({"a": 1.0}, {})
    assert compare({"a": 1.0}, {"a": 1.0, "z": 2})
    assert compare({"a": [1, 2]}, {"a": [1]})
    assert compare({"a": "first-order"}, {"a": "zeroth-order"})
    assert not compare({"a": float("nan"), "b": 2.0}, {"a": None, "b": 2.0 * (1 + 1e-12),
                                                       "convention": {}})
    assert compare({"max_residual": 1e-16}, {"max_residual": 1e-6})   # across the bound
    assert not compare({"max_residual": 1e-16}, {"max_residual": 3e-16})
    assert compare({"T": 1e-3}, {"T": 0.0})                              # not noise
    assert same_expression("Q*Abs(b)/r", "Q*b/r")                       # b > 0 in the test
    assert not same_expression("Q*b/r", "Q*b/r**2")
    assert compare({"quantities": {"T": {"sympy": "1/r"}}}, {"quantities": {"T": {"sympy": "2/r"}}})


if __name__ == "__main__":  # re-record (see the module docstring)
    for fam in FAMILIES:
        for cmd in COMMANDS:
            (GOLDEN / f"{fam}.{cmd}.json").write_text(run(fam, cmd))
    print(f"recorded {len(FAMILIES) * len(COMMANDS)} files in {GOLDEN}", file=sys.stderr)
