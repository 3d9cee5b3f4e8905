r"""Charged third-order Lovelock AdS black hole in d >= 7 dimensions, horizon curvature k.

Frassino, Kubiznak, Mann & Simovic, JHEP 09 (2014) 080, arXiv:1406.7015 (FKMS14), and
Dolan, Kostouki, Kubiznak & Mann, CQG 31 (2014) 242001, arXiv:1407.4783 (DKKM14).
The formulas are written from memory (the search tool reached only the abstracts) and
checked in tests/test_lovelock3_ads.py: T against the surface gravity from the Lovelock
polynomial, alpha3 -> 0 against gauss-bonnet-ads, the isolated critical point re-derived.
Parameters are the *bare* Lovelock couplings of the action, alpha2 (the Gauss-Bonnet
coupling, the same normalisation as ``alpha`` of gauss-bonnet-ads) and alpha3; the papers
write formulas with

.. math::
    \tilde\alpha_2 = (d-3)(d-4)\,\alpha_2,\qquad
    \tilde\alpha_3 = (d-3)(d-4)(d-5)(d-6)\,\alpha_3,\qquad
    \tilde\alpha_0 = \frac{16\pi P}{(d-1)(d-2)} = \frac{1}{L^2}.

The metric function f = k - r^2 g solves the Lovelock polynomial (FKMS14)

.. math::
    \Upsilon(g) \equiv \tilde\alpha_0 + g + \tilde\alpha_2 g^2 + \tilde\alpha_3 g^3
    = \frac{m}{r^{d-1}} - \frac{q^2}{r^{2d-4}},\qquad M = \frac{(d-2)\Omega}{16\pi} m,

with Q = sqrt(2(d-2)(d-3)) Omega q/(8 pi) as in rn-ads and gauss-bonnet-ads.  At the
horizon g = k/r+^2, so

.. math::
    M = \frac{(d-2)\Omega}{16\pi}\Bigl(\frac{16\pi P r_+^{d-1}}{(d-1)(d-2)} + k r_+^{d-3}
        + \tilde\alpha_2 k^2 r_+^{d-5} + \tilde\alpha_3 k^3 r_+^{d-7} + \frac{q^2}{r_+^{d-3}}\Bigr),

    S = \frac{\Omega r_+^{d-2}}{4}\Bigl(1 + \frac{2(d-2) k\tilde\alpha_2}{(d-4) r_+^2}
        + \frac{3(d-2) k^2\tilde\alpha_3}{(d-6) r_+^4}\Bigr)\quad\text{(Wald entropy)},

    T = \frac{16\pi P r_+^6/(d-2) + (d-3) k r_+^4 + (d-5) k^2\tilde\alpha_2 r_+^2
        + (d-7) k^3\tilde\alpha_3 - (d-3) q^2 r_+^{10-2d}}
        {4\pi r_+ (r_+^4 + 2 k\tilde\alpha_2 r_+^2 + 3 k^2\tilde\alpha_3)} .

Smarr (FKMS14): (d-3) M = (d-2) T S - 2 P V + 2 Psi2 alpha2 + 4 Psi3 alpha3 + (d-3) Phi Q,
with Psi_i = Phi_alpha<i> derived by the engine.  alpha3 = 0 is gauss-bonnet-ads exactly.

Isolated critical point (DKKM14): for k = -1 and the fine-tuned couplings
alpha~3 = alpha~2^2/3 (FKMS14's "alpha = sqrt(3)" in alpha~2 = alpha sqrt(alpha~3)),
Upsilon'(g) = (1 + alpha~2 g)^2 is a perfect square; the coefficient of T in the equation of
state vanishes doubly at r+^2 = alpha~2, where every isotherm passes with zero slope, and at
T_c = 1/(2 pi sqrt(alpha~2)) also with zero curvature: v_c = 4 sqrt(alpha~2)/(d-2),
P_c = (d-1)(d-2)/(48 pi alpha~2) (Q = 0).

Physical domain (relational conditions), besides S > 0 and T >= 0 from the engine: the
horizon and the AdS vacuum lie on one monotonic branch of Upsilon with no zero of
Upsilon' between them (no branch singularity outside the horizon), and Upsilon'(k/r+^2) > 0
(dS/dr+ > 0).  With disc = alpha~2^2 - 3 alpha~3 and g* = -1/(alpha~2 + sqrt(disc)) the
upper zero of Upsilon' (when disc >= 0): Upsilon is monotonic if disc < 0 (or both
couplings vanish); otherwise the Einstein branch needs k/r+^2 > g* and Upsilon(g*) < 0; at
exactly disc = 0 the branch below g* is regular too when sup_{r >= r+} of
m/r^(d-1) - q^2/r^(2d-4) stays below Upsilon(g*).

These are two named conditions: ``horizon-on-einstein-branch`` (Upsilon'(k/r+^2) > 0) and
``regular-exterior`` (the branch logic above).  What the default set excludes at the
fine-tuned hyperbolic couplings (k = -1, alpha~3 = alpha~2^2/3, Q = 0), and why: Upsilon is
then monotonic with Upsilon'(g) = (1 + alpha~2 g)^2, so g(r) is unique, but near
g* = -1/alpha~2 it behaves as g - g* ~ (m/r^(d-1) - Upsilon(g*))^(1/3): f is continuous while
f' diverges, a curvature singularity at the radius where m/r^(d-1) = Upsilon(g*).  With
Upsilon(g*) = alpha~0 - 1/(3 alpha~2), i.e. of the sign of P - P_c:

* P > P_c: every hole with r+ > sqrt(alpha~2) (m > 0, g decreasing from g_h > g* to the
  vacuum g_vac < g*) crosses g* outside its horizon -- excluded; the small holes
  r+ < sqrt(alpha~2) are regular.
* P < P_c: every hole with r+ < sqrt(alpha~2) (then m < 0 and g increases from g_h < g* to
  g_vac > g*) crosses g* outside its horizon -- excluded; the large holes are regular.

So at every pressure only one side of r+ = sqrt(alpha~2) is admissible and no two phases
coexist.  The set ``thermodynamic`` drops ``regular-exterior`` (naked singularities outside
the horizon count); under it the two first-order small/large lines of DKKM14 end at the
isolated critical point (tests/test_admissibility.py, with an independent 40-digit check
of the coexistence temperatures, and the independent integration of g(r) that confirms
the condition exactly); so is a small/large/small/large isobar (FKMS14's multiple
reentrance) at alpha~2 = 2.4, alpha~3 = 1, P = 0.0616, whose first step is zeroth order onto
the large branch's S = 0 end.  The papers' own statement of their conditions was not available
to us (only their abstracts were); the set is named for what it is, not for the papers.
"""
import sympy as sp

