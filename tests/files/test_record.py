"""Records: round trip, digest, revisions and change log, verification, CODATA comparison."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math

import pytest

from fieldbudget.engine import Budget
from fieldbudget.errors import InputError, RecordError
from fieldbudget.files.record import (
    SCHEMA_VERSION,
    Record,
    budget_changes,
    canonical_bytes,
    compare_editions,
    load_record,
    make_record,
    monte_carlo_tolerance,
    save_record,
    serialise,
    verify_record,
)
from tests.report._budgets import GAMMA, mixed_budget, nmr_budget

STAMP = "2026-11-30T09:15:00Z"


def _redigest(rec: Record, **changes) -> Record:
    """A record changed *and* re-stamped, as someone recomputing the digest after an edit would."""
    new = dataclasses.replace(rec, **changes)
    return dataclasses.replace(new, digest=new.computed_digest())


@pytest.fixture(scope="module")
def mc_record() -> Record:
    return make_record(nmr_budget(), monte_carlo=4000, seed=20261130, operator="R. Okafor",
                       remarks="EM-3 at 1.5 T", procedure={"name": "BFSL-NMR-01", "version": "3"},
                       created_utc=STAMP)


def test_round_trip_save_load_verify(tmp_path, mc_record):
    path = save_record(mc_record, tmp_path / "em3.record.json")
    again = load_record(path)
    assert again == mc_record
    assert again.to_dict() == mc_record.to_dict()
    result = verify_record(path)
    assert result.passed, result.report()
    names = [c.name for c in result.checks]
    assert names[:6] == ["schema", "file form", "digest", "signatures", "budget", "GUM"]
    assert "validation" in names and "UNSIGNED" in result.report()
    mc = next(c for c in result.checks if c.name == "Monte Carlo")
    assert mc.status == "pass" and "bit-identical" in mc.detail
    # verifying a Record object (not a file) runs the same content checks
    assert verify_record(again).passed


def test_record_holds_what_the_issue_lists(mc_record):
    d = mc_record.to_dict()
    assert d["schema_version"] == SCHEMA_VERSION == "1.1"
    assert d["budget"] == Budget.from_dict(nmr_budget()).to_dict()
    assert set(d["software"]) >= {"fieldbudget", "numpy", "scipy", "uncertainties", "python"}
    assert d["codata_edition"] == 2022
    assert d["procedure"] == {"name": "BFSL-NMR-01", "version": "3"}
    assert (d["operator"], d["remarks"], d["created_utc"]) == ("R. Okafor", "EM-3 at 1.5 T", STAMP)
    assert d["settings"]["monte_carlo"]["trials"] == 4000 and d["settings"]["monte_carlo"]["seed"] == 20261130
    mc = d["results"]["monte_carlo"]
    assert {"trials", "seed", "generator", "numpy_version"} <= set(mc)
    # 4000 trials are too few to know the spread of the interval ends: the validation is undecided (null)
    assert d["results"]["validation"] is not None and d["results"]["validation"]["validated"] is None
    assert d["revision"] == 1 and d["previous_digest"] is None and d["changes"] == []


def test_digest_is_sha256_of_the_canonical_serialisation(mc_record):
    # Independent recomputation with hashlib and json (keys sorted, no whitespace, UTF-8).
    content = {k: v for k, v in mc_record.to_dict().items() if k != "digest"}
    text = json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    assert mc_record.digest == hashlib.sha256(text.encode("utf-8")).hexdigest()
    assert canonical_bytes({"b": 0.1, "a": [1, 2.5e-9]}) == b'{"a":[1,2.5e-09],"b":0.1}'
    with pytest.raises(ValueError):
        canonical_bytes({"x": math.nan})


def test_floats_survive_the_file_exactly(tmp_path, mc_record):
    path = save_record(mc_record, tmp_path / "r.json")
    again = load_record(path)
    assert again.gum["u"] == mc_record.gum["u"] and again.gum["value"] == mc_record.gum["value"]
    assert serialise(again) == path.read_text(encoding="utf-8")


def test_record_is_immutable(mc_record):
    with pytest.raises(dataclasses.FrozenInstanceError):
        mc_record.operator = "someone else"  # type: ignore[misc]
    with pytest.raises(TypeError):
        mc_record.budget["title"] = "changed"  # type: ignore[index]
    assert isinstance(mc_record.changes, tuple)


def test_repr_is_one_line_and_html_escapes(mc_record):
    assert "\n" not in repr(mc_record) and repr(mc_record).startswith("<Record rev 1 B = ")
    rec = make_record(nmr_budget(), operator="<b>J. & K.</b>", created_utc=STAMP)
    html = rec._repr_html_()
    assert "<b>J." not in html and "&lt;b&gt;J. &amp; K.&lt;/b&gt;" in html


def test_revision_and_change_log():
    first = make_record(nmr_budget(), created_utc=STAMP)
    b = nmr_budget()
    b["inputs"]["f"]["value"] = 63871230.0
    del b["inputs"]["y_tb"]
    b["model"] = "f / (gp * 1e6)"
    b["inputs"]["d_probe"] = {"value": 0.0, "u": 1.5e-8, "unit": "T", "source": "probe report BFSL-P-0107"}
    b["model"] = "f / (gp * 1e6) + d_probe"
    second = make_record(b, previous=first, created_utc=STAMP, reason="new counter readings")
    assert second.revision == 2 and second.previous_digest == first.digest
    kinds = {(c["change"], c["what"]) for c in second.changes}
    assert ("input added", "d_probe") in kinds
    assert ("input removed", "y_tb") in kinds
    assert ("input changed", "f") in kinds
    assert ("model changed", "model") in kinds
    f_change = next(c for c in second.changes if c["what"] == "f")
    assert "value 63871224.32 -> 63871230.0" in f_change["detail"]
    third = make_record(b, previous=second, created_utc=STAMP, reason="seed changed")
    assert third.revision == 3
    assert [c["change"] for c in third.changes] == ["revision reason"]  # the budget itself did not change
    assert third.changes[0]["detail"] == "seed changed"


def test_budget_changes_of_identical_budgets_is_empty():
    assert budget_changes(mixed_budget(), mixed_budget()) == []


def test_make_record_refuses_bad_arguments():
    with pytest.raises(InputError, match="operator must be text"):
        make_record(nmr_budget(), operator=3)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="monte_carlo must be a number of trials >= 1"):
        make_record(nmr_budget(), monte_carlo=0)
    with pytest.raises(InputError, match="seed must be a whole number >= 0"):
        make_record(nmr_budget(), monte_carlo=100, seed=-1)
    with pytest.raises(InputError, match="previous must be a Record"):
        make_record(nmr_budget(), previous={"revision": 1})  # type: ignore[arg-type]


def test_seed_is_drawn_and_recorded_when_omitted(tmp_path):
    rec = make_record(nmr_budget(), monte_carlo=500, created_utc=STAMP)
    assert isinstance(rec.monte_carlo["seed"], int)
    assert verify_record(save_record(rec, tmp_path / "r.json")).passed


def test_save_refuses_a_record_edited_without_a_new_digest(tmp_path, mc_record):
    edited = dataclasses.replace(mc_record, operator="someone else")
    with pytest.raises(RecordError, match="digest does not match"):
        save_record(edited, tmp_path / "r.json")
    assert not (tmp_path / "r.json").exists()


def test_verify_catches_a_gum_result_off_in_the_last_digit(mc_record):
    gum = dict(mc_record.gum)
    gum["u"] = math.nextafter(gum["u"], math.inf)  # one unit in the last place
    forged = _redigest(mc_record, gum=gum)
    result = verify_record(forged)
    assert not result.passed
    assert [c.name for c in result.failures] == ["GUM"]
    assert "u: recorded" in result.failures[0].detail


def test_a_reworded_statement_fails(mc_record):
    # verify trusts nothing it can recompute: the statement is recomputed too
    gum = dict(mc_record.gum)
    gum["statement"] = gum["statement"].replace("The number after", "The figure after")
    result = verify_record(_redigest(mc_record, gum=gum))
    assert [c.name for c in result.failures] == ["GUM"] and "statement: recorded" in result.failures[0].detail


def test_verify_catches_a_changed_rounded_result(mc_record):
    gum = dict(mc_record.gum)
    gum["rounded"] = dict(gum["rounded"], U="0.000000013")
    result = verify_record(_redigest(mc_record, gum=gum))
    assert [c.name for c in result.failures] == ["GUM"] and "rounded" in result.failures[0].detail


def test_verify_catches_monte_carlo_not_bit_identical(mc_record):
    mc = dict(mc_record.monte_carlo)
    mc["u"] = math.nextafter(mc["u"], 0.0)
    result = verify_record(_redigest(mc_record, monte_carlo=mc))
    assert [c.name for c in result.failures] == ["Monte Carlo"]
    assert "not bit-identical" in result.failures[0].detail


def test_other_numpy_version_is_compared_within_verifys_own_tolerance(mc_record):
    # Another numpy version may give another stream: then verify's own tolerance applies.
    mc = dict(mc_record.monte_carlo)
    mc["numpy_version"] = "0.0-elsewhere"
    tol = mc_record.monte_carlo_settings["tolerance"]
    mc["value"] = mc["value"] + 0.5 * tol["value"]
    ok = verify_record(_redigest(mc_record, monte_carlo=mc))
    check = next(c for c in ok.checks if c.name == "Monte Carlo")
    assert check.status == "pass" and "within this release's tolerance" in check.detail
    mc["value"] = mc_record.monte_carlo["value"] + 3.0 * tol["value"]
    bad = verify_record(_redigest(mc_record, monte_carlo=mc))
    assert [c.name for c in bad.failures] == ["Monte Carlo"] and "value recorded" in bad.failures[0].detail


def test_monte_carlo_tolerance_formula():
    # Standard error of the difference of two independent means of M draws: u sqrt(2/M)
    # (common practice), times 4.
    tol = monte_carlo_tolerance(2.0, 10_000)
    assert tol["value"] == pytest.approx(4 * 2.0 * math.sqrt(2 / 10_000))
    assert tol["u"] == pytest.approx(4 * 2.0 / math.sqrt(9_999))


def test_model_is_data_not_code(tmp_path, mc_record):
    """A record whose model tries to run code is refused by the expression parser; nothing runs."""
    marker = tmp_path / "ran"
    budget = dict(mc_record.budget)
    budget["model"] = f"__import__('os').system('touch {marker}')"
    forged = _redigest(mc_record, budget=budget)
    path = save_record(forged, tmp_path / "evil.json")
    result = verify_record(path)
    assert not result.passed and [c.name for c in result.failures] == ["budget"]
    assert not marker.exists()
    from pathlib import Path

    import fieldbudget.files.record as mod

    source = Path(mod.__file__).read_text(encoding="utf-8")
    for word in ("import pickle", "pickle.load", " eval(", " exec(", "yaml.load("):
        assert word not in source


def test_compare_editions_shielded_proton_ratio_2022_to_2018():
    """B = 2 pi f / gamma'_p for the same frequency under two CODATA editions.

    Published values (CODATA 2018 and 2022 tables, as copied in scipy.constants,
    key 'shielded proton gyromag. ratio in MHz/T'): 42.576 384 74(46) and
    42.576 385 43(17) MHz/T, so B(2018)/B(2022) - 1 = 42.57638543/42.57638474 - 1
    = +16.2e-9 (also given in the project's NMR notes, section 1.5).
    """
    scipy_constants = pytest.importorskip("scipy.constants._codata")
    g18 = scipy_constants._physical_constants_2018[GAMMA]
    g22 = scipy_constants._physical_constants_2022[GAMMA]
    b = nmr_budget(2022)
    b["inputs"]["y_tb"]["value"] = 0.0
    rec = make_record(b, created_utc=STAMP)
    cmp = compare_editions(rec, 2018)
    assert (cmp.edition_from, cmp.edition_to) == (2022, 2018)
    expected = g22[0] / g18[0] - 1.0
    assert round(expected * 1e9, 1) == 16.2
    assert cmp.relative_change == pytest.approx(expected, rel=1e-6)
    # u: the 2018 ratio is less certain (0.46 vs 0.17 in the last digits): u grows
    assert cmp.u_to > cmp.u_from
    (sym, ref, v_from, v_to, u_from, u_to), = cmp.inputs
    assert (sym, ref, v_from, v_to) == ("gp", GAMMA, g22[0], g18[0])
    assert (u_from, u_to) == (g22[2], g18[2])
    text = cmp.report()
    assert "CODATA 2022 -> CODATA 2018" in text and "relative +1.621e-08" in text
    assert "\n" not in repr(cmp)
    back = compare_editions(rec, 2022)
    assert back.relative_change == 0.0 and back.delta_u == 0.0


def test_compare_refuses_an_unknown_edition(mc_record):
    with pytest.raises(InputError, match="edition must be one of 2014, 2018, 2022"):
        compare_editions(mc_record, 1999)


def test_compare_without_codata_inputs_changes_nothing():
    rec = make_record(mixed_budget(), created_utc=STAMP)
    assert rec.codata_edition is None
    cmp = compare_editions(rec, 2018)
    assert cmp.delta_value == 0.0 and cmp.inputs == ()
    assert "nothing changes" in cmp.report()


@pytest.mark.parametrize("edition", [2014, 2018, 2022])
def test_codata_edition_is_found_from_the_values_when_the_metadata_has_none(edition):
    b = nmr_budget(edition)
    del b["metadata"]
    assert make_record(b, created_utc=STAMP).codata_edition == edition
    b["inputs"]["gp"]["value"] = 42.5  # a value that is in no edition's table
    assert make_record(b, created_utc=STAMP).codata_edition is None


def test_a_budget_with_several_measurands_gets_a_several_output_record(tmp_path):
    b = mixed_budget()
    del b["measurand"]
    b["model"] = {"K": "a + b", "L": "c * d"}
    b["measurands"] = {"K": {"unit": "mT/A"}, "L": {"unit": "1"}}
    b["correlations"] = []
    rec = make_record(b, monte_carlo=20_000, seed=4, created_utc=STAMP)
    assert rec.kind == "fieldbudget several-output record"
    assert rec.results["gum"]["correlation"] and rec.results["monte_carlo"]
    path = save_record(rec, tmp_path / "kl.record.json")
    assert load_record(path).digest == rec.digest
    assert verify_record(path).passed


# -- canonical serialisation: properties ---------------------------------------------------------

from hypothesis import given, settings
from hypothesis import strategies as st

_json = st.recursive(
    st.none() | st.booleans() | st.integers(-(2**53), 2**53) | st.floats(allow_nan=False, allow_infinity=False)
    | st.text(max_size=12),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=6), inner, max_size=4),
    max_leaves=20,
)


@settings(max_examples=200, deadline=None)
@given(st.dictionaries(st.text(max_size=6), _json, max_size=6))
def test_canonical_form_round_trips_exactly_and_ignores_key_order(doc):
    data = canonical_bytes(doc)
    assert json.loads(data.decode("utf-8")) == doc  # floats come back bit for bit (repr round trip)
    reordered = dict(reversed(list(doc.items())))
    assert canonical_bytes(reordered) == data
