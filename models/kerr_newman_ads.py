r"""Rotating charged (Kerr-Newman) AdS black hole in 4D, and its uncharged case Kerr-AdS.

State variable: the entropy S.  The enthalpy is the fundamental relation of
Caldarelli, Cognola & Klemm, CQG 17 (2000) 399, arXiv:hep-th/9908022 (arXiv id from
memory), written with 1/L^2 = 8 pi P/3 as in the black hole chemistry literature
(Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251, section on rotating
black holes; Cvetic, Gibbons, Kubiznak & Pope, PRD 84 (2011) 024037, arXiv:1012.2888).
The formulas below are written from memory (the search tool reached only the abstracts);
tests/test_kerr_newman_ads.py checks them against the Boyer-Lindquist parametrisation
evaluated independently (M, T from the surface gravity, Omega, Phi, V, r+):

.. math::
    M^2 = \frac{S}{4\pi}\Bigl(1 + \frac{\pi Q^2}{S} + \frac{8 P S}{3}\Bigr)^2
          + \frac{\pi J^2}{S}\Bigl(1 + \frac{8 P S}{3}\Bigr).

It follows from the Kerr-Newman-AdS solution in Boyer-Lindquist form with
parameters (r+, a, q) and Xi = 1 - a^2/L^2 (same references):

.. math::
    M = \frac{m}{\Xi^2},\quad J = a M,\quad Q = \frac{q}{\Xi},\quad
    S = \frac{\pi (r_+^2 + a^2)}{\Xi},\quad
    m = \frac{(r_+^2 + a^2)(1 + r_+^2/L^2) + q^2}{2 r_+},

so that the rotation parameter is a = J/M and the horizon radius is
r+ = sqrt(S Xi/pi - a^2).  These two are declared in closed form in (S, P, J, Q);
the engine derives T = (dM/dS), the angular velocity Omega = Phi_J = (dM/dJ), the
electric potential Phi = Phi_Q and the thermodynamic volume V = (dM/dP), which equals
(CGKP 2011) V = 2 pi [(r+^2 + a^2)(2 r+^2 L^2 + a^2 L^2 - r+^2 a^2) + L^2 q^2 a^2]
/(3 L^2 Xi^2 r+) = r+ A/3 + 4 pi a J/3 (checked in tests/test_kerr_newman_ads.py).

Specific volume: the literature convention for rotating holes, v = 2 (3V/(4 pi))^(1/3)
(GKM 2012, rotating section), i.e. twice the radius of the ball of volume V.  T is not linear in
P, so the equation of state is parametric: (T(S, P), v(S, P)).

Physical domain (relational conditions): a < L (the rotation parameter below the AdS
radius, i.e. 8 pi P J^2 < 3 M^2, equivalently Xi > 0), a real horizon r+^2 > 0, and
the engine's S > 0 and T >= 0 (no naked singularity: extremal at T = 0).  The first two
are implied by the fundamental relation itself (3 M^2 >= 3 pi J^2/S + 8 pi P J^2), so
they never bind; they are declared to state the domain the relation describes.
"""
import sympy as sp

from bhchem.declare.conditions import Condition
from bhchem.declare import Domain, Family, Parameter
from bhchem.declare.symbols import P, S, parameter_symbol, pi

J = parameter_symbol("J")
Q = parameter_symbol("Q")


def _declaration(charged: bool) -> dict:
    q = Q if charged else sp.Integer(0)
    M = sp.sqrt(S / (4 * pi) * (1 + pi * q**2 / S + 8 * P * S / 3) ** 2
                + pi * J**2 / S * (1 + 8 * P * S / 3))
    V = sp.diff(M, P)                      # (dM/dP) at fixed S, J, Q (S does not depend on P)
    a = J / M                              # rotation parameter
    xi = 1 - 8 * pi * P * a**2 / 3         # Xi = 1 - a^2/L^2
    r_plus = sp.sqrt(S * xi / pi - a**2)
    # sampling scales: a few times the extremal entropy of flat Kerr-Newman (2 pi J + pi Q^2),
    # and an AdS radius L^2 ~ 10 r+^2 (P = 3/(8 pi L^2)); 1 when J = Q = 0 (scale-free)
    s_typ = 8 * pi * J + 4 * pi * q**2
    s_typ = sp.Piecewise((s_typ, s_typ > 0), (1, True))
    return dict(
        enthalpy=M,
        entropy=S,
        state=S,
        state_description="entropy S = pi (r+^2 + a^2)/Xi",
        horizon_radius=r_plus,
        specific_volume=2 * (3 * V / (4 * pi)) ** sp.Rational(1, 3),
        conditions=(
            Condition("rotation-below-ads-radius", 8 * pi * P * J**2 < 3 * M**2,
                      "a < L (Xi > 0): the boundary does not rotate faster than light",
                      "Hawking, Hunter & Taylor-Robinson, PRD 59 (1999) 064005 (from memory)"),
            Condition("real-horizon-radius", S * xi / pi - a**2 > 0,
                      "r+^2 = S Xi/pi - a^2 > 0: a real horizon radius",
                      "Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251")),
        typical_state=s_typ,
        typical_pressure=3 / (80 * s_typ),
        conventions={
            "specific_volume": "v = 2 (3 V/(4 pi))^(1/3) (rotating holes; GKM 2012, Sec. 5)",
            "state": "state variable is the entropy S; r+ = sqrt(S Xi/pi - a^2), a = J/M",
            "angular_velocity": "Phi_J = (dM/dJ)_{S,P,Q} = Omega_H - Omega_inf, relative to a "
                                "frame non-rotating at infinity (CGKP 2011)",
            "charge": "Q = q/Xi (Caldarelli, Cognola & Klemm 2000); Q = q when J = 0, the "
                      "normalisation of rn-ads in 4D",
        },
    )


_J_PARAM = Parameter("J", 1.0, length_dimension=2, domain=Domain.nonnegative(),
                     description="angular momentum")
_REF = ("Caldarelli, Cognola & Klemm, CQG 17 (2000) 399, arXiv:hep-th/9908022; "
        "Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251; "
        "Cvetic, Gibbons, Kubiznak & Pope, PRD 84 (2011) 024037, arXiv:1012.2888")

FAMILIES = [
    Family(
        name="kerr-newman-ads",
        summary="rotating charged AdS black hole in 4D (state variable: entropy S)",
        reference=_REF,
        dimension=4,
        parameters=(
            _J_PARAM,
            Parameter("Q", 1.0, length_dimension=1, domain=Domain.nonnegative(),
                      description="electric charge"),
        ),
        **_declaration(charged=True),
    ),
    Family(
        name="kerr-ads",
        summary="rotating AdS black hole in 4D, Kerr-Newman-AdS with Q = 0 (state: entropy S)",
        reference=_REF,
        dimension=4,
        parameters=(_J_PARAM,),
        **_declaration(charged=False),
    ),
]
