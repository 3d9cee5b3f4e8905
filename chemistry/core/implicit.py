r"""A charge defined implicitly by its potential: q(y) with F(y, q) = 0, solved numerically.

When a potential Phi_q(y, q) (y: the state variable, P and the other parameters) cannot be
inverted for the charge in closed form, the fixed-potential ensemble
(:mod:`bhchem.core.ensemble`) uses the *implicit function*

.. math::

    q = q(y) \quad\text{defined by}\quad F(y, q) \equiv \Phi_q(y, q) - \Phi = 0,

represented in sympy by an applied function ``Q_of_Phi_Q(r, b, Phi_Q)`` whose partial
derivatives are those of the implicit-function theorem,

.. math::

    \frac{\partial q}{\partial y_i} = -\frac{F_{y_i}(y, q)}{F_q(y, q)}

(with q itself substituted back, so higher derivatives follow by the chain rule), and whose
numeric value is found per state by a certified root solve (:func:`solve_root`):

1. *isolation*: F is evaluated on a fixed grid of q over the charge's domain (0, the finite
   ends of the domain and +-16^k, k = -15 ... 15, inside it); a state whose finite values
   change sign exactly once has an isolated root; none means no charge gives this potential
   (NaN: no such state), more than one means the root is not unique (NaN, counted in
   :func:`diagnostics`; the ensemble refuses a family where this happens at a sampled
   physical state).  Uniqueness is a statement about the grid: a pair of roots inside one
   grid cell (a factor 16 wide) changes no sign there and is not seen;
2. *refinement*: safeguarded Newton ("rtsafe") from the secant point of the grid bracket,
   F and F_q from one compiled function; the midpoint (geometric for a wide positive
   bracket) whenever a step leaves the bracket or does not halve the step before it;
3. *certificate*: the final bracket [a, b] has F(a) F(b) <= 0 and b - a <= 8 eps |q|
   (F is continuous), so the returned q is within 8 ulp of a root; a state whose bracket
   does not shrink so far within :data:`MAX_ITERATIONS` returns NaN.

The last few solves are remembered by the exact bytes of their arguments: an analysis asks
for T, G, S, ... at the same states one after another.

The function class is rebuilt from its definition when a pickled derivation is loaded
(:mod:`bhchem.core.derivation_cache`), so derivations that contain it are cached on disk
like any other.

Example
-------
>>> import sympy as sp
>>> r, q, phi = sp.symbols("r q phi", positive=True)
>>> f = implicit_root(sp.exp(-q / r) / r - phi, q, (r, phi), lower=0.0, name="q_of_phi")
>>> float(f._imp_(2.0, 0.1))   # exact: q = -r log(phi r) = 2 log 5
3.2188758248682006
"""
from __future__ import annotations

import copyreg
import hashlib
import math
import threading
from contextlib import contextmanager

import numpy as np
import sympy as sp
from sympy.core.function import FunctionClass

from bhchem.core.special import hyp2f1_real

#: the isolation grid: 0 and +-GRID_BASE^k for |k| <= GRID_POWERS (inside the domain)
GRID_BASE = 16.0
GRID_POWERS = 15
#: most refinement steps (bisection alone closes a factor-16 bracket to 8 ulp in ~55)
MAX_ITERATIONS = 120
#: the certified bracket: b - a <= BRACKET_ULPS * eps * |q|
BRACKET_ULPS = 8


def _hyper(a, b, z):
    if len(a) != 2 or len(b) != 1:
        raise NotImplementedError(
            f"only the Gauss function 2F1 is supported numerically, not {len(a)}F{len(b)}")
    return hyp2f1_real(a[0], a[1], b[0], z)


def compile_numeric(args, expr):
    """A numpy function of ``args`` for ``expr`` (an expression or a list of them; 2F1 and
    implicit roots included)."""
    def polar(e):
        return e.replace(sp.exp_polar, sp.exp) if e.has(sp.exp_polar) else e
    expr = [polar(e) for e in expr] if isinstance(expr, list) else polar(expr)
    return sp.lambdify(args, expr, modules=[{"hyper": _hyper}, "numpy"], cse=True)


_tally = {"states": 0, "no_root": 0, "not_unique": 0, "not_converged": 0}
_tally_lock = threading.Lock()


def diagnostics() -> dict:
    """Counts since start-up: states solved, and those returned as NaN because no charge
    gives the potential, the root was not unique, or the bracket did not converge."""
    with _tally_lock:
        return dict(_tally)


_local = threading.local()

#: the first words of :func:`unsolved_warning` (an analysis that copies the warnings of the
#: analyses it runs drops these and reports its own total)
UNSOLVED_PREFIX = "had no unique charge for the fixed potential"


