"""Conformity statements: is a calibrated value within the instrument's specification?

Follows JCGM 106:2012, *Evaluation of measurement data - The role of
measurement uncertainty in conformity assessment*.  Clause numbers below are
given from memory and should be checked against the document:

* tolerance limits ``T_L``, ``T_U`` and the tolerance interval (clauses 3.3, 5);
* probability of conformity ``p_c`` = the probability, given the measurement,
  that the measurand lies in the tolerance interval (clause 7.1); for a normal
  PDF with estimate ``y`` and standard uncertainty ``u`` (clauses 7.2-7.3)

      p_c = Phi((T_U - y)/u) - Phi((T_L - y)/u)

  and with a single limit the one-sided form;
* acceptance limits ``A_L = T_L + w``, ``A_U = T_U - w`` with guard band ``w``
  (clause 8.3); ``w = 0`` is simple acceptance (clause 8.2), ``w = U`` the
  common guarded acceptance;
* the measurement capability index ``C_m = (T_U - T_L) / (4 u)`` (clause 7.6).

The distribution of the result may instead be given as Monte Carlo samples
(JCGM 101:2008, 7.1); ``p_c`` is then the fraction of samples inside the
tolerance interval.

Why hand-written: the normal probabilities come from ``scipy.stats``; the
decision rules, acceptance intervals and the statement are the metrology of
JCGM 106 that no library provides.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import scipy.stats

from fieldbudget import _display
from fieldbudget.errors import InputError

__all__ = [
    "DECISION_RULES",
    "ConformityResult",
    "Tolerance",
    "assess_conformity",
    "probability_of_conformity",
]

DECISION_RULES = ("simple acceptance", "guarded acceptance")
_WHERE = "conformity"


def _finite_or_none(name: str, v: float | None, where: str) -> float | None:
    if v is None:
        return None
    if isinstance(v, bool) or not isinstance(v, (int, float, np.floating)) or not math.isfinite(v):
        raise InputError(name, v, "a finite number or None (no limit)", where)
    return float(v)


@dataclass(frozen=True)
class Tolerance:
    """A tolerance interval from a specification, ``[lower, upper]`` (either may be open: ``None``).

    Parameters
    ----------
    lower, upper : float or None
        Tolerance limits ``T_L``, ``T_U`` (JCGM 106:2012, 3.3.4-3.3.5) in ``unit``.
    unit : str
    source : str
        Where the limits come from (specification sheet, clause, accuracy class).
    """

    lower: float | None
    upper: float | None
    unit: str = ""
    source: str = ""

    def __post_init__(self) -> None:
        where = "tolerance"
        lo = _finite_or_none("lower", self.lower, where)
        hi = _finite_or_none("upper", self.upper, where)
        if lo is None and hi is None:
            raise InputError("limits", (None, None), "at least one tolerance limit", where)
        if lo is not None and hi is not None and not hi > lo:
            raise InputError("width", hi - lo, "> 0 (upper limit above lower limit)", where)
        object.__setattr__(self, "lower", lo)
        object.__setattr__(self, "upper", hi)

    @classmethod
    def symmetric(cls, nominal: float, half_width: float, unit: str = "", source: str = "") -> Tolerance:
        """``nominal +- half_width``; ``half_width`` must be > 0."""
        if not (isinstance(half_width, (int, float)) and math.isfinite(half_width) and half_width > 0):
            raise InputError("half_width", half_width, "a finite number > 0", "tolerance")
        return cls(nominal - half_width, nominal + half_width, unit, source)

    @property
    def width(self) -> float:
        if self.lower is None or self.upper is None:
            return math.inf
        return self.upper - self.lower

    def __repr__(self) -> str:
        lo = "-inf" if self.lower is None else _display.fmt(self.lower)
        hi = "inf" if self.upper is None else _display.fmt(self.upper)
        return f"<Tolerance [{lo}, {hi}] {self.unit}>"

    def to_dict(self) -> dict:
        return {"lower": self.lower, "upper": self.upper, "unit": self.unit, "source": self.source}

    def _repr_html_(self) -> str:
        return _display.html_table(("lower limit", "upper limit", "unit", "source"),
                                   [(_display.fmt(self.lower), _display.fmt(self.upper), self.unit,
                                     self.source)])


def probability_of_conformity(
    tolerance: Tolerance,
    estimate: float | None = None,
    standard_uncertainty: float | None = None,
    *,
    dof: float | None = None,
    samples: Sequence[float] | np.ndarray | None = None,
) -> float:
    """Probability that the measurand lies in ``tolerance`` (JCGM 106:2012, 7.1-7.3).

    Give ``estimate`` and ``standard_uncertainty`` for a normal PDF (with
    ``dof``: a scaled and shifted t-distribution, JCGM 101:2008, 6.4.9), or
    ``samples`` from a Monte Carlo run (fraction inside the interval).
    """
    if samples is not None:
        s = np.asarray(samples, dtype=float).ravel()
        if s.size == 0 or not np.all(np.isfinite(s)):
            raise InputError("samples", f"{s.size} values", "a non-empty array of finite numbers", _WHERE)
        inside = np.ones(s.size, dtype=bool)
        if tolerance.lower is not None:
            inside &= s >= tolerance.lower
        if tolerance.upper is not None:
            inside &= s <= tolerance.upper
        return float(np.mean(inside))
    if estimate is None or standard_uncertainty is None:
        raise InputError("estimate", estimate, "given with standard_uncertainty, or samples given", _WHERE)
    if not math.isfinite(estimate):
        raise InputError("estimate", estimate, "a finite number", _WHERE)
    if not (math.isfinite(standard_uncertainty) and standard_uncertainty > 0):
        raise InputError("standard_uncertainty", standard_uncertainty, "a finite number > 0", _WHERE)
    if dof is None or math.isinf(dof):
        dist = scipy.stats.norm(loc=estimate, scale=standard_uncertainty)
    else:
        if not dof > 0:
            raise InputError("dof", dof, "> 0 or None (normal)", _WHERE)
        dist = scipy.stats.t(df=dof, loc=estimate, scale=standard_uncertainty)
    if tolerance.lower is None:
        return float(dist.cdf(tolerance.upper))
    if tolerance.upper is None:
        return float(dist.sf(tolerance.lower))  # sf, not 1 - cdf, keeps digits far in the tail
    return float(dist.cdf(tolerance.upper) - dist.cdf(tolerance.lower))


@dataclass(frozen=True)
class ConformityResult:
    """A conformity decision with its probability of conformity (JCGM 106:2012, clauses 7-8)."""

    estimate: float
    standard_uncertainty: float
    expanded_uncertainty: float
    coverage_factor: float
    tolerance: Tolerance
    decision_rule: str
    guard_band: float
    acceptance_lower: float | None
    acceptance_upper: float | None
    accepted: bool
    probability_of_conformity: float
    distribution: str
    capability_index: float | None
    measurand: str = ""
    warnings: tuple[str, ...] = field(default=())

    @property
    def decision(self) -> str:
        return "accept" if self.accepted else "reject"

    @property
    def statement(self) -> str:
        """A plain statement of the decision, rule and probability for a certificate."""
        unit = self.tolerance.unit
        what = self.measurand or "the measured value"
        lim = []
        if self.tolerance.lower is not None:
            lim.append(f"T_L = {_display.fmt(self.tolerance.lower)} {unit}")
        if self.tolerance.upper is not None:
            lim.append(f"T_U = {_display.fmt(self.tolerance.upper)} {unit}")
        rule = (f"{self.decision_rule} with guard band w = {_display.fmt(self.guard_band, 3)} {unit}"
                if self.decision_rule == "guarded acceptance" else "simple acceptance (w = 0)")
        verdict = "conforms to" if self.accepted else "is not shown to conform to"
        return (f"{what} = {_display.fmt(self.estimate)} {unit} (U = {_display.fmt(self.expanded_uncertainty, 2)} "
                f"{unit}, k = {self.coverage_factor:.2f}) {verdict} the tolerance ({', '.join(lim)}) "
                f"under the decision rule {rule}; probability of conformity "
                f"{100 * self.probability_of_conformity:.1f} % ({self.distribution}); JCGM 106:2012.")

    def __repr__(self) -> str:
        return (f"<ConformityResult {self.decision}: y = {_display.fmt(self.estimate)} {self.tolerance.unit}, "
                f"p_c = {self.probability_of_conformity:.4f}, {self.decision_rule}>")

    def to_dict(self) -> dict:
        return {
            "estimate": self.estimate,
            "u": self.standard_uncertainty,
            "U": self.expanded_uncertainty,
            "k": self.coverage_factor,
            "tolerance": self.tolerance.to_dict(),
            "decision_rule": self.decision_rule,
            "guard_band": self.guard_band,
            "acceptance_interval": [self.acceptance_lower, self.acceptance_upper],
            "decision": self.decision,
            "probability_of_conformity": self.probability_of_conformity,
            "distribution": self.distribution,
            "capability_index": self.capability_index,
            "measurand": self.measurand,
            "statement": self.statement,
            "warnings": list(self.warnings),
        }

    def _repr_html_(self) -> str:
        unit = self.tolerance.unit
        rows = [
            ("estimate", f"{_display.fmt(self.estimate)} {unit}"),
            ("standard uncertainty", f"{_display.fmt(self.standard_uncertainty, 3)} {unit}"),
            ("expanded uncertainty",
             f"{_display.fmt(self.expanded_uncertainty, 3)} {unit} (k = {self.coverage_factor:.2f})"),
            ("tolerance interval",
             f"[{_display.fmt(self.tolerance.lower)}, {_display.fmt(self.tolerance.upper)}] {unit}"),
            ("decision rule", self.decision_rule),
            ("guard band", f"{_display.fmt(self.guard_band, 3)} {unit}"),
            ("acceptance interval",
             f"[{_display.fmt(self.acceptance_lower)}, {_display.fmt(self.acceptance_upper)}] {unit}"),
            ("probability of conformity", f"{100 * self.probability_of_conformity:.2f} % ({self.distribution})"),
            ("capability index C_m", _display.fmt(self.capability_index, 3)),
            ("decision", self.decision),
        ]
        rows += [("warning", w) for w in self.warnings]
        return _display.html_block("Conformity (JCGM 106:2012)", _display.html_table(("item", "value"), rows)
                                   + f"<p>{_display.escape(self.statement)}</p>")


def _from_histogram(tolerance: Tolerance, result: object) -> tuple[float, str]:
    """p_c from a Monte Carlo result's histogram, linear inside the bins cut by a limit."""
    mc = getattr(result, "monte_carlo", None) or result
    hist = getattr(mc, "histogram", None)
    trials = getattr(mc, "trials", None)
    if hist is None or not trials:
        raise InputError("result", type(result).__name__, "a Monte Carlo result (with a histogram) for "
                         "distribution='histogram'", _WHERE)
    counts = np.asarray(hist[0], dtype=float)
    edges = np.asarray(hist[1], dtype=float)
    lo = edges[0] if tolerance.lower is None else tolerance.lower
    hi = edges[-1] if tolerance.upper is None else tolerance.upper
    left, right = np.clip(lo, edges[:-1], edges[1:]), np.clip(hi, edges[:-1], edges[1:])
    frac = np.clip(right - left, 0.0, None) / np.diff(edges)
    inside = float(np.sum(counts * frac))
    # the histogram leaves out the extreme tails (half on each side); count a tail as inside when the
    # tolerance reaches past that end of the histogram
    clipped = trials - float(counts.sum())
    if tolerance.lower is None or tolerance.lower <= edges[0]:
        inside += clipped / 2
    if tolerance.upper is None or tolerance.upper >= edges[-1]:
        inside += clipped / 2
    return min(1.0, inside / trials), f"Monte Carlo histogram, {trials} trials"


