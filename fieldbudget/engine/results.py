"""Results of a GUM evaluation: immutable values with text, HTML and dict forms."""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from .. import _display as D
from ..errors import is_note
from .budget import Budget, Measurand
from .coverage import exact_probability
from .rounding import RoundedResult, round_result

__all__ = ["Contribution", "BudgetResult", "VectorResult", "correlation_from_covariance"]


def correlation_from_covariance(cov: np.ndarray) -> np.ndarray:
    """r_ij = u(y_i, y_j) / (u(y_i) u(y_j)) (JCGM 100:2008 5.2.2, eq. 14); 0 where a u is zero."""
    c = np.asarray(cov, dtype=float)
    s = np.sqrt(np.diag(c))
    with np.errstate(invalid="ignore", divide="ignore"):
        r = c / np.outer(s, s)
    r[~np.isfinite(r)] = 0.0
    np.fill_diagonal(r, 1.0)
    return r


def _nu(x: float) -> float | None:
    return None if x is None or math.isinf(x) else float(x)


@dataclass(frozen=True)
class Contribution:
    """One row of the budget table (JCGM 100:2008 Table H.1 layout).

    ``u_contribution`` = |c_i| u(x_i); ``variance_share`` = (c_i u(x_i))^2 / u_c^2.
    """

    symbol: str
    estimate: float
    unit: str
    distribution: str
    description: str
    standard_uncertainty: float
    dof: float
    sensitivity: float
    u_contribution: float
    variance_share: float
    source: str = ""
    evaluation_type: str = "B"

    def to_dict(self) -> dict:
        return {
            "symbol": self.symbol, "estimate": self.estimate, "unit": self.unit,
            "distribution": self.distribution, "stated": self.description, "type": self.evaluation_type,
            "u_x": self.standard_uncertainty, "dof": _nu(self.dof), "sensitivity": self.sensitivity,
            "u_contribution": self.u_contribution, "share": self.variance_share, "source": self.source,
        }


