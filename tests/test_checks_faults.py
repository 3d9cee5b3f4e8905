"""The first-law and Smarr verdicts must fail, and say why, on faulty families."""
import pytest

from bhchem import Domain, Family, Parameter, bind
from bhchem.core.checks import check_first_law, check_smarr
from bhchem.declare.symbols import P, parameter_symbol, pi, r

Q = parameter_symbol("Q")
_M = r / 2 * (1 + 8 * pi * P * r**2 / 3 + Q**2 / r**2)  # 4D charged AdS (Kubiznak & Mann 2012)
_charge = Parameter("Q", 1.0, length_dimension=1, domain=Domain.nonnegative())


def test_wrong_temperature_fails_first_law():
    """A temperature with the charge term's sign flipped is not (dM/dS)_P."""
    fam = Family(name="bad-temperature", summary="deliberately wrong T", reference="test",
                 parameters=(_charge,), enthalpy=_M, entropy=pi * r**2,
                 temperature=(1 + 8 * pi * P * r**2 + Q**2 / r**2) / (4 * pi * r))
    res = check_first_law(bind(fam, Q=0.5))
    assert res.holds is False
    assert res.max_residual > 1e-3
    assert "declared temperature differs from (dM/dS)_P" in res.message
    assert res.proved is not True


def test_correct_temperature_passes_first_law():
    fam = Family(name="good-temperature", summary="right T", reference="test",
                 parameters=(_charge,), enthalpy=_M, entropy=pi * r**2,
                 temperature=(1 + 8 * pi * P * r**2 - Q**2 / r**2) / (4 * pi * r))
    res = check_first_law(bind(fam, Q=0.5))
    assert res.holds is True and res.proved is True


def test_wrong_volume_fails_first_law():
    fam = Family(name="bad-volume", summary="proposed V is the area", reference="test",
                 parameters=(_charge,), enthalpy=_M, entropy=pi * r**2, volume=4 * pi * r**2)
    res = check_first_law(bind(fam, Q=0.5))
    assert res.holds is False


def test_hidden_dimensionful_constant_fails_smarr():
    """A constant 0.3 with length dimension 2 hard-coded in M (no parameter, so no
    conjugate term): the first law still holds, Smarr does not, and says why."""
    fam = Family(name="hidden-coupling", summary="coupling without conjugate", reference="test",
                 parameters=(_charge,), enthalpy=_M + sp_rational(3, 10) / r,
                 entropy=pi * r**2)
    th = bind(fam, Q=0.5)
    assert check_first_law(th).holds is True
    res = check_smarr(th)
    assert res.holds is False
    assert res.max_residual > 1e-3
    assert any("no parameter" in m and "conjugate term is missing" in m for m in res.missing)


def test_wrong_declared_dimension_is_named():
    """Q declared with length dimension 2 instead of 1: the diagnosis names Q and the
    dimension that would close the relation."""
    fam = Family(name="wrong-dimension", summary="Q with the wrong dimension", reference="test",
                 parameters=(Parameter("Q", 1.0, length_dimension=2, domain=Domain.nonnegative()),),
                 enthalpy=_M, entropy=pi * r**2)
    res = check_smarr(bind(fam, Q=0.5))
    assert res.holds is False
    assert len(res.missing) == 1
    assert res.missing[0].startswith("parameter Q: declared length dimension 2")
    assert res.fitted_dimensions["Q"] == pytest.approx(1.0, abs=1e-9)


def test_declared_coupling_restores_smarr():
    """The same extra term with its coupling declared (dimension 2): Smarr holds."""
    c = parameter_symbol("c")
    fam = Family(name="declared-coupling", summary="coupling with conjugate", reference="test",
                 parameters=(_charge, Parameter("c", 0.3, length_dimension=2,
                                                domain=Domain.nonnegative())),
                 enthalpy=_M + c / r, entropy=pi * r**2)
    res = check_smarr(bind(fam, Q=0.5, c=0.3))
    assert res.holds is True, res.message
    assert "+ 2 Phi_c c" in res.relation


def sp_rational(p, q):
    import sympy as sp
    return sp.Rational(p, q)
