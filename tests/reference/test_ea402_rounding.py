"""Rounding of reported results: JCGM 100:2008 7.2.6 and EA-4/02 M (2013) clause 6.

GUM 7.2.6 (wording from memory): U to at most two
significant digits, the estimate to the same decimal place; its example 10.057 62 ohm with
u_c = 27 mOhm becomes 10.058 ohm.  EA-4/02 (from memory, as in §6 of the note): a rounding that
lowers U by more than 5 % is replaced by rounding up; at two significant digits it never bites
(worst case 10.49 -> 10 loses 4.7 %), so the test uses one significant digit or a fixed place.
"""

from __future__ import annotations

import pytest

from fieldbudget.engine import round_result
from fieldbudget.errors import InputError


def test_gum_7_2_6_example():
    r = round_result(10.05762, 0.027)
    assert (r.value_text, r.uncertainty_text) == ("10.058", "0.027")


def test_two_significant_digits_and_same_place():
    assert round_result(50000838.4, 92.47).uncertainty_text == "92"
    assert round_result(2.3487198124, 1.234e-7).value_text == "2.34871981"
    assert round_result(1234567.0, 1234.0).value_text == "1234600"  # U = 1200: the hundreds place


def test_carry_does_not_add_a_digit():
    r = round_result(1.23456, 0.0996)
    assert r.uncertainty_text == "0.10" and r.value_text == "1.23"


@pytest.mark.parametrize(
    "U, sig, gum, ea",
    [
        (0.14, 1, "0.1", "0.2"),  # 0.14 -> 0.1 loses 29 %: EA rounds up
        (1.04, 1, "1", "1"),  # loses 3.8 %: kept
        (0.0124, 2, "0.012", "0.012"),  # loses 3.2 %: kept
        (10.49, 2, "10", "10"),  # worst case at two digits: 4.7 %, kept
    ],
)
def test_ea_five_percent_rule_both_sides(U, sig, gum, ea):
    assert round_result(1.0, U, "gum", sig).uncertainty_text == gum
    assert round_result(1.0, U, "ea", sig).uncertainty_text == ea


def test_ea_rule_just_above_and_below_five_percent():
    # 0.1055 -> 0.1 loses 5.2 % (rounded up to 0.2); 0.1050 -> 0.1 loses 4.76 % (kept)
    assert round_result(1.0, 0.1055, "ea", 1).uncertainty_text == "0.2"
    assert round_result(1.0, 0.1050, "ea", 1).uncertainty_text == "0.1"


def test_ea_rule_with_a_fixed_decimal_place():
    # reporting resolution 0.01 (decimals=2): 0.0142 -> 0.01 loses 30 %, so 0.02
    assert round_result(5.0, 0.0142, "ea", decimals=2).uncertainty_text == "0.02"
    assert round_result(5.0, 0.0142, "gum", decimals=2).uncertainty_text == "0.01"


def test_round_up_rule():
    assert round_result(1.0, 0.0921, "up").uncertainty_text == "0.093"


def test_bad_rule_is_refused():
    with pytest.raises(InputError, match="rounding rule must be one of"):
        round_result(1.0, 0.1, "nearest")
