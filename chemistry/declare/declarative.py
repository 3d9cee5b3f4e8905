r"""Declarative families: a small TOML file, read safely.

A user can declare a family without writing Python.  Nothing in the file is ever
executed: the formulas are read by :mod:`bhchem.declare.expression_parser`, which
builds sympy expressions from a whitelist of symbols and functions.  Every fault
is a one-line :class:`~bhchem.errors.MalformedFamilyError` naming the file,
the line (when it can be found), the key and the fault.

Format
------
::

    name = "rn-ads-file"                 # kebab-case, required
    summary = "charged AdS black hole"   # one line, required
    reference = "Gunasekaran, Kubiznak & Mann, JHEP 11 (2012) 110"   # required
    dimension = 4                        # an integer >= 3 (default 4), or the table below
    state = "r"                          # state variable (default r, the horizon radius)
    state_description = "horizon radius r+"                           # optional

    [dimension]                          # a variable dimension: the discrete parameter d
    default = 4
    minimum = 4                          # required; at least 3
    maximum = 11                         # optional
    description = "spacetime dimension"  # optional

    [parameters.Q]                       # one table per parameter
    default = 1.0                        # required
    length_dimension = "d - 3"           # [Q] = L^n: a number or a formula in d (default 0)
    domain = ">= 0"                      # default: any real number
    description = "electric charge"      # optional

    [definitions]                        # optional named sub-expressions, used in order:
    Omega = "omega(d)"                   #   each may use the ones above it
    q = "8*pi*Q / (sqrt(2*(d-2)*(d-3)) * Omega)"

    [expressions]
    M = "(d-2)*Omega/(16*pi) * (r^(d-3) + 16*pi*P*r^(d-1)/((d-1)*(d-2)) + q^2/r^(d-3))"
    S = "Omega * r^(d-2) / 4"            # M (the enthalpy) and S are required
    T = "..."                            # optional: temperature (checked against dM/dS)
    V = "..."                            # optional: thermodynamic volume (checked)
    G_background = "0"                   # optional: Gibbs energy of a competing phase
    v = "..."                            # optional: specific volume (default 4 r+/(d-2))
    r_plus = "..."                       # horizon radius, needed when state is not r
    typical_state = "..."                # optional sampling scales, in d and parameters
    typical_pressure = "..."
    conditions = ["r > b"]               # optional: inequalities a physical state obeys;
                                         #   or named, with a reason and a reference:
    # conditions = [{name = "outside-core", relation = "r > b",
    #                reason = "the horizon lies outside the core", reference = "..."}]

    [condition_sets.core-only]           # optional named selections of the conditions
    members = ["outside-core", "nonnegative-temperature"]   # ('default' = all is implied)
    description = "the conditions of a given paper"
    reference = "A. Author, J. Phys. 1 (2030) 1"

    [conventions]                        # optional: text entries for the conventions record
    charge = "Q normalised as in ..."

    [metric]                             # instead of M, S and T: the metric function
    f = "1 - 2*M*r^2/(r^2 + g^2)^(3/2) + r^2/L^2"   # in r (radial), L, the mass parameter
    h = "..."                            # optional: 1/g_rr when it is not f
    mass = "M"                           # name of the mass parameter in f (default M)
    enthalpy = "(d-2)*omega(d)*m/(16*pi)"   # M in terms of it (default: the parameter)
    ads_radius = "L"                     # name of the AdS radius (default L)
    entropy = "area"                     # "area" (default), "first-law" or a formula
    entropy_constant = "0"               # added to the first-law entropy (default 0)
    entropy_reference = ["g", "pi*g^2"]  # S = S0 at r+ = r0: a certified quadrature is used
                                         # when the first-law entropy has no closed form
    root = 0                             # which root of f(r+) = 0, when there are several
    asymptotics = "a -> 0: r/2*(1 + r^2/L^2)"   # or: the root with this limit (NAME -> 0/oo)

With ``[metric]`` the engine solves f(r+) = 0 for the mass parameter, takes T from the
surface gravity and replaces L by P (:func:`bhchem.declare.metric.from_metric`); the
``[expressions]`` table is then optional and may not give M, S or T.

Formulas use the state variable, ``P``, ``d``, the parameters and the
definitions; conditions may also use the temperature ``T``.  Operators, numbers,
functions (sqrt, exp, log, sin, cos, tan, sinh, cosh, tanh, atan/arctan, abs,
gamma, hyp2f1(a, b, c, z), omega(d)) and constants (pi, e) are those of
:mod:`bhchem.declare.expression_parser`; ``^`` is a power and implicit multiplication
is not allowed.  A formula may also be a plain number (``G_background = 0``).

Domains
-------
``domain`` is one of::

    "real"                      any real number (the default)
    "> 0"   ">= 0"   "< 1"   "<= 1"
    "> 0 and <= 1"              two bounds ("," may replace "and")
    "integer >= 5"              integers (a *discrete*, structural parameter:
    "integer >= 4 and <= 11"    substituted before derivation, no potential)
    "in [-1, 0, 1]"             a finite set (also discrete; "{...}" works too)

or, instead of ``domain``, the keys ``minimum``, ``maximum`` (closed ends),
``exclusive_minimum``, ``exclusive_maximum`` (open ends), ``integer = true`` and
``choices = [...]``.

Limits
------
Every limit is a count, none a time, so whether a file is accepted does not depend
on the machine or its load: :data:`MAX_FILE_SIZE` bytes, :data:`MAX_PARAMETERS`,
:data:`MAX_DEFINITIONS` and :data:`MAX_CONDITIONS` entries, the parser's limits on
each formula (length, nesting, exponents, degree, nodes and
:data:`~bhchem.declare.expression_parser.MAX_OPERATIONS` operations), and
:data:`FAMILY_MAX_OPERATIONS` operations for building the family and for
evaluating each condition.  The derivation (:mod:`bhchem.core.derive`) then bounds
each step by the estimated size of its expansion.

The TOML reader is :mod:`tomllib` (Python >= 3.11) or the ``tomli`` package
(Python 3.10).
"""
from __future__ import annotations

