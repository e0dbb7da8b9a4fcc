"""BudgetDraft: a budget typed as text, rebuilt into an engine Budget on each valid change.

Sources for the numbers checked: JCGM 100:2008 (GUM) 5.1.2 eq. (10) (law of
propagation, uncorrelated inputs), 5.2.2 eq. (13) (correlated), 4.3.7
(rectangular, u = a/sqrt(3)), 4.3.4 (u = U/k), 4.2.2-4.2.3 (Type A, s/sqrt(n)).
"""

import math
import statistics

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.drafts import ROW_KEYS, BudgetDraft
from fieldbudget.engine import (
    Budget,
    InputQuantity,
    Measurand,
    Model,
    Normal,
    Rectangular,
    evaluate,
)


def linear_draft():
    # y = a + b: every sensitivity coefficient is 1
    return BudgetDraft(model="a + b", measurand="y", measurand_unit="V", rows=[
        {"symbol": "a", "estimate": "1.0", "unit": "V", "uncertainty": "0.3", "source": "cert. <b>&"},
        {"symbol": "b", "estimate": "2.0", "unit": "V", "distribution": "rectangular", "meaning": "half-width",
             "uncertainty": "0.6"}])


def test_typed_budget_matches_gum_formula():
    d = linear_draft()
    assert d.current and d.errors == {}
    # GUM 5.1.2 eq. (10) with c = 1, and 4.3.7: u(b) = a/sqrt(3)
    expected = math.sqrt(0.3**2 + (0.6 / math.sqrt(3)) ** 2)
    assert d.result.standard_uncertainty == pytest.approx(expected, rel=1e-12)
    assert d.result.estimate == pytest.approx(3.0)


def test_typed_budget_equals_the_engine_budget_built_directly():
    d = linear_draft()
    direct = evaluate(Budget(model=Model.from_expression("a + b"), measurand=Measurand("y", "V"), inputs=(
        InputQuantity("a", 1.0, Normal(u=0.3), unit="V", source="cert. <b>&"),
        InputQuantity("b", 2.0, Rectangular(half_width=0.6), unit="V"))))
    assert d.result.to_dict() == direct.to_dict()


def test_correlation_enters_the_result():
    d = linear_draft()
    d.set_correlation("a", "b", "0.5")
    ua, ub = 0.3, 0.6 / math.sqrt(3)
    # GUM 5.2.2 eq. (13): u^2 = ua^2 + ub^2 + 2 r ua ub for c = 1
    assert d.result.standard_uncertainty == pytest.approx(math.sqrt(ua**2 + ub**2 + 2 * 0.5 * ua * ub))
    d.set_correlation("a", "b", "")
    assert d.correlations == [] and d.result.standard_uncertainty == pytest.approx(math.hypot(ua, ub))


def test_expanded_with_k_and_readings():
    d = linear_draft()
    d.set(0, "meaning", "expanded")
    d.set(0, "uncertainty", "0.8")
    d.set(0, "k", "2")
    assert d.result.contribution("a").standard_uncertainty == pytest.approx(0.4)  # GUM 4.3.4: U / k
    readings = [1.02, 0.98, 1.01, 0.99, 1.00]
    d.set(0, "meaning", "readings")
    d.set(0, "readings", "\n".join(map(str, readings)))
    c = d.result.contribution("a")
    assert c.estimate == pytest.approx(statistics.fmean(readings))
    assert c.standard_uncertainty == pytest.approx(statistics.stdev(readings) / math.sqrt(5))  # GUM 4.2.3
    assert c.dof == 4  # GUM 4.2.6: n - 1


@pytest.mark.parametrize("key, text, message", [
    ("uncertainty", "-0.2", "uncertainty must be a finite number >= 0 (got '-0.2')"),
    ("estimate", "one volt", "estimate must be a finite number (got 'one volt')"),
    ("dof", "-3", "dof must be a number > 0, or blank for infinite (got '-3')"),
    ("symbol", "2a", "symbol must be a symbol of letters, digits and '_' that starts with a letter (got '2a')"),
])
def test_bad_text_keeps_last_good_budget_and_the_text(key, text, message):
    d = linear_draft()
    good_budget, good_result = d.budget, d.result
    assert d.set(0, key, text) is False
    assert d.budget is good_budget and d.result is good_result
    assert d.current is False
    assert d.errors == {f"rows[0].{key}": message}
    assert d.rows[0][key].text == text
    d.set(0, key, good_budget.inputs[0].symbol if key == "symbol" else "0.3" if key != "dof" else "")
    assert d.current and d.errors == {}


