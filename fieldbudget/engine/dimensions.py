"""Dimensional check of a budget's model, with units parsed by pint (through :mod:`fieldbudget.units`).

Before a budget is evaluated, every input's and measurand's unit is parsed
(an unknown unit is an error naming the input), and the model expression is
walked once with each sub-expression's dimensions and scale:

- ``a + b`` and ``a - b`` (and ``hypot``, ``atan2``) need the same dimensions:
  ``L + theta`` with L in m and theta in degC is refused, naming both terms;
- ``exp``, ``log``, ``sin``, ... need a pure-number argument;
- a power of a quantity with a unit needs a constant exponent;
- the model's dimensions must be the measurand's (when the measurand's unit is
  stated; an empty measurand unit is not checked).

Scales.  Each sub-expression carries the SI factor s of its units and the
product L of the literal numbers in it.  A literal may be a physical factor
(the 0.5 of ``0.5*B2*q``) or a unit conversion written into the model (the
1e6 of ``gamma * 1e6`` with gamma in MHz/T); the terms of a sum agree when
their scales match reading each literal either way (s or s/L).  When they do
not, the term that is a single input is converted to the unit of the other
term (or of the measurand): an input in mohm added to one in ohm is
converted to ohm, and the result says so.  Offset temperatures (degC, degF)
are taken as differences and never converted; adding degC to K is refused.

``units="unchecked"`` on the budget skips all of this, and so does a budget in
which no input states a unit (written without units).  Once any input states
one, an empty unit means a pure number.

Written by hand because pint checks quantities, not expressions over
numbers: the walk uses pint only for the units themselves (parsed once per
spelling and process), which keeps the check far below a millisecond for a
15-input model.
"""

from __future__ import annotations

import ast
import math
from dataclasses import dataclass, replace

from ..errors import ExpressionError, Finding, InputError
from ..units import parse_unit, unprefixed
from .distributions import CurvilinearTrapezoid, Normal, TypeA, _HalfWidth
from .expression import CONSTANTS, _eval, _functions

__all__ = ["prepare", "check", "UNIT_HELP"]

UNIT_HELP = ("a unit such as 'V', 'mohm', 'MHz/T', 'T/m', 'degC', '1/K', '%' or '' for a pure number; "
             "set \"units\": \"unchecked\" on the budget for one written without units")
_PURE_FUNCTIONS = {"exp", "log", "log10", "sin", "cos", "tan", "asin", "acos", "atan", "sinh", "cosh", "tanh"}
_REL = 1e-9


@dataclass(frozen=True)
class _Dim:
    dims: tuple                    # sorted (base dimension, exponent) pairs
    s: float                       # SI factor of the units
    lit: float = 1.0               # product of the literal numbers
    symbol: str | None = None      # a bare input symbol (possibly negated)
    offset: bool = False
    src: object = ""               # the sub-expression's text, or (model text, node) to cut it out when needed

    @property
    def text(self) -> str:
        """The sub-expression's text (cut out of the model only when a message needs it)."""
        if isinstance(self.src, str):
            return self.src
        source, node = self.src
        return ast.get_source_segment(source, node) or ast.unparse(node)

    def scales(self) -> tuple[float, ...]:
        return (self.s,) if self.lit in (0.0, 1.0) else (self.s, self.s / abs(self.lit))


class _Convert(Exception):
    """Internal: convert ``symbol`` to ``unit`` and walk again."""

    def __init__(self, symbol: str, unit: str, reason: str):
        super().__init__(symbol, unit)
        self.symbol, self.unit, self.reason = symbol, unit, reason


def _dims_text(dims: tuple) -> str:
    if not dims:
        return "a pure number"
    parts = []
    for name, e in dims:
        e = int(e) if float(e).is_integer() else e
        parts.append(name if e == 1 else f"{name}^{e}")
    return "·".join(parts)


def _combine(d: dict, other: tuple, sign: float) -> tuple:
    out = dict(d)
    for k, v in other:
        out[k] = out.get(k, 0.0) + sign * v
        if abs(out[k]) < 1e-12:
            del out[k]
    return tuple(sorted(out.items()))


def _same(a: float, b: float) -> bool:
    return math.isclose(a, b, rel_tol=_REL)


