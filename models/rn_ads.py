r"""Charged (Reissner-Nordstrom) AdS black hole in d >= 4 dimensions.

Metric function and charge normalisation of Gunasekaran, Kubiznak & Mann,
JHEP 11 (2012) 110, arXiv:1208.6251, Sec. 3:

.. math::
    f = 1 - \frac{m}{r^{d-3}} + \frac{q^2}{r^{2(d-3)}} + \frac{r^2}{L^2},\qquad
    M = \frac{(d-2)\Omega_{d-2}}{16\pi} m,\qquad
    Q = \frac{\sqrt{2(d-2)(d-3)}\,\Omega_{d-2}}{8\pi} q,\qquad
    S = \frac{\Omega_{d-2} r_+^{d-2}}{4}.

With f(r+) = 0 and P = (d-1)(d-2)/(16 pi L^2) the enthalpy is

.. math::
    M = \frac{(d-2)\Omega_{d-2}}{16\pi}\left(r_+^{d-3}
        + \frac{16\pi P r_+^{d-1}}{(d-1)(d-2)} + \frac{q^2}{r_+^{d-3}}\right).

In 4D, Q = q and M = r(1 + 8 pi P r^2/3 + Q^2/r^2)/2 (Kubiznak & Mann, JHEP 07
(2012) 033, arXiv:1205.0559).  The temperature is the surface gravity f'(r+)/4pi.
"""
import sympy as sp

from bhchem.declare import Domain, Family, Metric, Parameter
from bhchem.declare.symbols import P, d, omega, parameter_symbol, pi, r

Q = parameter_symbol("Q")
_Om = omega(d)
_q = 8 * pi * Q / (sp.sqrt(2 * (d - 2) * (d - 3)) * _Om)  # metric charge parameter q(Q)
_rho, _m, _L = sp.symbols("r m L", positive=True)          # radial coordinate, mass parameter
_Q_PARAMETER = Parameter("Q", 1.0, length_dimension=d - 3, domain=Domain.nonnegative(),
                         description="electric charge")

FAMILY = Family(
    name="rn-ads",
    summary="charged (Reissner-Nordstrom) AdS black hole, spherical horizon, d >= 4",
    reference="Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251; "
              "4D: Kubiznak & Mann, JHEP 07 (2012) 033, arXiv:1205.0559",
    dimension=Parameter("d", 4, length_dimension=0, domain=Domain.integers(4, 26),
                        description="spacetime dimension"),
    parameters=(_Q_PARAMETER,),
    enthalpy=(d - 2) * _Om / (16 * pi) * (
        r ** (d - 3) + 16 * pi * P * r ** (d - 1) / ((d - 1) * (d - 2)) + _q**2 / r ** (d - 3)),
    entropy=_Om * r ** (d - 2) / 4,
    temperature=((d - 3) + 16 * pi * P * r**2 / (d - 2)
                 - (d - 3) * _q**2 / r ** (2 * (d - 3))) / (4 * pi * r),
    # the metric function above (GKM 2012, Sec. 3); tests check it reproduces M and T
    metric=Metric.declare(1 - _m / _rho ** (d - 3) + _q**2 / _rho ** (2 * (d - 3))
                          + _rho**2 / _L**2, mass="m", enthalpy=(d - 2) * _Om * _m / (16 * pi),
                          parameters=(_Q_PARAMETER,),
                          text="f = 1 - m/r^(d-3) + q^2/r^(2(d-3)) + r^2/L^2, "
                               "q = 8 pi Q/(sqrt(2(d-2)(d-3)) Omega_{d-2}), "
                               "M = (d-2) Omega_{d-2} m/(16 pi)"),
)
