"""The budget: a measurement model, its inputs, their correlations and the coverage policy.

A :class:`Budget` is a frozen, checked definition; evaluating it
(:func:`fieldbudget.engine.evaluate`) gives a result.  Its ``to_dict`` /
``from_dict`` form is the budget file of fieldbudget (documented in the README).

Correlations come as correlation coefficients between pairs of inputs, and
from simultaneous readings: for inputs observed together in n sets, the
correlation of their means is r(q, w) = s(q, w) / (s(q) s(w)) with
s(q, w) = sum (q_k - q)(w_k - w) / (n (n - 1)) (JCGM 100:2008 5.2.3, eqs. 14, 17).
"""

from __future__ import annotations

import itertools
import math
from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from operator import itemgetter

import numpy as np

from ..errors import BudgetFileError, CorrelationError, ExpressionError, FieldbudgetError, InputError
from ._runtime import collector_paused, one_blas_thread
from .distributions import TypeA
from .model import Model
from .quantities import InputQuantity

__all__ = ["Budget", "Measurand", "COVERAGE_POLICIES", "DOF_ROUNDING", "READINGS_EVALUATIONS", "UNIT_CHECKS"]

COVERAGE_POLICIES = ("t", "fixed")
DOF_ROUNDING = ("truncate", "interpolate")
#: How an output whose inputs are all readings of one simultaneous group is evaluated:
#: "per_set" computes the output for each set of readings and evaluates it by Type A (JCGM 100:2008 H.2,
#: second approach); "propagation" propagates the means with their data correlations (H.2, first approach).
READINGS_EVALUATIONS = ("per_set", "propagation")
#: "checked": units are parsed and the model is checked for dimensional consistency before evaluation;
#: "unchecked": for budgets written without (or with free-text) units.
UNIT_CHECKS = ("checked", "unchecked")
_TOP_KEYS = {"model", "inputs", "measurand", "measurands", "correlations", "simultaneous", "coverage_probability",
             "coverage_policy", "coverage_factor", "dof_rounding", "title", "metadata", "format", "second_order",
             "readings_evaluation", "units"}
FILE_FORMAT = "fieldbudget-budget/1"


class FrozenMapping(dict):
    """A dict that refuses changes (so a frozen Budget stays frozen) but pickles and copies."""

    def _refuse(self, *args, **kwargs):
        raise TypeError("budget metadata is read-only; use Budget.replace(metadata=...)")

    __setitem__ = __delitem__ = clear = pop = popitem = setdefault = update = _refuse  # type: ignore[assignment]

    def __reduce__(self):
        return (FrozenMapping, (dict(self),))

    def __copy__(self):
        return self

    def __deepcopy__(self, memo):
        return FrozenMapping({k: __import__("copy").deepcopy(v, memo) for k, v in self.items()})

    def __hash__(self):  # type: ignore[override]
        return hash(tuple(sorted(self.items(), key=repr)))


@dataclass(frozen=True)
class Measurand:
    """The quantity measured: symbol, unit and a description (VIM 2.3)."""

    symbol: str = "y"
    unit: str = ""
    description: str = ""

    def __post_init__(self) -> None:
        if not isinstance(self.symbol, str) or not self.symbol.isidentifier():
            raise InputError("measurand symbol", self.symbol, "a name made of letters, digits and _")
        for name in ("unit", "description"):
            if not isinstance(getattr(self, name), str):
                raise InputError(f"measurand {name}", getattr(self, name), "a text string")

    def to_dict(self) -> dict:
        d = {"symbol": self.symbol, "unit": self.unit}
        if self.description:
            d["description"] = self.description
        return d


