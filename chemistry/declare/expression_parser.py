r"""A safe parser of ordinary mathematical notation into sympy expressions.

Declarative family files (:mod:`bhchem.declare.declarative`) give their formulas as
text.  That text is *never* evaluated by Python: no ``eval``, ``exec``,
``compile``, ``sympify`` or ``parse_expr`` ever sees it.  A small tokenizer and a
recursive-descent parser build the sympy expression node by node from a fixed
whitelist of symbols, functions and constants; anything else is refused with a
one-line :class:`ExpressionError` (a :class:`~bhchem.errors.MalformedFamilyError`)
naming the column and the fault.

Grammar (EBNF; whitespace is ignored between tokens)::

    condition  = expression , relop , expression ;          (conditions only)
    expression = term , { ("+" | "-") , term } ;
    term       = unary , { ("*" | "/") , unary } ;
    unary      = { "+" | "-" } , power ;
    power      = primary , [ ("**" | "^") , unary ] ;       (right-associative)
    primary    = number | name | name , "(" , [ arguments ] , ")" | "(" , expression , ")" ;
    arguments  = expression , { "," , expression } ;
    relop      = "<" | "<=" | ">" | ">=" ;
    number     = digits [ "." [digits] ] [ exponent ] | "." digits [ exponent ] ;
    exponent   = ("e" | "E") [ "+" | "-" ] digits ;
    name       = letter , { letter | digit | "_" } ;         (ASCII only)

so, as in Python, ``2**3**2 == 2**9``, ``-2**2 == -4``, ``2**-1 == 1/2`` and
``a/b/c == (a/b)/c``; ``^`` is the same operator as ``**``.  Numbers are exact:
``0.25`` is ``Rational(1, 4)`` and ``1e-3`` is ``Rational(1, 1000)``.
Implicit multiplication (``2r``, ``2 (r+1)``, ``r(r+1)``) is refused: write ``*``
(``2e3`` is the number 2000; twice Euler's number is ``2*e``).

Names: the symbols the caller declares, the constants ``pi``, ``e`` (= ``E``)
and the functions of :data:`FUNCTIONS` (sqrt, exp, log, sin, cos, tan, sinh,
cosh, tanh, atan/arctan, abs, ln (= log), gamma, hyp2f1(a, b, c, z) = 2F1(a, b; c; z) and
omega(d) = the volume of the unit (d-2)-sphere).

Limits.  Every limit counts something (characters, tokens, nesting levels, bits,
degrees, nodes, operations); none measures time, so whether a formula is accepted
does not depend on the machine, its load or the clock:

* :data:`MAX_LENGTH` characters, :data:`MAX_TOKENS` tokens, :data:`MAX_DEPTH`
  nested parentheses and calls (the parser never recurses deeper than that, so no
  RecursionError), :data:`MAX_CALL_DEPTH` function calls and exponents inside one
  another;
* numeric exponents at most :data:`MAX_EXPONENT` in magnitude and polynomial
  degree at most :data:`MAX_DEGREE` (``9**9**9**9`` and ``((r+1)**2+1)**2 ...``
  are refused before anything large is built);
* constant sub-expressions must be finite doubles (at most :data:`MAX_MAGNITUDE`,
  checked in double precision *before* sympy evaluates them), exact numbers at
  most :data:`MAX_NUMBER_BITS` bits, exact roots only of numbers up to
  :data:`MAX_ROOT_BITS` bits, at most :data:`MAX_NODES` nodes once named
  sub-expressions are expanded;
* at most :data:`MAX_OPERATIONS` operations to build the formula: every Python
  function call made while building it, sympy's automatic simplification
  included, is counted (:func:`operation_limit`, a per-thread ``sys.settrace``
  hook; it works in any thread, and a tracer already installed, e.g. coverage,
  keeps receiving its events).  sympy can spend minutes inside one operation on a
  few rare small formulas (``abs(sinh(omega(d + 0.001**(d-3))))`` needs more than
  10^7 operations); the count stops it after the same amount of work on every
  machine, whatever its speed or load.  Formulas of physics need at most about
  70 000 operations (the first formula of a process, which pays for sympy's lazy
  initialisation) and usually a few thousand; a polynomial of 300 terms about
  230 000.  The count of one formula is not exactly reproducible (sympy shuffles
  the order in which it derives facts and iterates over hash-ordered sets: up to
  about a factor of 2 between processes for a small formula; its cache can only
  lower it), which is why the limit sits far from both kinds of formula.

The derivation that follows (:mod:`bhchem.core.derive`) has counted limits of its
own: the size of each expansion is estimated before sympy expands or cancels.

Example
-------
>>> from bhchem.declare.expression_parser import parse_expression
>>> parse_expression("r/2 * (1 + Q^2/r^2)", ["r", "Q"])
r*(Q**2/r**2 + 1)/2
"""
from __future__ import annotations

import cmath
import keyword
import math
import re
import sys
from dataclasses import dataclass
from typing import Callable, Mapping

import sympy as sp

from bhchem.declare import symbols as sy
from bhchem.errors import MalformedFamilyError
from sympy.core.cache import clear_cache