class _Walker:
    def __init__(self, budget, expr, units: dict, measurand):
        self.budget = budget
        self.expr = expr
        self.units = units                 # symbol -> (unit text, UnitInfo)
        self.measurand = measurand

    def seg(self, node) -> str:
        return ast.get_source_segment(self.expr.text, node) or ast.unparse(node)

    def describe(self, d: _Dim) -> str:
        """'in m', 'in degC', 'a pure number', or the base dimensions when no input's unit has them."""
        if not d.dims:
            return "a pure number" if d.symbol is None or not self.units[d.symbol][0] else \
                f"a pure number ({self.units[d.symbol][0]})"
        if d.symbol is not None and d.symbol in self.units:
            return f"in {self.units[d.symbol][0]}"
        for unit, info in self.units.values():
            if info.dimensions == d.dims:
                return f"in units of {unit}"
        return f"of dimension {_dims_text(d.dims)}"

    def fail(self, node, what: str) -> None:
        col = getattr(node, "col_offset", None)
        raise ExpressionError("model", self.expr.text, f"dimensionally consistent: {what}",
                              f"model of {self.measurand.symbol!r}", col)

    def lazy(self, node) -> tuple:
        return (self.expr.text, node)

    def walk(self, root) -> _Dim:
        """The dimensions of ``root``, children first, with an explicit stack (no recursion limit)."""
        done: dict[int, _Dim] = {}
        stack = [(root, False)]
        while stack:
            node, ready = stack.pop()
            kids = _children(node)
            if kids and not ready:
                stack.append((node, True))
                stack.extend((k, False) for k in reversed(kids))  # left subtree first, as the text reads
                continue
            done[id(node)] = self.node(node, [done.pop(id(k)) for k in kids])
        return done[id(root)]

    def node(self, node, kids: list) -> _Dim:
        """One node's dimensions from its children's (``kids``, in order)."""
        if isinstance(node, ast.Constant):
            return _Dim((), 1.0, float(node.value), src=self.lazy(node))
        if isinstance(node, ast.Name):
            if node.id in CONSTANTS and node.id not in self.units:
                return _Dim((), 1.0, CONSTANTS[node.id], src=node.id)
            unit, info = self.units[node.id]
            return _Dim(info.dimensions, info.factor, 1.0, node.id, info.offset, node.id)
        if isinstance(node, ast.UnaryOp):
            return replace(kids[0], src=self.lazy(node))
        if isinstance(node, ast.BinOp):
            a, b = kids
            op = type(node.op)
            if op in (ast.Add, ast.Sub):
                return self.add(node, a, b, (node.left, node.right))
            if op is ast.Mult:
                return _Dim(_combine(dict(a.dims), b.dims, 1.0), a.s * b.s, a.lit * b.lit, src=self.lazy(node))
            if op is ast.Div:
                lit = a.lit / b.lit if b.lit != 0 else a.lit
                return _Dim(_combine(dict(a.dims), b.dims, -1.0), a.s / b.s, lit, src=self.lazy(node))
            return self.power(node, a, b)
        assert isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
        name = node.func.id
        args = kids
        if name in ("sqrt", "abs"):
            e = 0.5 if name == "sqrt" else 1.0
            a = args[0]
            return _Dim(tuple((k, v * e) for k, v in a.dims), a.s ** e, abs(a.lit) ** e, src=self.lazy(node))
        if name in ("hypot", "atan2"):
            d = self.add(node, args[0], args[1], tuple(node.args))
            return d if name == "hypot" else _Dim((), 1.0, 1.0, src=self.lazy(node))
        if name in ("radians", "degrees"):
            a = args[0]
            if a.dims:
                self.fail(node, f"{name}() takes an angle, a pure number ({self.seg(node.args[0])!r} is "
                                f"{self.describe(a)})")
            f = math.pi / 180 if name == "radians" else 180 / math.pi
            return _Dim((), a.s, a.lit * f, src=self.lazy(node))
        a = args[0]
        if a.dims:
            self.fail(node, f"{name}() takes a pure number, but {self.seg(node.args[0])!r} is {self.describe(a)}")
        if not any(_same(s, 1.0) for s in a.scales()):
            if a.symbol is not None:
                raise _Convert(a.symbol, "rad" if _is_angle(self.units[a.symbol][0]) else "1",
                               f"the argument of {name}() must be a plain number")
            self.fail(node, f"{name}() takes a plain number, but {self.seg(node.args[0])!r} carries a scaled unit "
                            f"(factor {a.s:g}); convert it in the model")
        return _Dim((), 1.0, 1.0, src=self.lazy(node))

    def power(self, node, a: _Dim, b: _Dim) -> _Dim:
        if b.dims:
            self.fail(node, f"the exponent {self.seg(node.right)!r} must be a pure number (it is "
                            f"{self.describe(b)})")
        if a.dims or not _same(a.s, 1.0):
            names = {n.id for n in ast.walk(node.right) if isinstance(n, ast.Name) and n.id not in CONSTANTS}
            if names:
                if a.dims:
                    self.fail(node, f"{self.seg(node.left)!r} is {self.describe(a)}, so its exponent must be a "
                                    f"number, not {self.seg(node.right)!r}")
                return _Dim((), 1.0, 1.0, src=self.lazy(node))
            e = float(_eval(node.right, {}, _functions("numpy")))
        else:
            return _Dim((), 1.0, 1.0, src=self.lazy(node))
        return _Dim(tuple((k, v * e) for k, v in a.dims), a.s ** e, abs(a.lit) ** e if a.lit else 1.0,
                    src=self.lazy(node))

    def add(self, node, a: _Dim, b: _Dim, children: tuple) -> _Dim:
        if a.dims != b.dims:
            self.fail(node, f"{self.seg(node)!r} adds terms of different dimensions: {a.text!r} is "
                            f"{self.describe(a)} and {b.text!r} is {self.describe(b)}")
        temperature = a.dims == (("[temperature]", 1.0),)
        if temperature and (a.offset != b.offset) and (a.symbol or b.symbol):
            self.fail(node, f"{self.seg(node)!r} mixes a Celsius (or Fahrenheit) temperature with a kelvin one: "
                            f"state {a.text!r} and {b.text!r} in the same temperature unit")
        for s in a.scales():
            if any(_same(s, t) for t in b.scales()):
                return _Dim(a.dims, s, 1.0, src=self.lazy(node), offset=a.offset and b.offset)
        # the same dimensions in differently scaled units: convert a single-input term
        ms = self.measurand_info()
        if a.offset or b.offset:
            self.fail(node, f"{self.seg(node)!r} adds temperatures in differently scaled units; state them in one")
        for (this, other), child in zip(((b, a), (a, b)), (children[1], children[0])):
            if this.symbol is None:
                self.convert_inside(child, this, other, node)
                continue
            if other.symbol is not None:
                unit = self.units[other.symbol][0]
            elif ms is not None and ms[1].dimensions == a.dims and any(_same(ms[1].factor, t) for t in other.scales()):
                unit = ms[0]
            else:
                continue
            raise _Convert(this.symbol, unit, f"it is added to {other.text!r} in {self.seg(node)!r}")
        self.fail(node, f"{self.seg(node)!r} adds {a.text!r} and {b.text!r}, whose units have the same dimensions "
                        f"but different scales (factors {a.s:g} and {b.s:g}); state them in one unit")
        raise AssertionError  # pragma: no cover

    def convert_inside(self, child, this: _Dim, other: _Dim, node) -> None:
        """In a composite term, convert one input in a prefixed unit whose factor is the scale gap (mK -> K)."""
        names = []
        for n in ast.walk(child):
            if isinstance(n, ast.Name) and n.id in self.units and n.id not in names:
                names.append(n.id)
        for target in other.scales():
            gap = this.s / target
            for sym in names:
                unit, info = self.units[sym]
                plain = unprefixed(unit) if not info.offset else None
                if plain is None or not (_same(info.factor, gap) or _same(1.0 / info.factor, gap)):
                    continue
                pinfo = parse_unit(plain)
                if pinfo is not None and pinfo.dimensions == info.dimensions and _same(pinfo.factor, 1.0):
                    raise _Convert(sym, plain, f"the term {this.text!r} is added to {other.text!r} in "
                                               f"{self.seg(node)!r}")

    def measurand_info(self):
        unit = self.measurand.unit
        if not unit:
            return None
        return unit, parse_unit(unit)