import builtins
import difflib
import keyword
import math
import re
from pathlib import Path

import sympy as sp

from bhchem.declare import symbols as sy
from bhchem.declare.conditions import NAME_PATTERN, Condition, ConditionSet
from bhchem.declare.domain import Domain
from bhchem.errors import MalformedFamilyError
from bhchem.declare.expression_parser import (CONSTANTS, FUNCTIONS, ExpressionError, ParsedExpression, parse,
                                operation_limit)
from bhchem.declare.family import Family, Parameter
from bhchem.declare.metric import from_metric

try:  # Python >= 3.11
    import tomllib as _toml
except ImportError:  # pragma: no cover - Python 3.10
    try:
        import tomli as _toml
    except ImportError:
        _toml = None

#: largest file read (bytes)
MAX_FILE_SIZE = 1_000_000
#: most parameters, definitions and conditions in one file
MAX_PARAMETERS = 50
MAX_DEFINITIONS = 100
MAX_CONDITIONS = 50
#: largest fixed spacetime dimension (and dimension bound) a file may give
MAX_DIMENSION = 1000
#: most operations (Python function calls, sympy's included) for building the family
#: from its parsed formulas, and for evaluating each condition: a count, not a time
#: (see :func:`bhchem.declare.expression_parser.operation_limit`)
FAMILY_MAX_OPERATIONS = 2_000_000

_TOP_KEYS = ("name", "summary", "reference", "dimension", "state", "state_description",
             "parameters", "definitions", "expressions", "conventions", "condition_sets",
             "metric")
_METRIC_KEYS = ("f", "h", "mass", "enthalpy", "ads_radius", "entropy", "entropy_constant",
                "root", "asymptotics", "entropy_reference")
_DIMENSION_KEYS = ("default", "minimum", "maximum", "description")
_PARAMETER_KEYS = ("default", "length_dimension", "domain", "description", "minimum", "maximum",
                   "exclusive_minimum", "exclusive_maximum", "integer", "choices")
_DOMAIN_KEYS = ("minimum", "maximum", "exclusive_minimum", "exclusive_maximum", "integer",
                "choices")
#: expression keys -> Family attribute
_EXPRESSION_KEYS = {"M": "enthalpy", "S": "entropy", "T": "temperature", "V": "volume",
                    "G_background": "background_gibbs", "v": "specific_volume",
                    "r_plus": "horizon_radius", "typical_state": "typical_state",
                    "typical_pressure": "typical_pressure"}
_ALL_EXPRESSION_KEYS = tuple(_EXPRESSION_KEYS) + ("conditions",)

_KEBAB = re.compile(r"^[a-z][a-z0-9]*(-[a-z0-9]+)*$")
_IDENT = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$", re.ASCII)
#: names a parameter, definition or state variable may not take (besides the parser's)
_MODULE_NAMES = frozenset({"numpy", "np", "math", "mpmath", "scipy", "sympy", "sp", "hyper"})
_BUILTINS = frozenset(n for n in dir(builtins) if not n.startswith("_"))


# -- locating keys in the text (for messages) --------------------------------------------------
def _split_key(text: str) -> tuple:
    """'parameters."Q".default' -> ('parameters', 'Q', 'default') (quotes stripped)."""
    parts, cur, quote = [], "", None
    for ch in text:
        if quote:
            if ch == quote:
                quote = None
            else:
                cur += ch
        elif ch in "\"'":
            quote = ch
        elif ch == ".":
            parts.append(cur.strip())
            cur = ""
        else:
            cur += ch
    parts.append(cur.strip())
    return tuple(parts)


_HEADER_RE = re.compile(r"^\s*\[\[?\s*([^\[\]]+?)\s*\]\]?\s*(#.*)?$")
_KEYLINE_RE = re.compile(r"""^\s*((?:[A-Za-z0-9_-]+|"[^"]*"|'[^']*')"""
                         r"""(?:\s*\.\s*(?:[A-Za-z0-9_-]+|"[^"]*"|'[^']*'))*)\s*=""")


