"""The GUM law of propagation of uncertainty (JCGM 100:2008 clause 5, Annex G).

For y = f(x_1, ..., x_N):

- sensitivity coefficients c_i = df/dx_i at the estimates (5.1.3), exact
  (automatic differentiation by the ``uncertainties`` package) for expression
  models, and for function models that accept ``uncertainties`` numbers;
  central differences otherwise (the result says which);
- u_c^2(y) = sum_i sum_j c_i c_j u(x_i) u(x_j) r(x_i, x_j) (5.2.2, eq. 16),
  computed as c V c^T with the inputs' covariance V.  Following a known trap,
  c_i always comes from *independent* ``uncertainties`` variables (one per
  input) and is combined with the user's covariance here, never from
  ``uncertainties.correlated_values``, whose derivatives are keyed by internal
  variables;
- contributions u_i(y) = |c_i| u(x_i) and their share (c_i u(x_i))^2 / u_c^2;
- effective degrees of freedom by Welch-Satterthwaite,
  nu_eff = u_c^4 / sum_i u_i(y)^4 / nu_i (G.2b, eq. G.2b).  GUM G.4 assumes
  independent inputs; when inputs are correlated fieldbudget keeps the same
  formula with the full u_c^4 (correlation terms included) in the numerator
  and says so in the result's warnings;
- k from the t-distribution at p and nu_eff (G.3, G.4), or a fixed k by the
  lab's policy; U = k u_c (6.2.1).

Several outputs give their covariance u(y_j, y_l) = c_j V c_l^T (H.2).
"""

from __future__ import annotations

import math
import warnings as _warnings
from collections.abc import Mapping

import numpy as np

from ..errors import InputError, ModelEvaluationError
from .budget import Budget
from .coverage import coverage_factor
from .results import BudgetResult, Contribution, VectorResult

__all__ = ["evaluate", "sensitivities", "rebase"]


def _estimates(budget: Budget) -> dict[str, float]:
    return {q.symbol: q.estimate for q in budget.inputs}


def sensitivities(budget: Budget) -> tuple[np.ndarray, tuple[float, ...], str]:
    """(C, y, method): C[j, i] = dy_j/dx_i at the estimates, the outputs y, and how C was found."""
    model = budget.model
    x = _estimates(budget)
    y = model.evaluate_float(x)
    syms = budget.symbols
    if model.is_expression or model.function is not None:
        from uncertainties import ufloat

        with _warnings.catch_warnings():
            _warnings.simplefilter("ignore")
            # std_dev 1: derivatives do not depend on it, and it avoids the zero-std warning
            uvars = {s: ufloat(x[s], 1.0, tag=s) for s in syms}
            try:
                outs = model.evaluate(uvars, backend="umath")
                C = np.zeros((len(model.outputs), len(syms)))
                ok = True
                for j, out in enumerate(outs):
                    ders = getattr(out, "derivatives", None)
                    if ders is None:
                        if isinstance(out, (int, float)):
                            continue  # constant output: all sensitivities zero
                        ok = False
                        break
                    for i, s in enumerate(syms):
                        C[j, i] = float(ders.get(uvars[s], 0.0))
                if ok:
                    return C, y, "exact derivatives (automatic differentiation)"
            except Exception:  # noqa: BLE001 - function models that refuse ufloats fall through
                if model.is_expression:
                    raise
    return _central_differences(budget, x, y), y, "central differences"


def _central_differences(budget: Budget, x: Mapping[str, float], y: tuple[float, ...]) -> np.ndarray:
    syms = budget.symbols
    C = np.zeros((len(y), len(syms)))
    for i, q in enumerate(budget.inputs):
        # step: a small fraction of u(x_i), or of |x_i| when u is zero
        h = 1e-4 * q.standard_uncertainty or 1e-7 * max(abs(q.estimate), 1.0)
        up, dn = dict(x), dict(x)
        up[q.symbol] += h
        dn[q.symbol] -= h
        C[:, i] = (np.array(budget.model.evaluate_float(up)) - np.array(budget.model.evaluate_float(dn))) / (2 * h)
    return C


def _welch_satterthwaite(uc: float, ui: np.ndarray, nu: np.ndarray) -> float:
    """nu_eff = u_c^4 / sum u_i^4 / nu_i (JCGM 100:2008 G.2b); infinite terms drop out."""
    finite = np.isfinite(nu) & (ui > 0)
    if uc == 0 or not finite.any():
        return math.inf
    den = float(np.sum(ui[finite] ** 4 / nu[finite]))
    return math.inf if den == 0 else uc ** 4 / den


