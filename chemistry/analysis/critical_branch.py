"""Which critical points lie on the globally preferred branch.

A critical point is where a first-order line ends; it matters for the phase diagram only
when that line is a transition of the globally preferred phase (the minimum of G over
the locally stable branches).  Deciding it needs the isobar analysis just off P_c
(:func:`bhchem.analysis.phases.takes_part_in_transition`), so it is not part of the
plain search of :mod:`bhchem.analysis.critical`, which sits below the phase analysis.
"""
from __future__ import annotations

import threading
import weakref
from dataclasses import replace

from bhchem.analysis.critical import CriticalSearch, find_critical_points
from bhchem.analysis.phases import takes_part_in_transition
from bhchem.analysis.consistency import emit, first_law_warnings
from bhchem.analysis.topology import critical_point_charge
from bhchem.core.compiled import Thermodynamics, bind

_CACHE: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()
_LOCK = threading.Lock()


def find_critical_points_on_branches(family, method: str = "auto", *, pressure_range=None,
                                     state_range=None, **params) -> CriticalSearch:
    """:func:`~bhchem.analysis.critical.find_critical_points`, with ``on_preferred_branch``
    and the ``topological_charge`` decided for every point (a new frozen result; the plain
    search is not changed).

    Parameters are those of :func:`~bhchem.analysis.critical.find_critical_points`.

    Examples
    --------
    The 4D charged AdS black hole: its one critical point ends the small/large
    line of the preferred phase (Kubiznak & Mann, JHEP 07 (2012) 033).

    >>> from bhchem import bind
    >>> (cp,) = find_critical_points_on_branches(bind("rn-ads", Q=1.0)).physical
    >>> cp.on_preferred_branch
    True
    """
    th = family if isinstance(family, Thermodynamics) else bind(family, **params)
    default = method == "auto" and pressure_range is None and state_range is None
    if default:
        with _LOCK:
            hit = _CACHE.get(th)
        if hit is not None:
            emit(hit.warnings)
            return hit
    base = find_critical_points(th, method, pressure_range=pressure_range,
                                state_range=state_range)
    points = tuple(replace(cp, on_preferred_branch=takes_part_in_transition(th, cp),
                           topological_charge=critical_point_charge(th, cp))
                   for cp in base.points)
    result = replace(base, points=points, warnings=first_law_warnings(th))
    if default:
        with _LOCK:
            _CACHE[th] = result
    emit(result.warnings)
    return result
