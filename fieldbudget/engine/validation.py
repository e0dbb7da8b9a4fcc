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

The Monte Carlo ends are themselves estimates.  Their numerical tolerance is
t = 2 s, with s the standard deviation of the average of the ends over the
stages of the run (JCGM 101 7.9.4 d, the factor 2 of 7.9.4 f).  An end is
decided only when d and delta are further apart than 1.5 t = 3 s: d + 3 s <=
delta (within the tolerance) or d - 3 s > delta (beyond it).  The margin over
the standard's 2 s covers the uncertainty of s itself (at least
``MIN_STAGES`` stages are required) and, in the adaptive run, the repeated
looks at the verdict after each stage, where 4 s is used so that a decision
taken there stands when the verdict is formed again from all the trials.  The verdict is "not validated"
when an end is decided beyond delta, "validated" when both are decided
within it, and otherwise "undecided", with the number of trials that would
make t smaller than |d - delta| (t falls as 1/sqrt(M)).  ``validate_adaptive``
runs the adaptive procedure until the verdict is decided.

When the GUM result is not validated the advice names the cause, with its
numbers: the model's nonlinearity (the share of the second-order terms of
JCGM 100:2008 5.1.2 in u_c^2), inputs that Monte Carlo draws as
t-distributions with few degrees of freedom (a Type A input from n readings
has variance (n - 1)/(n - 3) s^2/n there, JCGM 101 6.4.9, against the s^2/n of
the law of propagation), or an output that is not normal for another reason
(its skewness and excess kurtosis, e.g. from a dominant rectangular input).

Written by hand: the comparison is the standard's own few lines; the
decision rule and the advice are ours.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from .. import _display
from ..errors import InputError
from .distributions import Normal, TypeA
from .montecarlo import MonteCarloResult, MonteCarloVectorResult, numerical_tolerance

__all__ = ["ValidationResult", "validate", "validate_outputs", "validate_adaptive", "diagnose", "VERDICTS"]

_WHERE = "validation (JCGM 101 clause 8)"
VERDICTS = {True: "validated", False: "not validated", None: "undecided"}
#: Fewest stages whose spread is trusted for a verdict (the spread of 2 or 3 stage ends is itself too uncertain).
MIN_STAGES = 10
#: Standard errors between d and delta for an end to count as decided (see the module docstring).
DECISION_FACTOR = 3.0
ADAPTIVE_DECISION_FACTOR = 4.0
#: Share of the output variance above which a cause is named.
CAUSE_THRESHOLD = 0.01


