"""rn-ads: charged AdS black hole in d dimensions."""
import math

import numpy as np
import pytest
import sympy as sp

from bhchem import bind
from bhchem.core.checks import check_smarr
from bhchem.declare.symbols import P, r
from contract import FamilyContract
from reference_values import REFERENCES


class TestRnAdsContract(FamilyContract):
    family_name = "rn-ads"
    parameter_sets = [{"Q": 1.0}, {"Q": 0.37, "d": 5}, {"Q": 2.5, "d": 7}, {"Q": 0.0}]


def test_4d_temperature_volume_symbolic():
    """REFERENCES['KM12-rn4d-T']: T and V in closed form, 4D (symbolic -> exact)."""
    th = bind("rn-ads", Q=1.0, d=4)
    q = th.derivation.quantities
    Q = sp.Symbol("Q", real=True)
    T_paper = (1 + 8 * sp.pi * P * r**2 - Q**2 / r**2) / (4 * sp.pi * r)
    assert sp.simplify(q["T"] - T_paper) == 0
    assert sp.simplify(th.derivation.temperature_derived - T_paper) == 0
    assert sp.simplify(q["V"] - sp.Rational(4, 3) * sp.pi * r**3) == 0


def test_4d_smarr_numeric():
    """REFERENCES['KM12-rn4d-T']: M = 2TS - 2PV + Phi Q at arbitrary states (numeric)."""
    th = bind("rn-ads", Q=0.8)
    x = np.linspace(0.3, 5.0, 50)
    p = 0.01
    lhs = th.M(x, p)
    rhs = 2 * th.T(x, p) * th.S(x, p) - 2 * p * th.V(x, p) + th.potential("Q", x, p) * 0.8
    np.testing.assert_allclose(lhs, rhs, rtol=1e-13)


@pytest.mark.parametrize("d", range(4, 11))
def test_smarr_in_d_dimensions(d):
    """REFERENCES['KRT09-smarr']: (d-3) M = (d-2) TS - 2PV + (d-3) Phi Q for d = 4..10."""
    th = bind("rn-ads", Q=1.3, d=d)
    res = check_smarr(th)
    assert res.holds, res.message
    assert res.relation.startswith(f"{'' if d == 4 else str(d - 3) + ' '}M = ")
    assert f"Phi_Q Q" in res.relation
    # the explicit relation, evaluated independently of the check
    x = np.geomspace(0.5, 4.0, 9)
    p = 0.02
    lhs = (d - 3) * th.M(x, p)
    rhs = (d - 2) * th.T(x, p) * th.S(x, p) - 2 * p * th.V(x, p) \
        + (d - 3) * th.potential("Q", x, p) * 1.3
    np.testing.assert_allclose(lhs, rhs, rtol=1e-12)


@pytest.mark.parametrize("d", [4, 5, 6, 8, 10])
def test_temperature_from_metric_surface_gravity(d):
    """REFERENCES['GKM12-rn-d']: T = f'(r+)/(4 pi) from the metric function, and the
    potential Phi = sqrt((d-2)/(2(d-3))) q / r+^(d-3), both in GKM's charge normalisation.

    The metric is built here from the paper's formulas, independently of the module."""
    Qv, Pv = 0.7, 0.013
    L = math.sqrt((d - 1) * (d - 2) / (16 * math.pi * Pv))
    Om = 2 * math.pi ** ((d - 1) / 2) / math.gamma((d - 1) / 2)
    q = 8 * math.pi * Qv / (math.sqrt(2 * (d - 2) * (d - 3)) * Om)
    th = bind("rn-ads", Q=Qv, d=d)
    for rp in (0.9, 1.7, 3.2):
        m = rp ** (d - 3) * (1 + q**2 / rp ** (2 * (d - 3)) + rp**2 / L**2)
        fprime = (d - 3) * m / rp ** (d - 2) - 2 * (d - 3) * q**2 / rp ** (2 * d - 5) + 2 * rp / L**2
        assert float(th.T(rp, Pv)) == pytest.approx(fprime / (4 * math.pi), rel=1e-13)
        assert float(th.M(rp, Pv)) == pytest.approx((d - 2) * Om * m / (16 * math.pi), rel=1e-13)
        phi = math.sqrt((d - 2) / (2 * (d - 3))) * q / rp ** (d - 3)
        assert float(th.potential("Q", rp, Pv)) == pytest.approx(phi, rel=1e-13)
        V = Om * rp ** (d - 1) / (d - 1)  # volume of the ball of radius r+ (static: V = Omega r^(d-1)/(d-1))
        assert float(th.V(rp, Pv)) == pytest.approx(V, rel=1e-13)


def test_equation_of_state_4d_closed_form():
    """REFERENCES['KM12-rn4d-T']: P = T/v - 1/(2 pi v^2) + 2 Q^2/(pi v^4) with v = 2 r+."""
    th = bind("rn-ads", Q=1.0)
    eos = th.derivation.eos
    assert eos.form == "closed"
    T, v = sp.Symbol("T", real=True), sp.Symbol("v", positive=True)
    Q = sp.Symbol("Q", real=True)
    assert sp.simplify(eos.pressure - (T / v - 1 / (2 * sp.pi * v**2) + 2 * Q**2 / (sp.pi * v**4))) == 0


def test_references_are_cited():
    assert "arXiv:1205.0559" in REFERENCES["KM12-rn4d-T"].source