#: longest accepted text (characters)
MAX_LENGTH = 10_000
#: most tokens in one expression
MAX_TOKENS = 4_000
#: deepest nesting of parentheses and function calls
MAX_DEPTH = 100
#: deepest nesting of function calls and exponents (sympy's automatic simplification
#: of nested functions such as tanh(sqrt(1-r) + tanh(...)) costs exponential time)
MAX_CALL_DEPTH = 4
#: most operations (Python function calls, sympy's included) spent building one
#: formula: formulas of physics need at most ~70 000 (the first of a process) and
#: usually a few thousand, a polynomial of 300 terms ~230 000; sympy's automatic
#: simplification can, on rare small formulas, run for minutes (> 10^7 operations)
#: inside a single operation, and is stopped here
MAX_OPERATIONS = 2_000_000
#: largest magnitude of a numeric exponent (``r**1000`` is fine, ``r**1001`` is not)
MAX_EXPONENT = 100
#: largest polynomial degree (a bound: degrees add in products, multiply in powers);
#: sympy's assumption system isolates real roots of univariate polynomials, in
#: time exponential in the nesting of ((r+1)**2+1)**2 ...
MAX_DEGREE = 64
#: largest exact number (bits of numerator plus denominator), ~3000 decimal digits
MAX_NUMBER_BITS = 10_000
#: largest number (bits) of which an exact non-integer power (a root) may be taken
MAX_ROOT_BITS = 128
#: largest expression, in nodes, counting named sub-expressions at every use
MAX_NODES = 50_000
#: longest number literal (characters)
MAX_NUMBER_LENGTH = 1_000
#: largest argument of gamma/omega when it is a number (gamma(1001) = 1000!)
MAX_GAMMA_ARGUMENT = 1000
#: largest magnitude of a constant sub-expression (all must be finite doubles)
MAX_MAGNITUDE = 1e300

_WHITESPACE = " \t\r\n"
_NUMBER_RE = re.compile(r"(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?", re.ASCII)
_NAME_RE = re.compile(r"[A-Za-z_][A-Za-z0-9_]*", re.ASCII)
_KEYWORDS = frozenset(keyword.kwlist)


class ExpressionError(MalformedFamilyError):
    """A formula that cannot be accepted; the message is one line.

    Attributes
    ----------
    reason : str
        The fault, without the position.
    position : int or None
        0-based offset of the fault in the text (None: not tied to a place).
    column, line : int or None
        1-based column and line of the fault (line counts newlines in the text).
    """

    def __init__(self, reason: str, text: str | None = None, position: int | None = None):
        self.reason = reason
        self.text = text
        self.position = position
        self.line = self.column = None
        if text is not None and position is not None:
            position = max(0, min(position, len(text)))
            self.line = text.count("\n", 0, position) + 1
            self.column = position - (text.rfind("\n", 0, position) + 1) + 1
        super().__init__(self._format())

    def _format(self) -> str:
        if self.column is None:
            return self.reason
        where = f"column {self.column}"
        if self.text is not None and "\n" in self.text:
            where = f"line {self.line}, column {self.column}"
        return f"{where}: {self.reason}"


@dataclass(frozen=True)
class ParsedExpression:
    """A parsed expression with the measures the parser keeps for its limits.

    It may be handed back to the parser as the value of a declared name (a named
    sub-expression); its measures are then reused instead of walking it again.
    """

    expr: sp.Basic
    bits: int
    size: int
    value: complex | None = None
    degree: int = 1
    #: operations (function calls) counted while building it, see :data:`MAX_OPERATIONS`
    operations: int = 0


@dataclass(frozen=True)
class Function:
    """A whitelisted function.

    Attributes
    ----------
    arity : int
        Number of arguments.
    build : callable
        sympy arguments -> sympy expression.
    description : str
    approx : callable or None
        complex arguments -> complex value (double precision), used to bound
        constant sub-expressions before sympy sees them; None when unknown.
    """

    arity: int
    build: Callable
    description: str
    approx: Callable | None = None


def _hyp2f1(a, b, c, z):
    return sp.hyper([a, b], [c], z)


def _real_only(f):
    def g(z):
        return f(z.real) if z.imag == 0 else None
    return g


def _omega_approx(x):
    h = (x - 1) / 2
    return 2 * math.pi ** h / math.gamma(h)


#: the whitelisted functions
FUNCTIONS: dict[str, Function] = {
    "sqrt": Function(1, sp.sqrt, "square root", cmath.sqrt),
    "exp": Function(1, sp.exp, "exponential", cmath.exp),
    "log": Function(1, sp.log, "natural logarithm", cmath.log),
    "ln": Function(1, sp.log, "natural logarithm (same as log)", cmath.log),
    "sin": Function(1, sp.sin, "sine", cmath.sin),
    "cos": Function(1, sp.cos, "cosine", cmath.cos),
    "tan": Function(1, sp.tan, "tangent", cmath.tan),
    "sinh": Function(1, sp.sinh, "hyperbolic sine", cmath.sinh),
    "cosh": Function(1, sp.cosh, "hyperbolic cosine", cmath.cosh),
    "tanh": Function(1, sp.tanh, "hyperbolic tangent", cmath.tanh),
    "atan": Function(1, sp.atan, "inverse tangent", cmath.atan),
    "arctan": Function(1, sp.atan, "inverse tangent (same as atan)", cmath.atan),
    "abs": Function(1, sp.Abs, "absolute value", abs),
    "gamma": Function(1, sp.gamma, "Euler gamma function", _real_only(math.gamma)),
    "hyp2f1": Function(4, _hyp2f1, "Gauss hypergeometric 2F1(a, b; c; z)"),
    "omega": Function(1, sy.omega, "volume of the unit (d-2)-sphere, omega(d)",
                      _real_only(_omega_approx)),
}

#: the named constants
CONSTANTS: dict[str, sp.Basic] = {"pi": sp.pi, "e": sp.E, "E": sp.E}

#: names that can never be declared symbols (functions, constants, Python keywords)
RESERVED_NAMES = frozenset(FUNCTIONS) | frozenset(CONSTANTS) | _KEYWORDS


