"""Measurement models: safe expressions or Python functions, one or several outputs.

A model maps input estimates to one or more output quantities.  It is given
either as expressions (see :mod:`fieldbudget.engine.expression`) or as a Python
function called with the inputs as keyword arguments and returning a number
(or a tuple of numbers, one per output).
"""

from __future__ import annotations

import inspect
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, ModelEvaluationError
from .expression import Expression

__all__ = ["Model"]


@dataclass(frozen=True)
class Model:
    """A measurement model Y = f(X_1, ..., X_N) with one or several outputs.

    Build with :meth:`from_expression`, :meth:`from_expressions` or
    :meth:`from_function`.
    """

    outputs: tuple[str, ...]
    expressions: tuple[Expression, ...] | None = None
    function: Callable | None = field(default=None, compare=False)
    function_symbols: tuple[str, ...] = ()

    # -- constructors -------------------------------------------------------------
    @classmethod
    def from_expression(cls, text: str, output: str = "y", where: str = "") -> Model:
        """One output from one expression, e.g. ``Model.from_expression("2*pi*f/g", "B")``."""
        return cls(outputs=(output,), expressions=(Expression(text, where=where),))

    @classmethod
    def from_expressions(cls, mapping: Mapping[str, str], where: str = "") -> Model:
        """Several outputs, ``{"R": "V/I*cos(phi)", "X": "V/I*sin(phi)"}`` (JCGM 100 H.2)."""
        if not mapping:
            raise InputError("model", dict(mapping), "an object mapping each output symbol to an expression", where)
        outs = tuple(mapping)
        for o in outs:
            if not isinstance(o, str) or not o.isidentifier():
                raise InputError("output symbol", o, "a name made of letters, digits and _", where)
        return cls(outputs=outs, expressions=tuple(Expression(mapping[o], where=where) for o in outs))

    @classmethod
    def from_function(cls, function: Callable, outputs: Sequence[str] = ("y",),
                      symbols: Sequence[str] | None = None) -> Model:
        """A Python function called as ``function(**inputs)``.

        ``symbols`` defaults to the function's parameter names.
        """
        if not callable(function):
            raise InputError("model", function, "a callable or an expression string")
        if symbols is None:
            params = inspect.signature(function).parameters.values()
            symbols = [p.name for p in params if p.kind in (p.POSITIONAL_OR_KEYWORD, p.KEYWORD_ONLY)]
        return cls(outputs=tuple(outputs), function=function, function_symbols=tuple(symbols))

    # -- facts --------------------------------------------------------------------
    @property
    def symbols(self) -> tuple[str, ...]:
        """Input symbols the model uses, in order of first appearance."""
        if self.expressions is None:
            return self.function_symbols
        seen: list[str] = []
        for e in self.expressions:
            for s in e.symbols:
                if s not in seen:
                    seen.append(s)
        return tuple(seen)

    @property
    def is_expression(self) -> bool:
        return self.expressions is not None

    def text(self) -> str:
        """The model equation(s) as text, e.g. ``'B = f / g'``."""
        if self.expressions is None:
            name = getattr(self.function, "__name__", "function")
            return "; ".join(f"{o} = {name}({', '.join(self.function_symbols)})" for o in self.outputs)
        return "; ".join(f"{o} = {e.text}" for o, e in zip(self.outputs, self.expressions))

    def renamed(self, outputs: Sequence[str]) -> Model:
        """The same model with its outputs renamed."""
        return Model(tuple(outputs), self.expressions, self.function, self.function_symbols)

    def to_json(self) -> str | dict[str, str]:
        """The ``model`` value of a budget file."""
        if self.expressions is None:
            raise InputError("model", self.text(), "an expression (a Python-function model cannot be saved to a file)")
        if len(self.outputs) == 1:
            return self.expressions[0].text
        return {o: e.text for o, e in zip(self.outputs, self.expressions)}

    # -- evaluation ---------------------------------------------------------------
    def evaluate(self, values: Mapping[str, object], backend: str = "numpy") -> tuple:
        """Outputs at ``values``; ``backend`` is ``"numpy"`` or ``"umath"`` for expressions.

        Raises :class:`ModelEvaluationError` for division by zero, a math domain
        error, or a non-finite result.
        """
        try:
            if self.expressions is not None:
                with np.errstate(all="raise"):
                    out = tuple(e.evaluate(values, backend) for e in self.expressions)
            else:
                res = self.function(**{s: values[s] for s in self.function_symbols})
                out = tuple(res) if isinstance(res, (tuple, list)) else (res,)
        except ZeroDivisionError:
            raise ModelEvaluationError(f"model {self.text()!r}: division by zero at the given estimates") from None
        except OverflowError:
            raise ModelEvaluationError(f"model {self.text()!r}: a number overflows (beyond about 1.8e308) at the "
                                       "given estimates") from None
        except ModelEvaluationError as err:
            raise ModelEvaluationError(f"model {self.text()!r}: {err}") from None
        except (ValueError, FloatingPointError) as err:
            raise ModelEvaluationError(
                f"model {self.text()!r} cannot be evaluated at the given estimates ({err})"
            ) from None
        if len(out) != len(self.outputs):
            raise ModelEvaluationError(
                f"model returned {len(out)} value(s) but declares {len(self.outputs)} output(s) {self.outputs}"
            )
        return out

    def evaluate_float(self, values: Mapping[str, float]) -> tuple[float, ...]:
        """Outputs as floats; a non-finite output is a :class:`ModelEvaluationError`."""
        out = tuple(float(v) for v in self.evaluate(values))
        for o, v in zip(self.outputs, out):
            if not math.isfinite(v):
                raise ModelEvaluationError(f"model {self.text()!r}: output {o} is {v} at the given estimates")
        return out

    def evaluate_many(self, arrays: Mapping[str, np.ndarray]) -> tuple[np.ndarray, str]:
        """Outputs over Monte Carlo trials: ``(outputs, how)``.

        ``outputs`` has shape ``(n_outputs, M)``.  Expressions are always
        evaluated vectorised with numpy; a function is called once with whole
        arrays when it accepts them (``how = "vectorised"``) and otherwise once
        per trial (``how = "trial by trial"``).  Non-finite values are kept
        (as nan/inf) for the caller to count.
        """
        m = len(next(iter(arrays.values()))) if arrays else 0
        if self.expressions is not None:
            with np.errstate(all="ignore"):
                out = [np.broadcast_to(np.asarray(e.evaluate(arrays, "numpy"), dtype=float), (m,))
                       for e in self.expressions]
            return np.vstack(out), "vectorised"
        try:
            with np.errstate(all="ignore"):
                res = self.function(**{s: arrays[s] for s in self.function_symbols})
            res = res if isinstance(res, (tuple, list)) else (res,)
            stacked = [np.asarray(r, dtype=float) for r in res]
            if len(stacked) == len(self.outputs) and all(a.shape == (m,) for a in stacked):
                return np.vstack(stacked), "vectorised"
        except Exception:  # noqa: BLE001 - any failure means the function wants scalars
            pass
        out = np.empty((len(self.outputs), m))
        keys = self.function_symbols
        cols = [np.asarray(arrays[s]) for s in keys]
        for j in range(m):
            try:
                r = self.function(**{s: float(c[j]) for s, c in zip(keys, cols)})
                r = r if isinstance(r, (tuple, list)) else (r,)
                out[:, j] = [float(v) for v in r]
            except (ArithmeticError, ValueError):
                out[:, j] = np.nan
        return out, "trial by trial"
