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

Checking and evaluation walk the tree with an explicit stack (the tree is
turned once into a postfix program), so a long flat model of thousands of
terms evaluates without deep recursion; nesting itself (parentheses, signs
in a row, powers of powers) is limited to :data:`MAX_NESTING` levels and a
model nested deeper is refused with that limit, never a RecursionError.
Models are real-valued: ``x**y`` with a negative base and a fractional power
is refused at the estimates.
"""

from __future__ import annotations

import ast
import math
import re
from collections.abc import Callable, Mapping, Sequence

from ..errors import ExpressionError, ModelEvaluationError
from ._runtime import collector_paused

__all__ = ["Expression", "FUNCTIONS", "CONSTANTS", "MAX_NESTING", "MAX_LENGTH", "parse_expression"]

#: Deepest nesting accepted (parentheses, unary signs in a row, calls and powers inside each other).
MAX_NESTING = 100
#: Longest model text accepted (characters).
MAX_LENGTH = 1_000_000

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

    __slots__ = ("text", "symbols", "_tree", "_where", "_program")

    def __init__(self, text: str, allowed_symbols: Sequence[str] | None = None, where: str = "") -> None:
        if not isinstance(text, str) or not text.strip():
            raise ExpressionError("model", text, "a non-empty expression string", where)
        self.text = text.strip()
        self._where = where
        if len(self.text) > MAX_LENGTH:
            raise ExpressionError("model", f"{len(self.text)} characters", f"at most {MAX_LENGTH} characters", where)
        depth = _text_nesting(self.text)
        if depth > MAX_NESTING:
            raise ExpressionError("model", _shorten(self.text), f"nested at most {MAX_NESTING} levels deep "
                                  f"(parentheses, signs in a row, powers of powers; this one is nested {depth})", where)
        with collector_paused():  # tens of thousands of tree nodes for a long model (see engine._runtime)
            self._build(allowed_symbols)

    def _build(self, allowed_symbols: Sequence[str] | None) -> None:
        try:
            tree = _parse(self.text)
        except SyntaxError as err:
            col = (err.offset or 1) - 1
            raise ExpressionError(
                "model", _shorten(self.text), f"valid arithmetic (syntax error at column {col + 1}: {err.msg})",
                self._where, col
            ) from None
        except (RecursionError, MemoryError):
            raise ExpressionError("model", _shorten(self.text), f"nested at most {MAX_NESTING} levels deep",
                                  self._where) from None
        symbols: list[str] = []
        self._check(tree.body, symbols, allowed_symbols)
        self.symbols = tuple(symbols)
        self._tree = tree.body
        self._program = _compile(tree.body)

    def __repr__(self) -> str:
        return f"Expression({self.text!r})"

    # -- checking -----------------------------------------------------------------
    def _fail(self, node: ast.AST, what: str) -> None:
        col = getattr(node, "col_offset", None)
        at = f" at column {col + 1}" if col is not None else ""
        raise ExpressionError("model", _shorten(self.text), f"{what}{at}", self._where, col)

    def _check(self, root: ast.AST, symbols: list[str], allowed: Sequence[str] | None) -> None:
        # explicit stack, children pushed in reverse so symbols are listed left to right
        stack = [root]
        listed = set(symbols)  # the symbols list in order, this set for the look-up
        allowed = None if allowed is None else frozenset(allowed)
        while stack:
            node = stack.pop()
            for child in reversed(self._check_node(node, symbols, allowed, listed)):
                stack.append(child)

    def _check_node(self, node: ast.AST, symbols: list[str], allowed: Sequence[str] | None,
                    listed: set[str]) -> list:
        """Check one node; return the children still to be checked."""
        if isinstance(node, ast.BinOp):
            if type(node.op) not in _BINOPS:
                self._fail(node, "built from + - * / ** only (operator not allowed")
            return [node.left, node.right]
        elif isinstance(node, ast.UnaryOp):
            if not isinstance(node.op, (ast.USub, ast.UAdd)):
                self._fail(node, "built from + - * / ** only (unary operator not allowed)")
            return [node.operand]
        elif isinstance(node, ast.Constant):
            if isinstance(node.value, bool) or not isinstance(node.value, (int, float)):
                self._fail(node, f"arithmetic on numbers and symbols (literal {node.value!r} not allowed)")
        elif isinstance(node, ast.Name):
            name = node.id
            if name in FUNCTIONS:
                self._fail(node, f"a call of {name}(...) ({name!r} is a function, not a value)")
            if name in CONSTANTS:
                return []
            if name.startswith("__"):
                self._fail(node, f"free of dunder names ({name!r} is not allowed)")
            if allowed is not None and name not in allowed:
                known = ", ".join(sorted(allowed)) or "none"
                self._fail(node, f"written in the inputs' symbols ({name!r} is not an input; inputs: {known})")
            if name not in listed:
                listed.add(name)
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
            return list(node.args)
        elif isinstance(node, ast.Attribute):
            self._fail(node, "free of attribute access ('.' is not allowed)")
        else:
            self._fail(node, f"plain arithmetic ({type(node).__name__} is not allowed)")
        return []

    # -- evaluation ---------------------------------------------------------------
    def evaluate(self, values: Mapping[str, object], backend: str = "numpy") -> object:
        """Evaluate at ``values`` (floats, numpy arrays, or ``uncertainties`` numbers).

        ``backend`` picks the function set: ``"numpy"`` (floats and arrays) or
        ``"umath"`` (``uncertainties`` numbers, for exact derivatives).
        """
        return _run(self._program, values, _functions(backend))


def _shorten(text: str, n: int = 80) -> str:
    return text if len(text) <= n else text[: n - 3] + "..."


def _parse(text: str) -> ast.Expression:
    """``ast.parse``; a long flat chain (thousands of terms) is parsed in a thread with room to recurse.

    CPython builds the tree of ``a + b + c + ...`` recursively, one level per
    term.  The nesting check has already bounded the real nesting, so only
    such flat chains get here, and they are parsed with a larger recursion
    limit on a thread with a large stack.  A text with more operators than
    half the recursion limit goes there at once: a parse that fails part way
    costs as much as one that succeeds.
    """
    import sys

    if sum(map(text.count, "+-*/,")) < sys.getrecursionlimit() // 2:
        try:
            return ast.parse(text, mode="eval")
        except RecursionError:
            pass
    import threading

    result: list = []

    def work() -> None:
        old = sys.getrecursionlimit()
        sys.setrecursionlimit(max(old, 4 * len(_TOKENS.findall(text)) + 1000))
        try:
            result.append(ast.parse(text, mode="eval"))
        except BaseException as err:  # noqa: BLE001 - handed back to the caller's thread
            result.append(err)
        finally:
            sys.setrecursionlimit(old)

    size = threading.stack_size()
    try:
        threading.stack_size(512 * 1024 * 1024)
        t = threading.Thread(target=work, name="fieldbudget-parse")
        t.start()
    finally:
        threading.stack_size(size)
    t.join()
    if isinstance(result[0], BaseException):
        raise result[0]
    return result[0]


_TOKENS = re.compile(r"\*\*|[-+*/(),]|[^-+*/(),\s]+")


def _text_nesting(text: str) -> int:
    """Roughly the nesting the text asks for: open parentheses + signs in a row + ``**`` chains.

    Counted on the tokens before parsing, so the parser never recurses that
    deep; a long flat sum or product counts 1 however many terms it has.
    """
    chains = [0]  # length of the current ``**`` chain at each parenthesis level
    total = deepest = signs = 0  # total = sum(chains), kept as we go
    prev = "("
    for tok in _TOKENS.findall(text):
        if tok in "+-" and prev in ("(", ",", "+", "-", "*", "/", "**"):
            signs += 1
        else:
            signs = 0 if tok not in "+-" else signs
            if tok == "(":
                chains.append(0)
            elif tok == ")":
                if len(chains) > 1:
                    total -= chains.pop()
            elif tok == "**":
                chains[-1] += 1
                total += 1
            elif tok in ("+", "-", "*", "/", ","):
                total -= chains[-1]
                chains[-1] = 0
        deepest = max(deepest, len(chains) - 1 + total + signs)
        prev = tok
    return deepest


# postfix program: ("c", value) | ("n", name) | ("b", op) | ("u", negate) | ("f", name, nargs)
def _compile(root: ast.AST) -> tuple:
    out: list = []
    stack: list = [(root, False)]
    while stack:
        node, done = stack.pop()
        if isinstance(node, ast.BinOp):
            if done:
                out.append(("b", type(node.op)))
            else:
                stack += [(node, True), (node.right, False), (node.left, False)]
        elif isinstance(node, ast.UnaryOp):
            if done:
                out.append(("u", isinstance(node.op, ast.USub)))
            else:
                stack += [(node, True), (node.operand, False)]
        elif isinstance(node, ast.Constant):
            out.append(("c", float(node.value)))
        elif isinstance(node, ast.Name):
            out.append(("n", node.id))
        else:
            assert isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
            if done:
                out.append(("f", node.func.id, len(node.args)))
            else:
                stack.append((node, True))
                stack += [(a, False) for a in reversed(node.args)]
    return tuple(out)


def _scalar(x: object) -> float | None:
    v = getattr(x, "nominal_value", x)
    return float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else None


def _power(a: object, b: object) -> object:
    base, exponent = _scalar(a), _scalar(b)
    if (base is not None and exponent is not None and base < 0 and math.isfinite(exponent)
            and exponent != int(exponent)):
        raise ModelEvaluationError(
            f"x**y with a negative base ({base!r}) and a fractional power ({exponent!r}) has no real value; models "
            "are real-valued (write the model so that the base is positive, e.g. -(abs(x)**y))")
    r = a ** b  # type: ignore[operator]
    if isinstance(r, complex):
        raise ModelEvaluationError("x**y gives a complex number here; models are real-valued")
    return r


def _run(program: tuple, env: Mapping[str, object], funcs: Mapping[str, Callable]) -> object:
    stack: list = []
    push, pop = stack.append, stack.pop
    for step in program:
        kind = step[0]
        if kind == "n":
            name = step[1]
            push(env[name] if name in env else CONSTANTS[name])
        elif kind == "c":
            push(step[1])
        elif kind == "b":
            b = pop()
            a = pop()
            op = step[1]
            if op is ast.Add:
                push(a + b)  # type: ignore[operator]
            elif op is ast.Sub:
                push(a - b)  # type: ignore[operator]
            elif op is ast.Mult:
                push(a * b)  # type: ignore[operator]
            elif op is ast.Div:
                push(a / b)  # type: ignore[operator]
            else:
                push(_power(a, b))
        elif kind == "u":
            v = pop()
            push(-v if step[1] else +v)  # type: ignore[operator]
        else:
            n = step[2]
            args = stack[len(stack) - n:] if n else []
            del stack[len(stack) - n:]
            push(funcs[step[1]](*args))
    return stack[0]


def _eval(node: ast.AST, env: Mapping[str, object], funcs: Mapping[str, Callable]) -> object:
    """Evaluate one checked sub-tree (used by the dimensional check for constant exponents); no recursion."""
    return _run(_compile(node), env, funcs)


def parse_expression(text: str, allowed_symbols: Sequence[str] | None = None, where: str = "") -> Expression:
    """Parse and check ``text``; see :class:`Expression`."""
    return Expression(text, allowed_symbols, where)
