"""The law of propagation with second-order terms (JCGM 100:2008 5.1.2, the note to it).

For uncorrelated inputs whose distributions are symmetric about their
estimates (the note assumes normal ones), the Taylor series carried one order
further adds to eq. (10)

    u_c^2(y) = sum_i c_i^2 u^2(x_i)
             + sum_i sum_j [ (1/2) (d2f/dxi dxj)^2 + (df/dxi)(d3f/dxi dxj^2) ] u^2(x_i) u^2(x_j),

the double sum running over all i and j (so a mixed term i != j appears twice
in its first part).  In JCGM 100:2008 H.1.7 these terms raise the end-gauge
u_c from 32 nm to 34 nm.

First derivatives are exact (automatic differentiation by ``uncertainties``)
where the model accepts its numbers; the second and third derivatives are
central differences of those exact gradients.  For other function models all
derivatives are central finite differences of f.  Either way they are taken in the
standardised coordinates t_i = (X_i - x_i) / u(x_i): the step in X_i is
``step`` times u(x_i).  Every term of the formula is a derivative multiplied
by one u per differentiation, so in these coordinates the formula reads
sum g_i^2 + sum_ij (g_ij^2 / 2 + g_i g_ijj) with g the derivatives of
f(x + t u) at t = 0: the step is then on the scale over which the inputs vary,
whatever their units (a length in nm and an expansion coefficient of 1e-6
per degC get steps of the same meaning), the truncation error is of relative
order step^2 times the next derivatives on that scale (negligible when f is
smooth over a few u), and the rounding error, of order eps |f| / step^3 for
the third derivatives, stays small for the default step of 0.05.

Methods.  The derivatives come in one of two ways (``METHODS``), recorded
with the result so that a record re-evaluates to the last digit:

- 1: each of the 2n + 1 gradients by ``uncertainties`` (one model
  evaluation on ``uncertainties`` numbers per shifted point);
- 2 (current, expression models): all 2n + 1 gradients in one pass over the
  compiled expression in forward mode, every value carrying its gradient as
  a numpy row, one row per shifted point.  The derivatives are the same
  exact ones (the chain rule applied to the same operations), so the two
  methods agree to rounding: the tests hold them within 1e-9 of u_c.
  Function models always use method 1.

Written by hand because no well-kept library implements the GUM's
second-order formula; the differences are textbook central stencils, and
the forward pass is the chain rule over the same whitelist of operations as
:mod:`fieldbudget.engine.expression`.
"""

from __future__ import annotations

import ast
import math

import numpy as np

from ..errors import InputError, ModelEvaluationError
from ._versions import VersionSetting

__all__ = ["DEFAULT_STEP", "METHOD", "METHODS", "combined_uncertainty", "default_method", "method_in_use",
           "method_version"]

#: How the derivatives are found (see the module docstring); recorded with each result.
METHOD = 2
METHODS = (1, 2)
_METHOD = VersionSetting("second_order_method", METHOD, METHODS, "second-order law of propagation")
method_version = _METHOD.use
"""``with method_version(v):`` makes second-order terms use method ``v`` (used to verify records)."""


def default_method() -> int:
    """The method in force here (``METHOD`` unless :func:`method_version` says otherwise)."""
    return _METHOD.get()


def method_in_use(budget) -> int:
    """The method :func:`combined_uncertainty` uses for ``budget`` now (1 for function models)."""
    return _METHOD.get() if budget.model.is_expression else 1


DEFAULT_STEP = 0.05
"""Finite-difference step in units of each input's standard uncertainty."""

_WHERE = "second-order law of propagation (JCGM 100 5.1.2 note)"