@contextmanager
def counting():
    """Count, on this thread, the states the numerical inverses return as NaN while the
    block runs: yields a dict with ``no_root``, ``not_unique`` and ``not_converged`` (the
    same kinds as :func:`diagnostics`), filled as the solves happen.  Blocks nest (each
    counts everything inside it).  The cost is a list append per vectorised solve, and
    nothing at all for a family without a numerical inverse.

    Examples
    --------
    >>> import sympy as sp
    >>> r, q, phi = sp.symbols("r q phi", positive=True)
    >>> f = implicit_root(r * sp.exp(-q / r) - phi, q, (r, phi), lower=0.0)
    >>> with counting() as c:
    ...     _ = f._imp_([0.1, 2.0], 0.5)   # r = 0.1 < phi: no q >= 0 gives it
    >>> c["no_root"], c["not_unique"]
    (1, 0)
    """
    tally = {"no_root": 0, "not_unique": 0, "not_converged": 0}
    stack = getattr(_local, "stack", None)
    if stack is None:
        stack = _local.stack = []
    stack.append(tally)
    try:
        yield tally
    finally:
        # by identity (equal counts are equal dicts); the block's own entry is the last
        # one unless an inner block on this thread failed to close
        del stack[max(i for i, t in enumerate(stack) if t is tally)]


def unsolved_warning(tally: dict, potentials=()) -> str | None:
    """The one-line warning for a :func:`counting` tally, or None when every state had its
    charge: ``'N state evaluations had no unique charge for the fixed potential Phi_q (a: no
    charge in its domain gives it, b: several do, c: not certified); they are left out
    (NaN)'`` (a state evaluated more than once, e.g. for T and then G, counts each time)."""
    parts = [(tally.get("no_root", 0), "no charge in its domain gives it"),
             (tally.get("not_unique", 0), "several do"),
             (tally.get("not_converged", 0), "the root was not certified")]
    n = sum(k for k, _ in parts)
    if not n:
        return None
    names = " ".join(potentials)
    return (f"{n} state evaluations {UNSOLVED_PREFIX}{' ' + names if names else ''} ("
            + ", ".join(f"{k}: {why}" for k, why in parts if k)
            + "); they are left out (NaN)")


def numerical_potentials(family) -> tuple:
    """The potentials a fixed-potential family holds fixed through this module's numerical
    inverse (``conventions['inverse_<q>']`` of :mod:`bhchem.core.ensemble` starts with
    'certified numerical inverse'), as named in its ensemble record."""
    swapped = family.ensemble_record().get("swapped", {}) or {}
    return tuple(pot for pot, q in swapped.items()
                 if family.conventions.get(f"inverse_{q}", "").startswith(
                     "certified numerical inverse"))


class ImplicitRootClass(FunctionClass):
    """Metaclass of the implicit-root functions (pickled by their definition)."""


class ImplicitRoot(sp.Function):
    """Base of the functions made by :func:`implicit_root` (see the module docstring)."""

    #: set on each subclass by implicit_root
    equation: sp.Expr
    root_symbol: sp.Symbol
    variables: tuple
    lower: float
    upper: float

    def _eval_is_real(self):
        return True

    def fdiff(self, argindex=1):
        """dq/dy_i = -F_{y_i}/F_q at q = self (implicit-function theorem)."""
        cls = type(self)
        partial = cls.partials.get(argindex)
        if partial is None:
            y = cls.variables[argindex - 1]
            partial = cls.partials.setdefault(argindex,
                                              -sp.diff(cls.equation, y) / cls.derivative_q)
        rep = dict(zip(cls.variables, self.args))
        rep[cls.root_symbol] = self
        return partial.xreplace(rep)


_classes: dict = {}
_classes_lock = threading.Lock()


def _key(equation, q, variables, lower, upper) -> str:
    text = "|".join([sp.srepr(equation), sp.srepr(q), sp.srepr(tuple(variables)),
                     repr(float(lower)), repr(float(upper))])
    return hashlib.sha256(text.encode()).hexdigest()


