"""Unit tests of the constants API: records, lookup, errors, display."""

from __future__ import annotations

import dataclasses
import json
import math
import subprocess
import sys
from decimal import Decimal

import pytest
from hypothesis import given
from hypothesis import strategies as st

from fieldbudget.constants import (
    DEFAULT_EDITION,
    NuclearSpinData,
    ReferenceValue,
    concise,
    deuteron_gyromagnetic_ratio,
    editions,
    iupac_isotopes,
    lookup,
    lookup_other,
    names,
    nuclear_spin_data,
    other_names,
    search,
)
from fieldbudget.errors import InputError, UnknownConstantError


def all_values():
    for year in editions():
        for name in names(year):
            yield lookup(name, year)
        yield deuteron_gyromagnetic_ratio(year)
        yield deuteron_gyromagnetic_ratio(year, in_mhz_per_t=True)
    for name in other_names():
        yield lookup_other(name)


# ----- editions and defaults ------------------------------------------------------

def test_editions_and_default():
    assert editions() == (2014, 2018, 2022)
    assert DEFAULT_EDITION == 2022 == max(editions())
    assert lookup("Planck constant") is lookup("Planck constant", 2022)


def test_edition_given_as_text():
    assert lookup("Planck constant", "2018") is lookup("Planck constant", 2018)
    assert lookup("Planck constant", "CODATA 2014") is lookup("Planck constant", 2014)


@pytest.mark.parametrize("bad", [2019, "2010", True, 2022.0, "newest"])
def test_unknown_edition_message(bad):
    with pytest.raises(InputError) as err:
        lookup("Planck constant", bad)
    assert str(err.value) == f"CODATA lookup: edition must be a CODATA edition: 2014, 2018 or 2022 (got {bad!r})"
    assert err.value.field == "edition"


def test_unknown_edition_in_names_and_deuteron():
    with pytest.raises(InputError, match=r"^CODATA names: edition must be"):
        names(2006)
    with pytest.raises(InputError, match=r"^deuteron gyromagnetic ratio: edition must be"):
        deuteron_gyromagnetic_ratio(2006)


# ----- names, aliases -------------------------------------------------------------

def test_unknown_name_message_with_suggestions():
    with pytest.raises(UnknownConstantError) as err:
        lookup("shielded proton gyromag ratio")
    assert str(err.value) == (
        "no reference value named 'shielded proton gyromag ratio' in edition 2022; did you mean "
        "'shielded proton gyromag. ratio', 'shielded proton gyromag. ratio in MHz/T', "
        "'shielded helion gyromag. ratio'?")
    assert isinstance(err.value, KeyError)


def test_unknown_name_without_a_close_match():
    with pytest.raises(UnknownConstantError) as err:
        lookup("zzzz", 2018)
    assert str(err.value) == "no reference value named 'zzzz' in edition 2018"


def test_name_missing_from_an_older_edition():
    # the 2014 table has no helion shielding shift
    with pytest.raises(UnknownConstantError, match=r"^no reference value named 'helion shielding shift' in edition 2014"):
        lookup("helion shielding shift", 2014)


def test_case_slip_is_suggested_first():
    with pytest.raises(UnknownConstantError) as err:
        lookup("planck constant")
    assert err.value.suggestions[0] == "Planck constant"


def test_current_name_in_an_old_edition_reports_the_old_name():
    rv = lookup("shielded proton gyromag. ratio in MHz/T", edition=2014)
    assert rv.name == "shielded proton gyromag. ratio over 2 pi"
    assert rv.aka == "shielded proton gyromag. ratio in MHz/T"
    assert "shielded proton gyromag. ratio in MHz/T" in rv.note
    assert rv is lookup("shielded proton gyromag. ratio over 2 pi", 2014)


def test_old_name_in_a_new_edition_gives_the_new_record():
    # scipy's physical_constants keeps the stale 2014 key; here the old spelling maps forward
    rv = lookup("shielded proton gyromag. ratio over 2 pi", 2022)
    assert rv.name == "shielded proton gyromag. ratio in MHz/T" and rv.edition == 2022


def test_names_are_the_editions_own_spellings():
    assert "shielded proton gyromag. ratio over 2 pi" in names(2014)
    assert "shielded proton gyromag. ratio in MHz/T" not in names(2014)
    assert "shielded proton gyromag. ratio in MHz/T" in names(2022)
    assert names() == names(2022)
    assert len(set(names(2022))) == len(names(2022))


def test_search():
    found = search("proton gyromag")
    assert [rv.name for rv in found] == [
        "proton gyromag. ratio", "proton gyromag. ratio in MHz/T",
        "shielded proton gyromag. ratio", "shielded proton gyromag. ratio in MHz/T"]
    # current names are searchable in 2014 too
    assert {rv.name for rv in search("MHz/T", 2014)} >= {"shielded proton gyromag. ratio over 2 pi"}
    assert search("no such words") == ()


