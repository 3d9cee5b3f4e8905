"""What every result type shares: a short one-line ``repr`` and a JSON-ready ``to_dict()``.

A result class derives from :class:`Result` and is declared ``@dataclass(..., repr=False)``
(a dataclass would otherwise write its own repr, a dump of every array).  ``to_dict()``
returns plain dicts, lists, strings, numbers, booleans and None (numpy values become Python
ones, nested results their ``to_dict()``); :func:`bhchem.present.serialize.to_json` then turns
non-finite numbers into null.  A class may override ``to_dict`` (its own keys) or
``summary`` (what the repr says).

In a notebook a result shows itself (``_repr_html_``): its verdict, its message, its warnings
and a compact table, the rows of :meth:`Result.table_rows` (a class defines them where a table
is natural: critical points, transitions, lines, coexistence points) or else its scalar
fields.  :meth:`Result.to_frame` gives the same rows as a pandas DataFrame (pandas is the
optional extra ``bhchem[notebook]``, imported only then).
"""
from __future__ import annotations

import dataclasses
import html
import math

from bhchem.errors import BhchemError

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


#: rows of a result's table shown in a notebook (the rest is counted, never dropped silently)
MAX_HTML_ROWS = 12


def cell(v) -> str:
    """One table cell: numbers to 6 significant digits, None as an empty cell."""
    if v is None:
        return ""
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        return f"{v:.6g}"
    if hasattr(v, "dtype") and getattr(v, "ndim", 1) == 0:
        return cell(v.item())
    if isinstance(v, (tuple, list)):
        return ", ".join(cell(x) for x in v)
    return str(v)


def html_table(columns, rows, limit: int = MAX_HTML_ROWS) -> str:
    """An HTML table of ``rows`` (the first ``limit``, then a line counting the rest)."""
    esc = html.escape
    head = "".join(f"<th>{esc(str(c))}</th>" for c in columns)
    body = "".join("<tr>" + "".join(f"<td>{esc(cell(v))}</td>" for v in r) + "</tr>"
                   for r in rows[:limit])
    more = len(rows) - limit
    tail = (f"<tr><td colspan='{len(columns)}'>… {more} more rows (to_frame() has all)"
            "</td></tr>") if more > 0 else ""
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}{tail}</tbody></table>"


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

    def table_rows(self):
        """``(columns, rows)`` of the result's natural table, or None (then a notebook shows
        the scalar fields).  Classes with one define it."""
        return None

    def to_frame(self):
        """:meth:`table_rows` as a :class:`pandas.DataFrame` (needs pandas, the optional extra
        ``bhchem[notebook]``).

        Raises
        ------
        BhchemError
            Without pandas, or for a result without a natural table.
        """
        table = self.table_rows()
        if table is None:
            raise BhchemError(f"{type(self).__name__} has no table; use to_dict()")
        try:
            import pandas as pd  # lazy: pandas is optional (bhchem[notebook]), only when asked
        except ImportError:
            raise BhchemError("to_frame() needs pandas: pip install 'bhchem[notebook]' "
                              "(or pip install pandas)") from None
        columns, rows = table
        return pd.DataFrame([list(r) for r in rows], columns=list(columns))

    def _verdicts(self) -> list:
        out = []
        for name in ("holds", "converged", "complete"):
            v = getattr(self, name, None)
            if isinstance(v, bool):
                out.append(f"{name}: {'✔ yes' if v else '✘ NO'}")
        return out

    def _repr_html_(self) -> str:
        esc = html.escape
        parts = [f"<b>{esc(type(self).__name__)}</b>"]
        verdicts = self._verdicts()
        if verdicts:
            parts.append(" · ".join(esc(v) for v in verdicts))
        message = getattr(self, "message", None)
        if isinstance(message, str) and message:
            parts.append("<br>".join(esc(line) for line in message.splitlines()[:6]))
        for w in getattr(self, "warnings", None) or ():
            parts.append(f"<span style='color:#b03a2e'>WARNING: {esc(str(w))}</span>")
        table = self.table_rows()
        if table is None:
            rows = []
            for f in dataclasses.fields(self):
                v = getattr(self, f.name)
                n = _count(v)
                if isinstance(v, (bool, int, float, str)) and f.name != "message":
                    rows.append((f.name, v if not isinstance(v, str) or len(v) < 120
                                 else v[:117] + "..."))
                elif n is not None and not isinstance(v, dict):
                    rows.append((f.name, f"{n} item(s)"))
            table = (("field", "value"), rows)
        parts.append(html_table(*table))
        return "<div>" + "<br>".join(parts) + "</div>"

    def __repr__(self) -> str:
        text = f"{type(self).__name__}({self.summary()})".replace("\n", " ")
        if len(text) > MAX_REPR:
            text = text[:MAX_REPR - 4] + "...)"
        return text
