"""Holographic heat engines (bhchem.analysis.engines).

Sources: Johnson, CQG 31 (2014) 205002, arXiv:1404.5982 (holographic heat engines; for
static holes C_V = 0, so isochores are adiabats and the Carnot cycle is isotherm-isochore-
isotherm-isochore; arXiv id from memory); Johnson, Entropy 18 (2016) 120, arXiv:1602.02838
(exact rectangle efficiency eta = 1 - (M3 - M4)/(M2 - M1), corners 1 top-left, 2 top-right,
3 bottom-right, 4 bottom-left; abstract verified, the labelling re-derived in
chemistry/engines.py); Schwarzschild-AdS in closed form (Hawking & Page 1983; M = r/2 (1 +
8 pi P r^2/3), V = 4 pi r^3/3); the Carnot efficiency and the first law on a cycle
(exact).
"""
import argparse
import json
import math

import pytest

from bhchem import bind
from bhchem.analysis.engines import CycleError, analyze_cycle
from bhchem.cli.analyses import parse_cycle
from bhchem.errors import BhchemError, StateDomainError

Q = 1.0


def vol(r):
    return 4 * math.pi * r**3 / 3


def _rectangle(P_hi, P_lo, V_lo, V_hi):
    return [(P_hi, V_lo), (P_hi, V_hi), (P_lo, V_hi), (P_lo, V_lo)]


def test_rectangle_exact_formula_equals_integral_rn_ads():
    """Johnson 2016: eta = 1 - (M3 - M4)/(M2 - M1) equals the integrated efficiency (heat on
    the isobars = int C_P dT along them, by quadrature of T dS) to 1e-10; W = dP dV;
    the first law closes the cycle; eta < eta_Carnot (second law)."""
    th = bind("rn-ads", Q=Q)
    P_hi, P_lo, V_lo, V_hi = 0.004, 0.002, vol(2.0), vol(4.0)
    res = analyze_cycle(th, _rectangle(P_hi, P_lo, V_lo, V_hi))
    assert res.direction == "clockwise"
    assert [s.kind for s in res.sides] == ["isobar", "isochore", "isobar", "isochore"]
    assert res.sides[1].also == ("adiabat",)
    ex = res.exact
    assert ex is not None and ex["corners"] == {"1": 1, "2": 2, "3": 3, "4": 4}
    assert abs(ex["efficiency"] - res.efficiency) < 1e-10
    M = {k: float(th.M(r, P)) for k, r, P in (("1", 2.0, P_hi), ("2", 4.0, P_hi),
                                               ("3", 4.0, P_lo), ("4", 2.0, P_lo))}
    eta = 1 - (M["3"] - M["4"]) / (M["2"] - M["1"])
    assert res.efficiency == pytest.approx(eta, abs=1e-12)
    assert res.heat_in == pytest.approx(M["2"] - M["1"], rel=1e-12)
    assert res.heat_out == pytest.approx(M["3"] - M["4"], rel=1e-12)
    assert res.work == pytest.approx((P_hi - P_lo) * (V_hi - V_lo), rel=1e-12)
    assert res.first_law_residual < 1e-12
    assert res.efficiency < res.carnot
    assert res.T_hot == pytest.approx(float(th.T(4.0, P_hi)), rel=1e-12)
    # (at P_lo < P_c the states r = 2..4 are on the unstable branch: T falls with r)
    assert res.T_cold == pytest.approx(float(th.T(4.0, P_lo)), rel=1e-12)
    assert any("unstable" in n for n in res.notes)
    # the same cycle listed from another corner: the labels follow the geometry
    shifted = analyze_cycle(th, _rectangle(P_hi, P_lo, V_lo, V_hi)[2:] +
                            _rectangle(P_hi, P_lo, V_lo, V_hi)[:2])
    assert shifted.exact["corners"] == {"1": 3, "2": 4, "3": 1, "4": 2}
    assert shifted.efficiency == pytest.approx(res.efficiency, abs=1e-13)


