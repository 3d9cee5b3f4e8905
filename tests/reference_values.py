"""Literature reference values used by the tests, with stable ids and sources.

Each entry names where the value comes from.  Values derived in the test from
an exact analytic result say so; values recalled from memory say "from memory".
"""
from __future__ import annotations

import math
from dataclasses import dataclass


@dataclass(frozen=True)
class Reference:
    id: str
    source: str
    statement: str


REFERENCES = {r.id: r for r in [
    Reference("KM12-rn4d-T",
              "Kubiznak & Mann, JHEP 07 (2012) 033, arXiv:1205.0559, eq. (2.8)-(2.10)",
              "4D charged AdS: T = (1 + 8 pi P r^2 - Q^2/r^2)/(4 pi r), V = 4 pi r^3/3, "
              "M = 2TS - 2PV + Phi Q"),
    Reference("KRT09-smarr",
              "Kastor, Ray & Traschen, CQG 26 (2009) 195011, arXiv:0904.2765",
              "(d-3) M = (d-2) T S - 2 P V (+ (d-3) Phi Q with charge)"),
    Reference("GKM12-rn-d",
              "Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110, arXiv:1208.6251, Sec. 3",
              "f = 1 - m/r^(d-3) + q^2/r^(2(d-3)) + r^2/L^2, M = (d-2) Omega m/(16 pi), "
              "Q = sqrt(2(d-2)(d-3)) Omega q/(8 pi), Phi = sqrt((d-2)/(2(d-3))) q/r^(d-3)"),
    Reference("HP83-tmin",
              "Hawking & Page, Commun. Math. Phys. 87 (1983) 577",
              "4D Schwarzschild-AdS: T_min = sqrt(3)/(2 pi L) at r = L/sqrt(3); "
              "G = 0 at r = L, T = 1/(pi L)"),
    Reference("vdW-textbook",
              "van der Waals equation, e.g. Callen, Thermodynamics (2nd ed., 1985), Sec. 3.5",
              "P = T/(v-b) - a/v^2; u = c_v T - a/v; critical point v_c = 3b, "
              "T_c = 8a/(27b), P_c = a/(27 b^2)"),
]}


def ads_radius_to_pressure(L: float, d: int = 4) -> float:
    """P = (d-1)(d-2)/(16 pi L^2) (the project's convention)."""
    return (d - 1) * (d - 2) / (16 * math.pi * L**2)
