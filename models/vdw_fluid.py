r"""The van der Waals fluid, per particle, as a reference system for every analysis.

Not a black hole: the family gives T(v, P) and G(v, P) directly (fluid route),
with state variable the specific volume v and k_B = 1:

.. math::
    T = \left(P + \frac{a}{v^2}\right)(v - b),\qquad
    G = -T\ln(v-b) - c_v T\ln T - \frac{a}{v} + P v,

from the Helmholtz free energy f = -T ln(v-b) - c_v T ln T - a/v (additive
constants times T dropped; they do not affect any phase equilibrium), with
c_v = 3/2 (monatomic).  The engine then derives S = ln(v-b) + c_v ln T + c_v and
the enthalpy M = c_v T - a/v + P v.  Any thermodynamics textbook, e.g. Callen,
*Thermodynamics and an Introduction to Thermostatistics* (2nd ed., 1985), Sec. 3.5.
Critical point: v_c = 3b, T_c = 8a/(27b), P_c = a/(27 b^2).
"""
import sympy as sp

from bhchem.declare.conditions import Condition
from bhchem.declare import Domain, Family, Parameter
from bhchem.declare.symbols import P, parameter_symbol, v

a = parameter_symbol("a")
b = parameter_symbol("b")
_cv = sp.Rational(3, 2)
_T = (P + a / v**2) * (v - b)

FAMILY = Family(
    name="vdw-fluid",
    summary="classical van der Waals fluid (per particle, c_v = 3/2), reference system",
    reference="van der Waals equation; e.g. Callen, Thermodynamics (2nd ed., 1985), Sec. 3.5",
    dimension=4,
    parameters=(
        Parameter("a", 1.0, domain=Domain.positive(), description="attraction strength"),
        Parameter("b", 1.0, domain=Domain.positive(), description="excluded volume"),
    ),
    temperature=_T,
    gibbs=-_T * sp.log(v - b) - _cv * _T * sp.log(_T) - a / v + P * v,
    state=v,
    state_description="specific volume v (per particle)",
    specific_volume=v,
    conditions=(Condition("volume-above-excluded", v > b,
                          "the volume per particle exceeds the excluded volume b",
                          "van der Waals equation of state (textbook)"),),
    gravitational=False,
    typical_state=3 * b,
    typical_pressure=a / (27 * b**2),
    conventions={"units": "k_B = 1; per particle",
                 "specific_volume": "v is the volume per particle",
                 "mass": "M is the enthalpy per particle",
                 "charge": "not applicable"},
)
