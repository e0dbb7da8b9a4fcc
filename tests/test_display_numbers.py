"""Number display shared by screens and reports."""

import math

from hypothesis import given
from hypothesis import strategies as st

from fieldbudget._display import fmt_dof, fmt_si, group_digits

THIN = "\u2009"


def test_large_dof_reads_the_same_everywhere():
    assert fmt_dof(427046218.8) == "> 1000"
    assert fmt_dof(1000) == "1000"
    assert fmt_dof(16.7) == "16.7" and fmt_dof(math.inf) == "inf" and fmt_dof(None) == "inf"


def test_si_prefix_and_digits_from_u():
    assert fmt_si(2.182e-05, "T") == "21.82 \u00b5T"
    assert fmt_si(0.047, "T", 2e-9) == f"47.000{THIN}000{THIN}0 mT"   # u = 0.002 uT: two digits of u
    assert fmt_si(5.0, "T/m") == "5 T/m"                              # compound units keep their unit


def test_digit_grouping_iso80000():
    assert group_digits("63871234.56789") == f"63{THIN}871{THIN}234.567{THIN}89"
    assert group_digits("1234.5") == "1234.5"   # four-digit runs left whole (common practice)
    assert group_digits("-12345") == f"-12{THIN}345"


@given(st.floats(min_value=1e-11, max_value=1e10), st.floats(min_value=1e-3, max_value=0.5))
def test_fmt_si_round_trips_within_u(value, rel_u):
    u = value * rel_u
    text = fmt_si(value, "T", u).replace(THIN, "")
    number, unit = text.split(" ")
    scale = {"GT": 1e9, "MT": 1e6, "kT": 1e3, "T": 1.0, "mT": 1e-3, "\u00b5T": 1e-6, "nT": 1e-9, "pT": 1e-12}[unit]
    assert abs(float(number) * scale - value) <= u / 10 + 1e-12 * value


def test_units_and_symbols_in_unicode():
    from fieldbudget._display import pretty_symbol, pretty_unit
    from fieldbudget.report.tables import sensitivity_unit

    assert pretty_unit("degC") == "\u00b0C" and pretty_unit("uT") == "\u00b5T" and pretty_unit("1") == ""
    assert pretty_symbol("gamma_p_sh") == "\u03b3\u2032<sub>p</sub>"   # shielded proton: gamma'_p (CODATA)
    # c = dy/dx carries unit(y)/unit(x) (JCGM 100:2008, 5.1.3)
    # simplified by pint (the units library): T/(MHz/T) = T²/MHz, T/(1/K) = K·T
    assert sensitivity_unit("T", "Hz") == "T/Hz" and sensitivity_unit("T", "MHz/T") == "T\u00b2/MHz"
    assert sensitivity_unit("T", "1/K") == "K\u00b7T"
    assert sensitivity_unit("T", "T") == "1" and sensitivity_unit("T", "") == "T"


def test_values_without_a_prefix_use_a_power_of_ten():
    from fieldbudget._display import fmt_ppm, fmt_u, fmt_value

    assert fmt_value(2.1e-09, "", 5e-10) == "2.10\u00d710\u207b\u2079"   # digits set by u (common practice)
    assert fmt_value(0.0, "", 1.85e-9) == "0"
    assert fmt_u(4.86e-06, "T") == "4.9 \u00b5T"                        # two digits of u (JCGM 100:2008, 7.2.6)
    assert fmt_ppm(4.2e-7) == "0.42 ppm"