def implicit_root(equation, q, variables, *, lower=-math.inf, upper=math.inf,
                  name: str | None = None) -> ImplicitRootClass:
    """The function q(variables) defined by ``equation`` = 0, with q in [lower, upper].

    Parameters
    ----------
    equation : sympy.Expr
        F(variables, q); continuous in q on the domain.
    q : sympy.Symbol
        The unknown.
    variables : sequence of sympy.Symbol
        The arguments of the function, in order (every other free symbol of F).
    lower, upper : float
        The domain of q (the charge's declared domain; open or closed makes no difference
        to a continuous root search).
    name : str, optional
        The printed name (a Python identifier; default ``<q>_root``).

    Returns
    -------
    ImplicitRootClass
        A sympy function class: apply it to the variables; ``cls._imp_(*arrays)`` is the
        vectorised certified solve, ``cls.solve(*arrays)`` returns it with the number of
        roots isolated per state.  The same definition gives the same class.
    """
    variables = tuple(variables)
    equation = sp.sympify(equation)
    extra = equation.free_symbols - set(variables) - {q}
    if extra:
        raise ValueError(f"the equation depends on {sorted(map(str, extra))} which are not "
                         f"arguments of the implicit function")
    key = _key(equation, q, variables, lower, upper)
    name = name or f"{q.name}_root"
    with _classes_lock:
        cls = _classes.get((key, name))
        if cls is not None:
            return cls
    F = compile_numeric(variables + (q,), equation)
    F_q_expr = sp.diff(equation, q)
    both = compile_numeric(variables + (q,), [equation, F_q_expr])   # shares 2F1s etc.


    memo = _Memo()

    def numeric(*arrays):
        key = memo.key(arrays)
        hit = memo.get(key)
        if hit is not None:
            out, missed = hit
            for t in getattr(_local, "stack", None) or ():  # a remembered solve counts too
                for k, v in missed.items():
                    t[k] += v
            return out.copy() if isinstance(out, np.ndarray) else out
        with counting() as missed:
            out = solve_root(F, both, arrays, float(lower), float(upper))
        memo.put(key, (out, missed))
        return out.copy() if isinstance(out, np.ndarray) else out

    def solve(*arrays):
        return solve_root(F, both, arrays, float(lower), float(upper), counts=True)

    cls = ImplicitRootClass(name, (ImplicitRoot,), {
        "nargs": len(variables), "equation": equation, "root_symbol": q,
        "variables": variables, "lower": float(lower), "upper": float(upper),
        "derivative_q": F_q_expr, "definition_key": key, "partials": {},
        "_imp_": staticmethod(numeric), "solve": staticmethod(solve),
        "__module__": __name__})
    with _classes_lock:
        cls = _classes.setdefault((key, name), cls)
    return cls


class _Memo:
    """The last few solves of one function, keyed by the exact bytes of the arguments: an
    analysis evaluates T, G, S, ... at the same states one after another, and the solve is
    deterministic, so a repeated state is not solved again."""

    SIZE = 16

    def __init__(self):
        self._data: dict = {}
        self._lock = threading.Lock()

    @staticmethod
    def key(arrays):
        parts = []
        for a in arrays:
            arr = np.asarray(a, dtype=float)
            if arr.size > 100_000:
                return None
            parts.append((arr.shape, arr.tobytes()))
        return tuple(parts)

    def get(self, key):
        if key is None:
            return None
        with self._lock:
            return self._data.get(key)

    def put(self, key, value):
        if key is None:
            return
        with self._lock:
            while len(self._data) >= self.SIZE:
                self._data.pop(next(iter(self._data)))
            self._data[key] = value


def _rebuild(name, equation, q, variables, lower, upper):
    return implicit_root(equation, q, variables, lower=lower, upper=upper, name=name)


copyreg.pickle(ImplicitRootClass, lambda cls: (
    _rebuild, (cls.__name__, cls.equation, cls.root_symbol, cls.variables, cls.lower,
               cls.upper)))


def _grid(lower: float, upper: float) -> np.ndarray:
    pos = GRID_BASE ** np.arange(-GRID_POWERS, GRID_POWERS + 1, dtype=float)
    pts = np.concatenate([-pos[::-1], [0.0], pos])
    inside = (pts >= lower) & (pts <= upper)
    pts = pts[inside]
    ends = [v for v in (lower, upper) if math.isfinite(v)]
    return np.unique(np.concatenate([pts, ends]))


