"""Field: the text is kept whatever happens; bad text gives a message naming what is allowed."""

import math

import pytest

from fieldbudget.drafts.field import (
    Field,
    parse_choice,
    parse_correlation,
    parse_dof,
    parse_nonnegative,
    parse_number,
    parse_readings,
    parse_symbol,
)


def test_good_text_parses_and_clears_message():
    f = Field("u", "0.5", parse_nonnegative)
    assert (f.value, f.error, f.ok) == (0.5, None, True)


def test_bad_text_keeps_text_and_last_good_value():
    f = Field("u", "0.5", parse_nonnegative)
    assert not f.set("-0.2")
    assert f.text == "-0.2" and f.value == 0.5
    assert f.error == "u must be a finite number >= 0 (got '-0.2')"
    assert not f.set("abc")
    assert f.text == "abc" and f.value == 0.5
    assert f.set("0.25") and f.value == 0.25 and f.error is None


@pytest.mark.parametrize("text", ["", "nan", "inf", "1,5", "1e", "x"])
def test_number_rejects_non_finite_and_text(text):
    f = Field("estimate", text, parse_number)
    assert f.error and f.value is None


def test_number_accepts_exponents_and_unicode_minus():
    assert parse_number(" 1.5e8 ", "x") == 1.5e8
    assert parse_number("\u22120.5", "x") == -0.5


def test_dof_blank_or_inf_is_infinite():
    assert math.isinf(parse_dof("", "dof")) and math.isinf(parse_dof("inf", "dof"))
    assert parse_dof("9", "dof") == 9
    assert Field("dof", "0", parse_dof).error == "dof must be a number > 0, or blank for infinite (got '0')"


def test_correlation_bounds():
    assert parse_correlation("-1", "r") == -1.0
    assert Field("r", "1.3", parse_correlation).error == "r must be a number in [-1, 1] (got '1.3')"


def test_readings_typed_or_pasted():
    assert parse_readings("1, 2;3\n4\t5", "readings") == (1.0, 2.0, 3.0, 4.0, 5.0)
    f = Field("readings", "1 2 x", parse_readings)
    assert f.error == "readings must be numbers only (reading 3 is not a number) (got 'x')"


def test_symbol_and_choice():
    assert parse_symbol(" f_ref ", "symbol") == "f_ref"
    assert Field("symbol", "2x", parse_symbol).error
    assert Field("kind", "uniform", parse_choice(("normal", "rectangular"))).error == \
        "kind must be one of 'normal', 'rectangular' (got 'uniform')"


def test_repr_is_one_line():
    assert repr(Field("u", "-1", parse_nonnegative)).startswith("<Field u='-1', error=")
