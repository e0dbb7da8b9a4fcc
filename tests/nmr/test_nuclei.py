"""Probe nuclei: names, reference values per edition, notes, Larmor conversions."""

from __future__ import annotations

import json

import pytest
import scipy.constants as sc

from fieldbudget.constants import iupac_isotopes, nuclear_spin_data
from fieldbudget.errors import InputError
from fieldbudget.nmr import (
    NUCLEUS_NAMES,
    larmor_field,
    larmor_frequency,
    nucleus,
    nucleus_names,
)


def test_names():
    assert NUCLEUS_NAMES == ("shielded-proton", "proton", "shielded-helion", "deuteron", "electron")
    assert set(iupac_isotopes()) <= set(nucleus_names())
    assert nucleus().name == "shielded-proton"


def test_unknown_nucleus_lists_the_names():
    with pytest.raises(InputError) as info:
        nucleus("8Li")
    msg = str(info.value)
    assert "'shielded-proton'" in msg and "7Li" in msg and "(got '8Li')" in msg


@pytest.mark.parametrize("label", ["7Li", "13C", "19F", "23Na", "27Al", "31P"])
def test_iupac_nuclei(label):
    n = nucleus(label)
    assert n.kind == "iupac" and not n.is_codata
    assert "not a CODATA value" in n.note and "water sphere" in n.note
    rv = n.gyromagnetic_ratio(2018)
    assert rv.value == nuclear_spin_data(label).gyromagnetic_ratio_over_2pi.value
    assert rv.edition == "IUPAC 2001"


def test_shielded_helion_iupac_3he_differs_by_the_shielding():
    # computed here: the IUPAC 3He magnitude exceeds CODATA 2022 gamma'_h/2pi by about 59.5 ppm (sigma_h)
    bare = abs(nucleus("3He").gyromagnetic_ratio().value)
    shielded = nucleus("shielded-helion").gyromagnetic_ratio(2022).value
    assert (bare / shielded - 1) * 1e6 == pytest.approx(59.5, abs=0.2)


def test_water_flag_only_for_shielded_proton():
    assert [n for n in NUCLEUS_NAMES if nucleus(n).water] == ["shielded-proton"]


def test_larmor_conversion_values_and_dict():
    r = larmor_field(42.57638543e6)
    assert r.value == pytest.approx(1.0, rel=1e-15)
    d = r.to_dict()
    assert set(d) >= {"field_T", "u", "nucleus", "codata"}
    assert d["codata"] == 2022 and d["nucleus"] == "shielded-proton"
    json.dumps(d)
    f = larmor_frequency(1.0, "proton", 2022)
    assert f.to_dict()["frequency_Hz"] == sc.value("proton gyromag. ratio in MHz/T") * 1e6  # CODATA 2022 (scipy)
    assert f.u == pytest.approx(sc.physical_constants["proton gyromag. ratio in MHz/T"][2] * 1e6)
    assert repr(f) == "<LarmorConversion frequency = 42577478.461 Hz, u = 0.018 Hz (proton, CODATA 2022)>"
    assert repr(larmor_frequency(1.0, "7Li")).endswith("(7Li, IUPAC 2001)>")
    assert "gamma/2pi" in f.text()


def test_larmor_bad_edition():
    with pytest.raises(InputError) as info:
        larmor_field(1e6, codata=2010)
    assert info.value.field == "codata"
