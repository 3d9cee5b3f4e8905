r"""Worked example of a Python family plug-in (an invented toy scenario).

Scenario (ours, for illustration only; not a published solution): a 4D charged
AdS black hole dressed by a short-range "cloud" whose energy lowers the mass
function by lam/r+^3, with a coupling lam of length dimension 4:

.. math::
    M = \frac{r_+}{2}\left(1 + \frac{8\pi P r_+^2}{3} + \frac{Q^2}{r_+^2}
        - \frac{\lambda}{r_+^4}\right),\qquad S = \pi r_+^2 .

The engine derives T = (1 + 8 pi P r^2 - Q^2/r^2 + 3 lam/r^4)/(4 pi r), the
volume, Phi_Q, the potential conjugate to lam, and checks the Smarr relation
M = 2TS - 2PV + Phi_Q Q + 4 Phi_lam lam.

Use it with:  bhchem show dressed-rn-ads --family-file examples/families/dressed_rn_ads.py -p Q=1,lam=0.05
"""
from bhchem.declare import Domain, Family, Parameter
from bhchem.declare.symbols import P, parameter_symbol, pi, r

Q = parameter_symbol("Q")
lam = parameter_symbol("lam")

FAMILY = Family(
    name="dressed-rn-ads",
    summary="toy scenario: 4D charged AdS black hole dressed by a short-range cloud (lam)",
    reference="invented example for the bhchem contributor guide (no paper)",
    dimension=4,
    parameters=(
        Parameter("Q", 1.0, length_dimension=1, domain=Domain.nonnegative(),
                  description="electric charge"),
        Parameter("lam", 0.05, length_dimension=4, domain=Domain.nonnegative(),
                  description="cloud coupling"),
    ),
    enthalpy=r / 2 * (1 + 8 * pi * P * r**2 / 3 + Q**2 / r**2 - lam / r**4),
    entropy=pi * r**2,
    # optional: the temperature from the surface gravity, which the engine verifies
    temperature=(1 + 8 * pi * P * r**2 - Q**2 / r**2 + 3 * lam / r**4) / (4 * pi * r),
)
