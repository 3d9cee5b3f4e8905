"""What every result type shares: a short one-line ``repr`` and a JSON-ready ``to_dict()``.

A result class derives from :class:`Result` and is declared ``@dataclass(..., repr=False)``
(a dataclass would otherwise write its own repr, a dump of every array).  ``to_dict()``
returns plain dicts, lists, strings, numbers, booleans and None (numpy values become Python
ones, nested results their ``to_dict()``); :func:`bhchem.present.serialize.to_json` then turns
non-finite numbers into null.  A class may override ``to_dict`` (its own keys) or
``summary`` (what the repr says).
"""
from __future__ import annotations

import dataclasses
import math

#: longest repr of a result (one line)
MAX_REPR = 199


def plain(obj):
    """A JSON-ready copy of ``obj`` (results, dataclasses, numpy, graphs, sympy).

    Parameters
    ----------
    obj : object

    Returns
    -------
    object
        Dicts (string keys), lists, str, int, float, bool or None; non-finite floats are
        kept (the JSON writer replaces them by null and records where).
    """
    if obj is None or isinstance(obj, (bool, str, int)):
        return obj
    if isinstance(obj, float):
        return obj
    if isinstance(obj, Result):
        return obj.to_dict()
    if callable(getattr(obj, "to_dict", None)) and not isinstance(obj, type):
        return plain(obj.to_dict())
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
    if isinstance(obj, dict):
        return {str(k): plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple, set, frozenset)):
        return [plain(v) for v in obj]
    if hasattr(obj, "tolist") and hasattr(obj, "dtype"):  # numpy arrays and scalars
        return plain(obj.tolist())
    if hasattr(obj, "nodes") and hasattr(obj, "edges") and callable(obj.nodes):  # a graph
        return {"nodes": [{"name": str(n), **plain(d)} for n, d in obj.nodes(data=True)],
                "edges": [{"between": [str(u), str(v)], **plain(d)}
                          for u, v, d in obj.edges(data=True)]}
    if hasattr(obj, "is_number") and getattr(obj, "is_number"):  # a sympy number
        try:
            return float(obj)
        except (TypeError, ValueError):
            return str(obj)
    return str(obj)  # sympy expressions, figures and other objects: their text


def _count(v) -> int | None:
    if isinstance(v, (list, tuple, dict)):
        return len(v)
    shape = getattr(v, "shape", None)
    if shape is not None and len(shape) > 0:
        return int(shape[0])
    return None


class Result:
    """Mixin of every result type: ``to_dict()`` and a one-line ``repr``."""

    def to_dict(self) -> dict:
        """The result as plain, JSON-ready data (see module docstring)."""
        return {f.name: plain(getattr(self, f.name)) for f in dataclasses.fields(self)}

    def summary(self) -> str:
        """What the repr says: the verdict or message, else the counts of the fields."""
        parts = []
        for name in ("holds", "converged", "complete"):
            if hasattr(self, name):
                parts.append(f"{name}={getattr(self, name)}")
                break
        message = getattr(self, "message", None)
        if isinstance(message, str) and message:
            pressure = getattr(self, "pressure", None)
            if isinstance(pressure, float):
                parts.append(f"P={pressure:.6g}")
            parts.append(message.splitlines()[0])
        else:
            for f in dataclasses.fields(self):
                v = getattr(self, f.name)
                n = _count(v)
                if n is not None:
                    parts.append(f"{n} {f.name}")
                elif isinstance(v, str) and len(v) < 40:
                    parts.append(f"{f.name}={v!r}")
                elif isinstance(v, float) and math.isfinite(v):
                    parts.append(f"{f.name}={v:.6g}")
        warnings = getattr(self, "warnings", None)
        if warnings:
            parts.append(f"{len(warnings)} WARNING(S)")
        return ", ".join(parts)

    def __repr__(self) -> str:
        text = f"{type(self).__name__}({self.summary()})".replace("\n", " ")
        if len(text) > MAX_REPR:
            text = text[:MAX_REPR - 4] + "...)"
        return text
