"""verify trusts nothing it can recompute: each forgery below has its digest recomputed and still fails.

The budgets are invented; what is checked is that verify re-derives the statement, the validation
block (JCGM 101:2008 clause 8: d_low, d_high, delta, validated, advice), the Monte Carlo value and
histogram, and the warnings, instead of reading them from the record under test.
"""

from __future__ import annotations

import dataclasses

import pytest

from fieldbudget.files.record import make_record, save_record, verify_record

# x**2 with a wide input: the GUM interval is not validated by Monte Carlo (JCGM 101 9.3-like nonlinearity).
NONLINEAR = {"model": "x**2 + z", "units": "unchecked", "measurand": {"symbol": "y", "unit": "m2"},
             "inputs": {"x": {"value": 0.0, "u": 0.3, "unit": "m2", "source": "invented"},
                        "z": {"value": 1.0, "u": 0.05, "unit": "m2", "source": "invented"}}}


def _redigest(rec, **changes):
    new = dataclasses.replace(rec, **changes)
    return dataclasses.replace(new, digest=new.computed_digest())


@pytest.fixture(scope="module")
def rec():
    r = make_record(NONLINEAR, monte_carlo=200_000, seed=11, created_utc="2026-11-30T09:15:00Z")
    assert r.validation["validated"] is False  # the premise of the validated false -> true forgery
    assert r.gum["warnings"]  # zero first-order sensitivity of x: a warning to remove
    assert verify_record(r).passed
    return r


def _fails(forged, tmp_path, *names):
    # through a file, as an assessor would run it
    result = verify_record(save_record(forged, tmp_path / "forged.json"))
    assert not result.passed
    assert {c.name for c in result.failures} >= set(names), result.report()
    return result


def test_statement_U_changed(rec, tmp_path):
    gum = dict(rec.gum)
    U = rec.gum["rounded"]["U"]
    assert U in gum["statement"]
    gum["statement"] = gum["statement"].replace(U, "0.01", 1)
    _fails(_redigest(rec, gum=gum), tmp_path, "GUM")


def test_validated_false_to_true(rec, tmp_path):
    val = dict(rec.validation, validated=True)
    result = _fails(_redigest(rec, validation=val), tmp_path, "validation")
    assert "validated: recorded true, recomputed false" in result.report()


def test_validation_advice_and_d_low_changed(rec, tmp_path):
    val = dict(rec.validation, advice="Looks fine.", d_low=0.0)
    _fails(_redigest(rec, validation=val), tmp_path, "validation")


def test_validation_block_removed(rec, tmp_path):
    _fails(_redigest(rec, validation=None), tmp_path, "validation")


def test_monte_carlo_value_moved(rec, tmp_path):
    mc = dict(rec.monte_carlo, value=rec.monte_carlo["value"] + 1e-3)
    _fails(_redigest(rec, monte_carlo=mc), tmp_path, "Monte Carlo")


def test_monte_carlo_value_moved_under_another_numpy_version(rec, tmp_path):
    # tolerance mode: verify's own tolerance, not the record's (which the forger inflates)
    mc = dict(rec.monte_carlo, value=rec.monte_carlo["value"] + 0.1, numpy_version="0.0-elsewhere")
    settings = dict(rec.monte_carlo_settings)
    settings["tolerance"] = dict(settings["tolerance"], value=1.0, u=1.0, interval=1.0)
    _fails(_redigest(rec, monte_carlo=mc, monte_carlo_settings=settings), tmp_path, "Monte Carlo")


def test_histogram_replaced(rec, tmp_path):
    h = rec.monte_carlo["histogram"]
    counts = list(h["counts"])
    counts[0], counts[-1] = counts[-1] + 5, counts[0]
    mc = dict(rec.monte_carlo, histogram={"counts": counts, "edges": list(h["edges"])})
    _fails(_redigest(rec, monte_carlo=mc), tmp_path, "Monte Carlo")


def test_histogram_replaced_under_another_numpy_version(rec, tmp_path):
    h = rec.monte_carlo["histogram"]
    shifted = [e + 5.0 for e in h["edges"]]
    mc = dict(rec.monte_carlo, histogram={"counts": list(h["counts"]), "edges": shifted},
              numpy_version="0.0-elsewhere")
    _fails(_redigest(rec, monte_carlo=mc), tmp_path, "Monte Carlo")


def test_gum_warnings_removed(rec, tmp_path):
    gum = dict(rec.gum, warnings=[])
    _fails(_redigest(rec, gum=gum), tmp_path, "GUM")
    gum = {k: v for k, v in rec.gum.items() if k != "warnings"}
    _fails(_redigest(rec, gum=gum), tmp_path, "GUM")


def test_monte_carlo_warnings_added_or_removed(rec, tmp_path):
    mc = dict(rec.monte_carlo, warnings=["all is well"])
    _fails(_redigest(rec, monte_carlo=mc), tmp_path, "Monte Carlo")