# -- tokens ---------------------------------------------------------------------------
NUM, NAME, OP, END = "number", "name", "operator", "end"
_RELOPS = ("<=", ">=", "<", ">")
_OPERATORS = ("**", "*", "/", "+", "-", "^", "(", ")", ",") + _RELOPS

_REFUSED = {
    "'": "string literals are not allowed",
    '"': "string literals are not allowed",
    "`": "backticks are not allowed",
    "[": "brackets '[ ]' (lists, indexing) are not allowed; group with parentheses",
    "]": "brackets '[ ]' (lists, indexing) are not allowed; group with parentheses",
    "{": "braces '{ }' are not allowed; group with parentheses",
    "}": "braces '{ }' are not allowed; group with parentheses",
    ";": "';' is not allowed: give a single expression",
    ":": "':' is not allowed (no lambdas, slices or annotations)",
    "%": "'%' is not allowed",
    "@": "'@' is not allowed",
    "&": "'&' is not allowed",
    "|": "'|' is not allowed (write abs(x) for an absolute value)",
    "~": "'~' is not allowed",
    "!": "'!' is not allowed (write gamma(n + 1) for a factorial)",
    "#": "'#' (comments) is not allowed",
    "$": "'$' is not allowed",
    "?": "'?' is not allowed",
    "\\": "'\\' is not allowed",
}


@dataclass(frozen=True)
class _Token:
    kind: str
    value: str
    pos: int


def _describe(tok: _Token) -> str:
    if tok.kind == END:
        return "the end of the formula"
    if tok.kind == NUM:
        return f"number {_short(tok.value)}"
    if tok.kind == NAME:
        return f"name '{_short(tok.value)}'"
    return f"'{tok.value}'"


def _short(s: str, n: int = 40) -> str:
    return s if len(s) <= n else s[: n - 3] + "..."


def _tokenize(text: str, max_tokens: int, condition: bool) -> list[_Token]:
    tokens: list[_Token] = []
    i, n = 0, len(text)

    def fail(reason, pos):
        raise ExpressionError(reason, text, pos)

    while i < n:
        c = text[i]
        if c in _WHITESPACE:
            i += 1
            continue
        if len(tokens) >= max_tokens:
            fail(f"too many tokens (more than {max_tokens})", i)
        if c.isascii() and (c.isdigit() or (c == "." and i + 1 < n and text[i + 1].isascii()
                                             and text[i + 1].isdigit())):
            m = _NUMBER_RE.match(text, i)
            j = m.end()
            if j < n and text[j] == ".":
                fail(f"malformed number '{_short(text[i:j + 1])}'", i)
            if j - i > MAX_NUMBER_LENGTH:
                fail(f"number literal longer than {MAX_NUMBER_LENGTH} characters", i)
            tokens.append(_Token(NUM, text[i:j], i))
            i = j
            continue
        if c.isascii() and (c.isalpha() or c == "_"):
            m = _NAME_RE.match(text, i)
            name = m.group()
            if name.startswith("_"):
                fail(f"name '{_short(name)}' is not allowed (names beginning with '_' "
                     f"are never accepted)", i)
            if name in _KEYWORDS:
                fail(f"Python keyword '{name}' is not allowed in a formula", i)
            if m.end() < n and text[m.end()] == ".":
                fail(f"attribute access ('{_short(name)}.') is not allowed", m.end())
            tokens.append(_Token(NAME, name, i))
            i = m.end()
            continue
        two = text[i:i + 2]
        if two in ("==", "!="):
            why = ("a condition is an inequality: use <, <=, > or >=" if condition
                   else "a formula has no comparisons")
            fail(f"'{two}' is not allowed; {why}", i)
        if two == "//":
            fail("'//' (floor division) is not allowed; use '/'", i)
        if two == "=>" or two == "=<":
            fail(f"'{two}' is not an operator; did you mean '{two[::-1]}'?", i)
        if c == "=":
            fail("'=' is not allowed (no assignments" +
                 ("; a condition uses <, <=, > or >=)" if condition else ")"), i)
        for op in _OPERATORS:
            if text.startswith(op, i):
                tokens.append(_Token(OP, op, i))
                i += len(op)
                break
        else:
            if c == ".":
                attribute = i + 1 < n and (text[i + 1].isalpha() or text[i + 1] == "_")
                fail("unexpected '.' (attribute access is not allowed)" if attribute
                     else "unexpected '.'", i)
            if c in _REFUSED:
                fail(_REFUSED[c], i)
            if c == "\u03c0":
                fail("unexpected character '\u03c0' (U+03C0); write pi", i)
            if not c.isascii() or not c.isprintable():
                fail(f"unexpected character {c!r} (U+{ord(c):04X}); formulas are plain ASCII", i)
            fail(f"unexpected character '{c}'", i)
    tokens.append(_Token(END, "", n))
    return tokens


# -- measuring sub-expressions ---------------------------------------------------------------
def _number_bits(x) -> int:
    if isinstance(x, sp.Rational):
        return int(x.p).bit_length() + int(x.q).bit_length()
    if isinstance(x, sp.Float):
        return 64
    return 0


_UNDEFINED = (sp.zoo, sp.nan, sp.oo, sp.S.NegativeInfinity)


