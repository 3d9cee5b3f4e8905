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

1. *isolation*: F is evaluated on a fixed grid of q over the charge's domain (0 and
   +-4^k, k = -30 ... 30, inside the domain); a state whose finite values change sign
   exactly once has an isolated root; none means no charge gives this potential (NaN: no
   such state), more than one means the root is not unique (NaN, counted in
   :func:`diagnostics`; the ensemble refuses a family where this happens at a sampled
   physical state);
2. *refinement*: safeguarded Newton steps (F_q compiled from its symbolic derivative),
   bisection whenever a step leaves the bracket, the bracket kept with a sign change;
3. *certificate*: the final bracket [a, b] has F(a) F(b) <= 0 and b - a <= 8 eps |q|
   (F is continuous), so the returned q is within 8 ulp of a root; a state whose bracket
   does not shrink so far within :data:`MAX_ITERATIONS` returns NaN.

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

import numpy as np
import sympy as sp
from sympy.core.function import FunctionClass

#: the isolation grid: 0 and +-GRID_BASE^k for |k| <= GRID_POWERS (inside the domain)
GRID_BASE = 4.0
GRID_POWERS = 30
#: most refinement steps (bisection alone halves a factor-4 bracket to 8 ulp in ~55)
MAX_ITERATIONS = 120
#: the certified bracket: b - a <= BRACKET_ULPS * eps * |q|
BRACKET_ULPS = 8


def _hyper(a, b, z):
    if len(a) != 2 or len(b) != 1:
        raise NotImplementedError(
            f"only the Gauss function 2F1 is supported numerically, not {len(a)}F{len(b)}")
    from bhchem.core.special import hyp2f1_real  # lazy: keeps scipy out of the cold start
    return hyp2f1_real(a[0], a[1], b[0], z)


def compile_numeric(args, expr):
    """A numpy function of ``args`` for ``expr`` (2F1 and implicit roots included)."""
    expr = expr.replace(sp.exp_polar, sp.exp) if expr.has(sp.exp_polar) else expr
    return sp.lambdify(args, expr, modules=[{"hyper": _hyper}, "numpy"], cse=True)


_tally = {"states": 0, "no_root": 0, "not_unique": 0, "not_converged": 0}
_tally_lock = threading.Lock()


def diagnostics() -> dict:
    """Counts since start-up: states solved, and those returned as NaN because no charge
    gives the potential, the root was not unique, or the bracket did not converge."""
    with _tally_lock:
        return dict(_tally)


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
    F_q = compile_numeric(variables + (q,), F_q_expr)

    def numeric(*arrays):
        return solve_root(F, F_q, arrays, float(lower), float(upper))

    def solve(*arrays):
        return solve_root(F, F_q, arrays, float(lower), float(upper), counts=True)

    cls = ImplicitRootClass(name, (ImplicitRoot,), {
        "nargs": len(variables), "equation": equation, "root_symbol": q,
        "variables": variables, "lower": float(lower), "upper": float(upper),
        "derivative_q": F_q_expr, "definition_key": key, "partials": {},
        "_imp_": staticmethod(numeric), "solve": staticmethod(solve),
        "__module__": __name__})
    with _classes_lock:
        cls = _classes.setdefault((key, name), cls)
    return cls


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


def solve_root(F, F_q, arrays, lower: float, upper: float, counts: bool = False):
    """Certified roots q of F(*arrays, q) = 0 in [lower, upper], one per broadcast state
    (see the module docstring); NaN where the root does not exist, is not unique, or is
    not certified.

    Parameters
    ----------
    F, F_q : callable
        Vectorised F(y..., q) and dF/dq.
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
    with _tally_lock:
        _tally["states"] += n
        _tally["no_root"] += int((roots == 0).sum())
        _tally["not_unique"] += int((roots > 1).sum())
    # the exact grid zeros
    ex = one & exact.any(axis=1)
    if ex.any():
        out[ex] = grid[np.argmax(exact[ex], axis=1)]
    br = one & ~ex
    if br.any():
        idx = np.argmax(change[br], axis=1)
        a, b = grid[idx], grid[idx + 1]
        fa = fv[br, idx]
        q, ok = _refine(F, F_q, [y[br] for y in ys], a, b, fa)
        out[np.flatnonzero(br)] = np.where(ok, q, np.nan)
        with _tally_lock:
            _tally["not_converged"] += int((~ok).sum())
    if counts:
        return out.reshape(shape), roots.reshape(shape)
    return out.reshape(shape) if shape else out[0]


def _refine(F, F_q, ys, a, b, fa):
    """Safeguarded Newton on brackets [a, b] with sign F(a) = sign fa; returns (q, certified).

    A Newton step inside the bracket is taken, else the (geometric, for a wide positive
    bracket) midpoint; a Newton step shorter than 2 eps |q| is lengthened to 2 eps |q| so
    that it lands beyond the root and closes the bracket from the other side; a bracket that
    did not halve over two steps is bisected."""
    eps = np.finfo(float).eps
    a, b = a.copy(), b.copy()
    sa = np.sign(fa)

    def midpoint(a, b):
        return np.where((a > 0) & (b > 4 * a), np.sqrt(np.abs(a * b)), 0.5 * (a + b))

    q = midpoint(a, b)
    done = np.zeros(a.size, dtype=bool)
    width = [b - a, b - a]
    for _ in range(MAX_ITERATIONS):
        with np.errstate(all="ignore"):
            f = np.asarray(F(*ys, q), dtype=float) * np.ones(a.size)
            df = np.asarray(F_q(*ys, q), dtype=float) * np.ones(a.size)
        live = ~done & np.isfinite(f)
        zero = live & (f == 0)
        left = live & ~zero & (np.sign(f) == sa)       # the root lies in (q, b]
        right = live & ~zero & ~left
        a = np.where(left | zero, q, a)
        b = np.where(right | zero, q, b)
        done |= zero | ((b - a) <= BRACKET_ULPS * eps * np.maximum(np.abs(a), np.abs(b)))
        if done.all():
            break
        with np.errstate(all="ignore"):
            newton = q - f / df
        inside = live & np.isfinite(newton) & (newton > a) & (newton < b)
        delta = 2 * eps * np.maximum(np.abs(q), 1e-300)
        short = inside & (np.abs(newton - q) < delta)
        newton = np.where(short, q + np.sign(newton - q) * delta, newton)
        inside &= (newton > a) & (newton < b)
        slow = (b - a) > 0.5 * width[0]
        step = np.where(inside & ~slow, newton, midpoint(a, b))
        width = [width[1], b - a]
        q = np.where(done, q, step)
    q = np.where(done & (q >= a) & (q <= b), q, 0.5 * (a + b))
    return q, done
