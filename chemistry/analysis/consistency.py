"""Warnings that results carry when their meaning is in doubt.

Two causes, each with its own category (:mod:`bhchem.errors`):

- the family fails the first law (:func:`bhchem.core.checks.first_law_proved, first_law_verdict`, computed
  once per bound family): coexistence lines, equal area, Clapeyron slopes, latent heats,
  exponents from G, isobar transitions and the phase diagram then rest on a G that is not
  the thermodynamic potential of the declared T and S (:class:`InconsistentFamilyWarning`);
- a residual above the bound the README promises for it (:class:`ResidualBoundWarning`).

Each warning is text in the result's ``warnings`` (so the text and JSON output show it) and
is also issued with :func:`warnings.warn` by the public function that made the result.
"""
from __future__ import annotations

import warnings

from bhchem.core.checks import first_law_proved, first_law_verdict
from bhchem.core.compiled import Thermodynamics
from bhchem.errors import InconsistentFamilyWarning, ResidualBoundWarning

#: promised bounds of the checks of a first-order or Hawking-Page line
#: (README, "Numerical guarantees": coexistence point)
LINE_CHECK_BOUNDS = {"max_residual_T": 1e-12, "max_residual_G": 1e-12,
                     "max_equal_area_residual": 1e-10, "max_clapeyron_residual": 1e-10}

FIRST_LAW_PREFIX = "the family fails the first law"


def first_law_warnings(th: Thermodynamics) -> tuple:
    """The warning text for a family that fails the first law, else ``()``.

    Parameters
    ----------
    th : Thermodynamics

    Returns
    -------
    tuple of str
        One message naming the verdict, or empty when the first law holds (or could not
        be tested: no physical sample point, which the first-law verdict reports itself).
    """
    if first_law_proved(th.derivation):   # holds identically: no numerical check needed
        return ()
    verdict = first_law_verdict(th)
    if verdict.holds is not False:
        return ()
    return (f"{FIRST_LAW_PREFIX} ({verdict.message}): coexistence, equal area, Clapeyron, "
            "latent heat, exponents from G and phase lines computed from it have no "
            "thermodynamic meaning",)


def line_check_warnings(label: str, checks: dict) -> list:
    """One message per check of a phase line above its promised bound.

    Parameters
    ----------
    label : str
        Names the line in the message, e.g. ``'first-order line small/large'``.
    checks : dict
        ``PhaseLine.checks``.

    Returns
    -------
    list of str
    """
    out = []
    for key, bound in LINE_CHECK_BOUNDS.items():
        value = checks.get(key)
        if value is not None and not value <= bound:
            out.append(f"{label}: {key} = {value:.1e} is above its promised bound {bound:.0e}")
    return out


def emit(messages, stacklevel: int = 3) -> None:
    """Issue every message with :func:`warnings.warn`, in its category.

    Parameters
    ----------
    messages : iterable of str
        First-law messages become :class:`InconsistentFamilyWarning`, every other one
        :class:`ResidualBoundWarning`.
    stacklevel : int
        Passed on, so that the warning points at the caller of the public function.
    """
    for m in messages:
        category = InconsistentFamilyWarning if m.startswith(FIRST_LAW_PREFIX) \
            else ResidualBoundWarning
        warnings.warn(m, category, stacklevel=stacklevel)
