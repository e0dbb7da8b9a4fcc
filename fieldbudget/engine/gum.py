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
  nu_eff = u_c^4 / sum_i u_i(y)^4 / nu_i (G.2b, eq. G.2b), which assumes
  independent inputs.  With correlated inputs the components are grouped into
  sets that are correlated among themselves and independent of the others
  (the connected sets of the correlation matrix); each set g contributes the
  variance u_g^2 = sum_{i,j in g} c_i c_j u(x_i, x_j) with one number of
  degrees of freedom nu_g, and nu_eff = u_c^4 / sum_g u_g^4 / nu_g, the
  generalisation of Welch-Satterthwaite to correlated components (Willink,
  Metrologia 44 (2007) 340).  For one set of simultaneous readings (a sample
  covariance matrix with n - 1 degrees of freedom) it is exact: c^T S c is
  then a scaled chi-square with n - 1 degrees of freedom.  It reduces to G.2b
  when every set has one member.  A set whose members carry different nu_i
  is given the smallest of them (the formula needs one value per set), and
  the result says so;
- an output whose inputs are all readings of one simultaneous group is, by
  default, evaluated as JCGM 100:2008 H.2 does in its second approach: the
  output is computed for each of the n sets of readings and evaluated by
  Type A (mean, s/sqrt(n), n - 1 degrees of freedom);
- k from the t-distribution at p and nu_eff (G.3, G.4), or a fixed k by the
  lab's policy; U = k u_c (6.2.1).