@dataclass(frozen=True)
class BudgetResult:
    """The GUM evaluation of one measurand.

    Attributes use the trade's names: ``estimate`` (y), ``standard_uncertainty``
    (u_c(y)), ``effective_dof`` (nu_eff, ``math.inf`` when infinite),
    ``coverage_factor`` (k), ``expanded_uncertainty`` (U = k u_c),
    ``coverage_probability`` (p).
    """

    budget: Budget = field(repr=False)
    measurand: Measurand
    estimate: float
    standard_uncertainty: float
    effective_dof: float
    coverage_factor: float
    coverage_probability: float
    expanded_uncertainty: float
    contributions: tuple[Contribution, ...]
    correlation_variance: float = 0.0
    higher_order_variance: float = 0.0
    sensitivity_method: str = ""
    warnings: tuple[str, ...] = ()
    u_second_order: float | None = None
    monte_carlo: object | None = None
    validation: object | None = None
    dof_method: str = "welch_satterthwaite"
    readings_sets: int | None = None
    # engine.second_order.METHODS: how second-order terms are (or, for the validation's diagnostics, would be) found
    second_order_method: int | None = None

    # -- derived ------------------------------------------------------------------
    @property
    def relative_expanded_uncertainty(self) -> float:
        return self.expanded_uncertainty / abs(self.estimate) if self.estimate else math.inf

    @property
    def coverage_policy(self) -> str:
        return self.budget.coverage_policy

    def contribution(self, symbol: str) -> Contribution:
        for c in self.contributions:
            if c.symbol == symbol:
                return c
        raise KeyError(symbol)

    def rounded(self, rule: str = "gum", significant_digits: int = 2, decimals: int | None = None) -> RoundedResult:
        """Estimate and U rounded for reporting (JCGM 100:2008 7.2.6; EA-4/02)."""
        return round_result(self.estimate, self.expanded_uncertainty, rule, significant_digits, decimals)

    def with_monte_carlo(self, monte_carlo: object, validation: object | None = None) -> BudgetResult:
        """A copy carrying a Monte Carlo result and its validation of this GUM result."""
        return replace(self, monte_carlo=monte_carlo, validation=validation)

    def with_warnings(self, *warnings: str) -> BudgetResult:
        return replace(self, warnings=self.warnings + tuple(warnings))

    # -- the uncertainty statement --------------------------------------------------
    def statement(self, rule: str = "gum", significant_digits: int = 2) -> str:
        """The result with its expanded uncertainty, in words an assessor expects.

        It gives value, U, k, the coverage probability and, where k comes from
        the t-distribution and differs from 2, the effective degrees of freedom
        (JCGM 100:2008 7.2.3, 7.2.4; EA-4/02 M clause 6), in our own wording.
        """
        r = self.rounded(rule, significant_digits)
        m = self.measurand
        unit = f" {m.unit}" if m.unit else ""
        p = exact_probability(self.coverage_probability) * 100
        ptext = f"{p:.2f}".rstrip("0").rstrip(".")
        uc = self.standard_uncertainty
        u_text = (f"{uc:.2g}" if uc and (abs(uc) < 1e-3 or abs(uc) >= 1e6)
                  else round_result(self.estimate, uc, "gum", 2).uncertainty_text)
        head = f"{m.symbol} = ({r.value_text} ± {r.uncertainty_text}){unit}"
        if self.estimate and r.uncertainty:
            head += f" (relative expanded uncertainty {r.uncertainty / abs(self.estimate):.2g})"
        if self.coverage_policy == "fixed":
            how = (f"by the coverage factor k = {self.coverage_factor:.2f} that the laboratory's policy fixes; for a "
                   f"normal distribution this corresponds to a coverage probability of about {ptext} %")
        elif math.isinf(self.effective_dof) or self.effective_dof > 1000:
            many = "" if math.isinf(self.effective_dof) else " (more than 1000 effective degrees of freedom)"
            how = (f"by the coverage factor k = {self.coverage_factor:.2f}{many}, which for a normal distribution "
                   f"gives a coverage probability of about {ptext} %")
        else:
            nu = self.effective_dof
            nu_text = (f"{math.floor(nu)} degrees of freedom (effective degrees of freedom {nu:.1f}, truncated)"
                       if self.budget.dof_rounding == "truncate" and nu != math.floor(nu)
                       else f"{D.fmt_dof(nu)} effective degrees of freedom")
            how = (f"by the coverage factor k = {self.coverage_factor:.2f} from the t-distribution with {nu_text}, "
                   f"for a coverage probability of about {ptext} %")
        second = " (second-order terms included, JCGM 100:2008 5.1.2)" if self.budget.second_order else ""
        text = (f"{head}. The number after ± is the expanded uncertainty U = k·u_c: the combined standard "
                f"uncertainty u_c = {u_text}{unit}{second} multiplied {how}.")
        return text + self.dof_sentence()

    def dof_sentence(self) -> str:
        """Words saying how u_c and its degrees of freedom were obtained ('' for plain Welch-Satterthwaite)."""
        if self.dof_method == "type_a_per_set":
            return (f" The model was evaluated for each of the {self.readings_sets} sets of simultaneous readings, "
                    "and u_c with its degrees of freedom is the Type A evaluation of those values "
                    "(JCGM 100:2008 H.2, second approach).")
        if self.dof_method == "welch_satterthwaite_correlated":
            return (" The effective degrees of freedom come from the Welch–Satterthwaite formula generalised to "
                    "correlated components (Willink, Metrologia 44 (2007) 340).")
        return ""

    # -- forms ----------------------------------------------------------------------
    def __repr__(self) -> str:
        m = self.measurand
        unit = f" {m.unit}" if m.unit else ""
        return (f"<BudgetResult {m.symbol} = {self.estimate:.10g}{unit}, u = {self.standard_uncertainty:.3g}{unit}, "
                f"k = {self.coverage_factor:.2f}, U = {self.expanded_uncertainty:.3g}{unit} "
                f"(p = {self.coverage_probability * 100:g} %)>")

    def table_rows(self) -> list[list[str]]:
        rows = []
        for c in self.contributions:
            rows.append([c.symbol, D.fmt(c.estimate, 10), c.unit, c.description, D.fmt(c.standard_uncertainty, 4),
                         D.fmt_dof(c.dof), D.fmt(c.sensitivity, 5), D.fmt(c.u_contribution, 4),
                         f"{100 * c.variance_share:.1f} %", c.source])
        return rows

    TABLE_COLUMNS = ("symbol", "estimate x_i", "unit", "stated as", "u(x_i)", "nu_i", "c_i", "|c_i| u(x_i)",
                     "share of u_c^2", "source")

    def report(self) -> str:
        """The budget as plain text (table, combined and expanded uncertainty, statement)."""
        m = self.measurand
        import textwrap

        width = D.terminal_width() or 10**9  # not a terminal: no wrapping
        lines = [*textwrap.wrap(f"Model: {self.budget.model.text()}", width, subsequent_indent="       "), "",
                 D.text_table(self.TABLE_COLUMNS, self.table_rows(), width), ""]
        unit = f" {m.unit}" if m.unit else ""
        lines.append(f"{m.symbol} = {self.estimate:.12g}{unit}")
        lines.append(f"u_c = {self.standard_uncertainty:.4g}{unit}   nu_eff = {D.fmt_dof(self.effective_dof)}   "
                     f"k = {self.coverage_factor:.3f}   U = {self.expanded_uncertainty:.4g}{unit}")
        if self.correlation_variance:
            lines.append(f"correlation terms in u_c^2: {self.correlation_variance:.4g}")
        if self.budget.second_order:
            lines.append(f"second-order terms in u_c^2 (JCGM 100:2008 5.1.2): {self.higher_order_variance:.4g}")
        if self.u_second_order is not None:
            if self.budget.second_order:
                lines.append(f"u_c with second-order terms: {self.u_second_order:.4g}{unit} (the statement uses it)")
            else:
                lines.append(f"u_c with second-order terms: {self.u_second_order:.4g}{unit}, for comparison only: the "
                             f"statement uses the first-order u_c = {self.standard_uncertainty:.4g}{unit}; set "
                             "\"second_order\": true in the budget to state the second-order value")
        v = self.validation
        failed = v is not None and getattr(v, "passed", True) is False
        mc = self.monte_carlo
        if mc is not None and failed:
            # JCGM 101:2008 clause 8: a GUM result that fails the check gives way to the Monte Carlo result
            lo, hi = mc.interval
            lines += ["", f"Result (Monte Carlo, JCGM 101; the GUM result below is NOT validated): "
                          f"{m.symbol} = {D.fmt(mc.estimate, 12)}{unit}, u = {D.fmt(mc.standard_uncertainty, 3)}{unit}, "
                          f"{100 * mc.coverage_probability:g} % coverage interval [{D.fmt(lo, 12)}, {D.fmt(hi, 12)}]"
                          f"{unit}, M = {mc.trials}, seed {mc.seed}"]
        lines += ["", ("GUM result, not validated: " if failed else "") + self.statement()]
        if mc is not None and not failed:
            lo, hi = mc.interval
            lines += ["", f"Monte Carlo (JCGM 101): {m.symbol} = {D.fmt(mc.estimate, 12)}{unit}, "
                          f"u = {D.fmt(mc.standard_uncertainty, 3)}{unit}, {100 * mc.coverage_probability:g} % "
                          f"coverage interval [{D.fmt(lo, 12)}, {D.fmt(hi, 12)}]{unit}, M = {mc.trials}, seed {mc.seed}"]
        if v is not None:
            passed = getattr(v, "passed", False)
            word = {True: "validated", False: "NOT validated"}.get(passed, "undecided")
            lines.append(f"Validation (JCGM 101 clause 8): GUM result {word}; d_low = {D.fmt(v.d_low, 3)}{unit}, "
                         f"d_high = {D.fmt(v.d_high, 3)}{unit}, tolerance delta = {D.fmt(v.delta, 3)}{unit}.")
            lines += textwrap.wrap(v.advice, width)
        for w in self.warnings:  # a note records a choice made; a warning asks for attention
            label = "note" if is_note(w) else "warning"
            lines += textwrap.wrap(f"{label}: {w}", width, subsequent_indent="  ")
        out = []
        for line in lines:
            # the table keeps its own layout; every other line wraps at the terminal's width
            out += [line] if "\n" in line or len(line) <= width else textwrap.wrap(line, width)
        return "\n".join(out)

    def to_dataframe(self):
        """The budget table as a pandas DataFrame (needs pandas, which fieldbudget does not require)."""
        try:
            import pandas as pd
        except ImportError:
            from ..errors import InputError

            raise InputError("to_dataframe", "pandas", "installed (pip install pandas)") from None
        return pd.DataFrame([c.to_dict() for c in self.contributions]).set_index("symbol")

    def _repr_html_(self) -> str:
        m = self.measurand
        unit = f" {m.unit}" if m.unit else ""
        table = D.html_table(self.TABLE_COLUMNS, self.table_rows(), caption=f"Model: {self.budget.model.text()}")
        summary = (f"<p class='fb-summary'>{D.escape(m.symbol)} = {D.escape(D.fmt(self.estimate, 12))}{D.escape(unit)}; "
                   f"<span class='fb-uc'>u<sub>c</sub> = {D.escape(D.fmt(self.standard_uncertainty, 4))}"
                   f"{D.escape(unit)}</span>; ν<sub>eff</sub> = {D.escape(D.fmt_dof(self.effective_dof))}; "
                   f"k = {self.coverage_factor:.3f}; U = {D.escape(D.fmt(self.expanded_uncertainty, 4))}"
                   f"{D.escape(unit)}</p>")
        parts = [f"<div class='fb-result'>{table}{summary}<p class='fb-statement'>{D.escape(self.statement())}</p>"]
        for obj in (self.monte_carlo, self.validation):
            if obj is not None and hasattr(obj, "_repr_html_"):
                parts.append(obj._repr_html_())
        if self.warnings:
            parts.append("<ul class='fb-warnings'>" + "".join(f"<li>{D.escape(w)}</li>" for w in self.warnings)
                         + "</ul>")
        parts.append("</div>")
        return "".join(parts)

    def to_dict(self) -> dict:
        """Plain JSON types; the object ``evaluate --json`` prints."""
        d = {
            "measurand": self.measurand.to_dict(),
            "model": self.budget.model.text(),
            "value": self.estimate,
            "u": self.standard_uncertainty,
            "nu_eff": _nu(self.effective_dof),
            "k": self.coverage_factor,
            "U": self.expanded_uncertainty,
            "coverage_probability": self.coverage_probability,
            "coverage_policy": self.coverage_policy,
            "relative_U": self.relative_expanded_uncertainty if math.isfinite(self.relative_expanded_uncertainty)
            else None,
            "contributions": [c.to_dict() for c in self.contributions],
            "correlation_variance": self.correlation_variance,
            "higher_order_variance": self.higher_order_variance,
            "sensitivity_method": self.sensitivity_method,
            "dof_method": self.dof_method,
            "statement_u": "second_order" if self.budget.second_order else "first_order",
            "rounded": self.rounded().to_dict(),
            "statement": self.statement(),
            "warnings": list(self.warnings),
        }
        if "codata" in self.budget.metadata:
            d["codata"] = self.budget.metadata["codata"]
        if self.u_second_order is not None:
            d["u_second_order"] = self.u_second_order
        if self.second_order_method not in (None, 1):  # method 1 wrote no key: its records keep their form
            d["second_order_method"] = self.second_order_method
        if self.readings_sets is not None:
            d["readings_sets"] = self.readings_sets
        if self.monte_carlo is not None:
            mc = dict(self.monte_carlo.to_dict())  # type: ignore[attr-defined]
            if self.validation is not None:
                v = self.validation.to_dict()  # type: ignore[attr-defined]
                mc["validated"] = v.get("validated")  # True, False, or None when Monte Carlo noise cannot decide
                mc["validation"] = v
            d["mc"] = mc
        return d


