"""Safe model expressions: ordinary Python arithmetic over the input symbols.

Written by hand because no well-kept library parses a *restricted* arithmetic
language into something that can be evaluated both on ``uncertainties``
numbers (for sensitivity coefficients) and on numpy arrays (for Monte Carlo)
without ever calling ``eval``.  The text is parsed with :mod:`ast` and every
node is checked against a whitelist: numbers, the input symbols, ``pi``,
``+ - * / **``, unary minus and plus, parentheses, and calls of the functions
in :data:`FUNCTIONS`.  Attribute access, subscripts, keywords, comparisons,
lambdas and every other construct are refused with an error that names the
position in the text.
"""

from __future__ import annotations

import ast
import math
from collections.abc import Callable, Mapping, Sequence

from ..errors import ExpressionError

__all__ = ["Expression", "FUNCTIONS", "CONSTANTS", "parse_expression"]

# name -> number of arguments
FUNCTIONS: dict[str, int] = {
    "sqrt": 1, "exp": 1, "log": 1, "log10": 1,
    "sin": 1, "cos": 1, "tan": 1, "asin": 1, "acos": 1, "atan": 1, "atan2": 2,
    "sinh": 1, "cosh": 1, "tanh": 1,
    "radians": 1, "degrees": 1, "abs": 1, "hypot": 2,
}
CONSTANTS: dict[str, float] = {"pi": math.pi}

_BINOPS = {ast.Add: "+", ast.Sub: "-", ast.Mult: "*", ast.Div: "/", ast.Pow: "**"}


def _numpy_functions() -> dict[str, Callable]:
    import numpy as np

    return {
        "sqrt": np.sqrt, "exp": np.exp, "log": np.log, "log10": np.log10,
        "sin": np.sin, "cos": np.cos, "tan": np.tan, "asin": np.arcsin, "acos": np.arccos,
        "atan": np.arctan, "atan2": np.arctan2, "sinh": np.sinh, "cosh": np.cosh, "tanh": np.tanh,
        "radians": np.radians, "degrees": np.degrees, "abs": np.abs, "hypot": np.hypot,
    }


def _umath_functions() -> dict[str, Callable]:
    from uncertainties import umath

    return {
        "sqrt": umath.sqrt, "exp": umath.exp, "log": umath.log, "log10": umath.log10,
        "sin": umath.sin, "cos": umath.cos, "tan": umath.tan, "asin": umath.asin, "acos": umath.acos,
        "atan": umath.atan, "atan2": umath.atan2, "sinh": umath.sinh, "cosh": umath.cosh,
        "tanh": umath.tanh, "radians": umath.radians, "degrees": umath.degrees, "abs": abs,
        "hypot": umath.hypot,
    }


_BACKENDS: dict[str, Callable[[], dict[str, Callable]]] = {"numpy": _numpy_functions, "umath": _umath_functions}
_backend_cache: dict[str, dict[str, Callable]] = {}


def _functions(backend: str) -> dict[str, Callable]:
    if backend not in _backend_cache:
        _backend_cache[backend] = _BACKENDS[backend]()
    return _backend_cache[backend]