class _Locator:
    """Best-effort line numbers of keys in a TOML text (for error messages only)."""

    def __init__(self, text: str):
        self.lines = text.splitlines()
        self.index: dict[tuple, int] = {}
        header: tuple = ()
        in_multiline = None
        for no, line in enumerate(self.lines, start=1):
            if in_multiline:
                if line.count(in_multiline) % 2 == 1:
                    in_multiline = None
                continue
            m = _HEADER_RE.match(line)
            if m:
                header = _split_key(m.group(1))
                self.index.setdefault(header, no)
                continue
            m = _KEYLINE_RE.match(line)
            if m:
                path = header + _split_key(m.group(1))
                self.index.setdefault(path, no)
                rest = line[m.end():]
                for q in ('"""', "'''"):
                    if rest.count(q) % 2 == 1:
                        in_multiline = q

    def line(self, path: tuple) -> int | None:
        """Line of ``path``, or of its nearest enclosing key/table that is written out."""
        for k in range(len(path), 0, -1):
            if path[:k] in self.index:
                return self.index[path[:k]]
        return None

    def column(self, line: int | None, value: str) -> int | None:
        """1-based column where the string ``value`` starts on ``line``, when it is
        written there verbatim between quotes (None otherwise)."""
        if line is None or not value or "\n" in value or not 1 <= line <= len(self.lines):
            return None
        text = self.lines[line - 1]
        for q in ('"', "'"):
            i = text.find(q + value + q)
            if i >= 0:
                return i + 2
        return None