def evaluate(budget: Budget, *, second_order: bool = False) -> BudgetResult | VectorResult:
    """Evaluate ``budget`` by the GUM law of propagation.

    Returns a :class:`BudgetResult` for a one-output model, a
    :class:`VectorResult` (results plus covariance) for several outputs.
    ``second_order=True`` adds u_c with the second-order terms of
    JCGM 100:2008 5.1.2 (uncorrelated inputs only) as ``u_second_order``;
    a budget with ``second_order=True`` reports that u_c as its combined
    standard uncertainty, with the second-order part as
    ``higher_order_variance``.
    """
    if not isinstance(budget, Budget):
        raise InputError("budget", budget, "a Budget")
    C, y, method = sensitivities(budget)
    u = np.array([q.standard_uncertainty for q in budget.inputs])
    nu = np.array([q.dof for q in budget.inputs])
    R = budget.correlation_matrix()
    with np.errstate(all="ignore"):
        V = R * np.outer(u, u)
        cov = C @ V @ C.T
    if not np.all(np.isfinite(cov)) or not np.all(np.isfinite(C)):
        raise ModelEvaluationError(
            f"model {budget.model.text()!r}: the combined variance is not a finite number (a sensitivity "
            "coefficient or an uncertainty is too large for floating point)")
    results = []
    common: list[str] = []
    if budget.has_correlations:
        common.append("inputs are correlated: the effective degrees of freedom use Welch-Satterthwaite with the "
                      "full combined variance (JCGM 100:2008 G.4 assumes independent inputs)")
    u2o: float | None = None
    if second_order or budget.second_order:
        from .second_order import combined_uncertainty as _second_order

        if len(budget.model.outputs) != 1:
            raise InputError("second_order", True, "used with a one-output model")
        u2o = float(_second_order(budget))
    for j, ms in enumerate(budget.measurands):
        c = C[j]
        uc2 = float(cov[j, j])
        ui = np.abs(c) * u
        plain = float(np.sum(ui ** 2))
        corr_var = uc2 - plain if budget.has_correlations else 0.0
        higher = 0.0
        if budget.second_order and u2o is not None:
            # JCGM 100:2008 5.1.2 note: the reported u_c includes the second-order terms
            higher = u2o ** 2 - uc2
            uc2 = u2o ** 2
        uc = math.sqrt(max(uc2, 0.0))
        shares = ui ** 2 / uc2 if uc2 > 0 else np.zeros_like(ui)
        nu_eff = _welch_satterthwaite(uc, ui, nu)
        if budget.coverage_policy == "fixed":
            k = float(budget.coverage_factor)
        else:
            k = coverage_factor(budget.coverage_probability, nu_eff, budget.dof_rounding)
        warn = list(common)
        if uc == 0:
            warn.append("the combined standard uncertainty is zero at first order: the law of propagation sees no "
                        "contribution here; check with Monte Carlo or second-order terms (JCGM 100:2008 5.1.2)")
        used = (set(budget.model.expressions[j].symbols) if budget.model.expressions is not None
                else set(budget.model.function_symbols))
        for q, ci in zip(budget.inputs, c):
            if ci == 0 and q.standard_uncertainty > 0 and q.symbol in used:
                if budget.second_order:
                    warn.append(f"input {q.symbol!r} has zero first-order sensitivity at its estimate; u_c includes "
                                "the second-order terms (JCGM 100:2008 5.1.2), which carry its uncertainty")
                else:
                    warn.append(f"input {q.symbol!r} has zero first-order sensitivity at its estimate, so "
                                "first-order propagation ignores its uncertainty; if the model is nonlinear in it "
                                "(e.g. a cosine at 0), first-order propagation underestimates u: check with Monte "
                                "Carlo or second-order terms")
        contribs = tuple(
            Contribution(
                symbol=q.symbol, estimate=q.estimate, unit=q.unit, distribution=q.kind,
                description=q.distribution.describe(), standard_uncertainty=float(u[i]), dof=float(nu[i]),
                sensitivity=float(c[i]), u_contribution=float(ui[i]), variance_share=float(shares[i]),
                source=q.source, evaluation_type=q.evaluation_type,
            )
            for i, q in enumerate(budget.inputs)
        )
        results.append(BudgetResult(
            budget=budget, measurand=ms, estimate=float(y[j]), standard_uncertainty=uc, effective_dof=nu_eff,
            coverage_factor=k, coverage_probability=budget.coverage_probability, expanded_uncertainty=k * uc,
            contributions=contribs, correlation_variance=corr_var, higher_order_variance=higher,
            sensitivity_method=method,
            warnings=tuple(warn), u_second_order=u2o,
        ))
    if len(results) == 1:
        return results[0]
    return VectorResult(budget=budget, results=tuple(results), covariance_=tuple(map(tuple, cov.tolist())),
                        warnings=tuple(common))


def rebase(budget: Budget, edition: int) -> Budget:
    """The same budget with every CODATA-referenced input looked up in ``edition``.

    An input whose ``reference`` names a CODATA value gets that edition's value
    and standard uncertainty (normal), in the reference's own unit; inputs
    referring to other tables (IUPAC, water data) stay as they are.  The
    budget's ``metadata['codata']`` records the edition.
    """
    from ..constants import lookup, names
    from .distributions import Normal

    codata_names = set(names(edition))
    inputs = []
    for q in budget.inputs:
        # references to non-CODATA tables (IUPAC, water data) do not change with the CODATA edition
        if q.reference and (q.reference in codata_names or _is_codata_name(q.reference, edition)):
            rv = lookup(q.reference, edition=edition)
            q = q.replace(estimate=rv.value, distribution=Normal(u=rv.uncertainty),
                          source=f"CODATA {rv.edition}: {rv.name}")
        inputs.append(q)
    md = dict(budget.metadata)
    md["codata"] = edition
    return budget.replace(inputs=tuple(inputs), metadata=md)


def _is_codata_name(name: str, edition: int) -> bool:
    from ..constants import lookup
    from ..errors import UnknownConstantError

    try:
        lookup(name, edition=edition)
    except UnknownConstantError:
        return False
    return True