def test_derived_deuteron_names_through_lookup():
    assert lookup("deuteron gyromag. ratio", 2018) == deuteron_gyromagnetic_ratio(2018)
    assert lookup("deuteron gyromag. ratio in MHz/T") == deuteron_gyromagnetic_ratio(in_mhz_per_t=True)


def test_deuteron_uncertainty_includes_h_in_2014():
    d14 = deuteron_gyromagnetic_ratio(2014)
    mu, h = lookup("deuteron mag. mom.", 2014), lookup("Planck constant", 2014)
    assert d14.relative_uncertainty == pytest.approx(math.hypot(mu.relative_uncertainty, h.relative_uncertainty))
    assert "u(h) included" in d14.note
    assert "h exact" in deuteron_gyromagnetic_ratio(2022).note


# ----- non-CODATA data --------------------------------------------------------------

STABLE_OTHER = ["proton shielding temperature coefficient in water", "volume magnetic susceptibility of water",
                "shielded proton reference temperature"]


def test_stable_other_names():
    for name in STABLE_OTHER:
        assert lookup_other(name).name == name
        assert not isinstance(lookup_other(name).edition, int)  # not CODATA


def test_unknown_other_name():
    with pytest.raises(UnknownConstantError) as err:
        lookup_other("water temperature coefficient")
    assert str(err.value).startswith("no reference value named 'water temperature coefficient' in edition non-CODATA")


def test_unknown_isotope_message():
    with pytest.raises(InputError) as err:
        nuclear_spin_data("8Li")
    assert str(err.value) == ("IUPAC 2001 nuclear spin table: isotope must be one of "
                              "1H, 2H, 3He, 7Li, 13C, 19F, 23Na, 27Al, 31P (got '8Li')")


def test_nuclear_spin_data_record():
    d = nuclear_spin_data("7Li")
    assert isinstance(d, NuclearSpinData) and d.spin_label == "3/2"
    assert repr(d) == "<NuclearSpinData 7Li spin 3/2, gamma/2pi = 16.548456(17) MHz T^-1, IUPAC 2001>"
    json.dumps(d.to_dict())
    assert "7Li" in d._repr_html_()
    assert iupac_isotopes()[0] == "1H"


# ----- every record -----------------------------------------------------------------

def test_every_value_has_unit_edition_and_source():
    count = 0
    for rv in all_values():
        assert rv.edition and rv.source.strip()
        assert rv.unit or rv.is_dimensionless, rv.name
        assert math.isfinite(rv.value) and rv.uncertainty >= 0
        json.dumps(rv.to_dict())
        count += 1
    assert count > 90


def test_dimensionless_entries_are_declared_in_the_data(tmp_path, monkeypatch):
    # the loader refuses an empty unit unless the file says dimensionless = true
    from fieldbudget.constants import _tables

    bad = {"value": 1.0, "uncertainty": 0.0, "unit": ""}
    with pytest.raises(InputError, match="dimensionless = true"):
        _tables._record("x", bad, 2022, "a source", "test.toml")
    assert _tables._record("x", {**bad, "dimensionless": True}, 2022, "a source", "test.toml").is_dimensionless


# ----- ReferenceValue ---------------------------------------------------------------

def make(**kw):
    base = dict(name="test value", value=1.5, uncertainty=0.25, unit="T", edition=2022, source="invented")
    return ReferenceValue(**{**base, **kw})


def test_cannot_be_built_without_edition_and_source():
    with pytest.raises(TypeError):
        ReferenceValue("x", 1.0, 0.0, "T")  # edition and source are required
    with pytest.raises(InputError, match="edition must be"):
        make(edition="")
    with pytest.raises(InputError, match="source must be"):
        make(source="  ")


@pytest.mark.parametrize("field, value", [
    ("uncertainty", -1.0), ("uncertainty", math.nan), ("value", math.inf), ("value", "1.0"),
    ("name", ""), ("unit", None), ("edition", True),
])
def test_construction_checks(field, value):
    with pytest.raises(InputError) as err:
        make(**{field: value})
    assert err.value.field == field


def test_validity_range_checks():
    with pytest.raises(InputError, match="valid_from <= valid_to"):
        make(valid_from=45.0, valid_to=5.0, valid_unit="degC")
    with pytest.raises(InputError, match="valid_unit"):
        make(valid_from=5.0, valid_to=45.0)
    rv = make(valid_from=5, valid_to=45, valid_unit="degC")
    assert rv.within_validity(25) and not rv.within_validity(50)
    assert make().within_validity(1e9)


def test_frozen():
    rv = lookup("Planck constant")
    with pytest.raises(dataclasses.FrozenInstanceError):
        rv.value = 1.0