# -- the loader ---------------------------------------------------------------------------------
class _Loader:
    def __init__(self, path: Path):
        self.path = path
        shown = str(path)
        self.where = f"family file {shown if shown.isprintable() else repr(shown)}"
        self.loc: _Locator | None = None

    # -- errors --
    def fail(self, key: tuple, fault: str, line: int | None = None, column: int | None = None):
        if line is None and self.loc is not None and key:
            line = self.loc.line(key)
        place = self.where
        if line is not None:
            place += f", line {line}"
            if column is not None:
                place += f", column {column}"
        name = ".".join(_shorten(str(k)) for k in key)
        raise MalformedFamilyError(f"{place}: {name}: {fault}" if name else f"{place}: {fault}")

    def fail_formula(self, key: tuple, text: str, exc: ExpressionError, element: int | None = None):
        loc = self.loc
        line = loc.line(key) if loc else None
        if element is not None and line is not None:  # the line that holds this array element
            for no in range(line, min(line + 200, len(loc.lines)) + 1):
                if loc.column(no, text) is not None:
                    line = no
                    break
        label = key + ((element,) if element is not None else ())
        if exc.column is None:
            self.fail(label, exc.reason, line)
        start = loc.column(line, text) if loc else None
        if start is not None:
            self.fail(label, exc.reason, line, start + exc.column - 1)
        where = f"line {exc.line}, column {exc.column}" if "\n" in text else f"column {exc.column}"
        self.fail(label, f"{where} of the formula: {exc.reason}", line)

    def unknown_keys(self, table: dict, allowed, key: tuple, hint: str = ""):
        for k in table:
            if k not in allowed:
                close = difflib.get_close_matches(str(k), list(allowed), n=1)
                suggestion = f"; did you mean '{close[0]}'?" if close else ""
                extra = hint(k) if callable(hint) else ""
                self.fail(key + (k,), f"unknown key{suggestion}{extra} "
                                      f"(allowed: {', '.join(allowed)})")

    # -- typed values --
    def string(self, table, key: tuple, required=False, one_line=False, default=None):
        name = key[-1]
        if name not in table:
            if required:
                self.fail(key[:-1], f"the key '{name}' is missing")
            return default
        v = table[name]
        if not isinstance(v, str):
            self.fail(key, f"must be a string, not {_type(v)}")
        if required and not v.strip():
            self.fail(key, "must not be empty")
        if one_line and ("\n" in v or "\r" in v):
            self.fail(key, "must be a single line")
        return v

    def number(self, v, key: tuple, integer=False):
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            self.fail(key, f"must be {'an integer' if integer else 'a number'}, not {_type(v)}")
        if integer and not isinstance(v, int):
            if isinstance(v, float) and v.is_integer() and abs(v) < 1e15:
                return int(v)
            self.fail(key, f"must be an integer, not {v!r}")
        if isinstance(v, float) and not math.isfinite(v):
            self.fail(key, f"must be a finite number, not {v!r}")
        if isinstance(v, int) and abs(v) > 10**15:
            self.fail(key, "number too large")
        return v

    def table(self, root, name: str, key: tuple, required=False) -> dict:
        if name not in root:
            if required:
                self.fail(key[:-1], f"the table [{'.'.join(key)}] is missing")
            return {}
        v = root[name]
        if not isinstance(v, dict):
            self.fail(key, f"must be a table, not {_type(v)}")
        return v

    # -- the file --
    def load(self) -> list[Family]:
        doc = self.read()
        self.unknown_keys(doc, _TOP_KEYS, (), hint=_top_hint)
        name = self.string(doc, ("name",), required=True, one_line=True)
        if not _KEBAB.match(name):
            self.fail(("name",), f"{_shorten(repr(name))} must be kebab-case (lower-case "
                                 f"letters, digits, hyphens), e.g. my-family")
        summary = self.string(doc, ("summary",), required=True, one_line=True)
        reference = self.string(doc, ("reference",), required=True, one_line=True)
        state_description = self.string(doc, ("state_description",), one_line=True)

        dimension = self.dimension(doc)
        state_name = self.string(doc, ("state",), one_line=True, default="r")
        self.check_name(state_name, ("state",), "state variable", taken={"d": "the dimension"})
        state = {"r": sy.r, "v": sy.v, "S": sy.S}.get(state_name) or \
            sp.Symbol(state_name, positive=True)

        parameters = self.parameters(doc, state_name, dimension)
        table = {state_name: state, "P": sy.P, "d": sy.d}
        for p in parameters:
            table[p.name] = p.symbol
        definitions = self.definitions(doc, table)
        metric = self.metric(doc, table, definitions, parameters, state_name)
        exprs, conditions = self.expressions(doc, table, definitions, parameters,
                                             metric=metric is not None)
        conventions = self.conventions(doc)
        condition_sets = self.condition_sets(doc)

        kwargs = dict(name=name, summary=summary, reference=reference, dimension=dimension,
                      parameters=tuple(p for p in parameters if p is not dimension),
                      state=state, conditions=tuple(conditions), conventions=conventions,
                      condition_sets=condition_sets)
        if state_description is not None:
            kwargs["state_description"] = state_description
        for k, attr in _EXPRESSION_KEYS.items():
            if k in exprs:
                kwargs[attr] = exprs[k]
        try:
            if metric is not None:
                # from_metric bounds its own work by counts (SOLVE_MAX_OPERATIONS,
                # INTEGRATION_MAX_OPERATIONS in bhchem.declare.metric)
                kwargs.pop("state")
                family = from_metric(**kwargs, **metric, bounded=True)
            else:
                with operation_limit(FAMILY_MAX_OPERATIONS, "the family",
                                     "FAMILY_MAX_OPERATIONS"):
                    family = Family(**kwargs)
        except MalformedFamilyError as exc:
            self.fail(("metric",) if metric is not None else (), str(exc))
        return [family]

    def metric(self, doc, table, definitions, parameters, state_name):
        """The [metric] table as keywords of from_metric (formulas parsed safely)."""
        if "metric" not in doc:
            return None
        key = ("metric",)
        t = self.table(doc, "metric", key)
        self.unknown_keys(t, _METRIC_KEYS, key)
        if state_name != "r":
            self.fail(key, "a metric family has the horizon radius r as its state variable")
        if "f" not in t:
            self.fail(key, "the metric function f is missing (key 'f')")
        names = {}
        for k, default in (("mass", "M"), ("ads_radius", "L")):
            nm = self.string(t, key + (k,), one_line=True, default=default)
            taken = {n: "declared (a parameter, the state variable, P or d)" for n in table}
            taken.update({n: "a definition" for n in definitions})
            taken.update({v: f"the {w}" for w, v in names.items()})
            self.check_name(nm, key + (k,), "the " + k.replace("_", " "), taken=taken)
            names[k] = nm
        symbols = {**table, **definitions, names["mass"]: sp.Symbol(names["mass"]),
                   names["ads_radius"]: sp.Symbol(names["ads_radius"], positive=True)}
        no_t = {"T": "the temperature is derived from the metric"}
        out = {"mass": names["mass"], "ads_radius": names["ads_radius"]}
        out["f"] = self.formula(t["f"], key + ("f",), symbols, no_t).expr
        if "h" in t:
            out["h"] = self.formula(t["h"], key + ("h",), symbols, no_t).expr
        if "enthalpy" in t:
            out["enthalpy"] = self.formula(t["enthalpy"], key + ("enthalpy",), symbols, no_t).expr
        plain = {**table, **definitions}
        if "entropy" in t:
            e = t["entropy"]
            if isinstance(e, str) and e.strip() in ("area", "first-law"):
                out["entropy"] = e.strip()
            else:
                out["entropy"] = self.formula(e, key + ("entropy",), plain, no_t).expr
        if "entropy_constant" in t:
            out["entropy_constant"] = self.formula(t["entropy_constant"],
                                                   key + ("entropy_constant",), plain, no_t).expr
        if "entropy_reference" in t:
            ref = t["entropy_reference"]
            k = key + ("entropy_reference",)
            if not isinstance(ref, list) or len(ref) != 2:
                self.fail(k, "must be an array of two formulas [r0, S0] (S = S0 at r+ = r0)")
            consts = {n: v for n, v in plain.items() if n not in (state_name, "P")}
            only = {**no_t, state_name: "r0 and S0 may depend on the parameters only",
                    "P": "r0 and S0 may depend on the parameters only"}
            r0 = self.formula(ref[0], k, consts, only).expr
            S0 = self.formula(ref[1], k, consts, only).expr
            out["entropy_reference"] = (r0, S0)
        if "asymptotics" in t:
            text = self.string(t, key + ("asymptotics",), one_line=True)
            limit, sep, expr = text.partition(":")
            if not sep:
                self.fail(key + ("asymptotics",), "must read 'NAME -> 0: FORMULA' or "
                                                  "'NAME -> oo: FORMULA'")
            out["asymptotics"] = (limit, self.formula(expr.strip(), key + ("asymptotics",),
                                                      symbols, no_t).expr)
        if "root" in t:
            out["root"] = self.number(t["root"], key + ("root",), integer=True)
            if out["root"] < 0:
                self.fail(key + ("root",), "must be a non-negative index")
        return out

    def read(self) -> dict:
        try:
            with open(self.path, "rb") as fh:
                data = fh.read(MAX_FILE_SIZE + 1)
        except OSError as exc:
            self.fail((), f"cannot be read ({exc.strerror or exc})")
        if len(data) > MAX_FILE_SIZE:
            self.fail((), f"too large (more than {MAX_FILE_SIZE} bytes)")
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError as exc:
            line = data[:exc.start].count(b"\n") + 1
            self.fail((), f"is not UTF-8 text (byte {exc.start}: {exc.reason})", line)
        if _toml is None:  # pragma: no cover - Python 3.10 without tomli
            self.fail((), "reading TOML needs Python >= 3.11 or the 'tomli' package")
        try:
            doc = _toml.loads(text)
        except _toml.TOMLDecodeError as exc:
            self.fail((), f"TOML syntax error: {_one_line(str(exc))}")
        except RecursionError:
            self.fail((), "TOML syntax error: nested too deeply")
        except ValueError as exc:  # an integer literal too long to convert
            why = ("an integer literal is too long" if "digits" in str(exc)
                   else _one_line(str(exc))[:200])
            self.fail((), f"TOML error: {why}")
        self.loc = _Locator(text)
        return doc

    def check_name(self, name: str, key: tuple, what: str, taken: dict):
        shown = repr(name if len(name) <= 60 else name[:57] + "...")
        if not _IDENT.match(name):
            self.fail(key, f"{what} name {shown} must be an identifier (a letter, then "
                           f"letters, digits or '_')")
        reason = None
        if keyword.iskeyword(name):
            reason = "is a Python keyword"
        elif name in FUNCTIONS:
            reason = "is the name of a function"
        elif name in CONSTANTS:
            reason = "is the name of a constant"
        elif name in ("P", "T"):
            reason = "is reserved (P is the pressure, T the temperature)"
        elif name in taken:
            reason = f"is already {taken[name]}"
        elif name in _MODULE_NAMES or name in _BUILTINS:
            reason = "clashes with a Python or library name used by the numerics"
        if reason:
            self.fail(key, f"{what} name {shown} {reason}; choose another")

    def dimension(self, doc):
        if "dimension" not in doc:
            return 4
        v = doc["dimension"]
        key = ("dimension",)
        if isinstance(v, dict):
            self.unknown_keys(v, _DIMENSION_KEYS, key)
            for k in ("default", "minimum"):
                if k not in v:
                    self.fail(key, f"the key '{k}' is missing (a variable dimension needs "
                                   f"default and minimum)")
            default = self.number(v["default"], key + ("default",), integer=True)
            minimum = self.number(v["minimum"], key + ("minimum",), integer=True)
            maximum = (self.number(v["maximum"], key + ("maximum",), integer=True)
                       if "maximum" in v else None)
            if not 3 <= minimum <= MAX_DIMENSION:
                self.fail(key + ("minimum",), f"must be between 3 and {MAX_DIMENSION}")
            if maximum is not None and not minimum <= maximum <= MAX_DIMENSION:
                self.fail(key + ("maximum",), f"must be between minimum ({minimum}) and "
                                              f"{MAX_DIMENSION}")
            if default < minimum or (maximum is not None and default > maximum):
                self.fail(key + ("default",), f"{default} is outside "
                                              f"{Domain.integers(minimum, maximum).describe('d')}")
            description = self.string(v, key + ("description",), one_line=True,
                                      default="spacetime dimension")
            return Parameter("d", default, length_dimension=0,
                             domain=Domain.integers(minimum, maximum), description=description)
        d = self.number(v, key, integer=True)
        if not 3 <= d <= MAX_DIMENSION:
            self.fail(key, f"must be between 3 and {MAX_DIMENSION} (or a table "
                           f"{{default = 4, minimum = 4}} for a variable dimension)")
        return d

    def parameters(self, doc, state_name, dim) -> list:
        params = self.table(doc, "parameters", ("parameters",))
        if len(params) > MAX_PARAMETERS:
            self.fail(("parameters",), f"too many parameters (at most {MAX_PARAMETERS})")
        out = []
        if isinstance(dim, Parameter):
            out.append(dim)
        for pname, spec in params.items():
            key = ("parameters", pname)
            if pname == "d":
                self.fail(key, "the dimension d is declared with 'dimension' (an integer or a "
                               "table with default and minimum), not as a parameter")
            self.check_name(pname, key, "parameter", taken={state_name: "the state variable"})
            if not isinstance(spec, dict):
                self.fail(key, f"must be a table (e.g. [parameters.{pname}] with default = ...), "
                               f"not {_type(spec)}")
            self.unknown_keys(spec, _PARAMETER_KEYS, key)
            if "default" not in spec:
                self.fail(key, "the key 'default' is missing")
            default = self.number(spec["default"], key + ("default",))
            n = self.length_dimension(spec, key)
            domain = self.domain(spec, key, pname)
            if pname == "k" and not domain.discrete:
                self.fail(key, "the name k is reserved for the horizon curvature (an integer); "
                               "give k a discrete domain such as \"in [-1, 0, 1]\" or choose "
                               "another name")
            if not domain.contains(default):
                self.fail(key + ("default",), f"{default!r} is outside the domain "
                                              f"{domain.describe(pname)}")
            description = self.string(spec, key + ("description",), one_line=True, default="")
            out.append(Parameter(pname, default, length_dimension=n, domain=domain,
                                 description=description))
        return out

    def length_dimension(self, spec, key):
        if "length_dimension" not in spec:
            return 0
        v = spec["length_dimension"]
        k = key + ("length_dimension",)
        if isinstance(v, str):
            try:
                return parse(v, {"d": sy.d}, unavailable={
                    "r": "a length dimension may depend on d only",
                    "P": "a length dimension may depend on d only"}).expr
            except ExpressionError as exc:
                self.fail_formula(k, v, exc)
        return self.number(v, k)

    def domain(self, spec, key, pname) -> Domain:
        given = [k for k in _DOMAIN_KEYS if k in spec]
        if "domain" in spec:
            if given:
                self.fail(key + (given[0],), "give either 'domain' or the keys "
                                             "minimum/maximum/..., not both")
            text = spec["domain"]
            if not isinstance(text, str):
                self.fail(key + ("domain",), f"must be a string such as \">= 0\", not "
                                             f"{_type(text)}")
            try:
                return parse_domain(text)
            except ValueError as exc:
                self.fail(key + ("domain",), str(exc))
        if not given:
            return Domain.real()
        integer = spec.get("integer", False)
        if not isinstance(integer, bool):
            self.fail(key + ("integer",), f"must be true or false, not {_type(integer)}")
        if "choices" in spec:
            choices = spec["choices"]
            if len(given) > 1 and not (len(given) == 2 and "integer" in given):
                self.fail(key + ("choices",), "give either choices or bounds, not both")
            if not isinstance(choices, list) or not choices:
                self.fail(key + ("choices",), "must be a non-empty array of numbers")
            values = tuple(self.number(c, key + ("choices",), integer=integer) for c in choices)
            return Domain.one_of(*values)
        lo, lo_closed, hi, hi_closed = -math.inf, False, math.inf, False
        for k in _DOMAIN_KEYS[:4]:
            if k not in spec:
                continue
            x = float(self.number(spec[k], key + (k,)))
            if "minimum" in k:
                if math.isfinite(lo):
                    self.fail(key + (k,), "two lower bounds (minimum and exclusive_minimum)")
                lo, lo_closed = x, k == "minimum"
            else:
                if math.isfinite(hi):
                    self.fail(key + (k,), "two upper bounds (maximum and exclusive_maximum)")
                hi, hi_closed = x, k == "maximum"
        if lo > hi or (lo == hi and not (lo_closed and hi_closed)):
            self.fail(key, "the domain is empty (minimum above maximum)")
        return Domain(lo, hi, lo_closed, hi_closed, integer=integer)

    def definitions(self, doc, table) -> dict:
        defs = self.table(doc, "definitions", ("definitions",))
        if len(defs) > MAX_DEFINITIONS:
            self.fail(("definitions",), f"too many definitions (at most {MAX_DEFINITIONS})")
        names = list(defs)
        out: dict = {}
        for i, (dname, text) in enumerate(defs.items()):
            key = ("definitions", dname)
            taken = {n: "declared (a parameter, the state variable, P or d)" for n in table}
            self.check_name(dname, key, "definition", taken=taken)
            later = {n: "defined later in [definitions]; a definition may only use the ones "
                        "above it" for n in names[i + 1:]}
            later.update(T="the temperature is derived; it may appear only in conditions")
            out[dname] = self.formula(text, key, {**table, **out}, later)
        return out

    def formula(self, text, key, symbols, unavailable=None) -> ParsedExpression:
        if isinstance(text, bool) or not isinstance(text, (str, int, float)):
            self.fail(key, f"must be a formula in a string (e.g. \"r^2\"), not {_type(text)}")
        if isinstance(text, float) and not math.isfinite(text):
            self.fail(key, f"must be finite, not {text!r}")
        if not isinstance(text, str):
            text = repr(text)
        try:
            return parse(text, symbols, unavailable=unavailable)
        except ExpressionError as exc:
            self.fail_formula(key, text, exc)

    def expressions(self, doc, table, definitions, parameters, metric=False):
        exprs_t = self.table(doc, "expressions", ("expressions",), required=not metric)
        self.unknown_keys(exprs_t, _ALL_EXPRESSION_KEYS, ("expressions",))
        for k in ("M", "S", "T"):
            if metric and k in exprs_t:
                self.fail(("expressions", k), "with a [metric] table, M, S and T come from the "
                                              "metric (the entropy: [metric] entropy = ...); "
                                              "remove it")
        for k in ("M", "S"):
            if not metric and k not in exprs_t:
                what = "the enthalpy M" if k == "M" else "the entropy S"
                self.fail(("expressions",), f"{what} is missing (key '{k}')")
        symbols = {**table, **definitions}
        no_t = {"T": "the temperature is derived; it may appear only in conditions"}
        out = {}
        for k in _EXPRESSION_KEYS:
            if k in exprs_t:
                out[k] = self.formula(exprs_t[k], ("expressions", k), symbols, no_t).expr
        scale_symbols = {sy.d} | {p.symbol for p in parameters}
        for k in ("typical_state", "typical_pressure"):
            if k in out and not out[k].free_symbols <= scale_symbols:
                extra = sorted(s.name for s in out[k].free_symbols - scale_symbols)
                self.fail(("expressions", k), f"may depend only on d and the parameters, "
                                              f"not on {', '.join(extra)}")
        conditions = []
        raw = exprs_t.get("conditions", [])
        key = ("expressions", "conditions")
        if isinstance(raw, str):
            raw = [raw]
        if not isinstance(raw, list):
            self.fail(key, f"must be an array of strings such as [\"r > b\"], not {_type(raw)}")
        if len(raw) > MAX_CONDITIONS:
            self.fail(key, f"too many conditions (at most {MAX_CONDITIONS})")
        cond_symbols = {**symbols, "T": sy.T}
        for i, entry in enumerate(raw):
            named = None
            if isinstance(entry, dict):
                self.unknown_keys(entry, ("name", "relation", "reason", "reference"), key + (i,))
                named = {k: self.string(entry, key + (i, k), required=k != "reference",
                                        one_line=True)
                         for k in ("name", "relation", "reason", "reference")}
                if not NAME_PATTERN.match(named["name"]):
                    self.fail(key + (i, "name"), f"{_shorten(repr(named['name']))} must be "
                                                 f"kebab-case, e.g. outside-core")
                text = named["relation"]
            else:
                text = entry
            if not isinstance(text, str):
                self.fail(key + (i,), f"must be a string such as \"r > b\" or a table "
                                      f"{{name, relation, reason, reference}}, not {_type(text)}")
            try:
                rel = parse(text, cond_symbols, condition=True).expr
                with operation_limit(FAMILY_MAX_OPERATIONS, "the condition",
                                     "FAMILY_MAX_OPERATIONS"):
                    evaluated = rel.func(*rel.args)
            except ExpressionError as exc:
                self.fail_formula(key, text, exc, element=i)
            except (TypeError, ValueError) as exc:
                self.fail(key + (i,), f"{text!r} cannot be compared: {_one_line(str(exc))}")
            if isinstance(evaluated, sp.logic.boolalg.BooleanAtom):
                self.fail(key + (i,), f"{text!r} is always {'true' if evaluated else 'false'} "
                                      f"(the state variable and P are positive, parameters "
                                      f"real); remove it or correct it")
            if named is None:
                conditions.append(rel)
            else:
                conditions.append(Condition(named["name"], rel, named["reason"],
                                            named["reference"] or "common practice"))
        return out, conditions

    def condition_sets(self, doc) -> tuple:
        sets = self.table(doc, "condition_sets", ("condition_sets",))
        out = []
        for name, body in sets.items():
            key = ("condition_sets", name)
            if not NAME_PATTERN.match(name):
                self.fail(key, f"set name {_shorten(repr(name))} must be kebab-case")
            if not isinstance(body, dict):
                self.fail(key, f"must be a table with members, description, reference, "
                               f"not {_type(body)}")
            self.unknown_keys(body, ("members", "description", "reference"), key)
            members = body.get("members")
            if not isinstance(members, list) or not all(isinstance(m, str) for m in members):
                self.fail(key + ("members",), "must be an array of condition names")
            out.append(ConditionSet(
                name, tuple(members),
                self.string(body, key + ("description",), one_line=True) or "",
                self.string(body, key + ("reference",), one_line=True) or ""))
        return tuple(out)

    def conventions(self, doc) -> dict:
        conv = self.table(doc, "conventions", ("conventions",))
        for k, v in conv.items():
            if not isinstance(v, str):
                self.fail(("conventions", k), f"must be a string, not {_type(v)}")
        return dict(conv)


