"""The traceability chain comes from input roles, stated or derived from data, never from source text."""

from fieldbudget.constants import lookup, lookup_other
from fieldbudget.engine import Budget, InputQuantity, Measurand
from fieldbudget.engine.traceability import ROLE_TITLES, traceability
from fieldbudget.nmr import NMRMeasurement

README_EXAMPLE = "tests/nmr/data/water_cylinder_1p5T.json"


def _budget(*inputs, **kw):
    model = " + ".join(q.symbol for q in inputs)
    return Budget(model=model, inputs=inputs, measurand=Measurand("y", ""), **kw)


def test_water_data_is_published_data_not_codata():
    # regression: the chain called Petley & Donaldson's coefficient and the susceptibility
    # "CODATA 2022 recommended value"
    chain = traceability(NMRMeasurement.from_file(README_EXAMPLE).to_budget())
    for sym, name in (("alpha_T", "proton shielding temperature coefficient in water"),
                      ("chi", "volume magnetic susceptibility of water")):
        link = chain[sym]
        assert link.role == "published_data" and not link.stated
        assert link.fact["citation"] == lookup_other(name).source
        assert "CODATA" not in link.text
    gamma = chain["gamma_p_sh"]
    assert gamma.role == "reference_constant"
    assert gamma.fact == {"codata_name": "shielded proton gyromag. ratio in MHz/T", "edition": "2022"}
    assert chain["f_read"].role == "measured"
    # the 25 degC of gamma'_p is a defined condition, marked so in the data file (defined = true)
    assert chain["t_ref"].role == "convention"


def test_source_text_never_makes_a_frequency_standard_link():
    # regression: a drift source that mentions the frequency standard turned y_drift into one
    drift = InputQuantity.rectangular("y_drift", 0.0, 5e-9, source="field drift logged against the frequency standard")
    link = traceability(_budget(drift))["y_drift"]
    assert link.role == "" and link.title == ROLE_TITLES[""] == "role not stated"
    assert "role not stated" in link.text


def test_stated_role_wins_and_its_facts_are_printed():
    tb = InputQuantity.normal("y_tb", 1e-10, 5e-11, role="calibrated",
                              provenance={"certificate": "LMCL-FS-2026-0712", "issuer": "Larkspur (invented)",
                                          "date": "2026-08-04"})
    link = traceability(_budget(tb))["y_tb"]
    assert link.stated and link.role == "calibrated"
    assert link.text == "calibration: certificate LMCL-FS-2026-0712, issued by Larkspur (invented), dated 2026-08-04"


def test_codata_edition_follows_the_value():
    rv = lookup("shielded proton gyromag. ratio in MHz/T", edition=2018)
    q = InputQuantity.normal("g", rv.value, rv.uncertainty, reference=rv.name)
    assert traceability(_budget(q))["g"].fact["edition"] == "2018"


def test_by_role_groups_in_role_order():
    b = _budget(InputQuantity.from_readings("a", [1.0, 1.1, 0.9]), InputQuantity.normal("b", 0.0, 1.0))
    groups = traceability(b).by_role()
    assert list(groups) == ["measured", ""]


def test_a_missing_identity_is_said_and_the_source_text_shown_beside_it():
    # the role decides the words; the free source text never decides them, but where the role's identifying
    # fact (certificate, report, document, citation) is missing it is shown, marked "source given"
    # (ISO/IEC 17025:2017 7.8.4.1 asks for the traceability of results; the wording is ours)
    named = InputQuantity.normal("y_tb", 0.0, 5e-10, role="calibrated", source="OCXO certificate C-7 (invented)",
                                 provenance={"certificate": "C-7", "date": "2026-08-04"})
    unnamed = InputQuantity.normal("y_tb2", 0.0, 5e-10, role="calibrated", source="OCXO certificate C-7 (invented)")
    bare = InputQuantity.normal("y_tb3", 0.0, 5e-10, role="calibrated")
    once = InputQuantity.normal("t_s", 22.4, 0.3, role="measured", source="sample thermometer")
    chain = traceability(_budget(named, unnamed, bare, once))
    assert chain["y_tb"].text == "calibration: certificate C-7, dated 2026-08-04"
    assert chain["y_tb2"].text == ("calibration: certificate not identified; source given: OCXO certificate C-7 "
                                   "(invented)")
    assert chain["y_tb3"].text == "calibration: certificate not identified"
    # one measured value is not a Type A evaluation (JCGM 100:2008 4.2 needs repeated observations)
    assert chain["t_s"].text.startswith("measured in this measurement (one value") and "Type A" not in chain["t_s"].text


def test_the_gradient_names_its_report_when_the_file_gives_one():
    import json

    d = json.loads(open(README_EXAMPLE, encoding="utf-8").read())
    d["gradient_T_per_m"], d["u_gradient_T_per_m"] = 1e-4, 2e-5
    d["offset_m"], d["u_offset_m"] = 0.0, 2e-4
    without = traceability(NMRMeasurement.from_dict(d).to_budget())["G_z"].text
    assert without == "laboratory characterisation (report not identified); source given: stated field gradient"
    d["gradient_report"] = "BFSL-FM-2026-017 (invented)"
    assert traceability(NMRMeasurement.from_dict(d).to_budget())["G_z"].text == (
        "laboratory characterisation, report BFSL-FM-2026-017 (invented)")


def test_the_timebase_ageing_names_its_document_when_the_file_gives_one():
    import json

    d = json.loads(open(README_EXAMPLE, encoding="utf-8").read())
    d["timebase"] = {"offset": 1e-9, "u": 5e-10, "ageing_per_day": 3e-11, "days_since_calibration": 30}
    assert traceability(NMRMeasurement.from_dict(d).to_budget())["y_age"].text.startswith(
        "specification (document not named); source given: ageing 3e-11/day x 30 days")
    d["timebase"]["ageing_document"] = "OCXO data sheet rev. B (invented)"
    assert traceability(NMRMeasurement.from_dict(d).to_budget())["y_age"].text == (
        "specification: OCXO data sheet rev. B (invented)")
