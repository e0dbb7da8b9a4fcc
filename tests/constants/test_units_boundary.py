"""fieldbudget.units: the boundary to pint.

Sources: SI Brochure, 9th ed. (BIPM 2019), Table 7 (SI prefixes); the gauss
is the CGS-EMU unit of flux density, 1 G corresponds to 1e-4 T (SI Brochure,
8th ed. (2006), Table 9, from memory); ppm = 1e-6 and ppb = 1e-9 are
common practice.
"""

from __future__ import annotations

import math
import subprocess
import sys

import pytest
from hypothesis import given
from hypothesis import strategies as st

from fieldbudget.errors import InputError
from fieldbudget.units import SI_UNITS, allowed_units, convert, normalise_unit, parse_quantity, to_si, unit_kind


@pytest.mark.parametrize("value, unit, si, si_unit", [
    (42.58, "MHz", 42.58e6, "Hz"),
    (9.192631770, "GHz", 9.19263177e9, "Hz"),
    (1.0, "kHz", 1e3, "Hz"),
    (1.0, "G", 1e-4, "T"),        # gauss: 1e-4 T
    (10.0, "kG", 1.0, "T"),
    (10.0, "uT", 1e-5, "T"),
    (10.0, "µT", 1e-5, "T"),      # micro sign U+00B5
    (10.0, "μT", 1e-5, "T"),      # Greek mu U+03BC
    (47.0, "mT", 0.047, "T"),
    (50.0, "nT", 5e-8, "T"),
    (1.0, "ppm", 1e-6, "1"),
    (16.2, "ppb", 1.62e-8, "1"),
    (1.0, "G/cm", 0.01, "T/m"),
    (5.0, "mm", 0.005, "m"),
    (42.57638543, "MHz/T", 42576385.43, "Hz/T"),
    (42.57638543, "MHz T^-1", 42576385.43, "Hz/T"),   # CODATA's way of writing it
])
def test_to_si(value, unit, si, si_unit):
    got, got_unit = to_si(value, unit)
    assert got_unit == si_unit
    assert got == si  # exact: factors are kept as fractions, one rounding


def test_convert_between_prefixes_and_gauss():
    assert convert(1.0, "mT", "G") == 10.0
    assert convert(1.0, "T", "G") == 1e4
    assert convert(3.0, "ppm", "ppb") == 3000.0
    assert convert(1.0, "%", "ppm") == 1e4
    assert convert(2.0, "T", "T") == 2.0


def test_unknown_unit_names_what_is_allowed():
    with pytest.raises(InputError) as err:
        to_si(1.0, "furlong")
    msg = str(err.value)
    assert msg.startswith("conversion to SI: unit must be one of frequency: Hz, kHz, MHz, GHz, mHz; flux density:")
    assert msg.endswith("(got 'furlong')")
    assert err.value.field == "unit"


def test_case_matters_megatesla_is_not_millitesla():
    with pytest.raises(InputError, match=r"\(got 'MT'\)$"):
        convert(1.0, "MT", "T")


def test_angular_units_are_refused():
    # pint would convert rad/s/T to Hz/T without the 2 pi: not offered at all
    with pytest.raises(InputError):
        convert(1.0, "rad/s/T", "Hz/T")


def test_mismatched_kinds():
    with pytest.raises(InputError) as err:
        convert(1.0, "T", "Hz")
    assert str(err.value) == ("unit conversion: to_unit must be a flux density unit: one of T, mT, uT, nT, G, mG, kG "
                              "(to match 'T') (got 'Hz')")


@pytest.mark.parametrize("bad", [math.nan, math.inf, "1.0", True, None])
def test_bad_values(bad):
    with pytest.raises(InputError, match="value must be a finite number"):
        convert(bad, "T", "mT")


@pytest.mark.parametrize("text, expected", [
    ("42.58 MHz", (42.58, "MHz")),
    ("42.58MHz", (42.58, "MHz")),
    ("1e-3 T", (1e-3, "T")),
    ("-2.5 ppm", (-2.5, "ppm")),
    (" 10 µT ", (10.0, "uT")),
    ("10 gauss", (10.0, "G")),
    ("0.5", (0.5, "1")),
    (".5 mT", (0.5, "mT")),
])
def test_parse_quantity(text, expected):
    assert parse_quantity(text) == expected


@pytest.mark.parametrize("text", ["abc", "", "MHz 42", "1.2.3 T", "42 furlong"])
def test_parse_quantity_errors(text):
    with pytest.raises(InputError) as err:
        parse_quantity(text)
    assert str(err.value).endswith(f"(got {text!r})") and err.value.field == "quantity"


def test_kinds_and_lists():
    assert unit_kind("µT") == "flux density" and unit_kind("MHz T^-1") == "frequency per flux density"
    assert normalise_unit("tesla") == "T"
    assert set(SI_UNITS.values()) <= set(allowed_units())
    assert allowed_units("frequency") == ("Hz", "kHz", "MHz", "GHz", "mHz")


UNITS = list(allowed_units())


@given(st.floats(min_value=-1e9, max_value=1e9, allow_nan=False), st.sampled_from(UNITS), st.data())
def test_round_trip(x, a, data):
    """convert(convert(x, a, b), b, a) == x to rounding, for any two units of one kind."""
    b = data.draw(st.sampled_from(allowed_units(unit_kind(a))))
    assert convert(convert(x, a, b), b, a) == pytest.approx(x, rel=1e-15, abs=1e-300)


@given(st.floats(min_value=1e-6, max_value=1e6), st.sampled_from(UNITS))
def test_to_si_agrees_with_convert(x, a):
    si, si_unit = to_si(x, a)
    assert si == convert(x, a, si_unit)


def test_import_is_lazy():
    code = "import sys, fieldbudget.units; print('pint' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
