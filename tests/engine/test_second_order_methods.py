"""The fast second-order method (2: one forward-mode pass) against the full one (1: a gradient per point).

Method 1 takes each of the 2n + 1 gradients with ``uncertainties`` (an independent automatic
differentiation library); method 2 propagates them by the chain rule itself.  Both feed the same
difference stencils (JCGM 100:2008 5.1.2 note), so they must agree to rounding: the stated bound
is 1e-9 relative in u_c (the derivatives agree to about 1e-15; the stencils divide differences by
h = 0.05 and h^2, losing about three digits, common practice for such stencils).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.engine import Budget, InputQuantity, evaluate, second_order
from fieldbudget.engine.expression import FUNCTIONS
from fieldbudget.files.budget_file import load_budget

BOUND = 1e-9
ROOT = Path(__file__).resolve().parents[2]


def _both(budget: Budget) -> tuple[float, float]:
    with second_order.method_version(1):
        full = second_order.combined_uncertainty(budget)
    fast = second_order.combined_uncertainty(budget)
    return full, fast


def _nmr_budget(tmp_path) -> Budget:
    from fieldbudget.cli import main

    out = tmp_path / "b.json"
    assert main(["nmr", str(ROOT / "examples" / "data" / "nmr-measurement-2026-11-18.json"), "--budget-out",
                 str(out), "--allow-outside-files"]) == 0
    return load_budget(out)


def test_nmr_demo_budget_agrees_within_the_bound(tmp_path, capsys):
    b = _nmr_budget(tmp_path)
    capsys.readouterr()
    assert b.second_order and len(b.inputs) >= 15
    full, fast = _both(b)
    assert fast == pytest.approx(full, rel=BOUND)
    assert second_order.method_in_use(b) == second_order.METHOD == 2


# one model per whitelisted function, at points inside its domain
_MODELS = {
    "sqrt": "sqrt(a) * b", "exp": "exp(a / 3) + b", "log": "log(a) * b", "log10": "log10(a) + b * a",
    "sin": "sin(a) * b", "cos": "cos(b) * a", "tan": "tan(a / 4) + b", "asin": "asin(a / 5) * b",
    "acos": "acos(a / 5) + b", "atan": "atan(a) * b", "atan2": "atan2(a, b)", "sinh": "sinh(a / 2) * b",
    "cosh": "cosh(a / 2) + b", "tanh": "tanh(a) * b", "radians": "radians(a) * b",
    "degrees": "degrees(a) + b", "abs": "abs(a - 3) * b", "hypot": "hypot(a, b)",
}


def test_every_function_is_covered():
    assert set(_MODELS) == set(FUNCTIONS)


@pytest.mark.parametrize("name", sorted(_MODELS))
def test_each_function_agrees_within_the_bound(name):
    b = Budget(model=_MODELS[name], inputs=(InputQuantity.normal("a", 1.3, 0.05), InputQuantity.normal("b", 0.7, 0.04)))
    full, fast = _both(b)
    assert fast == pytest.approx(full, rel=BOUND)


@settings(max_examples=40, deadline=None)
@given(a=st.floats(0.5, 5), b=st.floats(0.5, 5), ua=st.floats(1e-4, 0.1), ub=st.floats(1e-4, 0.1),
       p=st.sampled_from([-2, -0.5, 0.5, 2, 3]))
def test_property_products_quotients_powers_agree(a, b, ua, ub, p):
    budget = Budget(model=f"a ** {p} * b / (1 + a * b) - (a - b) ** 2 + a ** b",
                    inputs=(InputQuantity.normal("a", a, ua), InputQuantity.normal("b", b, ub)))
    full, fast = _both(budget)
    assert math.isclose(fast, full, rel_tol=BOUND, abs_tol=1e-15 * abs(full) + 1e-300)


def test_result_and_record_say_the_method():
    b = Budget(model="p * q", inputs=(InputQuantity.normal("p", 0.0, 1.0), InputQuantity.normal("q", 0.0, 1.0)),
               second_order=True)
    # JCGM 100:2008 5.1.2 note: for y = p q with zero estimates, u_c^2 = u1^2 u2^2 (second-order term only)
    assert evaluate(b).standard_uncertainty == pytest.approx(1.0, rel=1e-12)
    assert evaluate(b).to_dict()["second_order_method"] == 2
    with second_order.method_version(1):
        assert "second_order_method" not in evaluate(b).to_dict()


def test_old_second_order_record_has_no_method_and_verifies_with_method_1():
    from fieldbudget.files.record import verify_record

    old = Path(__file__).resolve().parents[1] / "montecarlo" / "data" / "sampler-1-nmr.record.json"
    d = json.loads(old.read_text(encoding="utf-8"))
    assert d["budget"]["second_order"] is True and "second_order_method" not in d["results"]["gum"]
    result = verify_record(old)
    assert next(c for c in result.checks if c.name == "GUM").status == "pass", result.report()


def test_unknown_method_is_refused_with_what_is_allowed():
    from fieldbudget.errors import InputError

    with pytest.raises(InputError, match=r"second_order_method must be one of \[1, 2\]"):
        with second_order.method_version(3):
            pass


def test_zero_first_order_sensitivity_is_a_note_when_the_second_order_terms_carry_it():
    # y = x^2 at x = 0: c = 0, the uncertainty enters only through the second-order term
    # u^2 = 2 (d2y/dx2 / 2)^2 u^4 ... (JCGM 100:2008 5.1.2, Note); with second_order the engine has handled it
    # (a note on that choice), without it the uncertainty is lost (a warning to act on)
    from fieldbudget.engine import Budget, InputQuantity, evaluate

    x = InputQuantity.normal("x", 0.0, 0.1)
    handled = evaluate(Budget(model="x**2", inputs=(x,), second_order=True))
    (w,) = [w for w in handled.warnings if "zero first-order sensitivity" in w]
    assert w.severity == "note" and w.key == "inputs.x"
    assert handled.standard_uncertainty == pytest.approx(2 ** 0.5 * 0.1 ** 2, rel=1e-12)  # sqrt(2 u^4)
    lost = evaluate(Budget(model="x**2", inputs=(x,)))
    (w,) = [w for w in lost.warnings if "zero first-order sensitivity" in w]
    assert getattr(w, "severity", "warning") == "warning" and lost.standard_uncertainty == 0