@dataclass(frozen=True)
class ValidationResult:
    """Outcome of JCGM 101:2008 clause 8 for one output (all figures in the output's unit)."""

    delta: float
    d_low: float
    d_high: float
    passed: bool | None
    advice: str
    gum_interval: tuple[float, float]
    mc_interval: tuple[float, float]
    coverage_probability: float
    significant_digits: int
    interval_kind: str = "probabilistically symmetric"
    output: str = "y"
    unit: str = ""
    tolerance: tuple[float, float] | None = None
    trials: int = 0
    trials_needed: int | None = None
    cause: str = ""
    diagnostics: dict = field(default_factory=dict)

    @property
    def validated(self) -> bool | None:
        """True, False, or None when Monte Carlo noise cannot decide at this number of trials."""
        return self.passed

    @property
    def verdict(self) -> str:
        """'validated', 'not validated' or 'undecided'."""
        return VERDICTS[self.passed]

    def to_dict(self) -> dict:
        return {
            "validated": self.passed,
            "verdict": self.verdict,
            "tolerance": None if self.tolerance is None else list(self.tolerance),
            "trials": self.trials,
            "trials_needed": self.trials_needed,
            "cause": self.cause,
            "diagnostics": dict(self.diagnostics),
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
        word = {True: "passed", False: "failed", None: "undecided"}[self.passed]
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
            ("numerical tolerance of the Monte Carlo ends (2 s)",
             "not estimated" if self.tolerance is None
             else f"{_display.fmt(self.tolerance[0], 2)}, {_display.fmt(self.tolerance[1], 2)}", unit),
            ("GUM result validated", {True: "yes", False: "no", None: "undecided"}[self.passed], ""),
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
    both results must be for the same coverage probability.  The verdict
    (``passed``) is True, False, or None when the Monte Carlo's numerical
    tolerance does not separate d_low and d_high from delta (see the module).
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
    se = mc_result.interval_se if interval == "symmetric" else mc_result.shortest_interval_se
    kind = "probabilistically symmetric" if interval == "symmetric" else "shortest"
    delta = numerical_tolerance(u_gum if u_gum > 0 else mc_result.standard_uncertainty, significant_digits)
    d_low = abs(y - U - lo)
    d_high = abs(y + U - hi)
    tol = None if se is None else (2.0 * se[0], 2.0 * se[1])
    passed, needed = decide(delta, (d_low, d_high), tol, mc_result.trials, mc_result.coverage_probability)
    measurand = getattr(gum_result, "measurand", None)
    output = getattr(measurand, "symbol", None) or mc_result.output
    unit = getattr(measurand, "unit", None) or mc_result.unit
    cause, diag, why = ("", {}, "")
    if passed is not True:
        cause, diag, why = diagnose(gum_result, mc_result)
    advice = _advice(passed, y, U, u_gum, lo, hi, delta, d_low, d_high, mc_result, needed, tol, why)
    return ValidationResult(delta=delta, d_low=d_low, d_high=d_high, passed=passed, advice=advice,
                            gum_interval=(y - U, y + U), mc_interval=(lo, hi),
                            coverage_probability=p_gum, significant_digits=int(significant_digits),
                            interval_kind=kind, output=output, unit=unit, tolerance=tol,
                            trials=int(mc_result.trials), trials_needed=needed, cause=cause, diagnostics=diag)


def decide(delta: float, d: tuple[float, float], tol: tuple[float, float] | None, trials: int,
           p: float, factor: float = DECISION_FACTOR) -> tuple[bool | None, int | None]:
    """(verdict, trials needed when undecided) for the ends' distances ``d`` and tolerances ``tol`` (2 s).

    With m = factor s: an end is within when d + m <= delta, beyond when
    d - m > delta, and undecided otherwise; s scales as 1/sqrt(M), so the M
    that decides an end is M (m / |d - delta|)^2 (with 10 % to spare, in
    whole stages).
    """
    from .montecarlo import _adaptive_stage

    stage = _adaptive_stage(p)
    if tol is None or trials < MIN_STAGES * stage:   # the ends' spread is not known well enough yet
        return (False if delta == 0 and max(d) > 0 else None), max(trials, MIN_STAGES * stage)
    tol = tuple(0.5 * factor * t for t in tol)
    beyond = any(di - ti > delta for di, ti in zip(d, tol))
    if beyond:
        return False, None
    if all(di + ti <= delta for di, ti in zip(d, tol)):
        return True, None
    need = trials
    for di, ti in zip(d, tol):
        if not (di + ti <= delta):
            gap = abs(delta - di)
            if gap == 0:
                return None, None
            need = max(need, math.ceil(1.1 * trials * (ti / gap) ** 2))
    return None, -(-need // stage) * stage


def validate_adaptive(gum_result, budget, *, seed: int | None = None, significant_digits: int = 2,
                      interval: str = "symmetric", max_trials: int | None = None, **run_options):
    """Run adaptive Monte Carlo (JCGM 101 7.9.4) until the clause 8 verdict is decided; (mc, validation).

    The stages go on past stabilisation while the verdict computed from the
    stage averages is still undecided, up to ``max_trials``; the verdict is
    then formed from all trials by :func:`validate`.
    """
    from . import montecarlo

    y = float(gum_result.estimate)
    U = float(gum_result.expanded_uncertainty)
    u_gum = float(gum_result.standard_uncertainty)

    def decided(summary: dict) -> bool:
        out = summary["outputs"][0]
        delta = numerical_tolerance(u_gum if u_gum > 0 else out["u"], significant_digits)
        lo, hi = out["interval"]
        se = out["interval_se"]
        verdict, _ = decide(delta, (abs(y - U - lo), abs(y + U - hi)), (2 * se[0], 2 * se[1]),
                            summary["trials"], float(gum_result.coverage_probability), ADAPTIVE_DECISION_FACTOR)
        return verdict is not None

    mc = montecarlo.run(budget, seed=seed, adaptive=True, significant_digits=significant_digits,
                        coverage_probability=gum_result.coverage_probability, max_trials=max_trials,
                        stop_when=decided, **run_options)
    return mc, validate(gum_result, mc, significant_digits, interval=interval)


def validate_outputs(gum_results, mc_results: MonteCarloVectorResult, significant_digits: int = 2, *,
                     interval: str = "symmetric") -> tuple[ValidationResult, ...]:
    """:func:`validate` for each output of a several-output model, in the model's output order.

    ``gum_results`` is a ``VectorResult`` (indexable by output symbol) and
    ``mc_results`` the :class:`MonteCarloVectorResult` of the same budget.
    """
    if not isinstance(mc_results, MonteCarloVectorResult):
        raise InputError("mc_results", type(mc_results).__name__, "a MonteCarloVectorResult", _WHERE)
    return tuple(validate(gum_results[r.output], r, significant_digits, interval=interval) for r in mc_results.results)


def _sampled_t_dof(d) -> float | None:
    if isinstance(d, TypeA):
        return float(d.n - 1)
    if isinstance(d, Normal) and math.isfinite(d.dof):
        return float(d.dof)
    return None


def diagnose(gum_result, mc_result: MonteCarloResult) -> tuple[str, dict, str]:
    """(cause, numbers, sentence): why the Monte Carlo interval may differ from y +- U.

    Numbers (plain floats, ``None`` when not computable):

    - ``second_order_share``: (u_2^2 - u_1^2) / u_2^2, the share of the
      second-order terms (JCGM 100:2008 5.1.2) in u_c^2; 0 for a linear model;
    - ``t_share``: sum c_i^2 u_i^2 (nu_i/(nu_i - 2) - 1) over the inputs drawn as
      t-distributions, over the Monte Carlo variance this implies; for Type A
      from n readings nu_i/(nu_i - 2) = (n - 1)/(n - 3) (JCGM 101 6.4.9);
    - ``skewness``, ``excess_kurtosis`` of the Monte Carlo values.

    The cause is ``"nonlinearity"`` or ``"few_degrees_of_freedom"``, whichever
    share is larger when it reaches 1 %, else ``"non_normal_output"`` when the
    shape numbers exceed 0.1, else ``""``.
    """
    budget = getattr(gum_result, "budget", None)
    contributions = getattr(gum_result, "contributions", ())
    u1 = float(gum_result.standard_uncertainty)
    diag: dict = {"second_order_share": None, "t_share": None, "t_inputs": [],
                  "skewness": float(mc_result.skewness), "excess_kurtosis": float(mc_result.excess_kurtosis)}
    if budget is None:
        return "", diag, ""
    # nonlinearity
    if budget.second_order:
        u2 = u1
        u1_sq = u1 * u1 - float(gum_result.higher_order_variance)
        diag["second_order_share"] = max(0.0, 1.0 - u1_sq / (u2 * u2)) if u2 > 0 else None
    elif not budget.has_correlations and len(budget.model.outputs) == 1:
        from ..errors import FieldbudgetError
        from .second_order import combined_uncertainty

        try:
            u2 = combined_uncertainty(budget)
            diag["second_order_share"] = max(0.0, 1.0 - (u1 * u1) / (u2 * u2)) if u2 > 0 else None
        except FieldbudgetError:
            pass
    # t-distributed draws
    extra = 0.0
    infinite = []
    for q, c in zip(budget.inputs, contributions):
        nu = _sampled_t_dof(q.distribution)
        if nu is None or c.u_contribution == 0:
            continue
        if nu <= 2:
            infinite.append(q.symbol)
            continue
        factor = nu / (nu - 2.0)
        extra += c.u_contribution ** 2 * (factor - 1.0)
        diag["t_inputs"].append({"symbol": q.symbol, "dof": nu, "variance_factor": factor,
                                 "share_of_u_c2": c.variance_share})
    var_gum = u1 * u1
    if infinite:
        diag["t_share"] = 1.0
    elif var_gum + extra > 0:
        diag["t_share"] = extra / (var_gum + extra)
    nl = diag["second_order_share"] or 0.0
    ts = diag["t_share"] or 0.0
    skew, kurt = diag["skewness"], diag["excess_kurtosis"]
    shape = f"skewness {skew:.2f}, excess kurtosis {kurt:.2f}"
    if max(nl, ts) >= CAUSE_THRESHOLD and nl >= ts:
        return "nonlinearity", diag, (
            f"The cause is the model's nonlinearity: the second-order terms (JCGM 100:2008 5.1.2) are "
            f"{100 * nl:.1f} % of u_c² (the output's {shape}); the first-order law of propagation leaves them out.")
    if ts >= CAUSE_THRESHOLD:
        if infinite:
            detail = (f"input{'s' if len(infinite) > 1 else ''} {', '.join(infinite)} with 2 or fewer degrees of "
                      "freedom, drawn from a t-distribution without finite variance")
        else:
            worst = sorted(diag["t_inputs"], key=lambda t: -t["share_of_u_c2"] * (t["variance_factor"] - 1))[:3]
            detail = ", ".join(f"{t['symbol']} (ν = {t['dof']:g}: variance ν/(ν − 2) = "
                               f"{t['variance_factor']:.2f} × u²)" for t in worst)
        return "few_degrees_of_freedom", diag, (
            f"The cause is inputs with few degrees of freedom, which Monte Carlo draws as t-distributions "
            f"(JCGM 101 6.4.9; a Type A input from n readings has variance (n − 1)/(n − 3) · s²/n): {detail}; "
            f"they add {100 * ts:.1f} % to the output variance, which the Welch–Satterthwaite k only "
            f"approximates (second-order share {100 * nl:.1f} %, {shape}).")
    if abs(skew) > 0.1 or abs(kurt) > 0.1:
        dominant = max(contributions, key=lambda c: c.variance_share, default=None)
        dom = (f"; the largest contribution is {dominant.symbol} ({dominant.distribution}, "
               f"{100 * dominant.variance_share:.0f} % of u_c²)") if dominant is not None else ""
        return "non_normal_output", diag, (
            f"The cause is an output that is not normal: {shape}{dom}; the coverage factor k assumes a normal or "
            f"t-distribution (second-order share {100 * nl:.1f} %, t-distributed draws {100 * ts:.1f} %).")
    return "", diag, (f"No single cause stands out (second-order share {100 * nl:.1f} %, t-distributed draws "
                      f"{100 * ts:.1f} %, {shape}).")


def _advice(passed, y, U, u_gum, lo, hi, delta, d_low, d_high, mc, needed, tol, why) -> str:
    """What the comparison means for the report (our own wording)."""
    t = _display.fmt(delta, 2)
    if passed is True:
        return (f"Both ends of y ± U lie within {t} of the Monte Carlo interval, beyond the Monte Carlo's own "
                "numerical tolerance, so the law of propagation is adequate here and the GUM result can be "
                "reported as it stands.")
    if passed is None:
        if tol is None or mc.stages < MIN_STAGES:
            noise = f"the spread of the Monte Carlo interval ends is not known well enough (fewer than {MIN_STAGES} stages)"
        else:
            noise = (f"the Monte Carlo interval ends are only known to ±{_display.fmt(max(tol), 2)} (2 s over "
                     f"{mc.stages} stages), which does not separate d_low = {_display.fmt(d_low, 2)} and "
                     f"d_high = {_display.fmt(d_high, 2)} from δ = {t}")
        more = (f" About {needed:,} trials would decide it".replace(",", " ") if needed else
                " No number of trials decides it reliably (an end lies at δ)")
        return (f"Undecided: {noise}.{more}; run with more trials or adaptively (--adaptive), which goes on until "
                "the verdict is decided.")
    if u_gum == 0.0 and mc.standard_uncertainty > 0.0:
        return ("The law of propagation gives u = 0 because every first-order sensitivity coefficient vanishes at "
                "the estimates, while the Monte Carlo trials spread with u = "
                f"{_display.fmt(mc.standard_uncertainty, 2)}; report the Monte Carlo result (or include the "
                "second-order terms) instead.")
    mid_shift = abs((lo + hi) / 2.0 - y)
    half_gum, half_mc = U, (hi - lo) / 2.0
    if mid_shift > abs(half_gum - half_mc):
        gap = (f"The Monte Carlo interval is not centred on y (its ends differ from y ± U by {_display.fmt(d_low, 2)} "
               f"below and {_display.fmt(d_high, 2)} above, more than {t}).")
    else:
        wider = "wider" if half_gum > half_mc else "narrower"
        gap = (f"y ± U is {wider} than the Monte Carlo interval by more than {t} "
               f"(d_low = {_display.fmt(d_low, 2)}, d_high = {_display.fmt(d_high, 2)}).")
    return f"{gap} {why} Report the Monte Carlo estimate and interval.".replace("  ", " ")
