"""Our CODATA tables against scipy.constants, and CODATA's own relations.

Sources:
- scipy.constants (``scipy/constants/_codata.py``) embeds the NIST "allascii"
  listings of the CODATA recommended values verbatim for every edition and
  parses them; ``physical_constants`` holds the edition scipy calls current
  (it reads ``_current_codata``), and ``_physical_constants_2014`` /
  ``_2018`` / ``_2022`` are scipy's private per-edition copies of the NIST
  tables.  The third element of each tuple is the absolute standard
  uncertainty.
- ``physical_constants`` is the union of all editions, so stale older keys
  ("... over 2 pi") are still present: the current-edition check below looks
  names up only in scipy's current-edition dict and never by an old spelling.
- Relations checked: gamma/2pi in MHz/T against gamma divided by 2 pi (the
  CODATA tables print both); gamma'_p = gamma_p (1 - sigma'_p) (definition of
  the shielding correction, CODATA 2018 and 2022 papers); exact SI defining
  constants unchanged between the 2018 and 2022 tables (SI Brochure, 9th ed.,
  2019: h, e, c and the Cs-133 hyperfine frequency are fixed).
"""

from __future__ import annotations

import math
import re
from decimal import Decimal

import pytest

scipy_constants = pytest.importorskip("scipy.constants")
from scipy.constants import _codata  # noqa: E402  (scipy's private per-edition tables)

from fieldbudget.constants import editions, lookup, names  # noqa: E402

GYRO = ["shielded proton", "proton", "shielded helion", "electron", "neutron"]


def scipy_current_edition() -> int:
    """The CODATA year scipy carries as current, read from scipy, not assumed."""
    label = getattr(_codata, "_current_codata", "")
    m = re.search(r"(\d{4})", str(label))
    if m:
        return int(m.group(1))
    # older scipy without the label: the edition whose h matches physical_constants
    h = scipy_constants.physical_constants["Planck constant"][0]
    return next(y for y in editions() if lookup("Planck constant", y).value == h)


def scipy_edition_dict(year: int) -> dict | None:
    return getattr(_codata, f"_physical_constants_{year}", None)


def test_scipy_edition_is_one_we_carry():
    # a newer scipy with a CODATA edition we do not carry yet: add its table to constants/data
    year = scipy_current_edition()
    assert year in editions(), f"scipy carries CODATA {year}; fieldbudget has {editions()}"


def test_current_edition_equals_scipy_exactly():
    """Every value of scipy's current edition in our data equals physical_constants[name] exactly."""
    year = scipy_current_edition()
    current = getattr(_codata, "_current_constants", None) or scipy_edition_dict(year)
    checked = 0
    for name in names(year):
        assert name in current, f"{name!r} is not a key of scipy's current CODATA {year} table"
        value, unit, u = scipy_constants.physical_constants[name]
        rv = lookup(name, year)
        assert rv.name == name
        assert rv.value == value, name
        assert rv.uncertainty == u, name
        assert rv.unit == unit, name
        checked += 1
    assert checked >= 27


@pytest.mark.parametrize("year", [2014, 2018, 2022])
def test_every_edition_equals_scipys_copy_of_the_nist_table(year):
    table = scipy_edition_dict(year)
    if table is None:
        pytest.skip(f"this scipy has no private copy of the CODATA {year} table")
    for name in names(year):
        value, unit, u = table[name]
        rv = lookup(name, year)
        assert (rv.value, rv.uncertainty, rv.unit) == (value, u, unit), name


def test_the_data_covers_what_the_nmr_layer_needs():
    # issue 2 lists these; each must exist in every edition (2014 under its own spelling)
    needed = [
        "shielded proton gyromag. ratio", "shielded proton gyromag. ratio in MHz/T",
        "proton gyromag. ratio", "proton gyromag. ratio in MHz/T",
        "shielded helion gyromag. ratio", "shielded helion gyromag. ratio in MHz/T",
        "electron gyromag. ratio", "electron gyromag. ratio in MHz/T",
        "neutron gyromag. ratio", "neutron gyromag. ratio in MHz/T",
        "proton mag. shielding correction", "deuteron mag. mom.", "nuclear magneton",
        "deuteron mag. mom. to nuclear magneton ratio", "electron g factor", "Planck constant",
        "reduced Planck constant", "elementary charge", "shielded proton mag. mom.",
        "shielded helion mag. mom.", "helion mag. mom.",
    ]
    for year in editions():
        for name in needed:
            lookup(name, year)
    for year in (2018, 2022):  # not in the 2014 table
        lookup("helion shielding shift", year)
        lookup("hyperfine transition frequency of Cs-133", year)


