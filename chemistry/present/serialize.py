"""One serializer for every JSON text bhchem prints or writes.

:func:`to_json` is the only way a result becomes JSON text, for every ``--json``
output and every JSON file (``results.json`` of a report, the atlas files).  It

* turns NaN and +-infinity into ``null`` (RFC 8259 has no token for them, so a strict
  parser rejects ``NaN``) and lists where that happened under the top-level key
  ``non_finite`` as JSON Pointers (RFC 6901), e.g. ``"/smarr/max_residual"``;
* turns numpy scalars and arrays into plain JSON numbers, booleans and lists;
* sorts keys and prints floats with Python's shortest round-trip representation, so
  the same result gives the same bytes;
* adds the ``convention`` record of :mod:`bhchem.conventions` to a top-level object
  that lacks one, and completes one that has only its own entries (every result
  carries the conventions it uses; a result's own entries are kept and win);
* calls ``json.dumps(..., allow_nan=False)``, so a stray non-finite number can never
  escape as a non-standard token.

Files are written by :mod:`bhchem.fileio` (atomic, umask-respecting).
"""
from __future__ import annotations

import json
import math

from bhchem.conventions import convention_record

#: top-level key listing where non-finite numbers were replaced by null
NON_FINITE_KEY = "non_finite"


# -- JSON ---------------------------------------------------------------------------------
def _pointer_token(key) -> str:
    return str(key).replace("~", "~0").replace("/", "~1")


def jsonable(obj, non_finite: list | None = None, _path: str = ""):
    """A JSON-ready copy of ``obj``: non-finite floats -> None, numpy -> Python.

    Parameters
    ----------
    obj : object
        Nested dicts, lists, tuples, numbers (Python or numpy), numpy arrays,
        strings, booleans and None.
    non_finite : list, optional
        When given, the JSON Pointer (RFC 6901) of every replaced non-finite number
        is appended to it.

    Returns
    -------
    object
        Dict keys become strings, tuples and arrays become lists.
    """
    if isinstance(obj, bool) or obj is None or isinstance(obj, (str, int)):
        return obj
    if isinstance(obj, float):
        if math.isfinite(obj):
            return obj
        if non_finite is not None:
            non_finite.append(_path)
        return None
    if isinstance(obj, dict):
        return {str(k): jsonable(v, non_finite, f"{_path}/{_pointer_token(k)}")
                for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v, non_finite, f"{_path}/{i}") for i, v in enumerate(obj)]
    if hasattr(obj, "tolist") and getattr(obj, "ndim", 0) > 0:  # numpy arrays
        return jsonable(obj.tolist(), non_finite, _path)
    if hasattr(obj, "item") and not isinstance(obj, (bytes, bytearray)):  # numpy scalars
        try:
            value = obj.item()
        except (ValueError, AttributeError, TypeError):
            return obj
        if value is not obj:
            return jsonable(value, non_finite, _path)
    return obj


def to_json(doc, *, family=None, convention: bool = True, indent: int | None = 2) -> str:
    """The JSON text of a result (no trailing newline).

    Parameters
    ----------
    doc : dict or list
        The result.  Non-finite floats become null (see :func:`jsonable`).
    family : Family, optional
        Whose conventions to add (``convention_record(family)``: the family may override
        entries); without it the general conventions are added.
    convention : bool
        Give a top-level dict the full ``convention`` record (default): added when
        missing, completed when the document has only its own entries (which win).  Off
        only for documents whose entries carry their own (``bhchem families --json``).
    indent : int or None

    Returns
    -------
    str
        Sorted keys, shortest round-trip floats, strictly standard JSON.
    """
    where: list = []
    out = jsonable(doc, where)
    if isinstance(out, dict):
        own = out.get("convention")
        if convention and (own is None or isinstance(own, dict)):
            # the general record (with the family's overrides), then the result's own
            # entries (e.g. an analysis's sign convention) on top
            out["convention"] = {**jsonable(convention_record(family)), **(own or {})}
        if where:
            out[NON_FINITE_KEY] = sorted(set(out.get(NON_FINITE_KEY) or []) | set(where))
    return json.dumps(out, indent=indent, sort_keys=True, allow_nan=False)


def strict_loads(text: str):
    """``json.loads`` that refuses the non-standard tokens NaN, Infinity, -Infinity."""
    def refuse(token):
        raise ValueError(f"non-standard JSON token {token!r}")
    return json.loads(text, parse_constant=refuse)


# -- atomic files -----------------------------------------------------------------------------
