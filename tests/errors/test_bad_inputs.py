"""Every bad input of the engine gives its own clear message (issue 2's list).

Each case asserts the exact message text and the error class (which is also the builtin it
resembles), so a change of wording is a deliberate change.
"""

from __future__ import annotations

import json
import math
import pickle

import pytest

from fieldbudget.engine import Budget, InputQuantity, Model, Normal, TypeA, evaluate
from fieldbudget.errors import (
    BudgetFileError,
    CorrelationError,
    ExpressionError,
    FieldbudgetError,
    InputError,
    ModelEvaluationError,
)
from fieldbudget.files.budget_file import load_budget


def _two(model="a + b", **kw):
    return Budget(model=model, inputs=(InputQuantity.normal("a", 1.0, 0.1), InputQuantity.normal("b", 2.0, 0.1)), **kw)


def test_negative_uncertainty():
    with pytest.raises(InputError) as e:
        InputQuantity.normal("f", 1.0, -0.2)
    assert str(e.value) == "input 'f': u must be a finite number >= 0 (got -0.2)"
    assert isinstance(e.value, ValueError)


def test_nan_uncertainty():
    with pytest.raises(InputError, match=r"input 'f': u must be a finite number >= 0 \(got nan\)"):
        InputQuantity.normal("f", 1.0, math.nan)


@pytest.mark.parametrize("dof", [0, -3])
def test_zero_or_negative_dof(dof):
    with pytest.raises(InputError) as e:
        InputQuantity.normal("f", 1.0, 0.1, dof=dof)
    assert str(e.value) == f"input 'f': dof must be a number > 0 or infinite (got {dof})"


def test_correlation_beyond_one():
    with pytest.raises(CorrelationError) as e:
        _two(correlations=(("a", "b", 1.3),))
    assert str(e.value) == "correlation between 'a' and 'b' must be a number in [-1, 1] (got 1.3)"
    assert e.value.pair == ("a", "b")


def test_non_psd_correlation_matrix_names_the_inputs():
    b = (InputQuantity.normal("a", 1, 0.1), InputQuantity.normal("b", 1, 0.1), InputQuantity.normal("c", 1, 0.1))
    with pytest.raises(CorrelationError) as e:
        Budget(model="a+b+c", inputs=b, correlations=(("a", "b", 0.9), ("a", "c", 0.9), ("b", "c", -0.9)))
    assert str(e.value) == (
        "correlation matrix must be positive semi-definite (these three coefficients between 'a', 'b' and 'c' "
        "cannot hold together) (got 'r(a,b)=0.9, r(a,c)=0.9, r(b,c)=-0.9')"
    )


def test_model_naming_an_unknown_symbol():
    with pytest.raises(ExpressionError) as e:
        _two("a + c")
    assert str(e.value) == "model must be written in the inputs' symbols ('c' is not an input; inputs: a, b) (got 'a + c')"


def test_attribute_access_is_refused():
    with pytest.raises(ExpressionError) as e:
        Model.from_expression("a.real + b")
    assert str(e.value) == "model must be free of attribute access ('.' is not allowed) at column 1 (got 'a.real + b')"


def test_dunder_import_is_refused():
    with pytest.raises(ExpressionError) as e:
        Model.from_expression("__import__('os')")
    assert "calling only the allowed functions ('__import__' is not one of:" in str(e.value)
    with pytest.raises(ExpressionError, match="free of attribute access"):
        Model.from_expression("__import__('os').system('true')")


@pytest.mark.parametrize("text", ["a if b else 1", "[a][0]", "lambda: a", "a < b", "a // b", "'x'"])
def test_other_constructs_are_refused(text):
    with pytest.raises(ExpressionError):
        Model.from_expression(text)


def test_division_by_zero_at_the_estimate():
    b = Budget(model="a / b", inputs=(InputQuantity.normal("a", 1.0, 0.1), InputQuantity.normal("b", 0.0, 0.1)))
    with pytest.raises(ModelEvaluationError) as e:
        evaluate(b)
    assert str(e.value) == "model 'y = a / b': division by zero at the given estimates"


def test_empty_readings_list():
    with pytest.raises(InputError) as e:
        InputQuantity.from_readings("f", [])
    assert str(e.value) == "input 'f': readings must be a list of at least 2 readings (got [])"


def test_single_reading():
    with pytest.raises(InputError) as e:
        TypeA(readings=(1.0,), where="input 'f'")
    assert str(e.value) == ("input 'f': readings must be at least 2 readings (one reading gives no standard deviation; "
                            "state its uncertainty as 'u' instead) (got [1.0])")


def test_malformed_json(tmp_path):
    p = tmp_path / "b.json"
    p.write_text('{"model": "a", "inputs": {')
    with pytest.raises(BudgetFileError) as e:
        load_budget(p)
    assert str(e.value) == (f"{p}: is not valid JSON: the file ends before the JSON document does "
                            "(truncated at line 1, column 27)")


def test_nan_in_json_is_refused(tmp_path):
    p = tmp_path / "b.json"
    p.write_text('{"model": "a", "inputs": {"a": {"value": NaN, "u": 1}}}')
    with pytest.raises(BudgetFileError, match="NaN is not a number in JSON"):
        load_budget(p)


def test_file_error_names_file_pointer_and_rule(tmp_path):
    p = tmp_path / "b.json"
    p.write_text(json.dumps({"model": "T", "inputs": {"T": {"value": 1, "half_width": 1, "distribution": "uniform"}}}))
    with pytest.raises(BudgetFileError) as e:
        load_budget(p)
    assert str(e.value) == (f"{p}, at #/inputs/T/distribution: distribution must be one of 'rectangular', "
                            "'triangular', 'arcsine', 'curvilinear_trapezoid' with 'half_width' (got 'uniform')")


def test_errors_pickle_and_share_a_base():
    err = InputError("u", -1, "a finite number >= 0", "input 'x'")
    again = pickle.loads(pickle.dumps(err))
    assert str(again) == str(err) and isinstance(again, FieldbudgetError)
    ce = pickle.loads(pickle.dumps(CorrelationError("r", 2, "in [-1, 1]", pair=("a", "b"))))
    assert ce.pair == ("a", "b")


def test_normal_from_expanded_checks_k():
    with pytest.raises(InputError, match="k must be a finite number > 0"):
        Normal.from_expanded(1.0, 0)


def test_overflowing_variance_is_a_clear_error():
    b = Budget(model="a * b", inputs=(InputQuantity.normal("a", 1e150, 1e200), InputQuantity.normal("b", 1e150, 1.0)))
    with pytest.raises(ModelEvaluationError, match="combined variance is not a finite number"):
        evaluate(b)