from bhchem.declare import Domain, Family, Parameter
from bhchem.declare.conditions import Condition, ConditionSet
from bhchem.declare.symbols import P, d, k, omega, parameter_symbol, pi, r

alpha2 = parameter_symbol("alpha2")
alpha3 = parameter_symbol("alpha3")
Q = parameter_symbol("Q")

_Om = omega(d)
_a0 = 16 * pi * P / ((d - 1) * (d - 2))
_a2 = (d - 3) * (d - 4) * alpha2
_a3 = (d - 3) * (d - 4) * (d - 5) * (d - 6) * alpha3
_q = 8 * pi * Q / (sp.sqrt(2 * (d - 2) * (d - 3)) * _Om)


def _upsilon(g):
    return _a0 + g + _a2 * g**2 + _a3 * g**3


def _upsilon_prime(g):
    return 1 + 2 * _a2 * g + 3 * _a3 * g**2


_BRANCHES = ("Camanho & Edelstein, CQG 30 (2013) 035009, arXiv:1103.3669 (journal from "
             "memory); derived in the docstring of this module")

_gh = k / r**2                                       # g at the horizon
_disc = _a2**2 - 3 * _a3
_gstar = -1 / (_a2 + sp.sqrt(_disc))                 # upper zero of Upsilon' (disc >= 0)
_m = r ** (d - 1) * _upsilon(_gh) + _q**2 / r ** (d - 3)          # mass parameter m(r+)
_rstar = (2 * (d - 2) * _q**2 / ((d - 1) * _m)) ** (1 / (d - 3))  # maximum of m/r^(d-1) - q^2/r^(2d-4)
_rhs_max = sp.Piecewise((_m * (d - 3) / (2 * (d - 2) * _rstar ** (d - 1)), _rstar > r),
                        (_upsilon(_gh), True))
_rhs_sup = sp.Piecewise((_rhs_max, _rhs_max > 0), (0, True))
# One relation encodes the branch logic (Piecewise picks the first case that applies; the
# engine evaluates it with numpy.select, which broadcasts; sympy Or/And/Max do not):
_branch = sp.Piecewise(
    (1, _disc < 0),                              # Upsilon' > 0 everywhere: one regular branch
    (1, _a2 + _a3 <= 0),                         # Einstein gravity (both couplings vanish)
    (-_upsilon(_gstar), _gh > _gstar),           # Einstein branch: vacuum above g* too
    (_upsilon(_gstar) - _rhs_sup, _disc <= 0),   # fine-tuned (disc = 0): regular lower branch
    (-1, True)) > 0