def _measure(expr, limit_nodes: int = 4 * MAX_NODES):
    """Facts about an expression: (max number bits, distinct nodes, undefined?,
    imaginary?, numeric exponent above MAX_EXPONENT?).

    Walks the *distinct* sub-expressions only (a DAG walk, so named
    sub-expressions used many times cost once), stopping past ``limit_nodes``.
    """
    seen = set()
    stack = [expr]
    bits = 0
    undefined = imaginary = big_exponent = False
    while stack:
        e = stack.pop()
        if e in seen:
            continue
        seen.add(e)
        if len(seen) > limit_nodes:
            break
        if isinstance(e, sp.Number):
            bits = max(bits, _number_bits(e))
            if e in _UNDEFINED:
                undefined = True
        elif e is sp.zoo or e is sp.nan:
            undefined = True
        elif e is sp.I:
            imaginary = True
        elif isinstance(e, sp.Pow) and isinstance(e.exp, sp.Number) and abs(e.exp) > MAX_EXPONENT:
            big_exponent = True
        if isinstance(e, sp.Basic):
            stack.extend(e.args)
    return bits, len(seen), undefined, imaginary, big_exponent


@dataclass
class _Node:
    """A built sub-expression and what the limits need to know about it."""

    expr: sp.Basic
    bits: int            # bound on the bits of any exact number evaluation may produce in it
    size: int            # nodes, named sub-expressions counted at every use
    exact: bool = False  # bits is the measured maximum, not a bound
    value: complex | None = None  # double-precision value of a constant (None: not constant)
    degree: int = 0      # bound on the polynomial degree (functions count as variables)

    def refined_bits(self) -> int:
        if not self.exact:
            self.bits = _measure(self.expr)[0]
            self.exact = True
        return self.bits


def _leaf(expr, value=None) -> _Node:
    return _Node(expr, _number_bits(expr), 1, True, value, 0)


