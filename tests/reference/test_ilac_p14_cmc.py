"""ILAC P14:09/2020, ILAC Policy for Measurement Uncertainty in Calibration: what a CMC entry must contain.

The edition and date are verified (ILAC news page announcing the revision, and the
document's first page); the content of the CMC section is given *from
memory* (clause numbers not verified):

* a CMC states the measurand, the method / type of instrument, the range and
  the measurement uncertainty;
* the uncertainty is an expanded uncertainty at about 95 %, in the unit of the
  measurand or relative to it; over a range as a single value, a range of
  values or an explicit function;
* open intervals ("U < x") are not allowed;
* no ambiguity about the smallest uncertainty the lab can achieve;
* uncertainties are given to at most two significant digits.
"""

from __future__ import annotations

import pytest

from fieldbudget.calibration import BestMeasurement, build_cmc_table
from fieldbudget.errors import InputError

# invented best measurements of the invented demo lab (T, expanded uncertainty at k = 2)
POINTS = [BestMeasurement(b, u, source=f"budget at {b} T") for b, u in
          [(0.05, 1.1e-6), (0.1, 1.3e-6), (0.5, 3.4e-6), (1.0, 6.2e-6), (1.5, 8.9e-6), (2.0, 1.17e-5)]]
KW = {"measurand": "magnetic flux density, static field", "method": "Hall-probe teslameters, comparison with "
      "proton NMR in an electromagnet", "unit": "T"}


def test_entry_contains_what_p14_asks():
    # ILAC P14:09/2020, CMC section (from memory): measurand, method/instrument, range, uncertainty at ~95 %
    t = build_cmc_table(POINTS, [(0.05, 0.5), (0.5, 2.0)], **KW)
    checks = t.p14_checklist()
    assert [c[0] for c in checks][:5] == [
        "measurand stated", "method or type of instrument stated", "closed measurement range for every entry",
        "uncertainty as a value or explicit function, no open interval", "expanded uncertainty at about 95 %"]
    assert all(met for _, met, _ in checks)
    d = t.to_dict()
    assert d["policy"] == "ILAC P14:09/2020"
    for e in d["entries"]:
        assert e["measurand"] and e["method"] and len(e["range"]) == 2 and e["uncertainty"]


def test_no_open_intervals():
    # ILAC P14:09/2020 (from memory): open intervals such as "U < x" are not allowed; ranges are closed
    with pytest.raises(InputError, match="no open intervals"):
        build_cmc_table(POINTS, [(0.05, float("inf"))], **KW)


def test_measurand_and_method_required():
    # ILAC P14:09/2020 (from memory): the measurand and the method / instrument type are part of the CMC
    with pytest.raises(InputError) as e:
        build_cmc_table(POINTS, [(0.05, 2.0)], measurand=" ", method="x")
    assert e.value.field == "measurand"
    with pytest.raises(InputError) as e:
        build_cmc_table(POINTS, [(0.05, 2.0)], measurand="B", method="")
    assert e.value.field == "method"


def test_coverage_probability_about_95_percent():
    # ILAC P14:09/2020 (from memory): the CMC is an expanded uncertainty at a coverage probability of ~95 %
    with pytest.raises(InputError) as e:
        BestMeasurement(1.0, 1e-5, coverage_probability=0.6827)
    assert e.value.field == "coverage_probability"


def test_claim_never_below_a_best_measurement_and_two_digits():
    # ILAC P14:09/2020 (from memory): no ambiguity about the smallest uncertainty, at most two significant
    # digits; rounding up so the claim stays >= every best measurement (common practice)
    for form in ("absolute", "relative", "linear"):
        t = build_cmc_table(POINTS, [(0.05, 0.5), (0.5, 2.0)], form=form, **KW)
        for e in t.entries:
            for p in e.points:
                assert e.uncertainty_at(p.value) >= p.expanded_uncertainty * (1 - 1e-12)
            for v in (e.a, e.b):
                assert v == 0 or float(f"{v:.2g}") == v
    # at the shared boundary 0.5 T the larger claim applies (no ambiguity)
    t = build_cmc_table(POINTS, [(0.05, 0.5), (0.5, 2.0)], form="absolute", **KW)
    assert t.uncertainty_at(0.5) == max(e.uncertainty_at(0.5) for e in t.entries)
