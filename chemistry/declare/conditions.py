"""Admissibility as data: the named conditions a physical state satisfies, and named sets.

Which black holes count is a physical choice, and papers differ in it.  A family states
its conditions as a list of :class:`Condition` objects (a name, a relation in the state
variable, ``P``, the parameters and possibly ``T``, a one-line reason and a reference);
the engine adds two of its own to every black hole family:

``positive-entropy``
    S > 0 (families on the enthalpy route with gravitational scaling).
``nonnegative-temperature``
    T >= 0 (unless the family sets ``require_nonnegative_temperature=False``).

A :class:`ConditionSet` names a selection of them (for example the set a given paper
uses).  The set called ``default`` always exists and holds *every* condition: the
strictest physically motivated choice.  A binding may choose another set and drop
further conditions by name (``bind(..., conditions="papers-2014", without=(...,))``);
every result records the selection it used (:class:`Admissibility`).

Example
-------
>>> from bhchem.declare.conditions import Condition
>>> from bhchem.declare.symbols import r, parameter_symbol
>>> b = parameter_symbol("b")
>>> Condition("outside-core", r > b, "the horizon lies outside the matter core",
...           "common practice").name
'outside-core'
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field

from bhchem.errors import InvalidArgumentError

#: names of conditions and sets: kebab-case, like family names
NAME_PATTERN = re.compile(r"^[a-z][a-z0-9]*(-[a-z0-9]+)*$")

#: the set that holds every condition of a family
DEFAULT_SET = "default"


@dataclass(frozen=True)
class Condition:
    """A named condition a physical state satisfies.

    Parameters
    ----------
    name : str
        Kebab-case identifier, unique within the family (``regular-exterior``).
    relation : sympy relational
        In the state variable, ``P``, the parameters and possibly ``T``; a boolean
        combination (``And``/``Or``) or a ``Piecewise(...) > 0`` is allowed.
    reason : str
        One line: why a physical state satisfies it.
    reference : str
        Where the condition comes from (a paper: authors, journal, year, arXiv id), or
        ``"common practice"``.
    """

    name: str
    relation: object
    reason: str
    reference: str = "common practice"


@dataclass(frozen=True)
class ConditionSet:
    """A named selection of a family's conditions (e.g. the set a paper uses).

    Parameters
    ----------
    name : str
        Kebab-case identifier (``default`` is reserved: it is every condition).
    members : tuple of str
        Names of the conditions kept (the engine's ``positive-entropy`` and
        ``nonnegative-temperature`` included only when listed).
    description : str
        One line: what the set is and why one would use it.
    reference : str
        The paper whose conditions these are, or ``"common practice"``.
    """

    name: str
    members: tuple = field(default_factory=tuple)
    description: str = ""
    reference: str = ""

    def __post_init__(self):
        object.__setattr__(self, "members", tuple(self.members))


#: the engine's own conditions: name -> (relation text, reason, reference)
ENGINE_CONDITIONS = {
    "positive-entropy": (
        "S > 0",
        "the entropy counts states (Bekenstein-Hawking or Wald); a state with S <= 0 has "
        "no statistical interpretation",
        "common practice"),
    "nonnegative-temperature": (
        "T >= 0",
        "the surface gravity of a non-extremal horizon is positive (T = 0 is extremal); "
        "T < 0 marks a root of f that is not the outer event horizon",
        "common practice"),
}


@dataclass(frozen=True)
class Admissibility:
    """Which conditions a binding uses to decide which states count.

    Attributes
    ----------
    set_name : str
        The chosen set (``default``: every condition).
    active : tuple of str
        Names of the conditions applied, in declaration order.
    dropped : tuple of str
        Names of the family's conditions not applied (outside the set, or removed
        with ``without``).
    removed : tuple of str
        Names removed explicitly with ``without`` (a subset of ``dropped``).
    """

    set_name: str
    active: tuple
    dropped: tuple = ()
    removed: tuple = ()

    @property
    def is_default(self) -> bool:
        """Every condition applies (the default set, nothing removed)."""
        return not self.dropped

    def label(self) -> str:
        """One short phrase for text output and figure titles, e.g.
        ``"default conditions"`` or ``"conditions: default without regular-exterior"``."""
        if self.is_default:
            return "default conditions"
        text = f"conditions: {self.set_name}"
        if self.removed:
            text += f" without {', '.join(self.removed)}"
        return text

    def to_dict(self) -> dict:
        """JSON-ready record."""
        return {"set": self.set_name, "active": list(self.active),
                "dropped": list(self.dropped), "removed": list(self.removed)}

    @classmethod
    def from_dict(cls, doc: dict) -> "Admissibility":
        """Inverse of :meth:`to_dict` (an empty record is the default selection)."""
        if not doc:
            return cls(DEFAULT_SET, ())
        return cls(doc["set"], tuple(doc["active"]), tuple(doc.get("dropped", ())),
                   tuple(doc.get("removed", ())))


def condition_name_error(family_name: str, name) -> str | None:
    """A one-line complaint when ``name`` is not a valid condition or set name."""
    if not isinstance(name, str) or not NAME_PATTERN.match(name):
        return (f"family {family_name}: condition name {name!r} must be kebab-case "
                f"(lower-case letters, digits, hyphens), e.g. 'regular-exterior'")
    return None


def select(family_name: str, names: tuple, sets: dict, chosen=None, without=()) -> Admissibility:
    """The admissibility of a binding.

    Parameters
    ----------
    family_name : str
        For messages.
    names : tuple of str
        Every condition of the family, in order (engine conditions first).
    sets : dict
        Set name -> ConditionSet (the family's own sets; ``default`` is implied).
    chosen : str, optional
        A set name (default ``"default"``).
    without : iterable of str
        Condition names to drop in addition.

    Raises
    ------
    InvalidArgumentError
        An unknown set or condition name (one line listing the known ones).
    """
    chosen = DEFAULT_SET if chosen in (None, "") else chosen
    if not isinstance(chosen, str):
        raise InvalidArgumentError(
            f"conditions must be the name of a condition set, not {type(chosen).__name__}")
    if isinstance(without, str):
        without = tuple(w.strip() for w in without.split(",") if w.strip())
    without = tuple(without or ())
    if chosen == DEFAULT_SET:
        members = names
    elif chosen in sets:
        members = sets[chosen].members
    else:
        known = ", ".join([DEFAULT_SET] + sorted(n for n in sets if n != DEFAULT_SET))
        raise InvalidArgumentError(
            f"family {family_name} has no condition set {chosen!r}; known sets: {known}")
    unknown = [w for w in without if w not in names]
    if unknown:
        raise InvalidArgumentError(
            f"family {family_name} has no condition {unknown[0]!r}; its conditions: "
            f"{', '.join(names) or 'none'}")
    active = tuple(n for n in names if n in members and n not in without)
    dropped = tuple(n for n in names if n not in active)
    return Admissibility(chosen, active, dropped, tuple(w for w in names if w in without))