# -- the parser -----------------------------------------------------------------------------
class _Parser:
    def __init__(self, text, tokens, names, functions, condition, unavailable, max_depth,
                 max_call_depth):
        self.text = text
        self.tokens = tokens
        self.names = names
        self.functions = functions
        self.condition = condition
        self.unavailable = unavailable
        self.max_depth = max_depth
        self.max_call_depth = max_call_depth
        self.i = 0
        self.depth = 0
        self.call_depth = 0

    # -- helpers --
    @property
    def tok(self) -> _Token:
        return self.tokens[self.i]

    def advance(self) -> _Token:
        t = self.tokens[self.i]
        self.i += 1
        return t

    def fail(self, reason, pos=None):
        raise ExpressionError(reason, self.text, self.tok.pos if pos is None else pos)

    def is_op(self, *ops) -> bool:
        return self.tok.kind == OP and self.tok.value in ops

    def starts_operand(self) -> bool:
        return self.tok.kind in (NUM, NAME) or self.is_op("(")

    def approximate(self, f, args, pos):
        """Double-precision value of a constant built by ``f`` from constant ``args``
        (None when some argument is not constant, or the value is undefined)."""
        if any(a is None for a in args):
            return None
        try:
            v = f(*args)
        except OverflowError:
            v = math.inf
        except (ValueError, ZeroDivisionError, TypeError):
            return None  # undefined (log(0), a pole): sympy says zoo, refused at the end
        if v is None:
            return None
        v = complex(v)
        if not (cmath.isfinite(v) and abs(v) <= MAX_MAGNITUDE):
            self.fail(f"constant too large: its magnitude exceeds {MAX_MAGNITUDE:g} "
                      f"(constants must be finite double-precision numbers)", pos)
        return v

    def check(self, node: _Node, pos: int) -> _Node:
        if node.degree > MAX_DEGREE:
            self.fail(f"polynomial degree too high (above {MAX_DEGREE}; degrees add in "
                      f"products and multiply in powers)", pos)
        if node.size > MAX_NODES:
            self.fail(f"expression too large (more than {MAX_NODES} nodes once named "
                      f"sub-expressions are expanded)", pos)
        return node

    def enter(self, t: _Token):
        self.depth += 1
        if self.depth > self.max_depth:
            self.fail(f"nesting deeper than {self.max_depth} levels of parentheses/calls", t.pos)

    def enter_call(self, pos: int, what: str):
        self.call_depth += 1
        if self.call_depth > self.max_call_depth:
            self.fail(f"{what} nested too deeply: at most {self.max_call_depth} levels of "
                      f"function calls and exponents inside one another", pos)

    # -- grammar --
    def parse(self) -> _Node:
        lhs = self.expression()
        if self.tok.kind == OP and self.tok.value in _RELOPS:
            if not self.condition:
                self.fail(f"comparison '{self.tok.value}' is only allowed in a condition")
            op = self.advance()
            rhs = self.expression()
            if self.tok.kind == OP and self.tok.value in _RELOPS:
                self.fail("chained comparisons are not allowed; give each comparison as a "
                          "separate condition")
            self.expect_end()
            rel = {"<": sp.StrictLessThan, "<=": sp.LessThan, ">": sp.StrictGreaterThan,
                   ">=": sp.GreaterThan}[op.value]
            expr = rel(lhs.expr, rhs.expr, evaluate=False)
            return _Node(expr, max(lhs.bits, rhs.bits), lhs.size + rhs.size + 1, False, None,
                         max(lhs.degree, rhs.degree))
        self.expect_end()
        if self.condition:
            raise ExpressionError("a condition needs a comparison (<, <=, > or >=), e.g. r > b",
                                  self.text, None)
        return lhs

    def expect_end(self):
        t = self.tok
        if t.kind == END:
            return
        if t.kind == OP and t.value == ")":
            self.fail("unbalanced ')': no '(' to close")
        if t.kind == OP and t.value == ",":
            self.fail("unexpected ',' (commas only separate function arguments)")
        self.fail(f"unexpected {_describe(t)}")

    def expression(self) -> _Node:
        start = self.tok.pos
        terms = [self.term()]
        while self.is_op("+", "-"):
            op = self.advance()
            t = self.term()
            terms.append(t if op.value == "+" else self.negate(t))
        if len(terms) == 1:
            return terms[0]
        return self.nary(sp.Add, terms, start)

    def term(self) -> _Node:
        start = self.tok.pos
        factors = [self.unary()]
        while True:
            if self.is_op("*", "/"):
                op = self.advance()
                f = self.unary()
                if op.value == "/":
                    if f.expr == 0:
                        self.fail("division by zero", op.pos)
                    f = self.power_of(f, _leaf(sp.S.NegativeOne, -1), op.pos)
                factors.append(f)
            elif self.starts_operand():
                self.fail(f"implicit multiplication is not allowed: write '*' before "
                          f"{_describe(self.tok)} (e.g. 2*r, not 2r)")
            else:
                break
        if len(factors) == 1:
            return factors[0]
        return self.nary(sp.Mul, factors, start)

    def unary(self) -> _Node:
        negative = False
        while self.is_op("+", "-"):
            if self.advance().value == "-":
                negative = not negative
        node = self.power()
        return self.negate(node) if negative else node

    def power(self) -> _Node:
        base = self.primary()
        if not self.is_op("**", "^"):
            return base
        # a ** s1 b ** s2 c ...  =  a ** (s1 (b ** (s2 c))), folded without recursion
        chain = []
        while self.is_op("**", "^"):
            op = self.advance()
            self.enter_call(op.pos, "exponents")
            negative = False
            while self.is_op("+", "-"):
                if self.advance().value == "-":
                    negative = not negative
            chain.append((op.pos, negative, self.primary()))
        self.call_depth -= len(chain)
        _, negative, acc = chain[-1]
        if negative:
            acc = self.negate(acc)
        for k in range(len(chain) - 2, -1, -1):
            _, negative, operand = chain[k]
            acc = self.power_of(operand, acc, chain[k + 1][0])
            if negative:
                acc = self.negate(acc)
        return self.power_of(base, acc, chain[0][0])

    def primary(self) -> _Node:
        t = self.tok
        if t.kind == NUM:
            self.advance()
            return self.number(t)
        if t.kind == NAME:
            self.advance()
            if self.is_op("("):
                return self.call(t)
            return self.name(t)
        if self.is_op("("):
            self.enter(t)
            self.advance()
            if self.is_op(")"):
                self.fail("empty parentheses '()'")
            node = self.expression()
            if not self.is_op(")"):
                if self.tok.kind == END:
                    self.fail(f"missing ')' to close the '(' at column {t.pos + 1}")
                self.expect_end()  # names the unexpected token
            self.advance()
            self.depth -= 1
            return node
        if t.kind == END:
            if self.i == 0:
                self.fail("empty formula")
            self.fail(f"the formula ends too early: an operand is missing after "
                      f"'{self.tokens[self.i - 1].value}'")
        if t.value == ")":
            self.fail("unexpected ')': an operand is missing" if self.depth else
                      "unbalanced ')': no '(' to close")
        if t.value == ",":
            self.fail("unexpected ',' (commas only separate function arguments)")
        self.fail(f"unexpected '{t.value}': an operand is missing")

    # -- leaves --
    def number(self, t: _Token) -> _Node:
        s = t.value
        mantissa, _, exp_text = s.lower().partition("e")
        whole, _, frac = mantissa.partition(".")
        digits = (whole + frac).lstrip("0") or "0"
        if exp_text and len(exp_text.lstrip("+-0")) > 6:
            self.fail(f"number {_short(s)} is too large or too small", t.pos)
        shift = (int(exp_text) if exp_text else 0) - len(frac)
        if digits != "0" and len(digits) + shift - 1 > 300:
            self.fail(f"number {_short(s)} is too large: constants must be finite "
                      f"double-precision numbers (below {MAX_MAGNITUDE:g})", t.pos)
        if (abs(shift) + len(digits)) * 3.33 > MAX_NUMBER_BITS:
            self.fail(f"number {_short(s)} has too many digits for an exact number", t.pos)
        p = int(digits)
        value = sp.Integer(p * 10**shift) if shift >= 0 else sp.Rational(p, 10**(-shift))
        approx = p * 10**shift if shift >= 0 else p / 10**(-shift)
        return _leaf(value, self.approximate(complex, [approx], t.pos))

    def name(self, t: _Token) -> _Node:
        nm = t.value
        if nm in self.names:
            return self.names[nm]
        if nm in CONSTANTS:
            return _leaf(CONSTANTS[nm], math.pi if nm == "pi" else math.e)
        if nm in self.functions:
            self.fail(f"function '{nm}' needs its argument in parentheses, e.g. {nm}(x)", t.pos)
        if nm in self.unavailable:
            self.fail(f"symbol '{_short(nm)}' is not available here ({self.unavailable[nm]})",
                      t.pos)
        self.fail(f"undeclared symbol '{_short(nm)}'; known symbols: {self.known()}", t.pos)

    def known(self) -> str:
        names = sorted(self.names)
        if not names:
            return "none (only numbers, pi and e)"
        text = ", ".join(names[:30]) + (f", ... ({len(names)} in all)" if len(names) > 30 else "")
        return text + " (constants: pi, e)"

    def call(self, t: _Token) -> _Node:
        nm = t.value
        if nm not in self.functions:
            if nm in self.names:
                self.fail(f"'{_short(nm)}' is a symbol, not a function: implicit multiplication "
                          f"is not allowed, write {_short(nm)}*(...)", self.tok.pos)
            if nm in CONSTANTS:
                self.fail(f"'{nm}' is a constant, not a function: implicit multiplication is "
                          f"not allowed, write {nm}*(...)", self.tok.pos)
            self.fail(f"unknown function '{_short(nm)}'; allowed functions: "
                      f"{', '.join(sorted(self.functions))}", t.pos)
        fn = self.functions[nm]
        open_tok = self.tok
        self.enter(open_tok)
        self.enter_call(t.pos, "function calls")
        self.advance()  # '('
        args: list[_Node] = []
        if not self.is_op(")"):
            while True:
                args.append(self.expression())
                if not self.is_op(","):
                    break
                self.advance()
            if not self.is_op(")"):
                if self.tok.kind == END:
                    self.fail(f"missing ')' to close the call of {nm} at column {open_tok.pos + 1}")
                self.expect_end()
        self.advance()
        self.depth -= 1
        self.call_depth -= 1
        if len(args) != fn.arity:
            plural = "" if fn.arity == 1 else "s"
            self.fail(f"{nm}() takes {fn.arity} argument{plural}, got {len(args)}", t.pos)
        if nm in ("gamma", "omega"):
            a = args[0].expr
            if isinstance(a, sp.Number) and abs(a) > MAX_GAMMA_ARGUMENT:
                self.fail(f"{nm}() of a number larger than {MAX_GAMMA_ARGUMENT} is not allowed",
                          t.pos)
        if nm == "omega" and args[0].expr.has(sp.Function):
            self.fail("the argument of omega() is a dimension: numbers and symbols only "
                      "(e.g. omega(d) or omega(d - 1)), no function calls", t.pos)
        if nm == "hyp2f1" and not args[3].expr.free_symbols:
            self.fail("hyp2f1(a, b, c, z) needs a variable z (a constant z is not supported)",
                      t.pos)
        if nm == "sqrt":
            return self.power_of(args[0], _leaf(sp.S.Half, 0.5), t.pos)
        value = (self.approximate(fn.approx, [a.value for a in args], t.pos)
                 if fn.approx is not None else None)
        expr = fn.build(*(a.expr for a in args))
        uses = 2 if nm == "omega" else 1  # omega(x) = 2 pi^((x-1)/2) / gamma((x-1)/2)
        variable = any(a.degree or a.value is None for a in args)
        node = _Node(expr, sum(a.bits for a in args), uses * sum(a.size for a in args) + 1,
                     False, value, 1 if variable else 0)
        if nm in ("gamma", "omega") and isinstance(args[0].expr, sp.Number):
            node.refined_bits()
        return self.check(node, t.pos)

    # -- building, within the limits --
    def negate(self, node: _Node) -> _Node:
        value = None if node.value is None else -node.value
        return _Node(-node.expr, node.bits, node.size + 1, node.exact, value, node.degree)

    def nary(self, cls, nodes: list, pos: int) -> _Node:
        bits = sum(n.bits for n in nodes)
        if bits > MAX_NUMBER_BITS:  # a bound: look at the numbers really there
            bits = sum(n.refined_bits() for n in nodes)
            if bits > MAX_NUMBER_BITS:
                self.fail(f"exact numbers too large (the result could exceed about "
                          f"{int(MAX_NUMBER_BITS / 3.33)} digits)", pos)
        fold = (lambda *v: math.fsum(x.real for x in v) + 1j * math.fsum(x.imag for x in v)) \
            if cls is sp.Add else (lambda *v: math.prod(v))
        value = self.approximate(fold, [n.value for n in nodes], pos)
        degree = (max if cls is sp.Add else sum)(n.degree for n in nodes)
        node = _Node(cls(*(n.expr for n in nodes)), bits, sum(n.size for n in nodes) + 1,
                     False, value, degree)
        return self.check(node, pos)

    def power_of(self, base: _Node, exp: _Node, pos: int) -> _Node:
        b, x = base.expr, exp.expr
        if isinstance(x, sp.Number):
            if x.is_finite is False or x is sp.nan:
                self.fail("undefined exponent", pos)
            if abs(x) > MAX_EXPONENT:
                big = str(x) if _number_bits(x) < 64 else "a huge number"
                self.fail(f"exponent too large ({_short(big)}; a numeric exponent must be at "
                          f"most {MAX_EXPONENT} in magnitude)", pos)
            if b == 0 and x < 0:
                self.fail("division by zero (0 to a negative power)", pos)
            if isinstance(b, (sp.Add, sp.Symbol, sp.Function, sp.NumberSymbol)):
                bits = base.bits + exp.bits  # sympy keeps (a + b)**n, f(x)**n as they are
            else:  # numbers, products and powers: the power reaches their numbers
                n = max(1, math.ceil(abs(x)))
                bits = base.bits * n + exp.bits
                if bits > MAX_NUMBER_BITS:
                    bits = base.refined_bits() * n + exp.bits
                    if bits > MAX_NUMBER_BITS:
                        self.fail(f"exact number too large: this power would have more than "
                                  f"about {int(MAX_NUMBER_BITS / 3.33)} digits", pos)
                if not x.is_Integer and base.refined_bits() > MAX_ROOT_BITS:
                    self.fail(f"exact root of a number with more than about "
                              f"{int(MAX_ROOT_BITS / 3.33)} digits is not allowed", pos)
        else:
            bits = base.bits + exp.bits
        if isinstance(x, sp.Number):
            degree = base.degree * max(1, math.ceil(abs(x)))
        else:  # b**x with a variable x: a new variable for the polynomial algorithms
            degree = 1 if (base.degree or exp.degree or base.value is None
                           or exp.value is None) else 0
        value = self.approximate(lambda u, v: u ** v, [base.value, exp.value], pos)
        result = sp.Pow(b, x)
        if isinstance(result, sp.Pow) and isinstance(result.exp, sp.Number) \
                and abs(result.exp) > MAX_EXPONENT:  # e.g. ((1+r)**40)**40 = (1+r)**1600
            self.fail(f"exponent too large: the powers combine into an exponent of magnitude "
                      f"above {MAX_EXPONENT}", pos)
        return self.check(_Node(result, bits, base.size + exp.size + 1, False, value, degree),
                          pos)