def last_digit(x: float) -> Decimal:
    """A unit in the last printed digit (repr gives the printed digits; dropped trailing
    zeros only make this coarser, i.e. the check looser, never stricter)."""
    return Decimal(1).scaleb(Decimal(repr(x)).normalize().as_tuple().exponent)


@pytest.mark.parametrize("year", [2014, 2018, 2022])
@pytest.mark.parametrize("particle", GYRO)
def test_gamma_over_2pi_equals_gamma_divided_by_2pi_to_the_stated_digits(year, particle):
    """CODATA tables: '<x> gyromag. ratio in MHz/T' (2014: 'over 2 pi') is gamma/(2 pi)
    printed to its own digits; allowed difference: half a digit of each printed value."""
    g = lookup(f"{particle} gyromag. ratio", year)
    f = lookup(f"{particle} gyromag. ratio in MHz/T", year)
    computed = g.value / (2 * math.pi) / 1e6
    tol = float(last_digit(f.value) / 2) + float(last_digit(g.value) / 2) / (2 * math.pi) / 1e6
    assert abs(f.value - computed) <= tol, (f.value, computed, tol)
    # and the uncertainties scale the same way, to the two printed digits of u
    assert f.uncertainty == pytest.approx(g.uncertainty / (2 * math.pi) / 1e6, rel=0.05)


@pytest.mark.parametrize("year", [2014, 2018, 2022])
def test_shielded_proton_ratio_is_bare_ratio_times_one_minus_shielding(year):
    """gamma'_p = gamma_p (1 - sigma'_p), within u(gamma'_p) (CODATA definition of sigma'_p)."""
    gp = lookup("proton gyromag. ratio", year)
    sigma = lookup("proton mag. shielding correction", year)
    gps = lookup("shielded proton gyromag. ratio", year)
    assert abs(gp.value * (1 - sigma.value) - gps.value) <= gps.uncertainty


@pytest.mark.parametrize("year", [2018, 2022])
def test_shielded_helion_ratio_from_moment_and_shielding_shift(year):
    """gamma'_h = 2 |mu_h| / hbar (1 - sigma_h) (spin 1/2), within u(gamma'_h)."""
    mu_h = lookup("helion mag. mom.", year)
    sigma_h = lookup("helion shielding shift", year)
    hbar = lookup("reduced Planck constant", year)
    g = lookup("shielded helion gyromag. ratio", year)
    assert abs(2 * abs(mu_h.value) / hbar.value * (1 - sigma_h.value) - g.value) <= g.uncertainty


@pytest.mark.parametrize("year", [2014, 2018, 2022])
def test_reduced_planck_constant_is_h_over_2pi(year):
    h, hbar = lookup("Planck constant", year), lookup("reduced Planck constant", year)
    assert hbar.value == pytest.approx(h.value / (2 * math.pi), rel=1e-9)
    if year >= 2018:  # exact, computed from the definition as scipy does
        assert hbar.is_exact and hbar.value == h.value / (2 * math.pi)


def test_exact_si_constants_identical_in_2018_and_2022():
    """SI Brochure 9th ed. (2019): the defining constants are exact and do not change."""
    exact_2018 = {n for n in names(2018) if lookup(n, 2018).is_exact}
    assert {"Planck constant", "elementary charge", "speed of light in vacuum",
            "hyperfine transition frequency of Cs-133", "reduced Planck constant"} <= exact_2018
    for name in exact_2018:
        a, b = lookup(name, 2018), lookup(name, 2022)
        assert b.is_exact and (a.value, a.unit) == (b.value, b.unit), name


def test_mu0_stopped_being_exact_after_2014():
    """CODATA 2014 'mag. constant' = 4 pi 1e-7 N A^-2 exactly; 2018 'vacuum mag. permeability' is measured."""
    old, new = lookup("vacuum mag. permeability", 2014), lookup("vacuum mag. permeability", 2018)
    assert old.name == "mag. constant" and old.is_exact and old.value == 4e-7 * math.pi
    assert not new.is_exact and abs(new.value / old.value - 1) < 1e-9
