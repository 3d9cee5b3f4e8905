"""Bardeen-AdS black hole from its metric with the area law: the surface-gravity temperature
and the area law do NOT satisfy the first law with the mass as enthalpy (an example of what
the checks catch).

Metric (Tzikas, Phys. Lett. B 788 (2019) 219):
    f = 1 - 2 M r^2/(r^2 + g^2)^(3/2) + r^2/L^2,   8 pi P = 3/L^2 (4D).
The engine (bhchem.declare.from_metric) solves f(r+) = 0 for M, takes T = f'(r+)/(4 pi) and
S = pi r+^2 (area law).  (dM/dS)_P is not f'/(4 pi): `bhchem show` reports the first law
failing, the Smarr diagnosis names the declared temperature (about 17 % off at g = 1, r+ = 3,
P = 0.001), and `bhchem metric` gives the diagnosis with the first-law-consistent entropy.
The same metric with that entropy: examples/families/bardeen_first_law.toml.

    bhchem show bardeen-area-law --family-file examples/families/bardeen_area_law.py
    bhchem metric bardeen-area-law --family-file examples/families/bardeen_area_law.py
"""
import sympy as sp

from bhchem.declare import Domain, Parameter, from_metric

r, M, L, g = sp.symbols("r M L g", positive=True)

FAMILY = from_metric(
    name="bardeen-area-law",
    summary="Bardeen-AdS with the area law and T from the surface gravity (inconsistent pair)",
    reference="Tzikas, Phys. Lett. B 788 (2019) 219 (metric)",
    dimension=4,
    parameters=(Parameter("g", 1.0, length_dimension=1, domain=Domain.nonnegative(),
                          description="magnetic monopole charge"),),
    f=1 - 2 * M * r**2 / (r**2 + g**2)**sp.Rational(3, 2) + r**2 / L**2,
    entropy="area",
)