def combined_uncertainty(budget, *, output: str | None = None, step: float = DEFAULT_STEP) -> float:
    """u_c(y) with the second-order terms of JCGM 100:2008 5.1.2 (note), in the output's unit.

    ``output`` picks the output of a several-output model (required then).
    Raises :class:`InputError` when the budget has correlations, which the
    formula does not cover.
    """
    if budget.has_correlations:
        pairs = ", ".join(f"{a}-{b}" for a, b, _ in budget.correlations) or "readings taken together"
        raise InputError("correlations", pairs,
                         "absent: the second-order terms of JCGM 100 5.1.2 hold for uncorrelated inputs only",
                         _WHERE)
    outputs = tuple(budget.model.outputs)
    if output is None:
        if len(outputs) != 1:
            raise InputError("output", None, f"one of {list(outputs)} for a model with several outputs", _WHERE)
        k = 0
    elif output in outputs:
        k = outputs.index(output)
    else:
        raise InputError("output", output, f"one of {list(outputs)}", _WHERE)
    h = float(step)
    if not (math.isfinite(h) and 0 < h <= 1):
        raise InputError("step", step, "a number in (0, 1] (a fraction of each u(x_i))", _WHERE)

    inputs = [q for q in budget.inputs]
    x0 = {q.symbol: float(q.estimate) for q in inputs}
    active = [(q.symbol, float(q.standard_uncertainty)) for q in inputs if q.standard_uncertainty > 0]
    cache: dict[tuple, float] = {}

    def f(*shifts: tuple[int, float]) -> float:
        """f at x + sum(t * u) for the (index, t) pairs given (t in units of u)."""
        key = tuple(sorted((i, t) for i, t in shifts if t != 0.0))
        if key not in cache:
            values = dict(x0)
            for i, t in key:
                sym, u = active[i]
                values[sym] = x0[sym] + t * u
            try:
                cache[key] = float(budget.model.evaluate_float(values)[k])
            except ModelEvaluationError as err:
                raise ModelEvaluationError(
                    f"{err} (while differentiating numerically within {h:g} u of the estimates for the "
                    "second-order terms)") from None
        return cache[key]

    n = len(active)
    exact = None
    if method_in_use(budget) == 2:
        exact = _forward_terms(budget.model.expressions[k], x0, active, h)
    if exact is None:
        exact = _gradient_terms(budget, k, x0, active, h)
    if exact is not None:
        g1, g2m, g3m = exact
        variance = math.fsum(g * g for g in g1)
        variance += math.fsum(0.5 * g2m[i][j] ** 2 + g1[i] * g3m[i][j] for i in range(n) for j in range(n))
        return _checked_sqrt(variance)
    f0 = f()
    # five-point stencils along one input (error of order h^4), four-point ones across two (order h^2)
    g1 = [(f((i, -2 * h)) - 8 * f((i, -h)) + 8 * f((i, h)) - f((i, 2 * h))) / (12 * h) for i in range(n)]

    def g2(i: int, j: int) -> float:
        if i == j:
            return (-f((i, 2 * h)) + 16 * f((i, h)) - 30 * f0 + 16 * f((i, -h)) - f((i, -2 * h))) / (12 * h * h)
        return (f((i, h), (j, h)) - f((i, h), (j, -h)) - f((i, -h), (j, h)) + f((i, -h), (j, -h))) / (4 * h * h)

    def g3(i: int, j: int) -> float:
        """d3f / dt_i dt_j^2."""
        if i == j:
            return (f((i, 2 * h)) - 2 * f((i, h)) + 2 * f((i, -h)) - f((i, -2 * h))) / (2 * h ** 3)
        plus = f((i, h), (j, h)) - 2 * f((i, h)) + f((i, h), (j, -h))
        minus = f((i, -h), (j, h)) - 2 * f((i, -h)) + f((i, -h), (j, -h))
        return (plus - minus) / (2 * h ** 3)

    variance = math.fsum(g * g for g in g1)
    terms = []
    for i in range(n):
        for j in range(n):
            terms.append(0.5 * g2(i, j) ** 2 + g1[i] * g3(i, j))
    variance += math.fsum(terms)
    return _checked_sqrt(variance)


def _checked_sqrt(variance: float) -> float:
    if variance < 0:
        # The g_i g_ijj part can be negative; a negative total means the expansion is not usable here.
        raise ModelEvaluationError(
            "the second-order terms make u_c^2 negative "
            f"({variance:.3g}); the Taylor expansion does not describe this model over a few u, "
            "use the Monte Carlo method instead")
    return math.sqrt(variance)