class Expression:
    """A checked, compiled model expression.

    Parameters
    ----------
    text : str
        The expression, e.g. ``"f * (1 + y_tb) / g"``.
    allowed_symbols : sequence of str, optional
        When given, every name that is not a function or ``pi`` must be one of
        these; otherwise any identifier is taken as an input symbol.
    where : str
        Context for error messages (e.g. ``"model"`` or a file name).
    """

    __slots__ = ("text", "symbols", "_tree", "_where")

    def __init__(self, text: str, allowed_symbols: Sequence[str] | None = None, where: str = "") -> None:
        if not isinstance(text, str) or not text.strip():
            raise ExpressionError("model", text, "a non-empty expression string", where)
        self.text = text.strip()
        self._where = where
        try:
            tree = ast.parse(self.text, mode="eval")
        except SyntaxError as err:
            col = (err.offset or 1) - 1
            raise ExpressionError(
                "model", self.text, f"valid arithmetic (syntax error at column {col + 1}: {err.msg})", where, col
            ) from None
        symbols: list[str] = []
        self._check(tree.body, symbols, allowed_symbols)
        self.symbols = tuple(symbols)
        self._tree = tree.body

    def __repr__(self) -> str:
        return f"Expression({self.text!r})"

    # -- checking -----------------------------------------------------------------
    def _fail(self, node: ast.AST, what: str) -> None:
        col = getattr(node, "col_offset", None)
        at = f" at column {col + 1}" if col is not None else ""
        raise ExpressionError("model", self.text, f"{what}{at}", self._where, col)

    def _check(self, node: ast.AST, symbols: list[str], allowed: Sequence[str] | None) -> None:
        if isinstance(node, ast.BinOp):
            if type(node.op) not in _BINOPS:
                self._fail(node, "built from + - * / ** only (operator not allowed")
            self._check(node.left, symbols, allowed)
            self._check(node.right, symbols, allowed)
        elif isinstance(node, ast.UnaryOp):
            if not isinstance(node.op, (ast.USub, ast.UAdd)):
                self._fail(node, "built from + - * / ** only (unary operator not allowed)")
            self._check(node.operand, symbols, allowed)
        elif isinstance(node, ast.Constant):
            if isinstance(node.value, bool) or not isinstance(node.value, (int, float)):
                self._fail(node, f"arithmetic on numbers and symbols (literal {node.value!r} not allowed)")
        elif isinstance(node, ast.Name):
            name = node.id
            if name in FUNCTIONS:
                self._fail(node, f"a call of {name}(...) ({name!r} is a function, not a value)")
            if name in CONSTANTS:
                return
            if name.startswith("__"):
                self._fail(node, f"free of dunder names ({name!r} is not allowed)")
            if allowed is not None and name not in allowed:
                known = ", ".join(sorted(allowed)) or "none"
                self._fail(node, f"written in the inputs' symbols ({name!r} is not an input; inputs: {known})")
            if name not in symbols:
                symbols.append(name)
        elif isinstance(node, ast.Call):
            if not isinstance(node.func, ast.Name):
                if isinstance(node.func, ast.Attribute):
                    self._fail(node, "free of attribute access (method calls are not allowed)")
                self._fail(node, "calling only the allowed functions")
            fname = node.func.id
            if fname not in FUNCTIONS:
                allowed_f = ", ".join(sorted(FUNCTIONS))
                self._fail(node, f"calling only the allowed functions ({fname!r} is not one of: {allowed_f})")
            if node.keywords:
                self._fail(node, f"calling {fname}() with positional arguments only")
            if len(node.args) != FUNCTIONS[fname]:
                self._fail(node, f"calling {fname}() with {FUNCTIONS[fname]} argument(s) (got {len(node.args)})")
            for a in node.args:
                if isinstance(a, ast.Starred):
                    self._fail(a, f"calling {fname}() without *arguments")
                self._check(a, symbols, allowed)
        elif isinstance(node, ast.Attribute):
            self._fail(node, "free of attribute access ('.' is not allowed)")
        else:
            self._fail(node, f"plain arithmetic ({type(node).__name__} is not allowed)")

    # -- evaluation ---------------------------------------------------------------
    def evaluate(self, values: Mapping[str, object], backend: str = "numpy") -> object:
        """Evaluate at ``values`` (floats, numpy arrays, or ``uncertainties`` numbers).

        ``backend`` picks the function set: ``"numpy"`` (floats and arrays) or
        ``"umath"`` (``uncertainties`` numbers, for exact derivatives).
        """
        return _eval(self._tree, values, _functions(backend))


def _eval(node: ast.AST, env: Mapping[str, object], funcs: Mapping[str, Callable]) -> object:
    if isinstance(node, ast.BinOp):
        a = _eval(node.left, env, funcs)
        b = _eval(node.right, env, funcs)
        op = type(node.op)
        if op is ast.Add:
            return a + b  # type: ignore[operator]
        if op is ast.Sub:
            return a - b  # type: ignore[operator]
        if op is ast.Mult:
            return a * b  # type: ignore[operator]
        if op is ast.Div:
            return a / b  # type: ignore[operator]
        return a ** b  # type: ignore[operator]
    if isinstance(node, ast.UnaryOp):
        v = _eval(node.operand, env, funcs)
        return -v if isinstance(node.op, ast.USub) else +v  # type: ignore[operator]
    if isinstance(node, ast.Constant):
        return float(node.value)
    if isinstance(node, ast.Name):
        if node.id in env:
            return env[node.id]
        return CONSTANTS[node.id]
    assert isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
    return funcs[node.func.id](*(_eval(a, env, funcs) for a in node.args))


def parse_expression(text: str, allowed_symbols: Sequence[str] | None = None, where: str = "") -> Expression:
    """Parse and check ``text``; see :class:`Expression`."""
    return Expression(text, allowed_symbols, where)