FAMILY = Family(
    name="lovelock3-ads",
    summary="charged third-order Lovelock AdS black hole, d >= 7, horizon curvature k",
    reference="Frassino, Kubiznak, Mann & Simovic, JHEP 09 (2014) 080, arXiv:1406.7015; "
              "Dolan, Kostouki, Kubiznak & Mann, CQG 31 (2014) 242001, arXiv:1407.4783",
    dimension=Parameter("d", 7, length_dimension=0, domain=Domain.integers(7, 26),
                        description="spacetime dimension"),
    parameters=(
        Parameter("k", 1, length_dimension=0, domain=Domain.one_of(1, 0, -1),
                  description="horizon curvature (1 sphere, 0 flat, -1 hyperbolic)"),
        Parameter("alpha2", 0.1, length_dimension=2, domain=Domain.nonnegative(),
                  description="Gauss-Bonnet coupling of the action (alpha~2 = (d-3)(d-4) alpha2)"),
        Parameter("alpha3", 0.005, length_dimension=4, domain=Domain.nonnegative(),
                  description="third-order Lovelock coupling (alpha~3 = (d-3)...(d-6) alpha3)"),
        Parameter("Q", 1.0, length_dimension=d - 3, domain=Domain.nonnegative(),
                  description="electric charge (rn-ads normalisation)"),
    ),
    enthalpy=(d - 2) * _Om / (16 * pi) * (
        16 * pi * P * r ** (d - 1) / ((d - 1) * (d - 2)) + k * r ** (d - 3)
        + _a2 * k**2 * r ** (d - 5) + _a3 * k**3 * r ** (d - 7) + _q**2 / r ** (d - 3)),
    entropy=_Om * r ** (d - 2) / 4 * (1 + 2 * (d - 2) * k * _a2 / ((d - 4) * r**2)
                                      + 3 * (d - 2) * k**2 * _a3 / ((d - 6) * r**4)),
    temperature=(16 * pi * P * r**6 / (d - 2) + (d - 3) * k * r**4 + (d - 5) * k**2 * _a2 * r**2
                 + (d - 7) * k**3 * _a3 - (d - 3) * _q**2 * r ** (10 - 2 * d))
    / (4 * pi * r * (r**4 + 2 * k * _a2 * r**2 + 3 * k**2 * _a3)),
    conditions=(
        Condition("horizon-on-einstein-branch", _upsilon_prime(_gh) > 0,
                  "the horizon value g = k/r+^2 lies where Upsilon increases (Upsilon' > 0: a "
                  "positive effective Newton constant, the branch continuous with Einstein "
                  "gravity); Upsilon' = 0 at the horizon is a branch singularity there",
                  _BRANCHES),
        Condition("regular-exterior", _branch,
                  "no zero of Upsilon' between the horizon and infinity: where Upsilon'(g) = 0 "
                  "the metric's derivative diverges (a curvature singularity, naked outside the "
                  "horizon), and the exterior ends in the AdS vacuum of the horizon's branch",
                  _BRANCHES),
    ),
    condition_sets=(
        ConditionSet("thermodynamic", ("positive-entropy", "nonnegative-temperature",
                                       "horizon-on-einstein-branch"),
                     "the thermodynamic conditions alone (S > 0, T >= 0, horizon on the "
                     "Einstein branch), without regularity of the exterior: states with a "
                     "naked curvature singularity outside the horizon count",
                     "the set under which the two first-order lines of DKKM14 (CQG 31 (2014) "
                     "242001) and a small/large/small/large isobar as in FKMS14 (JHEP 09 "
                     "(2014) 080) are reproduced, tests/test_admissibility.py"),
    ),
    conventions={
        "coupling": "alpha2, alpha3 are the bare Lovelock couplings of the action (alpha2 = the "
                    "alpha of gauss-bonnet-ads); FKMS14/DKKM14 use alpha~2 = (d-3)(d-4) alpha2, "
                    "alpha~3 = (d-3)(d-4)(d-5)(d-6) alpha3",
        "entropy": "Wald entropy",
        "charge": "Q as in rn-ads (GKM 2012)",
        "horizon_volume": "horizon volume normalised to Omega_{d-2} for every k",
    },
)
