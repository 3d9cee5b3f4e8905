"""Special functions needed by bundled families, evaluated in double precision.

Only what sympy cannot print to numpy lives here; imported lazily so that
scipy stays out of the cold start of families that do not need it.
"""
from __future__ import annotations

import numpy as np


def hyp2f1_real(a, b, c, z):
    """Gauss hypergeometric 2F1(a, b; c; z) for real arguments, vectorised.

    Uses ``scipy.special.hyp2f1`` (which applies the linear transformations to
    reach |z| < 1 internally).  Non-finite results are returned as NaN so that
    callers' finiteness masks catch them.
    """

    from scipy.special import hyp2f1  # lazy: scipy.special costs ~0.1 s of start-up
    out = hyp2f1(float(a), float(b), float(c), np.asarray(z, dtype=float))
    return np.where(np.isfinite(out), out, np.nan)