Several outputs give their covariance u(y_j, y_l) = c_j V c_l^T (H.2).
"""

from __future__ import annotations

import math
import warnings as _warnings
from collections.abc import Mapping

import numpy as np

from ..errors import Finding, InputError, ModelEvaluationError
from ._runtime import collector_paused
from .budget import Budget
from .coverage import coverage_factor
from .results import BudgetResult, Contribution, VectorResult

__all__ = ["evaluate", "sensitivities", "rebase", "correlated_sets", "welch_satterthwaite_correlated",
           "DOF_METHODS"]

#: How a result's degrees of freedom were found (``BudgetResult.dof_method``).
DOF_METHODS = ("welch_satterthwaite", "welch_satterthwaite_correlated", "type_a_per_set")


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


def correlated_sets(R: np.ndarray) -> list[tuple[int, ...]]:
    """The connected sets of inputs under the correlation matrix ``R`` (singletons included), in input order.

    Graph components by ``scipy.sparse.csgraph.connected_components``; two inputs are linked when their
    correlation coefficient is not zero.
    """
    from scipy.sparse import csr_array
    from scipy.sparse.csgraph import connected_components

    n = len(R)
    # the links above the diagonal as a sparse graph whose rows are written directly: a dense matrix would
    # go through scipy's dense-to-sparse conversion, and float64 data with int32 indices is what the
    # traversal uses without converting again
    upper = np.triu(R != 0, 1)
    starts = np.zeros(n + 1, dtype=np.int32)
    np.cumsum(np.count_nonzero(upper, axis=1), out=starts[1:])
    columns = (np.flatnonzero(upper) % n).astype(np.int32)
    graph = csr_array((np.ones(len(columns)), columns, starts), shape=(n, n))
    _, labels = connected_components(graph, directed=False)
    sets: dict[int, list[int]] = {}
    for i, label in enumerate(labels):
        sets.setdefault(int(label), []).append(i)
    return sorted((tuple(v) for v in sets.values()), key=lambda t: t[0])


def welch_satterthwaite_correlated(uc: float, c: np.ndarray, V: np.ndarray, nu: np.ndarray,
                                   sets: list[tuple[int, ...]]) -> tuple[float, tuple[tuple[int, ...], ...]]:
    """nu_eff = u_c^4 / sum_g u_g^4 / nu_g over correlated sets g (Willink, Metrologia 44 (2007) 340).

    u_g^2 = c_g V_g c_g^T is the set's share of the combined variance; nu_g
    the set's degrees of freedom (the smallest nu_i of its members when they
    differ; those sets are returned as index tuples).  With singleton sets this is G.2b.
    """
    if uc == 0:
        return math.inf, ()
    den = 0.0
    notes = []
    for g in sets:
        idx = list(g)
        if len(idx) == len(c):  # one set of every input: V itself, not an n x n copy of it (same numbers)
            ug2 = float(c @ V @ c)
        else:
            ug2 = float(c[idx] @ V[np.ix_(idx, idx)] @ c[idx])
        if ug2 <= 0:
            continue
        nus = nu[idx]
        finite = nus[np.isfinite(nus)]
        if finite.size == 0:
            continue
        nu_g = float(finite.min())
        if len(g) > 1 and (finite.size != nus.size or np.ptp(finite) > 0):
            notes.append(tuple(idx))
        den += ug2 * ug2 / nu_g
    return (math.inf if den == 0 else uc ** 4 / den), tuple(notes)


def _per_set_outputs(budget: Budget) -> tuple[np.ndarray, tuple[str, ...]] | None:
    """Y[j, k]: output j computed from the k-th set of simultaneous readings (JCGM 100:2008 H.2, 2nd approach).

    Returns ``(Y, group)`` when every input with a non-zero uncertainty used by
    any output belongs to one simultaneous group, else ``None``.
    """
    if budget.readings_evaluation != "per_set" or not budget.simultaneous or budget.correlations:
        return None
    model = budget.model
    used = set(model.symbols)
    uncertain = {q.symbol for q in budget.inputs if q.symbol in used and q.standard_uncertainty > 0}
    for group in budget.simultaneous:
        if uncertain and uncertain <= set(group):
            x = _estimates(budget)
            readings = {s: budget.input(s).distribution.readings for s in group}
            n = len(next(iter(readings.values())))
            Y = np.empty((len(model.outputs), n))
            for k in range(n):
                values = dict(x)
                for s in group:
                    values[s] = readings[s][k]
                Y[:, k] = model.evaluate_float(values)
            return Y, tuple(group)
    return None


def evaluate(budget: Budget, *, second_order: bool = False) -> BudgetResult | VectorResult:
    """Evaluate ``budget`` by the GUM law of propagation.

    Returns a :class:`BudgetResult` for a one-output model, a
    :class:`VectorResult` (results plus covariance) for several outputs.
    ``second_order=True`` adds u_c with the second-order terms of
    JCGM 100:2008 5.1.2 (uncorrelated inputs only) as ``u_second_order``, for
    comparison: the statement still uses the first-order u_c.  A budget with
    ``second_order=True`` reports that u_c as its combined standard
    uncertainty, with the second-order part as ``higher_order_variance``.

    Units are checked first (:mod:`fieldbudget.engine.dimensions`) unless the
    budget says ``units="unchecked"``; inputs in a scaled unit of a dimension
    used elsewhere are converted, and the result's warnings say so.
    """
    if not isinstance(budget, Budget):
        raise InputError("budget", budget, "a Budget")
    # no garbage collection during the burst of small objects (engine._runtime).  The products below keep
    # numpy's own threading: a result computed on one thread could differ in its last bit from the same
    # budget's earlier records, which must verify exactly
    with collector_paused():
        return _evaluate(budget, second_order)


def _evaluate(budget: Budget, second_order: bool) -> BudgetResult | VectorResult:
    from .dimensions import prepare

    budget, unit_notes = prepare(budget)
    C, y, method = sensitivities(budget)
    u = np.array([q.standard_uncertainty for q in budget.inputs])
    nu = np.array([q.dof for q in budget.inputs])
    R = V = None
    with np.errstate(all="ignore"):
        if budget.has_correlations:
            R = budget._shared_correlation_matrix()  # read-only, not copied
            V = np.outer(u, u)
            V *= R  # the numbers of R * outer(u, u), one n x n array fewer
            cov = C @ V @ C.T
        else:
            # V is diagonal: no n x n matrix (10 000 inputs would need 800 MB), the same numbers as C V C^T
            cov = (C * (u * u)) @ C.T
    if not np.all(np.isfinite(cov)) or not np.all(np.isfinite(C)):
        raise ModelEvaluationError(
            f"model {budget.model.text()!r}: the combined variance is not a finite number (a sensitivity "
            "coefficient or an uncertainty is too large for floating point)")
    results = []
    common: list[str] = list(unit_notes)
    sets = correlated_sets(R) if budget.has_correlations else [(i,) for i in range(len(u))]
    per_set = _per_set_outputs(budget)
    n_sets = None
    y_per_set = None
    if per_set is not None:
        Y, group = per_set
        n_sets = Y.shape[1]
        y_per_set = Y.mean(axis=1)
        cov = np.atleast_2d(np.cov(Y)) / n_sets
        common.append(f"every input of the model is a reading of the simultaneous group {', '.join(group)}: the "
                      f"output was computed for each of the {n_sets} sets of readings and evaluated by Type A "
                      "(JCGM 100:2008 H.2, second approach)")
    from .second_order import method_in_use

    u2o: float | None = None
    u2o_method = method_in_use(budget)  # recorded even without second-order terms: validation may compute them
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
        warn = list(common)
        if per_set is not None:
            nu_eff = float(n_sets - 1) if uc > 0 else math.inf
            dof_method = "type_a_per_set"
        elif budget.has_correlations:
            nu_eff, mixed = welch_satterthwaite_correlated(uc, c, V, nu, sets)
            dof_method = "welch_satterthwaite_correlated"
            for m in mixed:
                names = ", ".join(budget.inputs[i].symbol for i in m)
                warn.append(f"the correlated inputs {names} carry different degrees of freedom; the generalised "
                            "Welch-Satterthwaite formula gives the set the smallest of them")
        else:
            nu_eff = _welch_satterthwaite(uc, ui, nu)
            dof_method = "welch_satterthwaite"
        if nu_eff < 1:
            warn.append(f"the effective degrees of freedom ({nu_eff:.3g}) are below 1; k is taken at 1 degree of "
                        "freedom, the least the t-distribution's coverage factor is defined for here")
        if budget.coverage_policy == "fixed":
            k = float(budget.coverage_factor)
        else:
            k = coverage_factor(budget.coverage_probability, max(nu_eff, 1.0), budget.dof_rounding)
        if uc == 0:
            warn.append("the combined standard uncertainty is zero at first order: the law of propagation sees no "
                        "contribution here; check with Monte Carlo or second-order terms (JCGM 100:2008 5.1.2)")
        used = (set(budget.model.expressions[j].symbols) if budget.model.expressions is not None
                else set(budget.model.function_symbols))
        for q, ci in zip(budget.inputs, c):
            if ci == 0 and q.standard_uncertainty > 0 and q.symbol in used:
                if budget.second_order:  # handled: a note on the choice, not a warning to act on
                    warn.append(Finding(f"input {q.symbol!r} has zero first-order sensitivity at its estimate; u_c "
                                        "includes the second-order terms (JCGM 100:2008 5.1.2), which carry its "
                                        "uncertainty", code="gum.zero_sensitivity_second_order",
                                        key=f"inputs.{q.symbol}", values={"symbol": q.symbol}, severity="note"))
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
        estimate = float(y_per_set[j]) if y_per_set is not None else float(y[j])
        results.append(BudgetResult(
            budget=budget, measurand=ms, estimate=estimate, standard_uncertainty=uc, effective_dof=nu_eff,
            coverage_factor=k, coverage_probability=budget.coverage_probability, expanded_uncertainty=k * uc,
            contributions=contribs, correlation_variance=corr_var, higher_order_variance=higher,
            sensitivity_method=method,
            warnings=tuple(warn), u_second_order=u2o, dof_method=dof_method, readings_sets=n_sets,
            second_order_method=u2o_method,
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
    from ..constants import DERIVED_NAMES, lookup, names
    from .distributions import Normal

    codata_names = set(names(edition))
    inputs = []
    for q in budget.inputs:
        # references to non-CODATA tables (IUPAC, water data) do not change with the CODATA edition
        if q.reference and (q.reference in codata_names or _is_codata_name(q.reference, edition)):
            rv = lookup(q.reference, edition=edition)
            # a ratio derived from CODATA entries (the deuteron's mu_d/h) is re-derived and says so
            derived = rv.name in DERIVED_NAMES
            q = q.replace(estimate=rv.value, distribution=Normal(u=rv.uncertainty),
                          source=f"{rv.edition}: {rv.name} ({rv.source})" if derived else
                          f"CODATA {rv.edition}: {rv.name}")
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
