"""Non-CODATA reference data: IUPAC 2001 nuclear spin table and water data.

Sources (named beside each check):
- Harris et al., Pure Appl. Chem. 73, 1795 (2001), Table 1 (IUPAC
  Recommendations 2001): gamma in 10^7 rad s^-1 T^-1.  Digits from secondary
  copies (public NMR code files citing the paper; the table itself was not read).
- Petley & Donaldson, Metrologia 20, 81 (1984), abstract: fractional frequency
  shift -10.36(30)e-9 per degC of the proton line in a water sphere, 5 to 45 degC.
- Auer, Ann. Phys. (Leipzig) 410(6) (1933), abstract: water mass susceptibility
  0.72183e-6 (CGS) at 20 degC; Magn. Reson. Imaging 33(6), 829 (2015), Table 5:
  water -9.05 ppm (SI).
- NIST SP 961 (2015), CODATA 2014 values: sigma'_p "(H2O, sphere, 25 degC)".
"""

from __future__ import annotations

import math

import pytest

from fieldbudget.constants import (
    deuteron_gyromagnetic_ratio,
    iupac_isotopes,
    lookup,
    lookup_other,
    nuclear_spin_data,
)

# Harris et al. 2001, Table 1 (secondary copies): isotope, spin, gamma / 10^7 rad s^-1 T^-1
IUPAC = [
    ("1H", 0.5, 26.7522128),
    ("2H", 1.0, 4.10662791),
    ("3He", 0.5, -20.3801587),
    ("7Li", 1.5, 10.3977013),
    ("13C", 0.5, 6.728284),
    ("19F", 0.5, 25.18148),
    ("23Na", 1.5, 7.0808493),
    ("27Al", 2.5, 6.9762715),
    ("31P", 0.5, 10.8394),
]


def test_isotope_list():
    assert iupac_isotopes() == tuple(row[0] for row in IUPAC)


@pytest.mark.parametrize("isotope, spin, gamma_1e7", IUPAC)
def test_iupac_values(isotope, spin, gamma_1e7):
    d = nuclear_spin_data(isotope)
    assert d.spin == spin
    assert d.gyromagnetic_ratio.value == pytest.approx(gamma_1e7 * 1e7, rel=1e-15)
    assert d.gyromagnetic_ratio.unit == "rad s^-1 T^-1"
    assert d.gyromagnetic_ratio_over_2pi.value == pytest.approx(gamma_1e7 * 10 / (2 * math.pi), rel=1e-15)
    assert d.gyromagnetic_ratio_over_2pi.unit == "MHz T^-1"
    # our documented policy: at least 1 ppm relative, never below half the last printed digit
    assert d.gyromagnetic_ratio.relative_uncertainty >= 1e-6 * (1 - 1e-12)
    assert "not a CODATA value" in d.gyromagnetic_ratio.note
    assert d.gyromagnetic_ratio.edition == "IUPAC 2001"


def test_iupac_31p_uncertainty_is_set_by_its_rounding():
    # 10.8394 has its last digit at 1e-4: half of it, 5e-5, is 4.6 ppm > the 1 ppm floor
    d = nuclear_spin_data("31P").gyromagnetic_ratio
    assert d.uncertainty == pytest.approx(5e-5 * 1e7, rel=1e-12)


def test_iupac_mhz_per_tesla_values():
    # computed independently: gamma/2pi in MHz/T, to the 6 decimals given there
    expected = {"1H": 42.577469, "2H": 6.535901, "3He": -32.436030, "7Li": 16.548456, "13C": 10.708397,
                "19F": 40.077570, "23Na": 11.269522, "27Al": 11.103081, "31P": 17.251441}
    for iso, value in expected.items():
        assert round(nuclear_spin_data(iso).gyromagnetic_ratio_over_2pi.value, 6) == pytest.approx(value, abs=1e-6)


def test_iupac_bare_proton_agrees_with_codata_within_the_policy():
    # computed independently: IUPAC 1H is 0.22 ppm below CODATA 2022 gamma_p (bare)
    iupac = nuclear_spin_data("1H").gyromagnetic_ratio
    codata = lookup("proton gyromag. ratio", 2022)
    assert round((iupac.value / codata.value - 1) * 1e6, 2) == -0.22
    assert abs(iupac.value - codata.value) <= 2 * iupac.uncertainty


