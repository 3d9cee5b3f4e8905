"""The conventions every result carries (stated once, here and in the README)."""
from __future__ import annotations

UNITS = "G = c = hbar = k_B = 1"
PRESSURE = "P = -Lambda/(8 pi) = (d-1)(d-2)/(16 pi L^2)"
OMEGA = "Omega_{d-2} = 2 pi^((d-1)/2) / Gamma((d-1)/2)"
ENTHALPY = "M is the enthalpy H(S, P, charges)"
VOLUME = "V = (dM/dP) at fixed S and parameters"
SPECIFIC_VOLUME = "v = 4 r+/(d-2) (= 2 r+ in 4D) unless the family states otherwise"
GIBBS = "G = M - T S"
CHARGE = ("charges normalised as in Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110 "
          "(arXiv:1208.6251) unless the family states otherwise")


def convention_record(family=None) -> dict:
    """The conventions as a JSON-ready dict; a family may add or override entries."""
    record = {
        "units": UNITS,
        "pressure": PRESSURE,
        "omega": OMEGA,
        "mass": ENTHALPY,
        "volume": VOLUME,
        "specific_volume": SPECIFIC_VOLUME,
        "gibbs": GIBBS,
        "charge": CHARGE,
    }
    if family is not None:
        label = getattr(family, "ensemble_label", None)
        if label is not None:
            record["ensemble"] = label()
        record.update(dict(family.conventions))
    return record
