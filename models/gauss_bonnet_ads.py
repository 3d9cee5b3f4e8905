r"""Charged Gauss-Bonnet-AdS black hole in d >= 5 dimensions, horizon curvature k = 1, 0, -1.

Action (G = 1) I = (1/16 pi) \int d^d x \sqrt{-g} [R - 2 Lambda + alpha (R^2 - 4 R_{ab}R^{ab}
+ R_{abcd}R^{abcd}) - F^2] with the *bare* Gauss-Bonnet coupling alpha of the action as the
parameter ``alpha``.  Cai, Cao, Li & Yang, JHEP 09 (2013) 005, arXiv:1306.6233 (CCLY13) and
Wei & Liu, PRD 90 (2014) 044057, arXiv:1402.2837 (arXiv id from memory) write their
formulas with the rescaled coupling

.. math::
    \tilde\alpha = (d-3)(d-4)\,\alpha .

The formulas below are written from memory (the search tool reached no text of the papers)
and are checked in tests/test_gauss_bonnet_ads.py: T against the surface gravity of the
metric function, the alpha -> 0 limit against rn-ads, and CCLY13's 5D critical point.

Metric function (CCLY13), with g = (k - f)/r^2 solving
alpha~_0 + g + alpha~ g^2 = m/r^(d-1) - q^2/r^(2d-4), alpha~_0 = 1/L^2 = 16 pi P/((d-1)(d-2)):

.. math::
    f = k + \frac{r^2}{2\tilde\alpha}\Bigl(1 - \sqrt{1 + \frac{4\tilde\alpha m}{r^{d-1}}
        - \frac{4\tilde\alpha q^2}{r^{2d-4}} - \frac{64\pi\tilde\alpha P}{(d-1)(d-2)}}\Bigr),

and with f(r+) = 0 (Omega = Omega_{d-2}, the engine's omega(d)):

.. math::
    M = \frac{(d-2)\Omega}{16\pi}\Bigl(k r_+^{d-3} + \tilde\alpha k^2 r_+^{d-5}
        + \frac{16\pi P r_+^{d-1}}{(d-1)(d-2)} + \frac{q^2}{r_+^{d-3}}\Bigr),\qquad
    S = \frac{\Omega r_+^{d-2}}{4}\Bigl(1 + \frac{2(d-2)k\tilde\alpha}{(d-4) r_+^2}\Bigr)

(the Wald entropy, not A/4), and T = f'(r+)/(4 pi):

.. math::
    T = \frac{16\pi P r_+^4/(d-2) + (d-3)k r_+^2 + (d-5)k^2\tilde\alpha
        - (d-3) q^2 r_+^{8-2d}}{4\pi r_+ (r_+^2 + 2k\tilde\alpha)} .

Charge normalisation: Q is that of rn-ads (Gunasekaran, Kubiznak & Mann, JHEP 11 (2012)
110, arXiv:1208.6251): Q = sqrt(2(d-2)(d-3)) Omega q/(8 pi), so alpha = 0, k = 1 is rn-ads
exactly.  (CCLY13's charge is Q_CCLY = 4 pi Q/Omega with their Maxwell normalisation.)
For k = 0, -1 the horizon is a quotient of flat or hyperbolic space; its volume is
normalised to Omega_{d-2} (quantities per unit Omega_{d-2} of horizon volume).

The engine derives V = Omega r+^(d-1)/(d-1), Phi_Q, the GB potential Psi = Phi_alpha and
checks (d-3) M = (d-2) T S - 2 P V + 2 Psi alpha + (d-3) Phi Q (Smarr, CCLY13).

Physical domain (relational conditions): the horizon lies on the Einstein (GB) branch,
1 + 2 k alpha~/r+^2 > 0 (the square root in f is real at the horizon), and the AdS vacuum of
that branch exists, 64 pi alpha~ P < (d-1)(d-2) (i.e. 4 alpha~ <= L^2 in CCLY13); together
they keep the square root positive for all r >= r+.  S > 0 and T >= 0 are added by the engine.
"""
import sympy as sp

from bhchem.declare import Domain, Family, Metric, Parameter
from bhchem.declare.conditions import Condition
from bhchem.declare.symbols import P, d, k, omega, parameter_symbol, pi, r

alpha = parameter_symbol("alpha")
Q = parameter_symbol("Q")

