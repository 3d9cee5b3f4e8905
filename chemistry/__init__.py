"""chemistry: the engine of bhchem, black hole chemistry in the extended phase space.

Public API
----------
Family, Parameter, Domain        declare a family (see DEVELOPERS.md)
bind(family, **params)           a family at parameter values -> Thermodynamics
derive(family, **discrete)       the symbolic derivation (cached)
check_first_law, check_smarr     verdicts with residuals
get_family, available_families, load_family_file, register

Conventions: G = c = hbar = k_B = 1; P = -Lambda/(8 pi) = (d-1)(d-2)/(16 pi L^2);
M is the enthalpy; V = (dM/dP)_{S,q}; v = 4 r+/(d-2); G = M - T S.
"""
from .domain import Domain
from .family import Family, Parameter
from .errors import (BhchemError, ConvergenceError, DuplicateFamilyError,
                     MalformedFamilyError, ParameterDomainError, StateDomainError,
                     UnknownFamilyError, UnknownParameterError)

__version__ = "0.1.0"


def __getattr__(name):
    # heavy parts load on first use, so that declaring a family stays cheap
    if name in ("bind", "Thermodynamics", "State"):
        from . import compiled
        return getattr(compiled, name)
    if name in ("derive", "Derivation"):
        from . import derive as _d
        return getattr(_d, name)
    if name in ("check_first_law", "check_smarr", "FirstLawResult", "SmarrResult"):
        from . import checks
        return getattr(checks, name)
    if name in ("get_family", "available_families", "load_family_file", "register"):
        from . import registry
        return getattr(registry, name)
    raise AttributeError(f"module 'chemistry' has no attribute {name!r}")


__all__ = ["Domain", "Family", "Parameter", "BhchemError", "ConvergenceError",
           "DuplicateFamilyError", "MalformedFamilyError", "ParameterDomainError",
           "StateDomainError", "UnknownFamilyError", "UnknownParameterError",
           "bind", "Thermodynamics", "State", "derive", "Derivation", "check_first_law",
           "check_smarr", "FirstLawResult", "SmarrResult", "get_family",
           "available_families", "load_family_file", "register", "__version__"]