def test_schwarzschild_ads_rectangle_closed_form():
    """Schwarzschild-AdS 4D: M(P, V) = r/2 (1 + 8 pi P r^2/3), r = (3V/(4 pi))^(1/3), so the
    rectangle's efficiency is a closed form in the corners (Johnson 2016's formula evaluated
    independently of the engine)."""
    th = bind("schwarzschild-ads")
    P_hi, P_lo, V_lo, V_hi = 0.01, 0.004, 30.0, 180.0

    def M(P, V):
        r = (3 * V / (4 * math.pi)) ** (1 / 3)
        return r / 2 * (1 + 8 * math.pi * P * r**2 / 3)

    eta = 1 - (M(P_lo, V_hi) - M(P_lo, V_lo)) / (M(P_hi, V_hi) - M(P_hi, V_lo))
    res = analyze_cycle(th, _rectangle(P_hi, P_lo, V_lo, V_hi))
    assert res.efficiency == pytest.approx(eta, abs=1e-12)
    assert res.work == pytest.approx((P_hi - P_lo) * (V_hi - V_lo), rel=1e-12)
    assert 0 < res.efficiency < res.carnot


def test_carnot_cycle_of_a_static_black_hole():
    """Two isotherms joined by two isochores (= adiabats, C_V = 0): eta = 1 - T_c/T_h exactly
    (Johnson 2014; Carnot)."""
    th = bind("rn-ads", Q=Q)
    T_h, T_c = 0.05, 0.035

    def P_at(r, T):  # T is linear in P at fixed r
        return float((T - th.T(r, 0.0)) / th.d("T", "P", r, 0.0))

    cycle = [(P_at(2.0, T_h), vol(2.0)), (P_at(4.0, T_h), vol(4.0)),
             (P_at(4.0, T_c), vol(4.0)), (P_at(2.0, T_c), vol(2.0))]
    res = analyze_cycle(th, cycle)
    assert [s.kind for s in res.sides] == ["isotherm", "isochore", "isotherm", "isochore"]
    assert res.efficiency == pytest.approx(1 - T_c / T_h, abs=1e-12)
    assert res.carnot == pytest.approx(1 - T_c / T_h, abs=1e-13)
    S2, S4 = math.pi * 2.0**2, math.pi * 4.0**2
    assert res.heat_in == pytest.approx(T_h * (S4 - S2), rel=1e-12)
    assert res.first_law_residual < 1e-12


def test_triangle_with_an_isotherm():
    """A triangle: isochore up from A to C, isotherm down to B, isobar back to A.
    The integrated work (including the curved isotherm) equals the exact heat balance
    (M_A - M_B on the isobar, T_B (S_B - S_A) on the isotherm, 0 on the isochore)."""
    th = bind("rn-ads", Q=Q)
    rA, rB, P = 2.5, 4.0, 0.005          # P > P_c: T rises with r, so P_C > P
    T_B = float(th.T(rB, P))
    P_C = float((T_B - th.T(rA, 0.0)) / th.d("T", "P", rA, 0.0))
    res = analyze_cycle(th, [(P, vol(rA)), (P_C, vol(rA)), (P, vol(rB))])
    assert [s.kind for s in res.sides] == ["isochore", "isotherm", "isobar"]
    assert res.direction == "clockwise"
    S_A, S_B = math.pi * rA**2, math.pi * rB**2
    M_A, M_B = float(th.M(rA, P)), float(th.M(rB, P))
    W_exact = T_B * (S_B - S_A) + (M_A - M_B)
    assert res.work == pytest.approx(W_exact, rel=1e-11)
    assert res.sides[1].heat == pytest.approx(T_B * (S_B - S_A), rel=1e-12)
    assert res.sides[2].work == pytest.approx(P * (vol(rA) - vol(rB)), rel=1e-12)
    assert res.efficiency < res.carnot and res.exact is None