_Om = omega(d)
_at = (d - 3) * (d - 4) * alpha                                    # alpha~ (CCLY13)
_q = 8 * pi * Q / (sp.sqrt(2 * (d - 2) * (d - 3)) * _Om)           # metric charge q(Q), as rn-ads
_a0 = 16 * pi * P / ((d - 1) * (d - 2))                            # alpha~_0 = 1/L^2
_rho, _m, _L = sp.symbols("r m L", positive=True)                 # radial coordinate, mass

FAMILY = Family(
    name="gauss-bonnet-ads",
    summary="charged Gauss-Bonnet AdS black hole, d >= 5, horizon curvature k (Wald entropy)",
    reference="Cai, Cao, Li & Yang, JHEP 09 (2013) 005, arXiv:1306.6233; "
              "Wei & Liu, PRD 90 (2014) 044057, arXiv:1402.2837",
    dimension=Parameter("d", 5, length_dimension=0, domain=Domain.integers(5, 26),
                        description="spacetime dimension"),
    parameters=(
        Parameter("k", 1, length_dimension=0, domain=Domain.one_of(1, 0, -1),
                  description="horizon curvature (1 sphere, 0 flat, -1 hyperbolic)"),
        Parameter("alpha", 0.1, length_dimension=2, domain=Domain.nonnegative(),
                  description="Gauss-Bonnet coupling of the action (alpha~ = (d-3)(d-4) alpha)"),
        Parameter("Q", 1.0, length_dimension=d - 3, domain=Domain.nonnegative(),
                  description="electric charge (rn-ads normalisation)"),
    ),
    enthalpy=(d - 2) * _Om / (16 * pi) * (
        k * r ** (d - 3) + _at * k**2 * r ** (d - 5)
        + 16 * pi * P * r ** (d - 1) / ((d - 1) * (d - 2)) + _q**2 / r ** (d - 3)),
    entropy=_Om * r ** (d - 2) / 4 * (1 + 2 * (d - 2) * k * _at / ((d - 4) * r**2)),
    temperature=(16 * pi * P * r**4 / (d - 2) + (d - 3) * k * r**2 + (d - 5) * k**2 * _at
                 - (d - 3) * _q**2 * r ** (8 - 2 * d)) / (4 * pi * r * (r**2 + 2 * k * _at)),
    conditions=(
        Condition("horizon-on-gb-branch", 1 + 2 * k * _at / r**2 > 0,
                  "the square root in f is real and positive at the horizon: the horizon lies "
                  "on the Gauss-Bonnet branch continuous with Einstein gravity",
                  "Cai, Cao, Li & Yang, JHEP 09 (2013) 005, arXiv:1306.6233"),
        Condition("ads-vacuum-exists", 64 * pi * _at * P < (d - 1) * (d - 2),
                  "the AdS vacuum of that branch exists (4 alpha~ < L^2); with the horizon "
                  "condition it keeps the square root real for every r >= r+",
                  "Cai, Cao, Li & Yang, JHEP 09 (2013) 005, arXiv:1306.6233"),
    ),
    # the metric function of the docstring (CCLY13); tests check it reproduces M and T
    metric=Metric.declare(
        k + _rho**2 / (2 * _at) * (1 - sp.sqrt(1 + 4 * _at * _m / _rho ** (d - 1)
                                               - 4 * _at * _q**2 / _rho ** (2 * d - 4)
                                               - 4 * _at / _L**2)),
        mass="m", enthalpy=(d - 2) * _Om * _m / (16 * pi),
        parameters=(alpha, Q),
        text="f = k + r^2/(2 a)(1 - sqrt(1 + 4 a m/r^(d-1) - 4 a q^2/r^(2d-4) - 4 a/L^2)), "
             "a = (d-3)(d-4) alpha, q as in rn-ads, M = (d-2) Omega_{d-2} m/(16 pi)"),
    conventions={
        "coupling": "alpha is the bare Gauss-Bonnet coupling of the action; CCLY13 and "
                    "Wei & Liu use alpha~ = (d-3)(d-4) alpha",
        "entropy": "Wald entropy S = Omega r+^(d-2)/4 (1 + 2(d-2) k alpha~/((d-4) r+^2))",
        "charge": "Q as in rn-ads (GKM 2012); CCLY13's charge is 4 pi Q/Omega_{d-2}",
        "horizon_volume": "horizon volume normalised to Omega_{d-2} for every k",
    },
)