def _type(v) -> str:
    return {bool: "a boolean", int: "an integer", float: "a number", str: "a string",
            list: "an array", dict: "a table"}.get(type(v), type(v).__name__)


def _one_line(s: str) -> str:
    return " ".join(s.split())


def _shorten(s: str, n: int = 60) -> str:
    s = s if s.isprintable() else repr(s)
    return s if len(s) <= n else s[: n - 3] + "..."


def _top_hint(k) -> str:
    if k in _ALL_EXPRESSION_KEYS:
        return f" (formulas go in the [expressions] table: put {k} = ... under [expressions])"
    return ""


# -- domains ------------------------------------------------------------------------------------
_DOMAIN_TOKEN = re.compile(r"\s*(?:(integer|real|any|in|and)\b|(<=|>=|<|>)|"
                           r"([+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)|"
                           r"([\[\]{},]))", re.ASCII)


def parse_domain(text: str) -> Domain:
    """A :class:`~bhchem.declare.domain.Domain` from its short text form (see module docstring).

    Raises
    ------
    ValueError
        With a one-line message naming the fault.
    """
    if len(text) > 1000:
        raise ValueError("domain text too long")
    tokens, pos = [], 0
    stripped = text.strip()
    while pos < len(stripped):
        m = _DOMAIN_TOKEN.match(stripped, pos)
        if not m or m.end() == pos:
            bad = stripped[pos:].strip()[:20]
            raise ValueError(f"cannot read the domain {text!r} at {bad!r}; write e.g. \">= 0\", "
                             f"\"> 0 and <= 1\", \"integer >= 4\" or \"in [-1, 0, 1]\" (the "
                             f"parameter name is implied)")
        word, op, num, punct = m.groups()
        tokens.append(("word", word) if word else ("op", op) if op else
                      ("num", num) if num else ("punct", punct))
        pos = m.end()
    if not tokens:
        raise ValueError("empty domain; write e.g. \">= 0\" or \"real\"")

    def number(tok):
        if tok[0] != "num":
            raise ValueError(f"expected a number in the domain {text!r}, found {tok[1]!r}")
        x = float(tok[1])
        if not math.isfinite(x):
            raise ValueError(f"the number {tok[1]} in the domain is not finite")
        return x

    integer = False
    i = 0
    if tokens[0] == ("word", "real") or tokens[0] == ("word", "any"):
        if len(tokens) > 1:
            raise ValueError(f"unexpected text after '{tokens[0][1]}' in the domain {text!r}")
        return Domain.real()
    if tokens[0] == ("word", "integer"):
        integer, i = True, 1
    if i < len(tokens) and tokens[i] == ("word", "in"):
        rest = tokens[i + 1:]
        if len(rest) < 3 or rest[0] not in (("punct", "["), ("punct", "{")) or \
                rest[-1] not in (("punct", "]"), ("punct", "}")):
            raise ValueError(f"a finite set is written \"in [-1, 0, 1]\", not {text!r}")
        values, expect_number = [], True
        for tok in rest[1:-1]:
            if expect_number:
                values.append(number(tok))
            elif tok != ("punct", ","):
                raise ValueError(f"values of a finite set are separated by commas: {text!r}")
            expect_number = not expect_number
        if expect_number:
            raise ValueError(f"a finite set ends with a value, not a comma: {text!r}")
        if integer and not all(v.is_integer() for v in values):
            raise ValueError(f"'integer' with non-integer values in {text!r}")
        if len(set(values)) != len(values):
            raise ValueError(f"a value is repeated in the finite set {text!r}")
        return Domain.one_of(*(int(v) if v.is_integer() and abs(v) < 1e15 else v
                               for v in values))
    lo, lo_closed, hi, hi_closed = -math.inf, False, math.inf, False
    first = True
    while i < len(tokens):
        if not first:
            if tokens[i] not in (("word", "and"), ("punct", ",")):
                raise ValueError(f"join two bounds with 'and', e.g. \"> 0 and <= 1\": {text!r}")
            i += 1
        first = False
        if i + 1 >= len(tokens) or tokens[i][0] != "op":
            raise ValueError(f"expected a bound such as \">= 0\" in the domain {text!r}")
        op, x = tokens[i][1], number(tokens[i + 1])
        i += 2
        if op in (">", ">="):
            if math.isfinite(lo):
                raise ValueError(f"two lower bounds in the domain {text!r}")
            lo, lo_closed = x, op == ">="
        else:
            if math.isfinite(hi):
                raise ValueError(f"two upper bounds in the domain {text!r}")
            hi, hi_closed = x, op == "<="
    if lo > hi or (lo == hi and not (lo_closed and hi_closed)):
        raise ValueError(f"the domain {text!r} is empty")
    return Domain(lo, hi, lo_closed, hi_closed, integer=integer)


# -- entry point -------------------------------------------------------------------------------
def load_declarative(path) -> list[Family]:
    """Read the family declared in a TOML file (see the module docstring).

    Nothing in the file is executed.  The caller
    (:func:`bhchem.declare.registry.load_family_file`) registers the result.

    Returns
    -------
    list of Family
        One family.

    Raises
    ------
    MalformedFamilyError
        One line naming the file, the line (when found), the key and the fault;
        no other exception escapes.
    """
    loader = _Loader(Path(path))
    try:
        return loader.load()
    except MalformedFamilyError as exc:
        if str(exc).startswith(loader.where):
            raise
        raise MalformedFamilyError(f"{loader.where}: {_one_line(str(exc))}") from None
    except RecursionError:
        raise MalformedFamilyError(f"{loader.where}: nested too deeply") from None
    except Exception as exc:  # a fault the checks above did not foresee: still one line
        raise MalformedFamilyError(f"{loader.where}: cannot be used: {type(exc).__name__}: "
                                   f"{_one_line(str(exc))[:200]}") from None