def test_rotating_family_has_heat_on_isochores():
    """kerr-ads: C_V != 0, so isochores are not adiabats and exchange heat; Johnson's
    corner formula does not apply (said), the cycle still closes (first law) and obeys the
    Carnot bound."""
    th = bind("kerr-ads", J=1.0)
    P_hi, P_lo = 0.003, 0.0015
    V_lo, V_hi = float(th.V(30.0, P_hi)), float(th.V(80.0, P_hi))
    res = analyze_cycle(th, _rectangle(P_hi, P_lo, V_lo, V_hi))
    assert [s.kind for s in res.sides] == ["isobar", "isochore"] * 2
    assert all(s.also == () for s in res.sides)
    assert abs(res.sides[1].heat) > 1e-7 and abs(res.sides[3].heat) > 1e-7
    assert res.exact is None and any("C_V != 0" in n for n in res.notes)
    assert res.first_law_residual < 1e-10
    assert res.work == pytest.approx((P_hi - P_lo) * (V_hi - V_lo), rel=1e-10)
    # isobars: heat = enthalpy change even with C_V != 0
    c = res.corners
    assert res.sides[0].heat == pytest.approx(c[1].M - c[0].M, rel=1e-11)
    assert 0 < res.efficiency < res.carnot


def test_counter_clockwise_is_a_refrigerator_and_bad_sides_are_errors():
    th = bind("rn-ads", Q=Q)
    rect = _rectangle(0.004, 0.002, vol(2.0), vol(4.0))
    rev = analyze_cycle(th, rect[::-1])
    assert rev.direction == "counter-clockwise" and rev.work < 0 and rev.exact is None
    with pytest.raises(CycleError, match="none of isobar, isochore, isotherm, adiabat"):
        analyze_cycle(th, [(0.004, vol(2.0)), (0.003, vol(4.0)), (0.002, vol(4.0))])
    with pytest.raises(StateDomainError, match="no physical"):
        analyze_cycle(th, _rectangle(0.004, 0.002, 1.0, vol(4.0)))
    with pytest.raises(CycleError, match="at least three"):
        parse_cycle("0.01,100 0.01,200")


def _parser():
    """The real command-line parser (the analysis commands are registered in it)."""
    from bhchem.cli.main import build_parser
    return build_parser()


def test_cli_engine_json_and_figure(capsys, tmp_path):
    fig = tmp_path / "cycle.png"
    V1, V2 = vol(2.0), vol(4.0)
    cyc = f"0.004,{V1!r} 0.004,{V2!r} 0.002,{V2!r} 0.002,{V1!r}"
    args = _parser().parse_args(["engine", "rn-ads", "-p", "Q=1", "--cycle", cyc, "--json",
                                 "-o", str(fig)])
    assert args.func(args) == 0
    out, err = capsys.readouterr()
    doc = json.loads(out)
    assert set(doc) - {"convention", "admissibility", "ensemble"} == {
        "work", "heat_in", "heat_out", "efficiency", "carnot", "T_hot", "T_cold"}
    assert doc["work"] == pytest.approx(0.002 * (V2 - V1), rel=1e-12)
    assert doc["efficiency"] < doc["carnot"]
    assert fig.stat().st_size > 10_000 and "wrote" in err
    # the cycle's curves beside the figure: each side in the P-V plane, as drawn
    table = (tmp_path / "cycle.csv").read_text().splitlines()
    assert "curve,V,P" in table and f"its data {tmp_path / 'cycle.csv'}" in err
    side0 = [tuple(map(float, r.split(",")[1:])) for r in table if r.startswith("side_0,")]
    assert side0[0] == pytest.approx((V1, 0.004), rel=1e-12)
    # relative pressures work too; text output names the sides
    args = _parser().parse_args(["engine", "rn-ads", "--cycle",
                                 f"1.2Pc,{V1!r} 1.2Pc,{V2!r} 0.6Pc,{V2!r} 0.6Pc,{V1!r}"])
    assert args.func(args) == 0
    out = capsys.readouterr().out
    assert "isochore (also adiabat)" in out and "Johnson 2016" in out
