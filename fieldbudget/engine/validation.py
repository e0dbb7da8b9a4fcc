"""Validation of the GUM uncertainty framework by a Monte Carlo result (JCGM 101:2008, clause 8).

From the GUM result y +- U_p and the Monte Carlo coverage interval
[y_low, y_high] for the same coverage probability p (8.2):

    d_low  = |y - U_p - y_low|,   d_high = |y + U_p - y_high|,

and the GUM result is validated when both are <= delta, the numerical
tolerance of the standard uncertainty held to ``significant_digits``
significant digits (7.9.2; see :func:`montecarlo.numerical_tolerance`).
delta is taken from the GUM u_c(y), the figure whose digits are being
reported; when the law of propagation gives u_c = 0 (a zero first-order
sensitivity) it is taken from the Monte Carlo u(y) instead, since a tolerance
of zero would say nothing.  The Monte Carlo interval compared is the
probabilistically symmetric one unless ``interval="shortest"``.

Written by hand: the comparison is the standard's own few lines.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .. import _display
from ..errors import InputError
from .montecarlo import MonteCarloResult, MonteCarloVectorResult, numerical_tolerance

__all__ = ["ValidationResult", "validate", "validate_outputs"]

_WHERE = "validation (JCGM 101 clause 8)"


@dataclass(frozen=True)
class ValidationResult:
    """Outcome of JCGM 101:2008 clause 8 for one output (all figures in the output's unit)."""

    delta: float
    d_low: float
    d_high: float
    passed: bool
    advice: str
    gum_interval: tuple[float, float]
    mc_interval: tuple[float, float]
    coverage_probability: float
    significant_digits: int
    interval_kind: str = "probabilistically symmetric"
    output: str = "y"
    unit: str = ""

    @property
    def validated(self) -> bool:
        return self.passed

    def to_dict(self) -> dict:
        return {
            "validated": bool(self.passed),
            "delta": self.delta,
            "d_low": self.d_low,
            "d_high": self.d_high,
            "gum_interval": list(self.gum_interval),
            "mc_interval": list(self.mc_interval),
            "interval_kind": self.interval_kind,
            "coverage_probability": self.coverage_probability,
            "significant_digits": self.significant_digits,
            "advice": self.advice,
        }

    def __repr__(self) -> str:
        word = "passed" if self.passed else "failed"
        return (f"ValidationResult({self.output}: {word}, d_low = {_display.fmt(self.d_low, 3)}, "
                f"d_high = {_display.fmt(self.d_high, 3)}, delta = {_display.fmt(self.delta, 3)}"
                f"{' ' + self.unit if self.unit else ''})")

    def _span(self, ends: tuple[float, float]) -> str:
        """An interval's ends to the decimal of the tolerance delta, so that they differ where they should."""
        u = self.delta if self.delta > 0 and math.isfinite(self.delta) else None
        return f"{_display.fmt_si(ends[0], self.unit, u)} to {_display.fmt_si(ends[1], self.unit, u)}"

    def _repr_html_(self) -> str:
        unit = self.unit
        rows = [
            ("GUM interval y ± U", self._span(self.gum_interval), ""),
            (f"Monte Carlo interval ({self.interval_kind})", self._span(self.mc_interval), ""),
            ("d_low", _display.fmt(self.d_low, 3), unit),
            ("d_high", _display.fmt(self.d_high, 3), unit),
            (f"tolerance δ ({self.significant_digits} significant digit{'s' if self.significant_digits != 1 else ''})",
             _display.fmt(self.delta, 3), unit),
            ("GUM result validated", "yes" if self.passed else "no", ""),
        ]
        body = _display.html_table(("item", "value", "unit"), rows,
                                   caption=f"Validation of the GUM result for {self.output} (JCGM 101 clause 8)")
        body += f"<p>{_display.escape(self.advice)}</p>"
        return _display.html_block("Validation", body)


def validate(gum_result, mc_result: MonteCarloResult, significant_digits: int = 2, *,
             interval: str = "symmetric") -> ValidationResult:
    """Compare a GUM result with a Monte Carlo result (JCGM 101:2008 8.2).

    ``gum_result`` needs ``estimate``, ``standard_uncertainty``,
    ``expanded_uncertainty`` and ``coverage_probability`` (a ``BudgetResult``);
    both results must be for the same coverage probability.
    """
    if not isinstance(mc_result, MonteCarloResult):
        raise InputError("mc_result", type(mc_result).__name__, "a MonteCarloResult for one output", _WHERE)
    if interval not in ("symmetric", "shortest"):
        raise InputError("interval", interval, "'symmetric' or 'shortest'", _WHERE)
    p_gum = float(gum_result.coverage_probability)
    if not math.isclose(p_gum, mc_result.coverage_probability, rel_tol=1e-9):
        raise InputError("coverage_probability", mc_result.coverage_probability,
                         f"the GUM result's ({p_gum:g}) so that the two intervals compare", _WHERE)
    y = float(gum_result.estimate)
    U = float(gum_result.expanded_uncertainty)
    u_gum = float(gum_result.standard_uncertainty)
    lo, hi = mc_result.interval if interval == "symmetric" else mc_result.shortest_interval
    kind = "probabilistically symmetric" if interval == "symmetric" else "shortest"
    delta = numerical_tolerance(u_gum if u_gum > 0 else mc_result.standard_uncertainty, significant_digits)
    d_low = abs(y - U - lo)
    d_high = abs(y + U - hi)
    passed = d_low <= delta and d_high <= delta
    measurand = getattr(gum_result, "measurand", None)
    output = getattr(measurand, "symbol", None) or mc_result.output
    unit = getattr(measurand, "unit", None) or mc_result.unit
    advice = _advice(passed, y, U, u_gum, lo, hi, delta, d_low, d_high, mc_result)
    return ValidationResult(delta=delta, d_low=d_low, d_high=d_high, passed=passed, advice=advice,
                            gum_interval=(y - U, y + U), mc_interval=(lo, hi),
                            coverage_probability=p_gum, significant_digits=int(significant_digits),
                            interval_kind=kind, output=output, unit=unit)


def validate_outputs(gum_results, mc_results: MonteCarloVectorResult, significant_digits: int = 2, *,
                     interval: str = "symmetric") -> tuple[ValidationResult, ...]:
    """:func:`validate` for each output of a several-output model, in the model's output order.

    ``gum_results`` is a ``VectorResult`` (indexable by output symbol) and
    ``mc_results`` the :class:`MonteCarloVectorResult` of the same budget.
    """
    if not isinstance(mc_results, MonteCarloVectorResult):
        raise InputError("mc_results", type(mc_results).__name__, "a MonteCarloVectorResult", _WHERE)
    return tuple(validate(gum_results[r.output], r, significant_digits, interval=interval) for r in mc_results.results)


def _advice(passed, y, U, u_gum, lo, hi, delta, d_low, d_high, mc) -> str:
    """One sentence saying what the comparison means for the report (our own wording)."""
    tol = _display.fmt(delta, 2)
    if passed:
        return (f"Both ends of y ± U lie within {tol} of the Monte Carlo interval, so the law of propagation "
                "is adequate here and the GUM result can be reported as it stands.")
    if u_gum == 0.0 and mc.standard_uncertainty > 0.0:
        return ("The law of propagation gives u = 0 because every first-order sensitivity coefficient vanishes at "
                "the estimates, while the Monte Carlo trials spread with u = "
                f"{_display.fmt(mc.standard_uncertainty, 2)}; report the Monte Carlo result (or include the "
                "second-order terms) instead.")
    mid_shift = abs((lo + hi) / 2.0 - y)
    half_gum, half_mc = U, (hi - lo) / 2.0
    u_mc = mc.standard_uncertainty
    u_note = ""
    if abs(u_mc - u_gum) > delta:
        u_note = (f" and the trials spread with u = {_display.fmt(u_mc, 2)} against u_c = {_display.fmt(u_gum, 2)}, "
                  "so the first-order law misses part of the model's nonlinearity")
    if mid_shift > abs(half_gum - half_mc):
        return (f"The Monte Carlo interval is not centred on y (its ends differ from y ± U by {_display.fmt(d_low, 2)} "
                f"below and {_display.fmt(d_high, 2)} above, more than {tol}){u_note}; the output is skewed, so "
                "report the Monte Carlo estimate and interval.")
    wider = "wider" if half_gum > half_mc else "narrower"
    return (f"y ± U is {wider} than the Monte Carlo interval by more than {tol} "
            f"(d_low = {_display.fmt(d_low, 2)}, d_high = {_display.fmt(d_high, 2)}){u_note or ''}"
            f"{'' if u_note else ', because the output is not close to the normal or t-distribution that k assumes'}"
            "; report the Monte Carlo interval.")