# -- the operation limit -------------------------------------------------------------------
class _OutOfOperations(BaseException):
    """Raised by the operation meter; a BaseException so that no ``except Exception``
    inside sympy swallows it."""


class OperationMeter:
    """Counts the Python function calls made in the current thread inside a ``with`` block.

    Installed with ``sys.settrace`` for the duration of the block; a trace function
    already installed (a coverage tool, a debugger, an outer meter) is called as
    before, and is back in place afterwards.  Past ``limit`` calls the next call
    raises an internal BaseException, which unwinds the work in progress; the
    caller (:func:`parse`, :func:`operation_limit`) turns it into a one-line
    :class:`ExpressionError`.

    The count measures work, not time: it does not depend on the machine or its
    load.  It is not exactly reproducible, because sympy deliberately shuffles the
    order in which it derives facts (assumptions) and iterates over hash-ordered
    sets (a small formula may need 3300 operations in one process and 8000 in the
    next), and because its caches may already hold part of the work; the limits
    sit far from the counts of real formulas.

    Attributes
    ----------
    limit : int
    count : int
        Calls counted so far (one per Python frame entered, generators resumed included).
    exhausted : bool
        True once the count went past the limit.
    """

    def __init__(self, limit: int):
        self.limit = int(limit)
        self.count = 0
        self.exhausted = False
        self._previous = None

    def _trace(self, frame, event, arg):
        self.count += 1
        if self.count > self.limit:
            self.exhausted = True
            # an exception raised inside a __del__ method would be printed and dropped
            # (and the hook removed with it): let the finaliser run, stop at the next call;
            # never stop the exit of a meter itself
            code = frame.f_code
            if code.co_name != "__del__" and code not in _NEVER_STOPPED:
                raise _OutOfOperations()
        previous = self._previous
        return previous(frame, event, arg) if previous is not None else None

    def __enter__(self) -> "OperationMeter":
        self._previous = sys.gettrace()
        sys.settrace(self._trace)
        return self

    def __exit__(self, exc_type, exc, tb):
        sys.settrace(self._previous)
        return False


