"""The inherited test base every family gets for free (the gala habit).

A family's test file is a few lines::

    from contract import FamilyContract

    class TestMyFamily(FamilyContract):
        family_name = "my-family"
        parameter_sets = [{"Q": 1.0}, {"Q": 0.3, "d": 6}]

and it checks: registration and declaration, derivation of every core quantity,
vectorised broadcasting, physical states exist, first law (proved or numerically
to 1e-9), Smarr (or 'not applicable' for non-gravitational families), and that
unknown parameters and out-of-domain values are refused with one clear line.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from bhchem import ParameterDomainError, UnknownParameterError, bind
from bhchem.core.checks import check_first_law, check_smarr
from bhchem.core.derive import CORE_QUANTITIES
from bhchem.declare.registry import get_family


def _outside_values(domain):
    """A few values just outside a domain (for the refusal tests)."""
    if domain.choices is not None:
        return [max(float(c) for c in domain.choices) + 7.0]
    out = [float("nan"), float("inf")]
    if math.isfinite(domain.lower):
        out.append(domain.lower - 1.0)
        if not domain.lower_closed:
            out.append(domain.lower)
    if math.isfinite(domain.upper):
        out.append(domain.upper + 1.0)
    if domain.integer:
        out.append(domain.lower + 0.5 if math.isfinite(domain.lower) else 0.5)
    return out


class FamilyContract:
    """Subclass with ``family_name`` and ``parameter_sets``."""

    family_name: str = ""
    parameter_sets: list = [{}]
    #: expected outcome of the Smarr check (None: not applicable)
    smarr_applicable: bool = True


    def bound(self):
        for values in self.parameter_sets:
            yield values, bind(self.family_name, **values)

    def test_declaration(self):
        fam = get_family(self.family_name)
        assert fam.name == self.family_name
        assert fam.summary and fam.reference
        for p in fam.all_parameters:
            assert p.domain.contains(p.default), p.name

    def test_core_quantities_derived(self):
        for values, th in self.bound():
            q = th.derivation.quantities
            for name in CORE_QUANTITIES:
                if name == "v" and th.family.specific_volume is None and \
                        th.derivation.state.name != "r" and th.family.horizon_radius is None:
                    continue
                assert name in q, (values, name)
            for p in th.family.continuous_parameters:
                assert f"Phi_{p.name}" in q

    def test_vectorised_broadcasting(self):
        for values, th in self.bound():
            x = th.typical_state() * np.linspace(0.5, 3.0, 7)[:, None]
            P = th.typical_pressure() * np.array([0.5, 1.0, 2.0])[None, :]
            st = th.state(x, P)
            for arr in (st.T, st.S, st.M, st.V, st.G, st.physical):
                assert np.shape(arr) == (7, 3)
            # vectorised == pointwise
            i, j = 3, 1
            assert st.T[i, j] == pytest.approx(float(th.T(x[i, 0], P[0, j])), rel=1e-14)

    def test_physical_states_exist(self):
        from bhchem.core.sampling import physical_sample
        for values, th in self.bound():
            assert physical_sample(th, 16).n_points > 0, values

    def test_first_law(self):
        for values, th in self.bound():
            res = check_first_law(th)
            assert res.holds is True, (values, res.message)
            assert res.max_residual <= 1e-9
            assert res.n_points >= 16

    def test_smarr(self):
        for values, th in self.bound():
            res = check_smarr(th)
            if not self.smarr_applicable:
                assert res.holds is None and "not applicable" in res.message
                continue
            assert res.holds is True, (values, res.message)
            assert res.max_residual <= 1e-9 and res.missing == []

    def test_unknown_parameter_refused(self):
        with pytest.raises(UnknownParameterError, match="no parameter 'zz_not_a_param'"):
            bind(self.family_name, zz_not_a_param=1.0)

    def test_out_of_domain_refused(self):
        fam = get_family(self.family_name)
        for p in fam.all_parameters:
            for bad in _outside_values(p.domain):
                with pytest.raises(ParameterDomainError, match=p.name):
                    bind(self.family_name, **{p.name: bad})