def _children(node) -> list:
    if isinstance(node, ast.BinOp):
        return [node.left, node.right]
    if isinstance(node, ast.UnaryOp):
        return [node.operand]
    if isinstance(node, ast.Call):
        return list(node.args)
    return []


def _is_angle(unit: str) -> bool:
    return unit.strip() in ("deg", "degree", "degrees", "°", "arcmin", "arcsec", "grad", "gon")


def _scaled_input(q, factor: float, unit: str):
    d = q.distribution
    if isinstance(d, TypeA):
        nd = replace(d, readings=tuple(v * factor for v in d.readings))
        return q.replace(estimate=nd.mean, distribution=nd, unit=unit)
    if isinstance(d, Normal):
        nd = replace(d, u=d.u * factor, expanded=None if d.expanded is None else d.expanded * factor)
    elif isinstance(d, _HalfWidth):
        nd = replace(d, half_width=d.half_width * factor)
    elif isinstance(d, CurvilinearTrapezoid):
        nd = replace(d, half_width=d.half_width * factor, limit_uncertainty=d.limit_uncertainty * factor)
    else:  # pragma: no cover - every distribution is listed above
        raise InputError("distribution", d, "a known distribution", f"input {q.symbol!r}")
    return q.replace(estimate=q.estimate * factor, distribution=nd, unit=unit)


