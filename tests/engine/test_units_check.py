"""Dimensional check of budgets with units parsed by pint (fieldbudget.engine.dimensions).

Each kind of mistake the check must catch, and the conversions it makes.
The conversion factors are checked against pint itself (a general-purpose
reference library), and the dimensional rules are those of ISO 80000-1
(quantities of different dimensions cannot be added; arguments of exp, log and
trigonometric functions are numbers) (from memory: clause 5).
"""

from __future__ import annotations

import json
import math

import pint
import pytest

from fieldbudget.engine import Budget, InputQuantity, Measurand, evaluate, montecarlo
from fieldbudget.errors import BudgetFileError, ExpressionError, InputError
from fieldbudget.files.budget_file import load_budget

Q = InputQuantity
UREG = pint.UnitRegistry()


def test_length_plus_temperature_is_refused_naming_the_term():
    b = Budget(model="L + theta", inputs=(Q.normal("L", 1.0, 1e-3, unit="m"), Q.normal("theta", 20.05, 0.1, unit="degC")),
               measurand=Measurand("y", "m"))
    with pytest.raises(ExpressionError) as err:
        evaluate(b)
    text = str(err.value)
    assert "'L + theta'" in text and "'L' is in m" in text and "'theta' is in degC" in text


def test_unknown_unit_is_an_error_naming_the_input():
    b = Budget(model="x", inputs=(Q.normal("x", 1.0, 0.1, unit="volts-ish"),))
    with pytest.raises(InputError, match="input 'x': unit must be a unit such as") as err:
        evaluate(b)
    assert "unchecked" in str(err.value)


def test_milliohm_in_an_ohm_budget_is_converted():
    b = Budget(model="R_s + dR", inputs=(Q.normal("R_s", 100.0, 0.002, unit="ohm"),
                                         Q.rectangular("dR", 0.5, 0.3, unit="mohm")),
               measurand=Measurand("R", "ohm"))
    r = evaluate(b)
    f = UREG.Quantity(1, "milliohm").to("ohm").magnitude        # pint: 1 mohm = 0.001 ohm
    assert r.estimate == pytest.approx(100.0 + 0.5 * f, rel=1e-15)
    dr = r.contribution("dR")
    assert dr.unit == "ohm" and dr.standard_uncertainty == pytest.approx(0.3 * f / math.sqrt(3), rel=1e-12)
    note = [w for w in r.warnings if getattr(w, "code", "") == "unit_converted"]
    assert len(note) == 1 and note[0].key == "inputs.dR.unit" and "mohm" in note[0] and "ohm" in note[0]
    # Monte Carlo sees the same converted input
    mc = montecarlo.run(b, 20_000, seed=1)
    assert mc.estimate == pytest.approx(r.estimate, abs=5 * r.standard_uncertainty / math.sqrt(20_000))


def test_prefixed_unit_inside_a_product_is_converted():
    b = Budget(model="R0*(1 + alpha*dT)", inputs=(Q.normal("R0", 100.0, 0.01, unit="ohm"),
                                                   Q.normal("alpha", 3.9e-3, 1e-5, unit="1/K"),
                                                   Q.normal("dT", 250.0, 5.0, unit="mK")),
               measurand=Measurand("R", "ohm"))
    r = evaluate(b)
    assert r.estimate == pytest.approx(100.0 * (1 + 3.9e-3 * UREG.Quantity(250, "mK").to("K").magnitude), rel=1e-14)


def test_measurand_unit_is_checked_against_the_model():
    ins = (Q.normal("V", 10.0, 0.01, unit="V"), Q.normal("R", 100.0, 0.1, unit="ohm"))
    with pytest.raises(ExpressionError, match="measurand's dimensions"):
        evaluate(Budget(model="V**2/R", inputs=ins, measurand=Measurand("P", "A")))
    with pytest.raises(ExpressionError, match="measurand's unit 'mW'"):
        evaluate(Budget(model="V**2/R", inputs=ins, measurand=Measurand("P", "mW")))
    assert evaluate(Budget(model="V**2/R", inputs=ins, measurand=Measurand("P", "W"))).estimate == pytest.approx(1.0)
    # a literal conversion factor written into the model is understood
    assert evaluate(Budget(model="1e3*V**2/R", inputs=ins, measurand=Measurand("P", "mW"))).estimate == pytest.approx(1e3)


def test_function_arguments_and_exponents():
    with pytest.raises(ExpressionError, match=r"exp\(\) takes a pure number"):
        evaluate(Budget(model="exp(V)", inputs=(Q.normal("V", 1.0, 0.01, unit="V"),)))
    with pytest.raises(ExpressionError, match="exponent"):
        evaluate(Budget(model="V**n", inputs=(Q.normal("V", 1.0, 0.01, unit="V"), Q.normal("n", 2.0, 0.0, unit="1"))))
    # an angle in degrees given to sin() is converted to radians
    r = evaluate(Budget(model="sin(a)", inputs=(Q.normal("a", 30.0, 0.1, unit="deg"),)))
    assert r.estimate == pytest.approx(0.5, rel=1e-12)


def test_celsius_and_kelvin_are_not_mixed():
    b = Budget(model="t - t0", inputs=(Q.normal("t", 23.0, 0.1, unit="degC"), Q.normal("t0", 293.15, 0.0, unit="K")))
    with pytest.raises(ExpressionError, match="Celsius"):
        evaluate(b)


def test_unchecked_budgets_and_budgets_without_units():
    b = Budget(model="L + theta", inputs=(Q.normal("L", 1.0, 1e-3, unit="m"), Q.normal("theta", 20.05, 0.1, unit="degC")),
               units="unchecked")
    assert evaluate(b).estimate == pytest.approx(21.05)
    assert b.to_dict()["units"] == "unchecked" and Budget.from_dict(b.to_dict()).units == "unchecked"
    # no input states a unit: nothing to check, even with a measurand unit
    assert evaluate(Budget(model="a + b", inputs=(Q.normal("a", 1, 0.1), Q.normal("b", 2, 0.1)),
                           measurand=Measurand("y", "T"))).estimate == 3


def test_budget_file_errors_point_at_the_unit(tmp_path):
    base = {"model": "L + theta", "measurand": {"symbol": "y", "unit": "m"},
            "inputs": {"L": {"value": 1.0, "u": 0.001, "unit": "m"}, "theta": {"value": 20.05, "u": 0.1, "unit": "degC"}}}
    p = tmp_path / "b.json"
    p.write_text(json.dumps(base))
    with pytest.raises(BudgetFileError, match="#/model") as err:
        load_budget(p)
    assert "'theta' is in degC" in str(err.value)
    base["inputs"]["theta"]["unit"] = "blorps"
    p.write_text(json.dumps(base))
    with pytest.raises(BudgetFileError, match="#/inputs/theta/unit"):
        load_budget(p)
