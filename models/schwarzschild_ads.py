r"""Schwarzschild-AdS black hole in d >= 4 dimensions, with thermal AdS as background.

.. math::
    f = 1 - \frac{m}{r^{d-3}} + \frac{r^2}{L^2},\qquad
    M = \frac{(d-2)\Omega_{d-2}}{16\pi}\left(r_+^{d-3}
        + \frac{16\pi P r_+^{d-1}}{(d-1)(d-2)}\right),\qquad
    S = \frac{\Omega_{d-2} r_+^{d-2}}{4}.

The competing phase is thermal AdS with G = 0 (Hawking & Page, Commun. Math.
Phys. 87 (1983) 577; d-dimensional form as in Kubiznak, Mann & Teo, CQG 34
(2017) 063001, arXiv:1608.06147).
"""
import sympy as sp

from bhchem.declare import Domain, Family, Metric, Parameter
from bhchem.declare.symbols import P, d, omega, pi, r

_Om = omega(d)

FAMILY = Family(
    name="schwarzschild-ads",
    summary="neutral static AdS black hole, spherical horizon, d >= 4, thermal AdS background",
    reference="Hawking & Page, Commun. Math. Phys. 87 (1983) 577; "
              "Kubiznak, Mann & Teo, CQG 34 (2017) 063001, arXiv:1608.06147",
    dimension=Parameter("d", 4, length_dimension=0, domain=Domain.integers(4, 26),
                        description="spacetime dimension"),
    parameters=(),
    enthalpy=(d - 2) * _Om / (16 * pi) * (
        r ** (d - 3) + 16 * pi * P * r ** (d - 1) / ((d - 1) * (d - 2))),
    entropy=_Om * r ** (d - 2) / 4,
    temperature=((d - 3) + 16 * pi * P * r**2 / (d - 2)) / (4 * pi * r),
    background_gibbs=sp.Integer(0),
    background_name="thermal AdS",
    # f = 1 - m/r^(d-3) + r^2/L^2, M = (d-2) Omega m/(16 pi); tests check M and T from it
    metric=Metric.declare(1 - sp.Symbol("m") / sp.Symbol("r") ** (d - 3)
                          + sp.Symbol("r")**2 / sp.Symbol("L")**2,
                          mass="m", enthalpy=(d - 2) * _Om * sp.Symbol("m") / (16 * pi),
                          text="f = 1 - m/r^(d-3) + r^2/L^2, M = (d-2) Omega_{d-2} m/(16 pi)"),
)