def test_impossible_correlation_is_marked_beside_a_correlation_field():
    d = BudgetDraft(model="a + b + c", rows=[{"symbol": s, "estimate": "1", "uncertainty": "1"} for s in "abc"])
    d.set_correlation("a", "b", "0.9")
    d.set_correlation("a", "c", "0.9")
    good = d.result
    d.set_correlation("b", "c", "-0.9")  # each |r| <= 1 but the matrix is not positive semi-definite
    assert d.result is good and not d.current
    (path, msg), = d.errors.items()
    assert path.startswith("r(") and "positive semi-definite" in msg
    assert d.correlation_field("b", "c").text == "-0.9"


def test_correlation_out_of_range_is_marked_on_its_field():
    d = linear_draft()
    d.set_correlation("a", "b", "1.3")
    assert d.errors == {"r(a, b)": "r(a, b) must be a number in [-1, 1] (got '1.3')"}


def test_model_with_an_unknown_symbol_is_marked_on_the_model():
    d = linear_draft()
    d.set_model("a + c")
    assert list(d.errors) == ["model"] and "'c' is not an input" in d.errors["model"]
    assert d.model.text == "a + c"


def test_inconsistent_meaning_and_distribution_is_marked_on_the_row():
    d = linear_draft()
    d.set(1, "meaning", "standard")  # rectangular stated by a standard uncertainty
    assert list(d.errors) == ["rows[1].distribution"]
    d.set(0, "meaning", "half-width")
    assert "rows[0].meaning" in d.errors


def test_rows_add_remove_reorder():
    d = linear_draft()
    r = d.add_row(symbol="c", estimate="0", uncertainty="0.1", unit="V")
    assert d.current  # an input not in the model: sensitivity 0
    d.set_model("a + b + c")
    assert [c.symbol for c in d.result.contributions] == ["a", "b", "c"]
    d.move_row(r, -2)
    assert [c.symbol for c in d.result.contributions] == ["c", "a", "b"]
    d.move_row(0, -5)  # past the end: stays first
    assert d.rows[0] is r
    d.set_model("a + b")
    d.remove_row(r)
    assert [c.symbol for c in d.result.contributions] == ["a", "b"]


def test_duplicate_symbol_and_empty_budget():
    d = linear_draft()
    d.set(1, "symbol", "a")
    assert d.errors["rows[0].symbol"].startswith("symbol must be unique")
    empty = BudgetDraft(model="")
    assert empty.result is None and empty.errors == {"": "add at least one input"}


def test_from_budget_round_trip():
    d = linear_draft()
    d.set_correlation("a", "b", "-0.25")
    d2 = BudgetDraft.from_budget(d.budget)
    assert d2.current and d2.budget.to_dict() == d.budget.to_dict()


def test_listeners_and_batch():
    d = linear_draft()
    calls = []
    stop = d.subscribe(calls.append)
    d.set(0, "uncertainty", "0.4")
    with d.batch():
        d.set(0, "uncertainty", "0.5")
        d.set(1, "uncertainty", "0.1")
    assert len(calls) == 2 and d.result.contribution("a").standard_uncertainty == 0.5
    stop()
    d.set(0, "uncertainty", "0.6")
    assert len(calls) == 2


def test_repr_is_one_line():
    assert repr(linear_draft()) == "<BudgetDraft y = 'a + b', 2 inputs, current>"


@settings(max_examples=60, deadline=None)
@given(row=st.integers(0, 1), key=st.sampled_from(ROW_KEYS), text=st.text(max_size=12))
def test_any_text_in_any_field_never_raises_and_is_kept(row, key, text):
    d = linear_draft()
    good = d.result
    d.set(row, key, text)
    assert d.rows[row][key].text == text
    assert d.current or d.result is good