def test_relative_uncertainty_and_exactness():
    rv = lookup("shielded proton gyromag. ratio")
    assert rv.relative_uncertainty == pytest.approx(4.1e-9, rel=0.01)  # 0.011/2.675 e-8
    assert not rv.is_exact
    h = lookup("Planck constant")
    assert h.is_exact and h.relative_uncertainty == 0.0
    zero = make(value=0.0, uncertainty=1e-4)
    assert math.isinf(zero.relative_uncertainty) and zero.to_dict()["relative_uncertainty"] is None


def test_repr_one_line():
    assert repr(lookup("shielded proton gyromag. ratio in MHz/T", 2022)) == (
        "<ReferenceValue 'shielded proton gyromag. ratio in MHz/T' = 42.57638543(17) MHz T^-1, CODATA 2022>")
    assert repr(lookup("shielded proton gyromag. ratio", 2014)) == (
        "<ReferenceValue 'shielded proton gyromag. ratio' = 2.675153171(33)e8 s^-1 T^-1, CODATA 2014>")
    assert repr(lookup("Planck constant")) == "<ReferenceValue 'Planck constant' = 6.62607015e-34 J Hz^-1 (exact), CODATA 2022>"
    assert repr(lookup("proton mag. shielding correction")) == (
        "<ReferenceValue 'proton mag. shielding correction' = 2.56715(41)e-5, CODATA 2022>")
    assert repr(lookup_other("proton shielding temperature coefficient in water")) == (
        "<ReferenceValue 'proton shielding temperature coefficient in water' = 1.036(30)e-8 K^-1, Petley & Donaldson 1984>")


def test_to_dict_plain_json():
    d = lookup("electron g factor").to_dict()
    assert json.loads(json.dumps(d)) == d
    assert d["edition"] == 2022 and d["edition_label"] == "CODATA 2022" and d["unit"] == ""


def test_html_escapes_text():
    html = make(name="<b>&", source="cert <i>1</i>", note="a & b")._repr_html_()
    assert "<b>&" not in html and "&lt;b&gt;&amp;" in html and "<i>" not in html
    assert "(dimensionless)" in lookup("electron g factor")._repr_html_()


# ----- concise notation ---------------------------------------------------------------

@pytest.mark.parametrize("value, u, text", [
    (42.57638543, 1.7e-7, "42.57638543(17)"),
    (2.675153194e8, 1.1, "2.675153194(11)e8"),
    (28024.9513861, 8.7e-6, "28024.9513861(87)"),
    (-2.00231930436092, 3.6e-13, "-2.00231930436092(36)"),
    (25.6715e-6, 0.0041e-6, "2.56715(41)e-5"),
    (6.62607015e-34, 0.0, "6.62607015e-34"),
    (9192631770.0, 0.0, "9192631770"),
    (1.5, 0.996, "1.5(10)"),
    (199.0, 99.5, "2.0(10)e2"),       # u's digits left of the units place: scaled, not '200(100)'
    (12345.0, 12.0, "12345(12)"),
])
def test_concise(value, u, text):
    assert concise(value, u) == text


@given(st.floats(min_value=-1e12, max_value=1e12, allow_nan=False).filter(lambda v: abs(v) > 1e-12),
       st.floats(min_value=1e-6, max_value=0.5))
def test_concise_round_trip(value, rel):
    """Reading the concise text back gives the value to half its last digit and u to two digits."""
    u = abs(value) * rel
    text = concise(value, u)
    mantissa, _, exp = text.partition("e")
    number, _, digits = mantissa.rstrip(")").partition("(")
    scale = Decimal(1).scaleb(int(exp)) if exp else Decimal(1)
    places = -Decimal(number).as_tuple().exponent
    step = Decimal(1).scaleb(-places) * scale
    assert abs(Decimal(number) * scale - Decimal(repr(value))) <= step / 2 * Decimal("1.000001")
    assert float(Decimal(digits) * step) == pytest.approx(u, rel=0.06)


# ----- import cost --------------------------------------------------------------------

def test_import_does_not_pull_in_scipy_or_pint():
    code = ("import sys, fieldbudget.constants as c; c.lookup('Planck constant'); "
            "print(','.join(m for m in ('scipy', 'pint', 'numpy') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_alias_table_matches_the_tables():
    # every older spelling exists in its edition and not the current one; the current
    # spelling exists in 2018 and 2022 (CODATA 2014 / 2018 / 2022 NIST tables)
    from fieldbudget.constants import _tables

    assert _tables._aliases()
    for current, by_year in _tables._aliases().items():
        for year, old in by_year.items():
            assert old in names(year) and current not in names(year)
            assert lookup(old, year).aka == current
        for year in (2018, 2022):
            assert current in names(year)