def test_iupac_helium3_is_the_bare_helion():
    # |IUPAC 3He| exceeds CODATA 2022 gamma'_h by about sigma_h (59.97 ppm): it is unshielded
    iupac = abs(nuclear_spin_data("3He").gyromagnetic_ratio.value)
    shielded = lookup("shielded helion gyromag. ratio", 2022).value
    sigma_h = lookup("helion shielding shift", 2022).value
    assert iupac / shielded - 1 == pytest.approx(sigma_h, abs=1e-6)
    assert abs(iupac * (1 - sigma_h) - shielded) <= 2 * nuclear_spin_data("3He").gyromagnetic_ratio.uncertainty


def test_iupac_deuteron_agrees_with_the_codata_derived_value():
    # computed here: IUPAC 2H is 0.24 ppm below the CODATA 2022-derived value
    iupac = nuclear_spin_data("2H").gyromagnetic_ratio_over_2pi
    derived = deuteron_gyromagnetic_ratio(2022, in_mhz_per_t=True)
    assert round((iupac.value / derived.value - 1) * 1e6, 2) == -0.24
    assert abs(iupac.value - derived.value) <= 2 * iupac.uncertainty


def test_isotope_spellings():
    assert nuclear_spin_data("Li7") is nuclear_spin_data("7Li") is nuclear_spin_data("li-7")


def test_iupac_values_reachable_by_name():
    assert lookup_other("19F gyromag. ratio in MHz/T") is nuclear_spin_data("19F").gyromagnetic_ratio_over_2pi


def test_petley_donaldson_coefficient():
    # Petley & Donaldson 1984, abstract: -10.36(30)e-9 per degC in frequency, 5 to 45 degC
    rv = lookup_other("proton shielding temperature coefficient in water")
    assert (rv.value, rv.uncertainty, rv.unit) == (10.36e-9, 0.30e-9, "K^-1")
    assert (rv.valid_from, rv.valid_to, rv.valid_unit) == (5.0, 45.0, "degC")
    assert rv.within_validity(5.0) and rv.within_validity(45.0)
    assert not rv.within_validity(4.99) and not rv.within_validity(45.01)


def test_temperature_sign_frequency_falls_as_water_warms():
    # issue 7 / computed here: f(30 degC)/f(25 degC) - 1 = -51.8e-9 at the same field,
    # with f(t) = f(25) [1 - alpha (t - 25)]
    alpha = lookup_other("proton shielding temperature coefficient in water").value
    t_ref = lookup_other("shielded proton reference temperature").value
    assert round(-alpha * (30.0 - t_ref) * 1e9, 1) == -51.8


def test_shielded_proton_reference_temperature():
    # NIST SP 961 (CODATA 2014): sigma'_p "(H2O, sphere, 25 degC)"
    rv = lookup_other("shielded proton reference temperature")
    assert (rv.value, rv.unit, rv.is_exact) == (25.0, "degC", True)
    assert "sphere" in rv.source and "25 degC" in lookup("shielded proton gyromag. ratio", 2022).note


def test_water_susceptibility_from_auer_mass_susceptibility():
    # Auer 1933 abstract: |chi_m| = 0.72183e-6 cm^3/g at 20 degC; chi_v(SI) = 4 pi rho chi_m(CGS),
    # rho(20 degC) = 0.998207 g/cm^3 (from memory); MRI 2015 Table 5: -9.05 ppm
    chi_v = lookup_other("volume magnetic susceptibility of water")
    chi_m = lookup_other("mass magnetic susceptibility of water (CGS)")
    converted = 4 * math.pi * 0.998207 * chi_m.value
    assert round(converted * 1e6, 4) == -9.0545
    assert abs(converted - chi_v.value) <= chi_v.uncertainty
    assert chi_v.value == -9.05e-6 and chi_v.is_dimensionless
    assert lookup_other("reference temperature of the volume magnetic susceptibility of water").value == 20.0


def test_water_susceptibility_temperature_coefficient_is_a_documented_bound():
    # Auer 1933 abstract: coefficient between 2.9e-4 and 0.62e-4 per K over 5..70 degC;
    # rectangular half-width 2.9e-4 -> u = 2.9e-4/sqrt(3) (GUM 4.3.7)
    rv = lookup_other("relative temperature coefficient of the volume magnetic susceptibility of water")
    assert rv.value == 0.0
    assert rv.uncertainty == pytest.approx(2.9e-4 / math.sqrt(3), rel=0.02)
    assert (rv.valid_from, rv.valid_to) == (5.0, 70.0)