def solve_root(F, FdF, arrays, lower: float, upper: float, counts: bool = False):
    """Certified roots q of F(*arrays, q) = 0 in [lower, upper], one per broadcast state
    (see the module docstring); NaN where the root does not exist, is not unique, or is
    not certified.

    Parameters
    ----------
    F, FdF : callable
        Vectorised F(y..., q), and (F, dF/dq) together.
    arrays : sequence of array_like
        The arguments y (broadcast together).
    lower, upper : float
        The domain of q.
    counts : bool
        Also return the number of sign changes found on the isolation grid per state
        (0: no root, 1: isolated, more: not unique).
    """
    ys = np.broadcast_arrays(*[np.asarray(a, dtype=float) for a in arrays])
    shape = ys[0].shape if ys else ()
    ys = [y.ravel() for y in ys]
    n = ys[0].size if ys else 1
    grid = _grid(lower, upper)
    with np.errstate(all="ignore"):
        vals = np.asarray(F(*[y[:, None] for y in ys], grid[None, :]), dtype=complex)
        vals = vals * np.ones((n, grid.size))
    finite = np.isfinite(vals) & (np.abs(vals.imag) <= 1e-12 * (1 + np.abs(vals.real)))
    fv = np.where(finite, vals.real, np.nan)
    exact = finite & (fv == 0)
    sign = np.sign(fv)
    # a sign change between consecutive finite grid points (an exact zero counts once)
    pair = finite[:, :-1] & finite[:, 1:]
    change = pair & (sign[:, :-1] * sign[:, 1:] < 0)
    roots = change.sum(axis=1) + exact.sum(axis=1)
    out = np.full(n, np.nan)
    one = roots == 1
    none, several = int((roots == 0).sum()), int((roots > 1).sum())
    with _tally_lock:
        _tally["states"] += n
        _tally["no_root"] += none
        _tally["not_unique"] += several
    local = getattr(_local, "stack", None)
    for t in local or ():
        t["no_root"] += none
        t["not_unique"] += several
    # the exact grid zeros
    ex = one & exact.any(axis=1)
    if ex.any():
        out[ex] = grid[np.argmax(exact[ex], axis=1)]
    br = one & ~ex
    if br.any():
        idx = np.argmax(change[br], axis=1)
        a, b = grid[idx], grid[idx + 1]
        fa = fv[br, idx]
        fb = fv[br, idx + 1]
        q, ok = _refine(FdF, [y[br] for y in ys], a, b, fa, fb)
        out[np.flatnonzero(br)] = np.where(ok, q, np.nan)
        failed = int((~ok).sum())
        with _tally_lock:
            _tally["not_converged"] += failed
        for t in local or ():
            t["not_converged"] += failed
    if counts:
        return out.reshape(shape), roots.reshape(shape)
    return out.reshape(shape) if shape else out[0]


def _refine(FdF, ys, a, b, fa, fb):
    """Safeguarded Newton on brackets [a, b] with F(a) = fa, F(b) = fb of opposite signs;
    returns (q, certified).  ``FdF`` gives (F, dF/dq).

    The start is the secant point of the bracket (in log q for a wide positive bracket); a
    Newton step is taken when it stays inside the bracket and is shorter than half the
    step before it (else the midpoint: geometric for a wide positive bracket, so that a
    bracket spanning decades closes in few steps), as in the classic safeguarded Newton
    ("rtsafe"); a Newton step shorter than 2 eps |q| is lengthened to 2 eps |q| so that it
    lands beyond the root and closes the bracket from the other side."""
    eps = np.finfo(float).eps
    a, b = a.copy(), b.copy()
    sa = np.sign(fa)

    def midpoint(a, b):
        return np.where((a > 0) & (b > 4 * a), np.sqrt(np.abs(a * b)), 0.5 * (a + b))

    with np.errstate(all="ignore"):
        wide = (a > 0) & (b > 4 * a)
        t = fa / (fa - fb)
        secant = np.where(wide, a * np.exp(t * np.log(np.abs(b / a))), a + t * (b - a))
    inner = np.isfinite(secant) & (secant > a) & (secant < b)
    q = np.where(inner, secant, midpoint(a, b))
    done = np.zeros(a.size, dtype=bool)
    dx_old = b - a
    dx = b - a
    for _ in range(MAX_ITERATIONS):
        live = ~done
        with np.errstate(all="ignore"):
            f, df = FdF(*[y[live] for y in ys], q[live])
            f = np.asarray(f, dtype=float) * np.ones(int(live.sum()))
            df = np.asarray(df, dtype=float) * np.ones(int(live.sum()))
        al, bl, ql = a[live], b[live], q[live]
        fine = np.isfinite(f)
        zero = fine & (f == 0)
        left = fine & ~zero & (np.sign(f) == sa[live])     # the root lies in (q, b]
        right = fine & ~zero & ~left
        al = np.where(left | zero, ql, al)
        bl = np.where(right | zero, ql, bl)
        fin = zero | ((bl - al) <= BRACKET_ULPS * eps * np.maximum(np.abs(al), np.abs(bl)))
        with np.errstate(all="ignore"):
            newton = ql - f / df
        delta = 2 * eps * np.maximum(np.abs(ql), 1e-300)
        short = np.abs(newton - ql) < delta
        toward = np.sign(-f * df)                           # the Newton direction
        toward = np.where(toward == 0, np.sign(al + bl - 2 * ql), toward)
        newton = np.where(short, ql + toward * delta, newton)
        ok = fine & np.isfinite(newton) & (newton > al) & (newton < bl) \
            & (np.abs(newton - ql) <= np.maximum(0.5 * np.abs(dx_old[live]), delta))
        step = np.where(ok, newton, midpoint(al, bl))
        a[live], b[live] = al, bl
        dx_old[live] = dx[live]
        dx[live] = step - ql
        q[live] = np.where(fin, ql, step)
        done[live] = fin
        if done.all():
            break
    q = np.where(done & (q >= a) & (q <= b), q, 0.5 * (a + b))
    return q, done
