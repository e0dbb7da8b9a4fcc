"""Unit tests of the engine: forms of results, budget files, function models, correlations."""

from __future__ import annotations

import json
import math
from html.parser import HTMLParser

import numpy as np
import pytest

from fieldbudget.engine import (
    Budget,
    CurvilinearTrapezoid,
    InputQuantity,
    Measurand,
    Model,
    evaluate,
)
from fieldbudget.files.budget_file import load_budget, save_budget


class _Cells(HTMLParser):
    def __init__(self):
        super().__init__()
        self.cells, self._in = [], False

    def handle_starttag(self, tag, attrs):
        self._in = tag in ("td", "th")

    def handle_data(self, data):
        if self._in:
            self.cells.append(data)


def test_distribution_divisors():
    # GUM 4.3.7 (sqrt 3), 4.3.9 (sqrt 6); arcsine sqrt 2 (EA-4/02); curvilinear trapezoid JCGM 101 6.4.3
    assert InputQuantity.rectangular("a", 0, 3).standard_uncertainty == pytest.approx(3 / math.sqrt(3))
    assert InputQuantity.triangular("a", 0, 3).standard_uncertainty == pytest.approx(3 / math.sqrt(6))
    assert InputQuantity.arcsine("a", 0, 3).standard_uncertainty == pytest.approx(3 / math.sqrt(2))
    assert CurvilinearTrapezoid(2.0, 0.3).standard_uncertainty == pytest.approx(math.sqrt(4 / 3 + 0.09 / 9))
    assert InputQuantity.expanded("a", 0, 0.075, 3).standard_uncertainty == pytest.approx(0.025)


def test_type_a_mean_sdom_and_dof():
    q = InputQuantity.from_readings("f", [1.0, 2.0, 3.0, 4.0])
    data = np.array([1.0, 2.0, 3.0, 4.0])
    assert q.estimate == 2.5 and q.dof == 3 and q.evaluation_type == "A"
    assert q.standard_uncertainty == pytest.approx(data.std(ddof=1) / 2)  # numpy: s / sqrt(n)


def test_result_forms(power_budget):
    r = evaluate(power_budget)
    assert repr(r) == "<BudgetResult P = 1 W, u = 0.00231 W, k = 2.00, U = 0.00462 W (p = 95.45 %)>"
    d = r.to_dict()
    json.dumps(d)  # plain types only
    assert d["nu_eff"] is None and d["k"] == 2.0 and [c["symbol"] for c in d["contributions"]] == ["V", "R"]
    assert d["statement"].startswith("P = (1.0000 ± 0.0046) W (relative expanded uncertainty 0.0046).")
    cells = _Cells()
    cells.feed(r._repr_html_())
    assert "u(x_i)" in cells.cells and "voltmeter cert. FB-V-001" in cells.cells


def test_html_escapes_user_text():
    b = Budget(model="a", inputs=(InputQuantity.normal("a", 1, 0.1, source="<b>&cert"),))
    html = evaluate(b)._repr_html_()
    assert "<b>&cert" not in html and "&lt;b&gt;&amp;cert" in html


def test_budget_file_round_trip(tmp_path, power_budget):
    p = save_budget(power_budget.replace(correlations=()), tmp_path / "p.json")
    again = load_budget(p)
    assert again.to_dict() == power_budget.to_dict()
    assert evaluate(again).to_dict() == evaluate(power_budget).to_dict()


def test_function_model_matches_expression(power_budget):
    def power(V, R):
        return V**2 / R

    fb = power_budget.replace(model=Model.from_function(power), measurand=Measurand("P", "W"))
    a, b = evaluate(power_budget), evaluate(fb)
    assert b.standard_uncertainty == pytest.approx(a.standard_uncertainty, rel=1e-12)


def test_numpy_only_function_model_uses_central_differences(power_budget):
    def power(V, R):
        return float(np.square(V) / R) if np.ndim(V) == 0 else np.square(V) / R

    fb = power_budget.replace(model=Model.from_function(power), measurand=Measurand("P", "W"))
    r = evaluate(fb)
    assert r.standard_uncertainty == pytest.approx(evaluate(power_budget).standard_uncertainty, rel=1e-6)


def test_correlated_inputs_use_the_full_covariance():
    # y = a * b, r(a,b) = 0.5: u^2 = (b ua)^2 + (a ub)^2 + 2 b a ua ub r (GUM 5.2.2, eq. 16)
    b = Budget(model="a*b", inputs=(InputQuantity.normal("a", 2.0, 0.1), InputQuantity.normal("b", 3.0, 0.2)),
               correlations=(("a", "b", 0.5),))
    r = evaluate(b)
    expected = math.sqrt((3 * 0.1) ** 2 + (2 * 0.2) ** 2 + 2 * 3 * 2 * 0.1 * 0.2 * 0.5)
    assert r.standard_uncertainty == pytest.approx(expected, rel=1e-12)
    assert r.correlation_variance == pytest.approx(2 * 3 * 2 * 0.1 * 0.2 * 0.5)
    assert r.dof_method == "welch_satterthwaite_correlated" and "correlated components" in r.statement()