def _plain_pairs(items, symbols: list[str]) -> tuple | None:
    """``(pairs, ia, ib, r)`` when every item is a good pair given once (or repeated with the same r); else None.

    ``pairs`` are the (a, b, float r) triples, ``ia`` and ``ib`` the inputs'
    indices in ``symbols`` and ``r`` the coefficients as arrays.  Same
    acceptance as the item-by-item checks in :class:`Budget` (which name the
    first bad item), done with dict look-ups and numpy so that half a
    million pairs take a fraction of a second.
    """
    if not items:
        return [], None, None, None
    try:
        return _quick_pairs(items, symbols)
    except (TypeError, KeyError):  # no sequence, an unhashable or unknown symbol: the full check names it
        return None


def _quick_pairs(items, symbols: list[str]) -> tuple | None:
    if set(map(len, items)) != {3}:
        return None
    r_s = list(map(itemgetter(2), items))
    index = {s: k for k, s in enumerate(symbols)}
    n = len(r_s)
    ia = np.fromiter(map(index.__getitem__, map(itemgetter(0), items)), dtype=np.intp, count=n)
    ib = np.fromiter(map(index.__getitem__, map(itemgetter(1), items)), dtype=np.intp, count=n)
    if np.any(ia == ib):
        return None
    all_float = {float}.issuperset(map(type, r_s))
    if not all_float and not {float, int}.issuperset(map(type, r_s)):
        if not all(isinstance(r, (int, float)) and not isinstance(r, bool) for r in r_s):
            return None
    r = np.array(r_s, dtype=float)
    if not (np.all(np.isfinite(r)) and np.all(np.abs(r) <= 1)):
        return None
    m = len(symbols)
    key = np.minimum(ia, ib) * m + np.maximum(ia, ib)
    if m * m <= 16 * n + (1 << 20):  # a mark per possible pair costs less than sorting the keys
        seen = np.zeros(m * m, dtype=bool)
        seen[key] = True
        repeated = np.count_nonzero(seen) < n
    else:
        repeated = True  # unknown: the sort below tells
    if repeated:
        order = np.argsort(key, kind="stable")
        same = key[order][1:] == key[order][:-1]
        if np.any(same & (r[order][1:] != r[order][:-1])):
            return None  # a pair given twice with two different coefficients
    if all_float and {tuple}.issuperset(map(type, items)):
        return items, ia, ib, r  # already (a, b, float r) triples
    return list(zip(map(itemgetter(0), items), map(itemgetter(1), items), r.tolist())), ia, ib, r


#: Inputs searched for a 3 x 3 inconsistent set when the correlation matrix is not positive semi-definite
#: (our choice: 4060 triples, milliseconds; small budgets are searched whole).
_TRIPLE_SEARCH = 30


