"""One exception tree for the whole tool.

Every error a user can cause derives from :class:`BhchemError`; the CLI turns
any of them into one line on stderr and exit code 2.  Names say what went wrong
(the networkx habit), so callers can catch precisely what they can handle.
"""
from __future__ import annotations


class BhchemError(Exception):
    """Base class of every error the tool raises on purpose."""


class UnknownFamilyError(BhchemError, KeyError):
    """A family name that is neither bundled, installed nor loaded from a file."""

    def __str__(self) -> str:  # KeyError would quote the message
        return str(self.args[0]) if self.args else ""


class DuplicateFamilyError(BhchemError):
    """Two families registered under the same name."""


class UnknownParameterError(BhchemError):
    """A parameter name the family does not declare."""


class ParameterDomainError(BhchemError, ValueError):
    """A parameter value outside its declared physical domain."""


class MalformedFamilyError(BhchemError):
    """A family declaration (bundled, plug-in file or declarative file) is unusable."""


class StateDomainError(BhchemError, ValueError):
    """A request that has no physical black-hole (or fluid) state, e.g. P <= 0."""


class FamilyFileReloaded(UserWarning):
    """A plug-in file was loaded again after its content changed; its families were
    replaced by the new ones (results computed before refer to the old ones)."""


class InvalidArgumentError(BhchemError, ValueError, TypeError):
    """An argument of the Python API that has the wrong type or value (a reversed range,
    ``None`` or an array where one pressure is expected, ...)."""


class BhchemWarning(UserWarning):
    """Base class of the warnings the analyses issue (the text is also in the result)."""


class InconsistentFamilyWarning(BhchemWarning):
    """The family fails the first law: results that rest on it (coexistence, equal area,
    Clapeyron, latent heat, exponents from G, phase lines) have no thermodynamic meaning."""


class ResidualBoundWarning(BhchemWarning):
    """A residual of a result is above the bound the tool promises for it."""