def _gradient_terms(budget, k, x0, active, h):
    """(g1, g2, g3) from exact first derivatives (automatic differentiation by ``uncertainties``).

    The gradient G_i = df/dt_i is exact at each point; g2_ij = dG_i/dt_j and
    g3_ij = d2G_i/dt_j^2 come from central differences of G along t_j.  Their
    rounding error is of order eps |G_i| / h^2, far below that of differencing
    f itself (eps |f| / h^3), which matters when u(x_i) is tiny against x_i
    (an NMR frequency of 64 MHz known to 0.01 Hz).  Returns ``None`` when the
    model does not accept ``uncertainties`` numbers (then f is differenced).
    """
    import warnings

    from uncertainties import ufloat

    syms = [s for s, _ in active]
    us = [u for _, u in active]

    def grad(shift_index: int | None, t: float) -> list[float] | None:
        values: dict[str, object] = dict(x0)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            uv = {}
            for i, (sym, u) in enumerate(active):
                x = x0[sym] + (t * u if i == shift_index else 0.0)
                uv[sym] = ufloat(x, 1.0)
                values[sym] = uv[sym]
            try:
                out = budget.model.evaluate(values, backend="umath")[k]
            except ModelEvaluationError as err:
                raise ModelEvaluationError(
                    f"{err} (while differentiating within {h:g} u of the estimates for the second-order terms)"
                ) from None
            except Exception:  # noqa: BLE001 - a function model that refuses ufloats
                return None
        ders = getattr(out, "derivatives", None)
        if ders is None:
            return [0.0] * len(syms) if isinstance(out, (int, float)) else None
        return [float(ders.get(uv[s], 0.0)) * u for s, u in zip(syms, us)]

    g0 = grad(None, 0.0)
    if g0 is None:
        return None
    n = len(syms)
    plus = [grad(j, h) for j in range(n)]
    minus = [grad(j, -h) for j in range(n)]
    if any(v is None for v in plus + minus):
        return None
    g2 = [[(plus[j][i] - minus[j][i]) / (2 * h) for j in range(n)] for i in range(n)]
    g3 = [[(plus[j][i] - 2 * g0[i] + minus[j][i]) / (h * h) for j in range(n)] for i in range(n)]
    return g0, g2, g3


_LN10 = math.log(10.0)


def _forward_terms(expression, x0, active, h):
    """(g1, g2, g3) as :func:`_gradient_terms` gives them, from one forward-mode pass (method 2).

    The expression's postfix program runs once on P = 2n + 1 points at a
    time (the estimates, then each active input shifted by +h u and by -h u):
    every value is an array of shape (P,) and its gradient with respect to
    the active inputs an array (P, n), propagated by the chain rule.
    Returns ``None`` when a value is not finite (the caller then uses method 1,
    whose messages name the problem).
    """
    from .expression import CONSTANTS

    syms = [s for s, _ in active]
    us = np.array([u for _, u in active])
    n = len(syms)
    pts = 2 * n + 1
    col = {s: i for i, s in enumerate(syms)}
    shift = np.zeros((pts, n))
    shift[1 + np.arange(n), np.arange(n)] = h * us
    shift[1 + n + np.arange(n), np.arange(n)] = -h * us
    stack: list = []
    with np.errstate(all="ignore"):
        for step in expression._program:
            kind = step[0]
            if kind == "c":
                stack.append((step[1], None))
            elif kind == "n":
                name = step[1]
                if name in col:
                    i = col[name]
                    d = np.zeros((pts, n))
                    d[:, i] = 1.0
                    stack.append((x0[name] + shift[:, i], d))
                else:
                    stack.append((x0[name] if name in x0 else CONSTANTS[name], None))
            elif kind == "b":
                b, a = stack.pop(), stack.pop()
                stack.append(_binary(step[1], a, b))
            elif kind == "u":
                v, d = stack.pop()
                stack.append((-v, None if d is None else -d) if step[1] else (v, d))
            else:
                nargs = step[2]
                args = stack[len(stack) - nargs:]
                del stack[len(stack) - nargs:]
                stack.append(_function(step[1], args))
    v, d = stack[0]
    if d is None:
        return [0.0] * n, [[0.0] * n for _ in range(n)], [[0.0] * n for _ in range(n)]
    v = np.broadcast_to(v, (pts,))
    if not (np.all(np.isfinite(v)) and np.all(np.isfinite(d))):
        return None
    G = d * us  # gradients in the standardised coordinates t = (X - x) / u
    g0 = G[0].tolist()
    plus, minus = G[1:1 + n], G[1 + n:]
    g2 = ((plus - minus) / (2 * h)).T.tolist()           # g2[i][j] = dG_i / dt_j
    g3 = ((plus - 2 * G[0] + minus) / (h * h)).T.tolist()
    return g0, g2, g3