@dataclass(frozen=True)
class Budget:
    """A measurement model with its inputs, correlations and coverage policy.

    Parameters
    ----------
    model : Model or str
        The model; a string is taken as one expression.
    inputs : sequence of InputQuantity
    measurand : Measurand, optional
        For a one-output model; renames the model's output to its symbol.
    measurands : sequence of Measurand, optional
        For a several-output model, one per output (default: from the outputs).
    correlations : sequence of (symbol_a, symbol_b, r)
    simultaneous : sequence of symbol groups observed together (readings)
    coverage_probability : float
        p for the expanded uncertainty (default 0.9545, i.e. k = 2 for a normal).
    coverage_policy : 't' or 'fixed'
        't': k from the t-distribution at p with nu_eff (JCGM 100:2008 G.3, G.4);
        'fixed': k = ``coverage_factor`` whatever nu_eff (e.g. the lab's k = 2).
    coverage_factor : float
        The k of the 'fixed' policy.
    dof_rounding : 'truncate' or 'interpolate'
        How a non-integer nu_eff enters t_p (JCGM 100:2008 G.4.1, note 1).
    second_order : bool
        Include the second-order terms of the Taylor series in u_c (JCGM 100:2008
        5.1.2, note), for a model whose nonlinearity matters, e.g. a product of
        two inputs with zero estimates.  Uncorrelated inputs, one output.
    readings_evaluation : 'per_set' or 'propagation'
        For an output whose inputs are all readings of one ``simultaneous``
        group: 'per_set' (default) evaluates the output computed for each set
        by Type A, with n - 1 degrees of freedom (JCGM 100:2008 H.2, second
        approach); 'propagation' propagates the means with the correlations of
        the data (H.2, first approach).
    units : 'checked' or 'unchecked'
        'checked' (default): every unit is parsed (pint) and the model is
        checked for dimensional consistency, scaled units of one dimension are
        converted to one unit (see :mod:`fieldbudget.engine.dimensions`);
        'unchecked' skips this, for budgets written without units.
    metadata : mapping
        Free facts recorded with the budget (CODATA edition, procedure, ...).
    """

    model: Model
    inputs: tuple[InputQuantity, ...]
    measurand: Measurand | None = None
    measurands: tuple[Measurand, ...] = ()
    correlations: tuple[tuple[str, str, float], ...] = ()
    simultaneous: tuple[tuple[str, ...], ...] = ()
    coverage_probability: float = 0.9545
    coverage_policy: str = "t"
    coverage_factor: float = 2.0
    dof_rounding: str = "truncate"
    second_order: bool = False
    title: str = ""
    metadata: Mapping[str, object] = field(default_factory=dict)
    readings_evaluation: str = "per_set"
    units: str = "checked"

    def __post_init__(self) -> None:
        with collector_paused():  # a budget of thousands of inputs allocates in bursts (see engine._runtime)
            self._check_and_settle()

    def _check_and_settle(self) -> None:
        model = Model.from_expression(self.model) if isinstance(self.model, str) else self.model
        if not isinstance(model, Model):
            raise InputError("model", self.model, "a Model or an expression string")
        inputs = tuple(self.inputs)
        symbols = [q.symbol for q in inputs]
        for q in inputs:
            if not isinstance(q, InputQuantity):
                raise InputError("inputs", q, "InputQuantity objects")
        known = set(symbols)  # membership tests below: a set, not a scan of the list per lookup
        dup = sorted(s for s, n in Counter(symbols).items() if n > 1) if len(known) < len(symbols) else []
        if dup:
            raise InputError("inputs", dup[0], "symbols that appear once each")
        # every model symbol must be an input (re-checked against the inputs so the message lists them)
        if model.expressions is not None:
            for e in model.expressions:
                for s in e.symbols:
                    if s not in known:
                        raise ExpressionError(
                            "model", e.text,
                            f"written in the inputs' symbols ({s!r} is not an input; inputs: "
                            f"{', '.join(symbols) or 'none'})",
                        )
        else:
            missing = [s for s in model.function_symbols if s not in known]
            if missing:
                raise InputError("model", model.text(), f"a function of the inputs ({missing[0]!r} is not an input)")
        # measurands
        measurands = tuple(self.measurands)
        if self.measurand is not None:
            if len(model.outputs) != 1:
                raise InputError("measurand", self.measurand.symbol,
                                 "given as 'measurands' (one per output) for a several-output model")
            measurands = (self.measurand,)
            if model.outputs[0] != self.measurand.symbol:
                model = model.renamed((self.measurand.symbol,))
        if not measurands:
            measurands = tuple(Measurand(o) for o in model.outputs)
        if tuple(m.symbol for m in measurands) != model.outputs:
            raise InputError("measurands", [m.symbol for m in measurands], f"one per output, in order {model.outputs}")
        clash = [m.symbol for m in measurands if m.symbol in known]
        if clash:
            raise InputError("measurand symbol", clash[0], "different from every input symbol")
        object.__setattr__(self, "model", model)
        object.__setattr__(self, "inputs", inputs)
        object.__setattr__(self, "measurands", measurands)
        object.__setattr__(self, "measurand", measurands[0] if len(measurands) == 1 else None)
        if not isinstance(self.title, str):
            raise InputError("title", self.title, "a text string")
        # coverage
        p = self.coverage_probability
        if isinstance(p, bool) or not isinstance(p, (int, float)) or not (0 < p < 1):
            raise InputError("coverage_probability", p, "a number between 0 and 1 (e.g. 0.9545 or 0.95)")
        if self.coverage_policy not in COVERAGE_POLICIES:
            raise InputError("coverage_policy", self.coverage_policy, f"one of {COVERAGE_POLICIES}")
        k = self.coverage_factor
        if isinstance(k, bool) or not isinstance(k, (int, float)) or not math.isfinite(k) or k <= 0:
            raise InputError("coverage_factor", k, "a finite number > 0")
        if self.dof_rounding not in DOF_ROUNDING:
            raise InputError("dof_rounding", self.dof_rounding, f"one of {DOF_ROUNDING}")
        if not isinstance(self.second_order, bool):
            raise InputError("second_order", self.second_order, "true or false")
        if self.readings_evaluation not in READINGS_EVALUATIONS:
            raise InputError("readings_evaluation", self.readings_evaluation, f"one of {READINGS_EVALUATIONS}")
        if self.units not in UNIT_CHECKS:
            raise InputError("units", self.units, f"one of {UNIT_CHECKS} ('unchecked' for a budget without units)")
        object.__setattr__(self, "metadata", FrozenMapping(self.metadata))
        # correlations: a quick check of the whole list first (a full matrix of 1000 inputs is 499 500
        # pairs); only a list that fails it goes through the loop below, which names the first bad pair
        quick = _plain_pairs(self.correlations, symbols)
        corr = None if quick is None else quick[0]
        if quick is not None and quick[1] is not None:
            object.__setattr__(self, "_pair_index", quick[1:])  # for the correlation matrix
        seen: dict[frozenset, float] = {}
        slow: list = [] if corr is None else None  # type: ignore[assignment]
        for item in (self.correlations if corr is None else ()):
            try:
                a, b, r = item
            except (TypeError, ValueError):
                raise CorrelationError("correlation", item, "a triple [symbol_a, symbol_b, r]") from None
            for s in (a, b):
                if s not in known:
                    raise CorrelationError("correlation", [a, b, r], f"between inputs of the budget ({s!r} is not one)",
                                           pair=(a, b))
            if a == b:
                raise CorrelationError("correlation", [a, b, r], "between two different inputs", pair=(a, b))
            if isinstance(r, bool) or not isinstance(r, (int, float)) or not math.isfinite(r) or abs(r) > 1:
                raise CorrelationError(f"correlation between {a!r} and {b!r}", r, "a number in [-1, 1]", pair=(a, b))
            key = frozenset((a, b))
            if key in seen and seen[key] != r:
                raise CorrelationError(f"correlation between {a!r} and {b!r}", r,
                                       f"given once (it was also given as {seen[key]})", pair=(a, b))
            seen[key] = float(r)
            slow.append((a, b, float(r)))
        if corr is None:  # the full check is the rule; the quick one only spares it for long lists
            corr = slow
        object.__setattr__(self, "correlations", tuple(corr))
        groups = []
        for g in self.simultaneous:
            g = tuple(g)
            for s in g:
                if s not in known:
                    raise CorrelationError("simultaneous", list(g), f"groups of input symbols ({s!r} is not one)")
                if not isinstance(self.input(s).distribution, TypeA):
                    raise CorrelationError("simultaneous", list(g), f"groups of inputs given as readings ({s!r} is not)")
            n = {self.input(s).distribution.n for s in g}
            if len(n) != 1:
                raise CorrelationError("simultaneous", list(g), "inputs with the same number of readings")
            groups.append(g)
        object.__setattr__(self, "simultaneous", tuple(groups))
        self._check_psd()

    # -- access -------------------------------------------------------------------
    @property
    def symbols(self) -> tuple[str, ...]:
        return tuple(q.symbol for q in self.inputs)

    def input(self, symbol: str) -> InputQuantity:
        index = self.__dict__.get("_index")
        if index is None:  # built once: a budget is immutable
            index = {q.symbol: q for q in self.inputs}
            object.__setattr__(self, "_index", index)
        if symbol in index:
            return index[symbol]
        raise InputError("symbol", symbol, f"one of the inputs {list(self.symbols)}")

    def replace(self, **changes) -> Budget:
        """A copy with ``changes`` applied."""
        if "measurand" not in changes and "measurands" not in changes:
            changes.setdefault("measurands", self.measurands)
            changes.setdefault("measurand", None)
        return replace(self, **changes)

    def with_input(self, quantity: InputQuantity) -> Budget:
        """A copy with ``quantity`` replacing the input of the same symbol (or appended)."""
        inputs = list(self.inputs)
        for i, q in enumerate(inputs):
            if q.symbol == quantity.symbol:
                inputs[i] = quantity
                break
        else:
            inputs.append(quantity)
        return self.replace(inputs=tuple(inputs))

    def correlation_matrix(self) -> np.ndarray:
        """Correlation coefficients r(x_i, x_j) in the order of :attr:`inputs`."""
        return self._shared_correlation_matrix().copy()  # callers get a copy they may change

    def _shared_correlation_matrix(self) -> np.ndarray:
        """The read-only matrix the engine shares (built once: a budget is immutable)."""
        cached = self.__dict__.get("_correlation_matrix")
        if cached is None:
            cached = self._build_correlation_matrix()
            cached.setflags(write=False)
            object.__setattr__(self, "_correlation_matrix", cached)
        return cached

    def _build_correlation_matrix(self) -> np.ndarray:
        syms = self.symbols
        idx = {s: i for i, s in enumerate(syms)}
        r = np.eye(len(syms))
        for g in self.simultaneous:
            data = np.array([self.input(s).distribution.readings for s in g])
            c = np.corrcoef(data) if len(g) > 1 else np.ones((1, 1))
            at = np.array([idx[s] for s in g])
            off = ~np.eye(len(g), dtype=bool)
            r[np.ix_(at, at)] = np.where(off, c, r[np.ix_(at, at)])
        if self.correlations:
            # one assignment per side instead of a Python loop over the pairs (same numbers)
            pairs = self.__dict__.get("_pair_index")
            if pairs is None:
                n = len(self.correlations)
                pairs = (np.fromiter((idx[x] for x, _, _ in self.correlations), dtype=np.intp, count=n),
                         np.fromiter((idx[y] for _, y, _ in self.correlations), dtype=np.intp, count=n),
                         np.fromiter((c for _, _, c in self.correlations), dtype=float, count=n))
            a, b, v = pairs
            r[a, b] = v
            r[b, a] = v
        return r

    @property
    def has_correlations(self) -> bool:
        return bool(self.correlations or self.simultaneous)

    def _check_psd(self) -> None:
        if not self.has_correlations:
            return
        from scipy.linalg.lapack import dpotrf

        r = self._shared_correlation_matrix()
        shifted = r.copy()
        shifted.flat[:: len(r) + 1] += 0.5e-10  # r + 0.5e-10 I without an identity matrix
        with one_blas_thread():
            # Cholesky (LAPACK dpotrf) succeeds only when every eigenvalue exceeds -0.5e-10: positive
            # semi-definite within the 1e-10 allowed below, at a fraction of the cost of the eigenvalues.
            # r is symmetric, so its transpose is the same matrix in the column order LAPACK factorises
            # in place, without a copy
            _, info = dpotrf(shifted.T, lower=0, overwrite_a=1, clean=0)
            if info == 0:
                return
            w, vecs = np.linalg.eigh(r)
        if w[0] >= -1e-10:
            return
        syms = self.symbols
        # name the smallest inconsistent set: a 3x3 principal minor that is negative.  Searched among the
        # inputs that weigh most in the eigenvector of the negative eigenvalue (all of them up to 30 inputs),
        # so that a large budget gets its answer in milliseconds, not after 1e8 triples
        weight = np.abs(vecs[:, 0])
        near = sorted(np.argsort(-weight, kind="stable")[:_TRIPLE_SEARCH].tolist())
        for i, j, k in itertools.combinations(near, 3):  # in index order, as the whole search was
            sub = r[np.ix_([i, j, k], [i, j, k])]
            if np.linalg.eigvalsh(sub)[0] < -1e-10:
                a, b, c = syms[i], syms[j], syms[k]
                raise CorrelationError(
                    "correlation matrix", f"r({a},{b})={sub[0, 1]:g}, r({a},{c})={sub[0, 2]:g}, "
                    f"r({b},{c})={sub[1, 2]:g}",
                    f"positive semi-definite (these three coefficients between {a!r}, {b!r} and {c!r} "
                    "cannot hold together)", pair=(a, b))
        most = ", ".join(repr(syms[i]) for i in np.argsort(-weight, kind="stable")[:5])
        raise CorrelationError("correlation matrix", f"smallest eigenvalue {w[0]:.3g}",
                               f"positive semi-definite (the coefficients cannot hold together; the inputs "
                               f"most involved: {most})")

    # -- budget file --------------------------------------------------------------
    def to_dict(self) -> dict:
        """The budget-file content (plain JSON types)."""
        d: dict = {"format": FILE_FORMAT}
        if self.title:
            d["title"] = self.title
        if len(self.measurands) == 1:
            d["measurand"] = self.measurands[0].to_dict()
        else:
            d["measurands"] = {m.symbol: {k: v for k, v in m.to_dict().items() if k != "symbol"}
                               for m in self.measurands}
        d["model"] = self.model.to_json()
        d["inputs"] = {q.symbol: q.to_dict() for q in self.inputs}
        if self.correlations:
            d["correlations"] = [[a, b, r] for a, b, r in self.correlations]
        if self.simultaneous:
            d["simultaneous"] = [list(g) for g in self.simultaneous]
        d["coverage_probability"] = self.coverage_probability
        if self.coverage_policy != "t":
            d["coverage_policy"] = self.coverage_policy
            d["coverage_factor"] = self.coverage_factor
        if self.dof_rounding != "truncate":
            d["dof_rounding"] = self.dof_rounding
        if self.second_order:
            d["second_order"] = True
        if self.readings_evaluation != "per_set":
            d["readings_evaluation"] = self.readings_evaluation
        if self.units != "checked":
            d["units"] = self.units
        if self.metadata:
            d["metadata"] = dict(self.metadata)
        return d

    @classmethod
    def from_dict(cls, d: Mapping, where: str = "budget") -> Budget:
        """Build from budget-file content; every error is a :class:`BudgetFileError`
        naming ``where``, the JSON pointer of the offending element and what is allowed."""
        if not isinstance(d, Mapping):
            raise BudgetFileError(where, "#", "the top level must be a JSON object")
        unknown = sorted(set(d) - _TOP_KEYS)
        if unknown:
            raise BudgetFileError(where, f"#/{unknown[0]}", f"unknown key; allowed keys: {', '.join(sorted(_TOP_KEYS))}")
        if "format" in d and d["format"] != FILE_FORMAT:
            raise BudgetFileError(where, "#/format", f"must be {FILE_FORMAT!r} (got {d['format']!r})")
        if "model" not in d:
            raise BudgetFileError(where, "#/model", "missing: the model expression (or an object of expressions)")
        if "inputs" not in d or not isinstance(d["inputs"], Mapping) or not d["inputs"]:
            raise BudgetFileError(where, "#/inputs", "must be a non-empty object keyed by input symbol")
        inputs = []
        for sym, spec in d["inputs"].items():
            try:
                inputs.append(InputQuantity.from_dict(sym, spec, where=f"input {sym!r}"))
            except InputError as err:
                at = f"#/inputs/{sym}" if err.field == sym else f"#/inputs/{sym}/{err.field}"
                raise BudgetFileError(where, at,
                                      f"{err.field} must be {err.allowed} (got {err.value!r})") from None
        raw_model = d["model"]
        try:
            if isinstance(raw_model, str):
                model = Model.from_expression(raw_model)
            elif isinstance(raw_model, Mapping):
                model = Model.from_expressions(raw_model)
            else:
                raise BudgetFileError(where, "#/model", f"must be an expression string or an object of expressions "
                                      f"(got {raw_model!r})")
        except ExpressionError as err:
            raise BudgetFileError(where, "#/model", f"{err.allowed} (got {err.value!r})") from None
        kw: dict = {}
        try:
            if "measurand" in d:
                m = d["measurand"]
                if not isinstance(m, Mapping):
                    raise BudgetFileError(where, "#/measurand", "must be an object with 'symbol' and 'unit'")
                kw["measurand"] = Measurand(m.get("symbol", "y"), m.get("unit", ""), m.get("description", ""))
            if "measurands" in d:
                ms = d["measurands"]
                if not isinstance(ms, Mapping):
                    raise BudgetFileError(where, "#/measurands", "must be an object keyed by output symbol")
                kw["measurands"] = tuple(Measurand(s, (v or {}).get("unit", ""), (v or {}).get("description", ""))
                                         for s, v in ms.items())
        except InputError as err:
            raise BudgetFileError(where, "#/measurand", f"{err.field} must be {err.allowed} (got {err.value!r})") from None
        corr = d.get("correlations", [])
        if not isinstance(corr, list):
            raise BudgetFileError(where, "#/correlations", "must be a list of [symbol_a, symbol_b, r]")
        for i, item in enumerate(corr):
            if not isinstance(item, list) or len(item) != 3:
                raise BudgetFileError(where, f"#/correlations/{i}", f"must be [symbol_a, symbol_b, r] (got {item!r})")
        sim = d.get("simultaneous", [])
        if not isinstance(sim, list) or not all(isinstance(g, list) for g in sim):
            raise BudgetFileError(where, "#/simultaneous", "must be a list of lists of input symbols")
        md = d.get("metadata", {})
        if not isinstance(md, Mapping):
            raise BudgetFileError(where, "#/metadata", "must be an object")
        for key in ("coverage_probability", "coverage_policy", "coverage_factor", "dof_rounding", "title",
                    "second_order", "readings_evaluation", "units"):
            if key in d:
                kw[key] = d[key]
        try:
            budget = cls(model=model, inputs=tuple(inputs), correlations=tuple(tuple(c) for c in corr),
                         simultaneous=tuple(tuple(g) for g in sim), metadata=md, **kw)
        except CorrelationError as err:
            pointer = "#/correlations" if err.field.startswith("correlation") else "#/simultaneous"
            raise BudgetFileError(where, pointer, f"{err.field} must be {err.allowed} (got {err.value!r})") from None
        except ExpressionError as err:
            raise BudgetFileError(where, "#/model", f"must be {err.allowed} (got {err.value!r})") from None
        except InputError as err:
            raise BudgetFileError(where, f"#/{err.field}", f"must be {err.allowed} (got {err.value!r})") from None
        except FieldbudgetError:
            raise
        _check_units_for_file(budget, where)
        return budget

    def __repr__(self) -> str:
        m = self.model.text()
        return f"<Budget {m!r}, {len(self.inputs)} inputs, p = {self.coverage_probability:g}>"


def _check_units_for_file(budget: Budget, where: str) -> None:
    """The dimensional check of :mod:`.dimensions`, its errors pointing into the budget file."""
    from .dimensions import prepare

    try:
        prepare(budget)
    except ExpressionError as err:
        raise BudgetFileError(where, "#/model", f"must be {err.allowed} (got {err.value!r})") from None
    except InputError as err:
        kind, _, name = err.where.partition(" ")
        name = name.strip("'\"")
        pointer = f"#/inputs/{name}/unit" if kind == "input" else "#/measurand/unit"
        if kind != "input" and len(budget.measurands) > 1:
            pointer = f"#/measurands/{name}/unit"
        raise BudgetFileError(where, pointer, f"{err.field} must be {err.allowed} (got {err.value!r})") from None