def _from_result(result: object) -> tuple[float, float, float, float | None]:
    """(estimate, u, k, dof) from an engine BudgetResult-like object."""
    try:
        y = float(result.estimate)  # type: ignore[attr-defined]
        u = float(result.standard_uncertainty)  # type: ignore[attr-defined]
    except AttributeError:
        raise InputError("result", type(result).__name__,
                         "a result with .estimate and .standard_uncertainty", _WHERE) from None
    k = getattr(result, "coverage_factor", None)
    interval = getattr(result, "interval", None)
    if k is None and interval is not None and u > 0:
        # a Monte Carlo result: U is half the probabilistically symmetric interval (JCGM 101:2008 7.7)
        k = 0.5 * (float(interval[1]) - float(interval[0])) / u
    nu = getattr(result, "effective_dof", None)
    return y, u, (2.0 if k is None else float(k)), (None if nu is None else float(nu))


def assess_conformity(
    tolerance: Tolerance,
    result: object | None = None,
    *,
    estimate: float | None = None,
    standard_uncertainty: float | None = None,
    coverage_factor: float = 2.0,
    rule: str = "simple acceptance",
    guard_band: float | None = None,
    distribution: str = "normal",
    dof: float | None = None,
    samples: Sequence[float] | np.ndarray | None = None,
    measurand: str = "",
) -> ConformityResult:
    """Decide conformity with ``tolerance`` and give the probability of conformity.

    Parameters
    ----------
    tolerance : Tolerance
    result : engine BudgetResult or MonteCarloResult, optional
        Supplies estimate, standard uncertainty, coverage factor (and
        ``effective_dof`` for ``distribution="t"``).  Otherwise give
        ``estimate``/``standard_uncertainty``/``coverage_factor``.
    rule : ``"simple acceptance"`` or ``"guarded acceptance"``
        JCGM 106:2012, 8.2 and 8.3.2.
    guard_band : float, optional
        ``w`` in the tolerance's unit, >= 0; for guarded acceptance it defaults
        to the expanded uncertainty ``U`` (``w = U``, JCGM 106:2012, 8.3.2).
    distribution : ``"normal"``, ``"t"``, ``"samples"`` or ``"histogram"``
        The PDF behind ``p_c``: normal (GUM), t with ``dof`` (or the
        result's ``effective_dof``), Monte Carlo ``samples``, or the
        histogram of a Monte Carlo ``result`` (or of a point result's
        ``monte_carlo``); ``"auto"``: the histogram on a point evaluated by
        Monte Carlo, else t with the effective degrees of freedom.  ``"t"`` on
        a Monte Carlo point is refused: Monte Carlo's u with first-order
        degrees of freedom describes neither evaluation.
    """
    if result is not None:
        y, u, k, nu = _from_result(result)
        if dof is None:
            dof = nu
    else:
        if estimate is None or standard_uncertainty is None:
            raise InputError("result", None, "a result, or estimate and standard_uncertainty", _WHERE)
        y, u, k = float(estimate), float(standard_uncertainty), float(coverage_factor)
    if not math.isfinite(y):
        raise InputError("estimate", y, "a finite number", _WHERE)
    if not (math.isfinite(u) and u > 0):
        raise InputError("standard_uncertainty", u, "a finite number > 0", _WHERE)
    if not (math.isfinite(k) and k > 0):
        raise InputError("coverage_factor", k, "a finite number > 0", _WHERE)
    if rule not in DECISION_RULES:
        raise InputError("rule", rule, f"one of {', '.join(repr(r) for r in DECISION_RULES)}", _WHERE)
    big_u = k * u
    if rule == "simple acceptance":
        if guard_band not in (None, 0, 0.0):
            raise InputError("guard_band", guard_band, "0 or None for simple acceptance", _WHERE)
        w = 0.0
    else:
        w = big_u if guard_band is None else guard_band
        if not (isinstance(w, (int, float)) and math.isfinite(w) and w >= 0):
            raise InputError("guard_band", guard_band, "a finite number >= 0", _WHERE)
        w = float(w)
    a_lo = None if tolerance.lower is None else tolerance.lower + w
    a_hi = None if tolerance.upper is None else tolerance.upper - w
    if a_lo is not None and a_hi is not None and not a_hi > a_lo:
        raise InputError("guard_band", w, f"less than half the tolerance width "
                         f"({_display.fmt(tolerance.width / 2)} {tolerance.unit}); otherwise the acceptance "
                         "interval is empty", _WHERE)
    notes: list[str] = []
    mc_point = getattr(result, "monte_carlo", None) is not None
    if distribution == "auto":
        # the distribution the result was propagated with: Monte Carlo's, else t with nu_eff (normal if infinite)
        distribution = "histogram" if mc_point else "t"
    if distribution == "t" and mc_point:
        raise InputError("distribution", "t", "'histogram' (or 'samples' or 'auto') for a Monte Carlo point: its "
                         "u comes from Monte Carlo and its effective degrees of freedom from first-order "
                         "propagation, and a t-distribution built from the two does not describe it", _WHERE)
    if distribution == "normal":
        pc = probability_of_conformity(tolerance, y, u)
        dist_text = "normal PDF"
    elif distribution == "t":
        if dof is None or math.isinf(dof):
            pc = probability_of_conformity(tolerance, y, u)
            dist_text = "normal PDF (infinite degrees of freedom)"
        else:
            pc = probability_of_conformity(tolerance, y, u, dof=dof)
            dist_text = f"t-distribution, {dof:.1f} degrees of freedom"
    elif distribution == "histogram":
        pc, txt = _from_histogram(tolerance, result)
        dist_text = txt
        notes.append("probability of conformity from the Monte Carlo histogram (100 bins, extreme tails "
                     "clipped): good to about a bin's share; pass the samples for more")
    elif distribution == "samples":
        if samples is None:
            raise InputError("samples", None, "Monte Carlo samples when distribution='samples'", _WHERE)
        pc = probability_of_conformity(tolerance, samples=samples)
        n = int(np.asarray(samples).size)
        se = math.sqrt(max(pc * (1 - pc), 1.0 / n) / n)
        dist_text = f"Monte Carlo, {n} samples (standard error {se:.1g})"
    else:
        raise InputError("distribution", distribution, "one of 'normal', 't', 'samples', 'histogram', 'auto'",
                         _WHERE)
    accepted = (a_lo is None or y >= a_lo) and (a_hi is None or y <= a_hi)
    if accepted and pc < 0.5:
        notes.append("accepted although the probability of conformity is below 50 %")
    if rule == "simple acceptance" and accepted and pc < 0.95:
        notes.append(f"simple acceptance: the probability of conformity is only {100 * pc:.1f} %; "
                     "a guarded acceptance rule limits the risk of accepting a non-conforming instrument")
    cm = None if math.isinf(tolerance.width) else tolerance.width / (4 * u)
    return ConformityResult(
        estimate=y, standard_uncertainty=u, expanded_uncertainty=big_u, coverage_factor=k,
        tolerance=tolerance, decision_rule=rule, guard_band=w, acceptance_lower=a_lo, acceptance_upper=a_hi,
        accepted=bool(accepted), probability_of_conformity=float(pc), distribution=dist_text,
        capability_index=cm, measurand=measurand, warnings=tuple(notes),
    )
