"""Side by side: the two ensembles of one family at the same pressure.

A declared family holds its charge fixed (Q, J); its fixed-potential ensemble
(:func:`bhchem.core.ensemble.fixed_potential_family`, chosen by binding ``Phi_Q=...``)
holds the conjugate potential fixed instead.  :func:`compare_ensembles` runs the same
analyses on both bindings -- every critical point, and the isobar at one pressure with its
transitions and preferred phases -- and returns them together, the comparison papers draw
by hand (e.g. charged AdS: a small/large first-order transition ending at a critical point
at fixed Q, a Hawking-Page transition and no critical point at fixed Phi).

Example
-------
>>> from bhchem import bind
>>> cmp = compare_ensembles(bind("rn-ads", Q=1.0), bind("rn-ads", Phi_Q=0.5), 0.002)
>>> [s.transition_kinds for s in cmp.sides]
[('first-order',), ('hawking-page',)]
"""
from __future__ import annotations

from dataclasses import dataclass, field

from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.isobar import IsobarResult, analyze_isobar
from bhchem.core.compiled import Thermodynamics
from bhchem.core.results import Result
from bhchem.errors import InvalidArgumentError


@dataclass(frozen=True, repr=False)
class EnsembleSide(Result):
    """One ensemble of the comparison.

    Attributes
    ----------
    family : str
        The bound family's name (``rn-ads`` or ``rn-ads-fixed-phi-q``).
    ensemble : dict
        ``Family.ensemble_record()``: label, the variables held fixed, the swaps.
    parameters : dict
    critical_points : tuple of CriticalPoint
        The physical ones (none is a result).
    completeness : str
        Of the critical-point search (``certified`` or ``scanned``).
    isobar : IsobarResult
        At the comparison's pressure.
    converged : bool
        Both the search and the isobar.
    """

    family: str
    ensemble: dict
    parameters: dict
    critical_points: tuple
    completeness: str
    isobar: IsobarResult
    converged: bool

    @property
    def transition_kinds(self) -> tuple:
        """Kinds of the isobar's transitions, in increasing T."""
        return tuple(t.kind for t in self.isobar.transitions)


@dataclass(frozen=True, repr=False)
class EnsembleComparison(Result):
    """Both ensembles of one family at one pressure (see module docstring).

    Attributes
    ----------
    pressure : float
    sides : tuple of EnsembleSide
        The fixed-charge ensemble first.
    converged : bool
    message : str
        One line per ensemble: critical points, transitions at this pressure.
    warnings : tuple of str
    """

    pressure: float
    sides: tuple
    converged: bool
    message: str
    warnings: tuple = field(default_factory=tuple)


def _side(th: Thermodynamics, pressure: float) -> EnsembleSide:
    search = find_critical_points(th)
    iso = analyze_isobar(th, pressure, critical_points=search.physical)
    return EnsembleSide(family=th.family.name, ensemble=th.family.ensemble_record(),
                        parameters=dict(iso.parameters), critical_points=search.physical,
                        completeness=search.completeness, isobar=iso,
                        converged=bool(search.converged))


def _describe(side: EnsembleSide) -> str:
    fixed = ", ".join(n for n in side.ensemble.get("held_fixed", ()) if n != "P")
    cps = side.critical_points
    head = f"fixed {fixed}: {len(cps)} critical point(s)"
    if cps:
        head += " (" + ", ".join(f"T_c = {c.T:.6g}, P_c = {c.P:.6g}" for c in cps) + ")"
    trans = side.isobar.transitions
    if trans:
        head += "; at this pressure " + ", ".join(f"{t.kind} at T = {t.T:.10g}" for t in trans)
    else:
        head += "; no transition at this pressure"
    return head


def compare_ensembles(charge_bound: Thermodynamics, potential_bound: Thermodynamics,
                      pressure: float) -> EnsembleComparison:
    """Critical points and the isobar at ``pressure`` in both ensembles of one family.

    Parameters
    ----------
    charge_bound : Thermodynamics
        The declared family (charges held fixed), e.g. ``bind("rn-ads", Q=1)``.
    potential_bound : Thermodynamics
        Its fixed-potential ensemble, e.g. ``bind("rn-ads", Phi_Q=0.5)``.
    pressure : float

    Raises
    ------
    InvalidArgumentError
        When the second binding is not an ensemble of the first one's family.
    """
    a, b = charge_bound, potential_bound
    if a.family.ensemble or not b.family.ensemble or b.family.parent != a.family.name:
        raise InvalidArgumentError(
            f"compare_ensembles needs a declared family and its fixed-potential ensemble "
            f"(got {a.family.name} and {b.family.name})")
    sides = (_side(a, pressure), _side(b, pressure))
    warnings = tuple(w for s in sides for w in s.isobar.warnings)
    msg = "; ".join(_describe(s) for s in sides)
    return EnsembleComparison(pressure=float(pressure), sides=sides,
                              converged=all(s.converged for s in sides), message=msg,
                              warnings=warnings)