@dataclass(frozen=True)
class VectorResult:
    """Several measurands from one model: per-output results and their covariance (JCGM 100:2008 H.2)."""

    budget: Budget = field(repr=False)
    results: tuple[BudgetResult, ...]
    covariance_: tuple[tuple[float, ...], ...]
    warnings: tuple[str, ...] = ()

    @property
    def covariance(self) -> np.ndarray:
        return np.array(self.covariance_)

    @property
    def correlation(self) -> np.ndarray:
        return correlation_from_covariance(self.covariance)

    @property
    def outputs(self) -> tuple[str, ...]:
        return tuple(r.measurand.symbol for r in self.results)

    def with_monte_carlo(self, monte_carlo: object, validations: tuple | None = None) -> VectorResult:
        """A copy whose per-output results carry their Monte Carlo result and validation.

        ``monte_carlo`` is indexable by output symbol (``MonteCarloVectorResult``).
        """
        validations = validations or (None,) * len(self.results)
        results = tuple(r.with_monte_carlo(monte_carlo[r.measurand.symbol], v)  # type: ignore[index]
                        for r, v in zip(self.results, validations))
        return replace(self, results=results)

    def __getitem__(self, symbol: str) -> BudgetResult:
        for r in self.results:
            if r.measurand.symbol == symbol:
                return r
        raise KeyError(symbol)

    def __repr__(self) -> str:
        parts = ", ".join(f"{r.measurand.symbol} = {r.estimate:.6g} ± {r.standard_uncertainty:.2g}" for r in self.results)
        return f"<VectorResult {parts}>"

    def report(self) -> str:
        out = [r.report() for r in self.results]
        corr = self.correlation
        rows = [[o, *[f"{v:.4f}" for v in row]] for o, row in zip(self.outputs, corr)]
        out.append("Correlation coefficients of the outputs:\n" + D.text_table(("", *self.outputs), rows))
        return "\n\n".join(out)

    def _repr_html_(self) -> str:
        corr = self.correlation
        rows = [[o, *[f"{v:.4f}" for v in row]] for o, row in zip(self.outputs, corr)]
        return ("<div class='fb-vector'>" + "".join(r._repr_html_() for r in self.results)
                + D.html_table(("", *self.outputs), rows, caption="correlation coefficients of the outputs")
                + "</div>")

    def to_dict(self) -> dict:
        return {"outputs": [r.to_dict() for r in self.results], "symbols": list(self.outputs),
                "covariance": [list(r) for r in self.covariance_],
                "correlation": self.correlation.tolist(), "warnings": list(self.warnings)}