def _scale(d, f):
    """d * f with d a gradient (P, n) or None, f a value (P,) or a number."""
    if d is None:
        return None
    return d * (f[:, None] if isinstance(f, np.ndarray) else f)


def _plus(a, b):
    if a is None:
        return b
    return a if b is None else a + b


def _binary(op, a, b):
    (va, da), (vb, db) = a, b
    if op is ast.Add:
        return va + vb, _plus(da, db)
    if op is ast.Sub:
        return va - vb, _plus(da, None if db is None else -db)
    if op is ast.Mult:
        return va * vb, _plus(_scale(da, vb), _scale(db, va))
    if op is ast.Div:
        v = va / vb
        return v, _scale(_plus(da, _scale(db, -v)), 1.0 / vb)
    # power: d(a^b) = b a^(b-1) da + a^b ln(a) db
    v = np.power(va, vb) if isinstance(va, np.ndarray) or isinstance(vb, np.ndarray) else va ** vb
    d = None if da is None else _scale(da, vb * np.power(va, vb - 1))
    if db is not None:
        d = _plus(d, _scale(db, v * np.log(va)))
    return v, d


def _function(name, args):
    if name in ("atan2", "hypot"):
        (y, dy), (x, dx) = args
        if name == "hypot":
            v = np.hypot(y, x)
            return v, _scale(_plus(_scale(dy, y), _scale(dx, x)), 1.0 / v)
        r2 = x * x + y * y
        return np.arctan2(y, x), _scale(_plus(_scale(dy, x), _scale(dx, -y)), 1.0 / r2)
    (x, dx), = args
    if name == "sqrt":
        v = np.sqrt(x)
        return v, _scale(dx, 0.5 / v)
    if name == "exp":
        v = np.exp(x)
        return v, _scale(dx, v)
    if name == "log":
        return np.log(x), _scale(dx, 1.0 / x)
    if name == "log10":
        return np.log10(x), _scale(dx, 1.0 / (x * _LN10))
    if name == "sin":
        return np.sin(x), _scale(dx, np.cos(x))
    if name == "cos":
        return np.cos(x), _scale(dx, -np.sin(x))
    if name == "tan":
        v = np.tan(x)
        return v, _scale(dx, 1.0 + v * v)
    if name == "asin":
        return np.arcsin(x), _scale(dx, 1.0 / np.sqrt(1.0 - x * x))
    if name == "acos":
        return np.arccos(x), _scale(dx, -1.0 / np.sqrt(1.0 - x * x))
    if name == "atan":
        return np.arctan(x), _scale(dx, 1.0 / (1.0 + x * x))
    if name == "sinh":
        return np.sinh(x), _scale(dx, np.cosh(x))
    if name == "cosh":
        return np.cosh(x), _scale(dx, np.sinh(x))
    if name == "tanh":
        v = np.tanh(x)
        return v, _scale(dx, 1.0 - v * v)
    if name == "radians":
        return np.radians(x), _scale(dx, math.pi / 180)
    if name == "degrees":
        return np.degrees(x), _scale(dx, 180 / math.pi)
    assert name == "abs"
    return np.abs(x), _scale(dx, np.copysign(1.0, x))  # +1 at 0, as uncertainties takes it
