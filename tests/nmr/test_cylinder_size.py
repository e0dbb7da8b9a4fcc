"""One function gives a finite cylinder's L/D and length to the shape, curvature and field-map components.

u(L) for L = (L/D) D is checked against the `uncertainties` package (first-order propagation, as
JCGM 100:2008 5.1.2).
"""

from __future__ import annotations

import pytest
from uncertainties import ufloat

from fieldbudget.nmr.components._base import Reader
from fieldbudget.nmr.components.shape import cylinder_size


def _size(**sample):
    return cylinder_size(Reader(sample, "m.json", "#/sample"))


def test_length_from_ratio_and_diameter_carries_both_uncertainties():
    s = _size(length_over_diameter=2.5, u_length_over_diameter=0.01, diameter_m=0.004, u_diameter_m=2e-5)
    ref = ufloat(2.5, 0.01) * ufloat(0.004, 2e-5)  # the uncertainties package
    assert s.ratio == 2.5
    assert s.length_m == pytest.approx(ref.nominal_value, rel=1e-15)
    assert s.u_length_m == pytest.approx(ref.std_dev, rel=1e-12)


def test_stated_values_are_used_as_given():
    s = _size(diameter_m=0.004, length_m=0.01, u_length_m=1e-4)
    assert (s.ratio, s.length_m, s.u_length_m) == (0.01 / 0.004, 0.01, 1e-4)
    s = _size(diameter_m=0.004, length_m=0.01, length_over_diameter=2.5)  # both given, alike
    assert (s.ratio, s.length_m, s.u_length_m) == (2.5, 0.01, 0.0)


def test_length_and_ratio_that_disagree_are_refused():
    # regression: the shape used L/D = 2.4 and the curvature and field map L = 10 mm (L/D 2.5) of one sample
    from fieldbudget.errors import BudgetFileError

    with pytest.raises(BudgetFileError, match=r"#/sample/length_m: must agree with length_over_diameter x "
                                              r"diameter_m = 0.0096 m \(got 0.01 m\)"):
        _size(diameter_m=0.004, length_m=0.01, length_over_diameter=2.4)


def test_missing_dimensions_give_none():
    assert _size(diameter_m=0.004) == (None, None, None)
    assert _size(length_over_diameter=3.0) == (3.0, None, None)
    assert _size(length_m=0.01) == (None, 0.01, 0.0)
