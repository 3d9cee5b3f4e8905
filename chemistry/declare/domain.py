"""Physical domains of parameters, declared as data.

A :class:`Domain` is an interval (open or closed at each end, possibly
unbounded), optionally restricted to integers, or a finite set of allowed
values.  It validates user input and describes itself in one readable line.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field


def _fmt(x: float) -> str:
    if isinstance(x, float) and x.is_integer() and abs(x) < 1e15:
        return str(int(x))
    return repr(x) if isinstance(x, float) else str(x)


@dataclass(frozen=True)
class Domain:
    """Allowed values of a parameter.

    Parameters
    ----------
    lower, upper : float
        Interval ends (``-inf``/``inf`` for unbounded).
    lower_closed, upper_closed : bool
        Whether the end itself is allowed.
    integer : bool
        Only integers are allowed (e.g. the spacetime dimension).
    choices : tuple or None
        A finite set of allowed values (e.g. horizon curvature k in {-1, 0, 1});
        when given, the interval is ignored.
    """

    lower: float = -math.inf
    upper: float = math.inf
    lower_closed: bool = False
    upper_closed: bool = False
    integer: bool = False
    choices: tuple | None = field(default=None)

    # -- constructors -----------------------------------------------------
    @classmethod
    def positive(cls) -> "Domain":
        """x > 0."""
        return cls(0.0, math.inf)

    @classmethod
    def nonnegative(cls) -> "Domain":
        """x >= 0."""
        return cls(0.0, math.inf, lower_closed=True)

    @classmethod
    def real(cls) -> "Domain":
        """Any finite real number."""
        return cls()

    @classmethod
    def integers(cls, minimum: int, maximum: int | None = None) -> "Domain":
        """Integers minimum <= n (<= maximum)."""
        return cls(float(minimum), math.inf if maximum is None else float(maximum),
                   lower_closed=True, upper_closed=maximum is not None, integer=True)

    @classmethod
    def one_of(cls, *values) -> "Domain":
        """A finite set of values."""
        return cls(choices=tuple(values))

    @classmethod
    def interval(cls, lower: float, upper: float, *, closed: str = "") -> "Domain":
        """An interval; ``closed`` is any of '', 'lower', 'upper', 'both'."""
        return cls(float(lower), float(upper),
                   lower_closed=closed in ("lower", "both"),
                   upper_closed=closed in ("upper", "both"))

    # -- use ----------------------------------------------------------------
    @property
    def discrete(self) -> bool:
        """True for integer or finite-set domains (structural parameters)."""
        return self.integer or self.choices is not None

    def contains(self, value: float) -> bool:
        """Whether ``value`` is allowed (NaN and infinities never are)."""
        try:
            x = float(value)
        except (TypeError, ValueError):
            return False
        if not math.isfinite(x):
            return False
        if self.choices is not None:
            return any(x == float(c) for c in self.choices)
        if self.integer and not x.is_integer():
            return False
        lo_ok = x > self.lower or (self.lower_closed and x == self.lower)
        hi_ok = x < self.upper or (self.upper_closed and x == self.upper)
        return lo_ok and hi_ok

    def describe(self, name: str = "x") -> str:
        """One-line description, e.g. ``Q >= 0`` or ``d integer >= 4``."""
        if self.choices is not None:
            return f"{name} in {{{', '.join(_fmt(c) for c in self.choices)}}}"
        parts = []
        if math.isfinite(self.lower):
            parts.append(f"{_fmt(self.lower)} {'<=' if self.lower_closed else '<'} ")
        parts.append(name)
        if math.isfinite(self.upper):
            parts.append(f" {'<=' if self.upper_closed else '<'} {_fmt(self.upper)}")
        text = "".join(parts)
        if text == name:
            text = f"{name} real"
        if self.integer:
            text = f"{text}, integer"
        # put lower bound on the right for the common one-sided case: 'Q >= 0'
        if math.isfinite(self.lower) and not math.isfinite(self.upper):
            text = f"{name} {'>=' if self.lower_closed else '>'} {_fmt(self.lower)}"
            if self.integer:
                text += ", integer"
        return text
