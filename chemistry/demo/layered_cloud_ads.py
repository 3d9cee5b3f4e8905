r"""Demo scenario (invented for bhchem; not a published solution).

A 4D charged AdS black hole surrounded by a toy two-layer "cloud": an inner layer
that lowers the mass function by lam/r+^4 and an outer repulsive core that raises
it by kap/r+^6, with couplings lam (length dimension 4) and kap (dimension 6):

.. math::
    M = \frac{r_+}{2}\left(1 + \frac{8\pi P r_+^2}{3} + \frac{Q^2}{r_+^2}
        - \frac{\lambda}{r_+^4} + \frac{\kappa}{r_+^6}\right),\qquad S = \pi r_+^2 .

The competing terms give up to three critical points, reentrance and a triple
point in parts of (lam, kap) space, which is what the demo exercises.  It is
loaded as a plug-in file, the route a researcher's own family takes.
"""
from bhchem.declare import Domain, Family, Parameter
from bhchem.declare.symbols import P, parameter_symbol, pi, r

Q = parameter_symbol("Q")
lam = parameter_symbol("lam")
kap = parameter_symbol("kap")

FAMILY = Family(
    name="layered-cloud-ads",
    summary="demo scenario (invented): charged AdS black hole in a two-layer toy cloud",
    reference="invented for the bhchem demo (no paper)",
    dimension=4,
    parameters=(
        Parameter("Q", 1.0, length_dimension=1, domain=Domain.nonnegative(),
                  description="electric charge"),
        Parameter("lam", 0.24, length_dimension=4, domain=Domain.nonnegative(),
                  description="inner-layer coupling"),
        Parameter("kap", 0.04, length_dimension=6, domain=Domain.nonnegative(),
                  description="outer-core coupling"),
    ),
    enthalpy=r / 2 * (1 + 8 * pi * P * r**2 / 3 + Q**2 / r**2 - lam / r**4 + kap / r**6),
    entropy=pi * r**2,
    temperature=(1 + 8 * pi * P * r**2 - Q**2 / r**2 + 3 * lam / r**4 - 5 * kap / r**6)
    / (4 * pi * r),
)