def test_fixed_coverage_policy():
    b = Budget(model="a", inputs=(InputQuantity.normal("a", 1, 0.1, dof=3),), coverage_policy="fixed")
    r = evaluate(b)
    assert r.coverage_factor == 2.0 and "laboratory's policy" in r.statement()
    t = evaluate(b.replace(coverage_policy="t"))
    assert round(t.coverage_factor, 2) == 3.31  # JCGM 100 Table G.2: t_95.45(3) = 3.31


def test_to_dataframe(power_budget):
    pd = pytest.importorskip("pandas")
    df = evaluate(power_budget).to_dataframe()
    assert isinstance(df, pd.DataFrame) and list(df.index) == ["V", "R"]
    assert df.loc["V", "u_contribution"] == pytest.approx(0.002)


def test_budget_and_result_pickle_and_deepcopy(power_budget):
    import copy
    import pickle

    b = power_budget.replace(metadata={"codata": 2022})
    r = evaluate(b)
    assert pickle.loads(pickle.dumps(b)).to_dict() == b.to_dict()
    assert copy.deepcopy(r).to_dict() == r.to_dict()
    with pytest.raises(TypeError, match="read-only"):
        b.metadata["codata"] = 2018


def test_vector_warnings_concern_only_the_output_s_own_inputs():
    b = Budget(model=Model.from_expressions({"y1": "a + b", "y2": "1 - cos(t)"}),
               inputs=(InputQuantity.normal("a", 1, 0.1), InputQuantity.normal("b", 1, 0.1),
                       InputQuantity.normal("t", 0.0, 0.01)))
    r = evaluate(b)
    assert not any("'t'" in w for w in r["y1"].warnings)
    assert any("'t' has zero first-order sensitivity" in w for w in r["y2"].warnings)


def test_rebase_changes_codata_inputs_only():
    from fieldbudget.constants import lookup, lookup_other
    from fieldbudget.engine import rebase

    g22 = lookup("shielded proton gyromag. ratio in MHz/T", 2022)
    a = lookup_other("proton shielding temperature coefficient in water")
    b = Budget(model="f / (g * 1e6) * (1 + alpha)", measurand=Measurand("B", "T"), inputs=(
        InputQuantity.normal("f", 100e6, 1.0, unit="Hz"),
        InputQuantity.normal("g", g22.value, g22.uncertainty, unit="MHz/T", reference=g22.name),
        InputQuantity.normal("alpha", a.value, a.uncertainty, reference=a.name)))
    old = rebase(b, 2018)
    assert old.input("g").estimate == lookup("shielded proton gyromag. ratio in MHz/T", 2018).value
    assert old.input("alpha") == b.input("alpha") and old.metadata["codata"] == 2018
    # CODATA 2018 vs 2022 for the same frequency: +16.2e-9 (from the published CODATA tables)
    assert round((evaluate(old).estimate / evaluate(b).estimate - 1) * 1e9, 1) == 16.2


def test_statement_for_very_many_degrees_of_freedom():
    b = Budget(model="a + b", inputs=(InputQuantity.normal("a", 1, 1.0),
                                      InputQuantity.from_readings("b", [0.0, 0.001, -0.001, 0.0005])))
    s = evaluate(b).statement()
    assert "more than 1000 effective degrees of freedom" in s and "truncated" not in s


def test_budget_with_second_order_terms_reports_them_in_uc():
    # y = G * x with x = 0: first order gives u = G u(x); the second-order term adds u(G) u(x)
    # (JCGM 100:2008 5.1.2 note: (1/2)(d2f/dGdx)^2 u_G^2 u_x^2 twice = u_G^2 u_x^2), exact for a product
    b = Budget(model="G * x", inputs=(InputQuantity.normal("G", 2e-4, 5e-5), InputQuantity.normal("x", 0.0, 2e-4)),
               second_order=True)
    r = evaluate(b)
    assert r.standard_uncertainty == pytest.approx(math.hypot(2e-4 * 2e-4, 5e-5 * 2e-4), rel=1e-9)
    assert r.higher_order_variance == pytest.approx((5e-5 * 2e-4) ** 2, rel=1e-6)
    assert "second-order terms included" in r.statement()
    again = Budget.from_dict(b.to_dict())
    assert again.second_order and evaluate(again).standard_uncertainty == r.standard_uncertainty
