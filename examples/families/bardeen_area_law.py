"""Bardeen-AdS black hole with the area law and the surface-gravity temperature: a pair that
does NOT satisfy the first law with the mass as enthalpy (an example of what the checks catch).

Metric (Tzikas, Phys. Lett. B 788 (2019) 219):
    f = 1 - 2 M r^2/(r^2 + g^2)^(3/2) + r^2/L^2,   8 pi P = 3/L^2 (4D),
f(r+) = 0 gives M below; T = f'(r+)/(4 pi) with M eliminated; S = pi r+^2 (area law).
With this S, (dM/dS)_P is not f'/(4 pi): `bhchem show` reports the first law failing and the
Smarr diagnosis names the declared temperature (about 17 % off at g = 1, r+ = 3, P = 0.001).

    bhchem show bardeen-area-law --family-file examples/families/bardeen_area_law.py
"""
import sympy as sp

from bhchem.declare import Domain, Family, Parameter
from bhchem.declare.symbols import P, parameter_symbol, pi, r

g = parameter_symbol("g")
m = sp.Symbol("m")
inv_L2 = 8 * pi * P / 3
metric = 1 - 2 * m * r**2 / (r**2 + g**2)**sp.Rational(3, 2) + inv_L2 * r**2
M = sp.solve(metric, m)[0]

FAMILY = Family(
    name="bardeen-area-law",
    summary="Bardeen-AdS with the area law and T from the surface gravity (inconsistent pair)",
    reference="Tzikas, Phys. Lett. B 788 (2019) 219 (metric)",
    dimension=4,
    parameters=(Parameter("g", 1.0, length_dimension=1, domain=Domain.nonnegative(),
                          description="magnetic monopole charge"),),
    enthalpy=M,
    entropy=pi * r**2,
    temperature=sp.simplify(sp.diff(metric, r).subs(m, M) / (4 * pi)),
)
