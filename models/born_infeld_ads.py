r"""Born-Infeld-AdS black hole in 4D: charged black hole of nonlinear (Born-Infeld)
electrodynamics with maximal field strength b.

Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251, Sec. 4 (solution of
Fernando & Krug, Gen. Rel. Grav. 35 (2003) 129; Dey, PLB 595 (2004) 484; Cai, Pang &
Wang, PRD 70 (2004) 124034; these three from memory).  The formulas are written from
memory (the search tool reached only abstracts) and checked in
tests/test_born_infeld_ads.py: T against the surface gravity of f, B and Phi against
high-precision derivatives of M, and the b -> infinity limit against rn-ads:

.. math::
    f = 1 - \frac{2M}{r} + \frac{r^2}{L^2}
        + \frac{2 b^2 r^2}{3}\Bigl(1 - \sqrt{1 + \frac{Q^2}{b^2 r^4}}\Bigr)
        + \frac{4 Q^2}{3 r^2}\,{}_2F_1\Bigl(\frac14, \frac12; \frac54; -\frac{Q^2}{b^2 r^4}\Bigr),

so that, with f(r+) = 0, 1/L^2 = 8 pi P/3 and S = pi r+^2,

.. math::
    M = \frac{r_+}{2}\Bigl[1 + \frac{8\pi P r_+^2}{3}
        + \frac{2 b^2 r_+^2}{3}\Bigl(1 - \sqrt{1 + x}\Bigr)
        + \frac{4 Q^2}{3 r_+^2}\,{}_2F_1\Bigl(\frac14, \frac12; \frac54; -x\Bigr)\Bigr],
    \qquad x = \frac{Q^2}{b^2 r_+^4},

    T = \frac{1}{4\pi r_+}\Bigl[1 + 8\pi P r_+^2 + 2 b^2 r_+^2\Bigl(1 - \sqrt{1 + x}\Bigr)\Bigr],

and the engine derives Phi = (Q/r+) 2F1(1/4, 1/2; 5/4; -x), V = 4 pi r+^3/3 and the BI
vacuum polarisation B = Phi_b = (dM/db) = (2 b r+^3/3)(1 - sqrt(1+x)) + Q^2/(3 b r+) 2F1(...),
with the Smarr relation M = 2TS - 2PV + Phi Q - B b (b has length dimension -1).

Numerics: b^2 r^2 (1 - sqrt(1 + x)) is written as the algebraically identical
-(Q^2/r^2)/(1 + sqrt(1 + x)), which has no cancellation as b -> infinity (x -> 0); the
hypergeometric functions are evaluated by bhchem.core.special (scipy's hyp2f1, accurate to
~1e-14 over -1e12 <= z <= 0, checked against mpmath in tests/test_born_infeld_ads.py).
M is declared as a plain sum of terms.  The engine's tidy() (sympy.simplify) keeps that
form because it is already the shortest; written as r/2 [1 + ...] it would be put over the
common denominator r^2 b + sqrt(Q^2 + b^2 r^4), and d/db of that form (which the first-law
check differentiates) cancels the O(M/b) pieces down to an O(x M/b) result, losing
~1e-12/x relative accuracy in the weak-field regime.  As b -> infinity the family reduces
to rn-ads in 4D.
"""
import sympy as sp

from bhchem.declare import Domain, Family, Metric, Parameter
from bhchem.declare.symbols import P, parameter_symbol, pi, r

b = parameter_symbol("b")
Q = parameter_symbol("Q")

_x = Q**2 / (b**2 * r**4)
_F = sp.hyper([sp.Rational(1, 4), sp.Rational(1, 2)], [sp.Rational(5, 4)], -_x)
_root = sp.sqrt(1 + _x)
#: b^2 r^2 (1 - sqrt(1 + x)), in the cancellation-free form
_bi = -Q**2 / (r**2 * (1 + _root))

FAMILY = Family(
    name="born-infeld-ads",
    summary="charged AdS black hole of Born-Infeld electrodynamics in 4D (field strength b)",
    reference="Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251, Sec. 4",
    dimension=4,
    parameters=(
        Parameter("b", 1.0, length_dimension=-1, domain=Domain.positive(),
                  description="Born-Infeld field strength (b -> infinity: Maxwell)"),
        Parameter("Q", 1.0, length_dimension=1, domain=Domain.nonnegative(),
                  description="electric charge"),
    ),
    # a plain sum of terms (see "Numerics" above)
    enthalpy=r / 2 + 4 * pi * P * r**3 / 3 + r * _bi / 3 + 2 * Q**2 * _F / (3 * r),
    entropy=pi * r**2,
    temperature=1 / (4 * pi * r) + 2 * P * r + _bi / (2 * pi * r),
    # sampling scale: the RN extremal radius Q plus the BI radius sqrt(Q/b) (x = 1 there)
    typical_state=sp.Piecewise((Q + sp.sqrt(Q / b), Q > 0), (1 / b, True)),
    # the metric function of the docstring (GKM 2012 Sec. 4); tests check M and T from it
    metric=Metric.declare(
        1 - 2 * sp.Symbol("M") / sp.Symbol("r") + sp.Symbol("r")**2 / sp.Symbol("L")**2
        + 2 * b**2 * sp.Symbol("r")**2 / 3 * (1 - sp.sqrt(1 + Q**2 / (b**2 * sp.Symbol("r")**4)))
        + 4 * Q**2 / (3 * sp.Symbol("r")**2) * sp.hyper(
            [sp.Rational(1, 4), sp.Rational(1, 2)], [sp.Rational(5, 4)],
            -Q**2 / (b**2 * sp.Symbol("r")**4)), parameters=(b, Q),
        text="f = 1 - 2M/r + r^2/L^2 + (2 b^2 r^2/3)(1 - sqrt(1 + Q^2/(b^2 r^4))) "
             "+ (4 Q^2/(3 r^2)) 2F1(1/4, 1/2; 5/4; -Q^2/(b^2 r^4))"),
    conventions={
        "charge": "Q as in GKM 2012 Sec. 4 (= the rn-ads charge in 4D)",
        "born_infeld": "Phi_b = (dM/db)_{S,P,Q} is the BI vacuum polarisation B of GKM 2012",
    },
)