def _clear_after_interruption():
    # sympy may have cached half-evaluated facts (its assumption system stores None
    # while it works on a fact); drop everything the interrupted work left behind
    clear_cache()


class operation_limit:  # noqa: N801 - used like a function: ``with operation_limit(...)``
    """Run a block within a counted number of operations (Python function calls).

    For work on parsed formulas outside the parser (building a family from them,
    evaluating a condition), which makes sympy evaluate them again.  Nothing here
    measures time: the block is stopped after the same amount of work on every
    machine (see :class:`OperationMeter`).

    Parameters
    ----------
    max_operations : int
        Default :data:`MAX_OPERATIONS`.
    what : str
        Names the work in the message, e.g. "the family".
    limit_name : str
        Names the limit in the message, e.g. "FAMILY_MAX_OPERATIONS".

    ``with operation_limit(...) as meter`` gives the :class:`OperationMeter`.

    Raises
    ------
    ExpressionError
        "<what> is too complex: sympy needed more than N operations ..." (one line)
        when the block needs more than ``max_operations`` calls.
    """

    def __init__(self, max_operations: int = MAX_OPERATIONS, what: str = "the formula",
                 limit_name: str = "MAX_OPERATIONS"):
        self.meter = OperationMeter(max_operations)
        self.what = what
        self.limit_name = limit_name

    def __enter__(self) -> OperationMeter:
        return self.meter.__enter__()

    def __exit__(self, exc_type, exc, tb):
        self.meter.__exit__(exc_type, exc, tb)
        if not self.meter.exhausted:
            return False
        if exc_type is not None and not issubclass(exc_type, (_OutOfOperations,
                                                              ExpressionError)):
            return False  # another fault while unwinding: let it through
        _clear_after_interruption()  # also when the interruption was swallowed on the way
        raise ExpressionError(f"{self.what} is too complex: sympy needed more than "
                              f"{self.meter.limit} operations (function calls, the limit "
                              f"{self.limit_name}) to build it; {ADVICE}") from None


#: code the meter never interrupts (leaving a meter must always work)
_NEVER_STOPPED = frozenset({OperationMeter.__exit__.__code__,
                            operation_limit.__exit__.__code__})

#: what to do about a formula refused for its size or work
ADVICE = "simplify the formula by hand or declare the family in a Python plug-in"


# -- public API -------------------------------------------------------------------------------
def _name_table(symbols) -> dict[str, _Node]:
    if symbols is None:
        return {}
    if isinstance(symbols, Mapping):
        items = list(symbols.items())
    elif isinstance(symbols, str):
        raise TypeError("symbols must be a mapping or an iterable of names, not a string")
    else:
        items = [(name, None) for name in symbols]
    table = {}
    for name, value in items:
        if not isinstance(name, str) or not _NAME_RE.fullmatch(name) or name.startswith("_"):
            raise ValueError(f"symbol name {name!r} is not an identifier")
        if name in RESERVED_NAMES:
            raise ValueError(f"symbol name {name!r} clashes with a function, constant or keyword")
        if value is None:
            table[name] = _Node(sp.Symbol(name), 0, 1, True, None, 1)
        elif isinstance(value, ParsedExpression):
            table[name] = _Node(value.expr, value.bits, value.size, True, value.value,
                                value.degree)
        elif isinstance(value, sp.Symbol):
            table[name] = _Node(value, 0, 1, True, None, 1)
        elif isinstance(value, sp.Basic):
            bits, size, _, _, _ = _measure(value)
            table[name] = _Node(value, bits, size, True, None, MAX_DEGREE)
        else:
            raise TypeError(f"value of symbol {name!r} must be a sympy object")
    return table


