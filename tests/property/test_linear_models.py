"""Property tests of the law of propagation (JCGM 100:2008 5.1.2, eq. 10) with hypothesis.

Invariants: for a linear model with uncorrelated inputs u_c equals the root-sum-square computed
independently with numpy; rescaling every input's unit (and the coefficients) rescales u_c exactly;
the contributions' variances sum to u_c^2 when there are no correlations.
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.engine import Budget, InputQuantity, evaluate

coef = st.floats(-1e3, 1e3, allow_nan=False).filter(lambda c: abs(c) > 1e-6)
unc = st.floats(1e-9, 1e3, allow_nan=False)
est = st.floats(-1e6, 1e6, allow_nan=False)
rows = st.lists(st.tuples(coef, est, unc), min_size=1, max_size=12)


def _linear(rows, scale=1.0):
    expr = " + ".join(f"({c!r})*x{i}" for i, (c, _, _) in enumerate(rows))
    inputs = tuple(InputQuantity.normal(f"x{i}", x * scale, u * scale) for i, (_, x, u) in enumerate(rows))
    return Budget(model=expr, inputs=inputs)


@settings(max_examples=60, deadline=None)
@given(rows)
def test_linear_model_equals_numpy_rss(rows):
    r = evaluate(_linear(rows))
    c = np.array([c for c, _, _ in rows])
    u = np.array([u for _, _, u in rows])
    assert np.isclose(r.standard_uncertainty, np.sqrt(np.sum((c * u) ** 2)), rtol=1e-12)
    assert np.isclose(r.estimate, float(np.dot(c, [x for _, x, _ in rows])), rtol=1e-9, atol=1e-6)


@settings(max_examples=40, deadline=None)
@given(rows, st.sampled_from([1e-6, 1e-3, 1e3, 1e6]))
def test_rescaling_units_rescales_u(rows, scale):
    a = evaluate(_linear(rows)).standard_uncertainty
    b = evaluate(_linear(rows, scale)).standard_uncertainty
    assert np.isclose(b, a * scale, rtol=1e-12)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(est.filter(lambda x: abs(x) > 1e-3), unc), min_size=2, max_size=8))
def test_contribution_variances_sum_to_uc2_for_a_product(rows):
    # a nonlinear (product) model: the identity holds for any model with uncorrelated inputs
    expr = "*".join(f"x{i}" for i in range(len(rows)))
    b = Budget(model=expr, inputs=tuple(InputQuantity.normal(f"x{i}", x, u) for i, (x, u) in enumerate(rows)))
    r = evaluate(b)
    total = sum(c.u_contribution**2 for c in r.contributions)
    assert np.isclose(total, r.standard_uncertainty**2, rtol=1e-10)
    if r.standard_uncertainty > 0:
        assert np.isclose(sum(c.variance_share for c in r.contributions), 1.0, rtol=1e-10)
