"""Conformity risks for a normal process (prior) distribution, and guard bands solved for a target risk.

Follows JCGM 106:2012 (clause numbers from memory; check them against the
document).  The measurand Y of an item taken from a production process has a
normal prior PDF with mean ``y0`` and standard deviation ``u0`` (clause 9.4);
a measurement of it gives y_m with a normal error of standard uncertainty
``u`` (clause 9.4.2).  With tolerance interval T = [T_L, T_U] and acceptance
interval A = [A_L, A_U] = [T_L + w, T_U - w] (guard band w, clause 8.3):

- global consumer's risk (9.5.2): the probability that an item is accepted
  although it does not conform,

      R_C = integral over eta outside T of g0(eta) [Phi((A_U - eta)/u) - Phi((A_L - eta)/u)] d eta;

- global producer's risk (9.5.3): the probability that a conforming item is
  rejected,

      R_P = integral over eta inside T of g0(eta) [1 - Phi((A_U - eta)/u) + Phi((A_L - eta)/u)] d eta;

- specific consumer's risk of one accepted result (9.3): 1 - p_c, with p_c the
  probability of conformity given the result (with a prior, the posterior is
  normal with precision 1/u^2 + 1/u0^2, 9.4.3).

Guard bands.  For a target *specific* risk the acceptance limit A_U is the
value at which the specific risk equals the target (and A_L likewise); for a
target *global* consumer's risk w is solved so that R_C(w) equals the target.
Both use ``scipy.optimize.brentq``; the integrals use ``scipy.integrate.quad``
over the prior (the tails beyond 12 u0 are below 1e-30 and left out).

Why hand-written: scipy gives the normal distribution, the quadrature and the
root finder; the risks and guard bands are the metrology of JCGM 106 that no
library provides.  A one-sided tolerance (``None`` for a limit) is allowed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from scipy import integrate, optimize, stats

from fieldbudget import _display
from fieldbudget.errors import InputError

from .conformity import Tolerance

__all__ = ["GlobalRisks", "GuardBand", "global_risks", "specific_risk", "guard_band_for_specific_risk",
           "guard_band_for_global_risk"]

_WHERE = "conformity risk (JCGM 106)"
_SPAN = 12.0


def _positive(name: str, v: object, where: str = _WHERE) -> float:
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
        raise InputError(name, v, "a finite number > 0", where)
    return float(v)


def _finite(name: str, v: object, where: str = _WHERE) -> float:
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise InputError(name, v, "a finite number", where)
    return float(v)


def _probability(name: str, v: object) -> float:
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not (0.0 < v < 1.0):
        raise InputError(name, v, "a probability between 0 and 1 (e.g. 0.01 for 1 %)", _WHERE)
    return float(v)


def _limits(tolerance: Tolerance) -> tuple[float, float]:
    if not isinstance(tolerance, Tolerance):
        raise InputError("tolerance", tolerance, "a Tolerance (lower and/or upper limit)", _WHERE)
    lo = -math.inf if tolerance.lower is None else tolerance.lower
    hi = math.inf if tolerance.upper is None else tolerance.upper
    return lo, hi


def _acceptance(tolerance: Tolerance, w: float) -> tuple[float, float]:
    lo, hi = _limits(tolerance)
    a = (lo + w, hi - w)
    if not a[1] > a[0]:
        raise InputError("guard_band", w, f"smaller than half the tolerance width ({(hi - lo) / 2:g})", _WHERE)
    return a


def _p_accept(eta: float, a: tuple[float, float], u: float) -> float:
    lo = stats.norm.cdf((a[0] - eta) / u) if math.isfinite(a[0]) else 0.0
    hi = stats.norm.cdf((a[1] - eta) / u) if math.isfinite(a[1]) else 1.0
    return hi - lo


def _integral(f, lo: float, hi: float, y0: float, u0: float) -> float:
    lo = max(lo, y0 - _SPAN * u0)
    hi = min(hi, y0 + _SPAN * u0)
    if not hi > lo:
        return 0.0
    pts = [p for p in (y0,) if lo < p < hi]
    val, _ = integrate.quad(lambda e: stats.norm.pdf(e, y0, u0) * f(e), lo, hi, points=pts or None,
                            epsabs=1e-14, epsrel=1e-10, limit=200)
    return max(0.0, float(val))


@dataclass(frozen=True)
class GlobalRisks:
    """Global consumer's and producer's risks (JCGM 106:2012, 9.5) for a normal process distribution."""

    consumer: float
    producer: float
    conforming_fraction: float
    tolerance: Tolerance
    acceptance: tuple[float, float]
    prior_mean: float
    prior_sd: float
    u: float

    def to_dict(self) -> dict:
        def _lim(x):
            return None if not math.isfinite(x) else x
        return {"consumer_risk": self.consumer, "producer_risk": self.producer,
                "conforming_fraction": self.conforming_fraction, "tolerance": self.tolerance.to_dict(),
                "acceptance": [_lim(self.acceptance[0]), _lim(self.acceptance[1])],
                "prior_mean": self.prior_mean, "prior_sd": self.prior_sd, "u": self.u}

    def __repr__(self) -> str:
        return (f"GlobalRisks(consumer {self.consumer:.3g}, producer {self.producer:.3g}, "
                f"acceptance [{_display.fmt(self.acceptance[0])}, {_display.fmt(self.acceptance[1])}])")

    def _repr_html_(self) -> str:
        unit = self.tolerance.unit
        rows = [("tolerance interval", f"[{_display.fmt(self.tolerance.lower)}, {_display.fmt(self.tolerance.upper)}]",
                 unit),
                ("acceptance interval", f"[{_display.fmt(self.acceptance[0])}, {_display.fmt(self.acceptance[1])}]",
                 unit),
                ("process: mean, standard deviation", f"{_display.fmt(self.prior_mean)}, {_display.fmt(self.prior_sd)}",
                 unit),
                ("measurement standard uncertainty", _display.fmt(self.u), unit),
                ("conforming fraction of the process", f"{100 * self.conforming_fraction:.4g} %", ""),
                ("global consumer's risk", f"{100 * self.consumer:.3g} %", ""),
                ("global producer's risk", f"{100 * self.producer:.3g} %", "")]
        return _display.html_block("Conformity risks (JCGM 106)",
                                   _display.html_table(("item", "value", "unit"), rows))


@dataclass(frozen=True)
class GuardBand:
    """A guard band w and its acceptance interval, solved for a target risk."""

    guard_band: float
    acceptance: tuple[float, float]
    target: float
    kind: str                      # "specific" or "global"
    achieved: float
    tolerance: Tolerance
    u: float
    risks: GlobalRisks | None = None

    def to_dict(self) -> dict:
        def _lim(x):
            return None if not math.isfinite(x) else x
        d = {"guard_band": self.guard_band, "acceptance": [_lim(self.acceptance[0]), _lim(self.acceptance[1])],
             "target": self.target, "kind": self.kind, "achieved": self.achieved, "u": self.u,
             "tolerance": self.tolerance.to_dict()}
        if self.risks is not None:
            d["risks"] = self.risks.to_dict()
        return d

    def __repr__(self) -> str:
        return (f"GuardBand(w = {_display.fmt(self.guard_band)}, acceptance [{_display.fmt(self.acceptance[0])}, "
                f"{_display.fmt(self.acceptance[1])}], {self.kind} risk {self.achieved:.3g})")

    def _repr_html_(self) -> str:
        unit = self.tolerance.unit
        rows = [("guard band w", _display.fmt(self.guard_band), unit),
                ("acceptance interval", f"[{_display.fmt(self.acceptance[0])}, {_display.fmt(self.acceptance[1])}]",
                 unit),
                (f"target {self.kind} consumer's risk", f"{100 * self.target:.3g} %", ""),
                ("risk with this guard band", f"{100 * self.achieved:.3g} %", "")]
        body = _display.html_table(("item", "value", "unit"), rows)
        if self.risks is not None:
            body += self.risks._repr_html_()
        return _display.html_block("Guard band (JCGM 106)", body)


def global_risks(tolerance: Tolerance, prior_mean: float, prior_sd: float, u: float, *,
                 guard_band: float = 0.0) -> GlobalRisks:
    """R_C and R_P (JCGM 106:2012, 9.5.2, 9.5.3) for a normal process N(prior_mean, prior_sd^2).

    ``u`` is the measurement's standard uncertainty; the acceptance interval is
    the tolerance interval narrowed by ``guard_band`` at each finite limit
    (negative: widened).  All in the tolerance's unit.
    """
    y0 = _finite("prior_mean", prior_mean)
    u0 = _positive("prior_sd", prior_sd)
    u = _positive("u", u)
    w = _finite("guard_band", guard_band)
    lo, hi = _limits(tolerance)
    a = _acceptance(tolerance, w)
    consumer = (_integral(lambda e: _p_accept(e, a, u), -math.inf, lo, y0, u0)
                + _integral(lambda e: _p_accept(e, a, u), hi, math.inf, y0, u0))
    producer = _integral(lambda e: 1.0 - _p_accept(e, a, u), lo, hi, y0, u0)
    inside = (stats.norm.cdf(hi, y0, u0) if math.isfinite(hi) else 1.0) - (
        stats.norm.cdf(lo, y0, u0) if math.isfinite(lo) else 0.0)
    return GlobalRisks(consumer, producer, float(inside), tolerance, a, y0, u0, u)


def specific_risk(tolerance: Tolerance, estimate: float, u: float, *, prior_mean: float | None = None,
                  prior_sd: float | None = None) -> float:
    """Specific consumer's risk of accepting the item measured as ``estimate`` +- ``u``: 1 - p_c (JCGM 106 9.3).

    With a prior (``prior_mean``, ``prior_sd``) p_c is taken from the normal
    posterior, mean (y/u^2 + y0/u0^2) / (1/u^2 + 1/u0^2) and variance
    1 / (1/u^2 + 1/u0^2) (9.4.3).
    """
    y = _finite("estimate", estimate)
    u = _positive("u", u)
    if (prior_mean is None) != (prior_sd is None):
        raise InputError("prior", (prior_mean, prior_sd), "both prior_mean and prior_sd, or neither", _WHERE)
    if prior_mean is not None:
        y0, u0 = _finite("prior_mean", prior_mean), _positive("prior_sd", prior_sd)
        prec = 1 / u**2 + 1 / u0**2
        y, u = (y / u**2 + y0 / u0**2) / prec, math.sqrt(1 / prec)
    lo, hi = _limits(tolerance)
    p_in = (stats.norm.cdf((hi - y) / u) if math.isfinite(hi) else 1.0) - (
        stats.norm.cdf((lo - y) / u) if math.isfinite(lo) else 0.0)
    return float(max(0.0, 1.0 - p_in))


def guard_band_for_specific_risk(tolerance: Tolerance, u: float, target: float) -> GuardBand:
    """The guard band whose acceptance limits carry exactly the ``target`` specific consumer's risk (JCGM 106 8.3).

    A result at an acceptance limit has specific risk ``target``; results
    further inside have less.  With one limit this is w = z u, z the
    (1 - target) quantile of the normal distribution.
    """
    u = _positive("u", u)
    target = _probability("target", target)
    lo, hi = _limits(tolerance)
    if math.isfinite(lo) and math.isfinite(hi):
        half = (hi - lo) / 2
        best = specific_risk(tolerance, lo + half, u)
        if best >= target:
            raise InputError("target", target, f"above {best:.3g}, the specific risk of a result at the middle "
                             "of the tolerance interval with this u (no acceptance interval reaches a lower risk)",
                             _WHERE)
        # the risk at the acceptance limit falls from >= 1/2 at w = 0 to `best` at w = half
        w = optimize.brentq(lambda w: specific_risk(tolerance, hi - w, u) - target, 0.0, half,
                            xtol=1e-13 * max(u, abs(hi)), rtol=1e-13)
    else:
        w = float(stats.norm.isf(target)) * u
    a = _acceptance(tolerance, w)
    limit = a[1] if math.isfinite(a[1]) else a[0]
    return GuardBand(float(w), a, target, "specific", specific_risk(tolerance, limit, u), tolerance, u)


def _half_width(lo: float, hi: float) -> float:
    return (hi - lo) / 2 if math.isfinite(lo) and math.isfinite(hi) else math.inf


def guard_band_for_global_risk(tolerance: Tolerance, prior_mean: float, prior_sd: float, u: float,
                               target: float) -> GuardBand:
    """The guard band w for which the global consumer's risk R_C(w) equals ``target`` (JCGM 106 9.5).

    R_C falls as w grows; w may come out negative (relaxed acceptance) when
    simple acceptance already meets the target.  Solved over
    -10 u < w < half the tolerance width.
    """
    u = _positive("u", u)
    target = _probability("target", target)
    lo, hi = _limits(tolerance)

    def rc(w: float) -> float:
        return global_risks(tolerance, prior_mean, prior_sd, u, guard_band=w).consumer

    w_lo = -10.0 * u
    w_hi = min(_half_width(lo, hi), _SPAN * float(prior_sd) + 10 * u) * (1 - 1e-9)
    r_lo, r_hi = rc(w_lo), rc(w_hi)
    if r_lo < target:
        raise InputError("target", target, f"below {r_lo:.3g}, the risk with the acceptance interval widened by "
                         "10 u (a target this large needs no guard band)", _WHERE)
    if r_hi > target:
        raise InputError("target", target, f"at least {r_hi:.3g}, the smallest global consumer's risk any guard band "
                         "reaches here", _WHERE)
    w = optimize.brentq(lambda w: rc(w) - target, w_lo, w_hi, xtol=1e-12 * max(u, 1e-300), rtol=1e-12)
    risks = global_risks(tolerance, prior_mean, prior_sd, u, guard_band=w)
    return GuardBand(float(w), risks.acceptance, target, "global", risks.consumer, tolerance, u, risks)