def parse(text, symbols=None, *, condition: bool = False,
          functions: Mapping[str, Function] | None = None,
          unavailable: Mapping[str, str] | None = None,
          max_length: int = MAX_LENGTH, max_tokens: int = MAX_TOKENS,
          max_depth: int = MAX_DEPTH, max_call_depth: int = MAX_CALL_DEPTH,
          max_operations: int = MAX_OPERATIONS) -> ParsedExpression:
    """Parse ``text`` into a :class:`ParsedExpression` (see :func:`parse_expression`)."""
    if not isinstance(text, str):
        raise ExpressionError(f"a formula must be a string, not {type(text).__name__}")
    if len(text) > max_length:
        raise ExpressionError(f"formula too long ({len(text)} characters; at most {max_length})")
    if not text.strip():
        raise ExpressionError("empty formula")
    names = _name_table(symbols)
    fns = FUNCTIONS if functions is None else dict(functions)
    tokens = _tokenize(text, max_tokens, condition)
    parser = _Parser(text, tokens, names, fns, condition, dict(unavailable or {}), max_depth,
                     max_call_depth)
    meter = OperationMeter(max_operations)
    try:
        with meter:
            node = parser.parse()
            bits, size, undefined, imaginary, big_exponent = _measure(node.expr)
    except ExpressionError:
        if meter.exhausted:  # a refusal raised while the interruption unwound: the count wins
            raise _too_much_work(meter, text) from None
        raise
    except _OutOfOperations:
        raise _too_much_work(meter, text) from None
    except RecursionError:
        raise ExpressionError("formula too deeply nested", text, None) from None
    except MemoryError:
        raise ExpressionError("formula too complex: out of memory while building it",
                              text, None) from None
    except Exception as exc:  # a sympy failure on a strange but well-formed formula
        if meter.exhausted:
            raise _too_much_work(meter, text) from None
        raise ExpressionError(f"cannot build this formula: {type(exc).__name__}: "
                              f"{_short(str(exc), 120)}", text, None) from None
    if meter.exhausted:  # the interruption was swallowed (e.g. inside a finaliser)
        raise _too_much_work(meter, text)
    if undefined:
        raise ExpressionError("the formula is undefined or infinite (a division by zero, "
                              "log(0), tan(pi/2) ...?)", text, None)
    if imaginary:
        raise ExpressionError("the formula is not real (the square root or logarithm of a "
                              "negative number?)", text, None)
    if big_exponent:
        raise ExpressionError(f"the formula contains a numeric exponent above {MAX_EXPONENT} "
                              f"in magnitude", text, None)
    if bits > MAX_NUMBER_BITS:
        raise ExpressionError(f"the formula contains an exact number of more than about "
                              f"{int(MAX_NUMBER_BITS / 3.33)} digits", text, None)
    return ParsedExpression(node.expr, bits, node.size, node.value, node.degree, meter.count)


def _too_much_work(meter: OperationMeter, text: str) -> ExpressionError:
    _clear_after_interruption()
    return ExpressionError(f"formula too complex: building it needs more than {meter.limit} "
                           f"operations (function calls, sympy's included; the limit "
                           f"MAX_OPERATIONS); {ADVICE}", text, None)


def parse_expression(text, symbols=None, **options) -> sp.Expr:
    """Parse a formula in ordinary notation into a sympy expression, safely.

    Parameters
    ----------
    text : str
        The formula, e.g. ``"r/2*(1 + 8*pi*P*r^2/3 + Q^2/r^2)"``.
    symbols : mapping or iterable of str
        The declared names: an iterable of names (each becomes ``sympy.Symbol(name)``)
        or a mapping name -> sympy Symbol, sympy expression (a named
        sub-expression, substituted where the name is used) or
        :class:`ParsedExpression`.
    functions : mapping, optional
        Replaces the whitelist :data:`FUNCTIONS`.
    unavailable : mapping, optional
        name -> reason, for names known but not usable in this formula (the
        error then says why).
    max_length, max_tokens, max_depth, max_call_depth, max_operations : int
        Limits (defaults :data:`MAX_LENGTH`, :data:`MAX_TOKENS`, :data:`MAX_DEPTH`,
        :data:`MAX_CALL_DEPTH`, :data:`MAX_OPERATIONS`); all are counts, none is a time.

    Returns
    -------
    sympy.Expr

    Raises
    ------
    ExpressionError
        (a :class:`~bhchem.errors.MalformedFamilyError`) with one line naming
        the column and the fault.
    """
    return parse(text, symbols, condition=False, **options).expr


def parse_condition(text, symbols=None, **options) -> sp.core.relational.Relational:
    """Parse one inequality, e.g. ``"r > b"``, into an unevaluated sympy relation.

    The operators are ``<``, ``<=``, ``>`` and ``>=``; chained comparisons
    (``0 < x < 1``) must be given as two conditions.  Options as for
    :func:`parse_expression`.
    """
    return parse(text, symbols, condition=True, **options).expr