def _parse_all(budget) -> dict:
    units = {}
    for q in budget.inputs:
        info = parse_unit(q.unit)
        if info is None:
            raise InputError("unit", q.unit, UNIT_HELP, f"input {q.symbol!r}")
        units[q.symbol] = (q.unit, info)
    for m in budget.measurands:
        if m.unit and parse_unit(m.unit) is None:
            raise InputError("unit", m.unit, UNIT_HELP, f"measurand {m.symbol!r}")
    return units


def check(budget):
    """Check ``budget``'s units; return ``(budget with converted inputs, notes)``.

    Raises :class:`~fieldbudget.errors.InputError` for a unit that is not
    one, :class:`~fieldbudget.errors.ExpressionError` for a model that is not
    dimensionally consistent.  ``notes`` are :class:`~fieldbudget.errors.Finding`
    objects, one per converted input.
    """
    if budget.units == "unchecked" or not any(q.unit.strip() for q in budget.inputs):
        return budget, ()   # written without units: nothing to check
    units = _parse_all(budget)
    if budget.model.expressions is None:
        return budget, ()
    notes = []
    converted: set[str] = set()
    for _ in range(len(budget.inputs) + 1):
        try:
            for expr, ms in zip(budget.model.expressions, budget.measurands):
                w = _Walker(budget, expr, units, ms)
                out = w.walk(expr._tree)
                info = w.measurand_info()
                if info is None:
                    continue
                unit, mi = info
                if out.dims != mi.dimensions:
                    raise ExpressionError(
                        "model", expr.text, f"of the measurand's dimensions: the model gives {_dims_text(out.dims)}, "
                        f"the measurand {ms.symbol!r} is in {unit!r} ({_dims_text(mi.dimensions)})",
                        f"model of {ms.symbol!r}")
                if not mi.offset and not any(_same(mi.factor, s) for s in out.scales()):
                    raise ExpressionError(
                        "model", expr.text, f"in the measurand's unit {unit!r}: the model's result is in units whose "
                        f"SI factor is {out.s:g}, the measurand's is {mi.factor:g}; state the measurand and the "
                        "inputs in matching units", f"model of {ms.symbol!r}")
            break
        except _Convert as c:
            if c.symbol in converted:
                raise ExpressionError("model", budget.model.text(), f"dimensionally consistent: {c.symbol!r} is "
                                      "used with two different scales of its unit", "model") from None
            converted.add(c.symbol)
            q = budget.input(c.symbol)
            factor = _factor(q.unit, c.unit)
            nq = _scaled_input(q, factor, c.unit)
            budget = budget.with_input(nq)
            units[c.symbol] = (c.unit, parse_unit(c.unit))
            notes.append(Finding(
                f"input {q.symbol!r} is stated in {q.unit or 'plain numbers'!s}; {c.reason}, so it was converted to "
                f"{c.unit or 'plain numbers'} ({q.estimate:.6g} {q.unit} = {nq.estimate:.6g} {c.unit}".rstrip()
                + ")", code="unit_converted", key=f"inputs.{q.symbol}.unit",
                values={"symbol": q.symbol, "from": q.unit, "to": c.unit, "factor": factor}))
    return budget, tuple(notes)


def _factor(src: str, dst: str) -> float:
    a, b = parse_unit(src), parse_unit(dst)
    return a.factor / b.factor


def prepare(budget):
    """:func:`check`, cached on the budget object (a budget is immutable)."""
    cached = budget.__dict__.get("_units_prepared")
    if cached is None:
        checked, notes = check(budget)
        # an unchanged budget is kept as None: a reference to itself would make every budget a reference
        # cycle, whose matrices only the garbage collector frees
        cached = (None if checked is budget else checked, notes)
        object.__setattr__(budget, "_units_prepared", cached)
    return (budget if cached[0] is None else cached[0]), cached[1]
