"""The worked example of DEVELOPERS.md stays true: it loads, derives and passes the contract."""
from pathlib import Path

import sympy as sp

from bhchem import bind
from bhchem.declare import registry
from contract import FamilyContract

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "families" / "dressed_rn_ads.py"
registry.load_family_file(EXAMPLE)


class TestDressedRnAdsContract(FamilyContract):
    family_name = "dressed-rn-ads"
    parameter_sets = [{}, {"Q": 0.4, "lam": 0.0}, {"Q": 2.0, "lam": 1.5}]


def test_smarr_relation_has_the_coupling_term():
    """Euler scaling with [lam] = L^4: M = 2TS - 2PV + Phi_Q Q + 4 Phi_lam lam (exact)."""
    from bhchem.core.checks import check_smarr
    res = check_smarr(bind("dressed-rn-ads"))
    assert res.relation == "M = 2 T S - 2 P V + Phi_Q Q + 4 Phi_lam lam"
    assert res.holds


def test_potential_of_the_coupling():
    """By hand: (dM/dlam)_{S,P} = -1/(2 r^3)."""
    th = bind("dressed-rn-ads")
    r = th.derivation.state
    assert sp.simplify(th.derivation.quantities["Phi_lam"] + 1 / (2 * r**3)) == 0
