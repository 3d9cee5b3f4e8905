"""Random physical states for numerical verification.

States are drawn log-uniformly around the family's own scales (state variable
around :meth:`Thermodynamics.typical_state`, pressure around
:meth:`Thermodynamics.typical_pressure`, continuous parameters around their
bound values) and kept only when physical (finite, every declared condition).
The generator is seeded, so checks are reproducible.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bhchem.core.compiled import Thermodynamics, bind


@dataclass(frozen=True)
class Sample:
    """Physical sample points: one bound family per parameter draw, with states."""

    points: list  # list of (Thermodynamics, x array, P array)
    n_points: int


def _vary(value: float, rng, spread: float, domain) -> float:
    if value == 0.0:
        return value
    for _ in range(20):
        trial = value * 10 ** rng.uniform(-spread, spread)
        if domain.contains(trial):
            return trial
    return value


def physical_sample(th: Thermodynamics, n_points: int = 64, *, n_draws: int = 4,
                    seed: int = 20261202, vary_parameters: bool = True) -> Sample:
    """Draw up to ``n_points`` physical states spread over ``n_draws`` parameter sets.

    The first draw uses the bound values themselves; later draws vary every
    continuous parameter by up to a factor 2 within its domain.
    """
    rng = np.random.default_rng(seed)
    fam = th.family
    points = []
    total = 0
    per_draw = max(1, n_points // n_draws)
    for i in range(n_draws):
        if i == 0 or not vary_parameters:
            bound = th
        else:
            vals = dict(th.values)
            for p in fam.continuous_parameters:
                vals[p.name] = _vary(float(vals[p.name]), rng, 0.3, p.domain)
            bound = bind(fam, **vals)
        x0, P0 = bound.typical_state(), bound.typical_pressure()
        m = 40 * per_draw
        x = x0 * 10 ** rng.uniform(-1.0, 1.0, m)
        P = P0 * 10 ** rng.uniform(-1.5, 1.5, m)
        ok = bound.physical(x, P)
        x, P = x[ok][:per_draw], P[ok][:per_draw]
        if x.size:
            points.append((bound, x, P))
            total += x.size
    return Sample(points=points, n_points=total)
