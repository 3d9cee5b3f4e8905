"""Canonical sympy symbols and helpers shared by every family.

Families write their expressions with these symbols (or with symbols of the
same *name*: the engine canonicalises by name, so assumptions a plug-in author
attaches do not matter).

Conventions (stated once, see :mod:`bhchem.conventions`): G = c = hbar =
k_B = 1, P = -Lambda/(8 pi) = (d-1)(d-2)/(16 pi L^2).
"""
from __future__ import annotations

import sympy as sp

#: horizon radius r+ (the default state variable)
r = sp.Symbol("r", positive=True)
#: thermodynamic pressure P = -Lambda/(8 pi)
P = sp.Symbol("P", positive=True)
#: spacetime dimension (substituted by an integer before derivation)
d = sp.Symbol("d", integer=True, positive=True)
#: horizon curvature k in {1, 0, -1} (substituted before derivation)
k = sp.Symbol("k", integer=True)
#: the temperature, usable in a family's extra domain conditions (e.g. T >= 0)
T = sp.Symbol("T", real=True)
#: entropy, as a state variable (rotating families)
S = sp.Symbol("S", positive=True)
#: specific volume, as a state variable (fluids)
v = sp.Symbol("v", positive=True)

pi = sp.pi

#: names the engine reserves; a parameter may not use them: P and T, the state variables
#: (r, S, v) and the derived quantities (M, V, G), which print like them in every formula
RESERVED = frozenset({"P", "T", "r", "S", "v", "M", "V", "G"})


def parameter_symbol(name: str) -> sp.Symbol:
    """The canonical symbol of a continuous parameter (a real number)."""
    return sp.Symbol(name, real=True)


def omega(dim) -> sp.Expr:
    r"""Volume of the unit (d-2)-sphere, :math:`\Omega_{d-2} = 2\pi^{(d-1)/2}/\Gamma((d-1)/2)`.

    ``omega(4) == 4*pi``; ``omega(d)`` stays symbolic until d is substituted.
    """
    return 2 * sp.pi ** (sp.Rational(1, 2) * (dim - 1)) / sp.gamma(sp.Rational(1, 2) * (dim - 1))


def pressure_from_ads_radius(L, dim=4) -> sp.Expr:
    """P = (d-1)(d-2)/(16 pi L^2)."""
    return (dim - 1) * (dim - 2) / (16 * sp.pi * L**2)
