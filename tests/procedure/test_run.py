"""ProcedureRun: steps, entered and fixed values, the measurement dict, acceptance limits."""

from __future__ import annotations

import json
from pathlib import Path
from types import SimpleNamespace

import pytest

from fieldbudget.errors import InputError
from fieldbudget.procedure import ProcedureRun, load_procedure, procedure_from_dict

NMR_TEMPLATE = Path(__file__).resolve().parents[2] / "templates" / "nmr-reference-field.toml"
READINGS = [42576412.31, 42576412.18, 42576412.27, 42576412.22, 42576412.35]


@pytest.fixture
def run() -> ProcedureRun:
    return ProcedureRun(load_procedure(NMR_TEMPLATE))


def test_measurement_dict_equals_hand_written(run):
    run.set("frequency_readings", ", ".join(map(str, READINGS)))
    run.set("sample_temperature", "23.1")
    run.set("days_since_calibration", 140)
    # Written by hand from the template's lab values and the operator's entries above.
    expected = {
        "nucleus": "shielded-proton",
        "codata": 2022,
        "frequency": {"readings_Hz": READINGS, "counter_resolution_Hz": 0.01},
        "timebase": {"offset": 2.1e-9, "u": 5.0e-10, "ageing_per_day": 3.0e-11,
                     "days_since_calibration": 140.0,
                     "source": "OCXO s/n OX-55031 in counter DEMO-FC-9 s/n FC9-30118, certificate "
                               "LMCL-FS-2026-0712 of 2026-08-04 (invented)",
                     "certificate": "LMCL-FS-2026-0712", "calibration_date": "2026-08-04",
                     "ageing_document": "data sheet of OCXO s/n OX-55031 and the lab's drift log DL-FS-03 (invented)"},
        "sample": {"temperature_C": 23.1, "u_temperature_C": 0.3, "shape": "sphere"},
        "line": {"fwhm_Hz": 8.0, "snr": 60.0, "points_per_fwhm": 10.0},
        "gradient_T_per_m": 2.0e-4,
        "u_gradient_T_per_m": 5.0e-5,
        "offset_m": 0.0,
        "u_offset_m": 2.0e-4,
        "probe_perturbation": {"value": 0.0, "u": 1.0e-8,
                               "source": "Probe DEMO-PX-3 s/n PX3-2291, characterisation LMCL-PC-2025-031 (invented)",
                               "report": "LMCL-PC-2025-031"},
    }
    assert run.measurement_dict() == expected
    assert json.loads(json.dumps(run.measurement_dict())) == expected
    # Record-only values stay out of the measurement.
    assert run.record_dict() == {"operator": "", "id": "", "magnet_current_A": 112.5,
                                 "instrument": "NMR magnetometer LX-7 s/n LX7-0088 (invented)",
                                 "probe": "proton probe PX-3 s/n PX3-2291 (invented)"}


def test_missing_value_is_named(run):
    assert run.missing() == ("frequency_readings",)
    assert not run.complete
    with pytest.raises(InputError) as info:
        run.measurement_dict()
    assert str(info.value) == ("procedure 'nmr-reference-field': frequency_readings must be entered "
                               "(Locked resonance frequency, counter readings, step 'Lock on the resonance "
                               "and read the frequency') (got None)")


def test_steps_next_back_go(run):
    seen = []
    run.subscribe(lambda r: seen.append(r.step.id))
    assert run.is_first and run.step.id == "prepare"
    run.back()
    assert run.step_index == 0 and seen == []   # no change, no notice
    run.next()
    run.next()
    assert run.step.id == "lock"
    assert [c.id for c in run.step_components()] == ["line_fwhm", "line_snr", "frequency_readings",
                                                        "line_points", "counter_resolution", "instrument"]
    run.go("review")
    assert run.is_last
    run.next()
    assert run.is_last and seen == ["place-probe", "lock", "review"]
    with pytest.raises(InputError, match="step must be one of 'prepare'"):
        run.go("calibrate")
    with pytest.raises(InputError, match="step must be a step index from 0 to 4"):
        run.go(7)


@pytest.mark.parametrize("cid, value, message", [
    ("line_fwhm", "eight", "line_fwhm must be a finite number >= 0 Hz (got 'eight')"),
    ("line_fwhm", -1, "line_fwhm must be a finite number >= 0 Hz (got -1)"),
    ("line_fwhm", "nan", "line_fwhm must be a finite number >= 0 Hz (got 'nan')"),
    ("days_since_calibration", 800, "days_since_calibration must be a finite number from 0 to 730 d (got 800)"),
    ("frequency_readings", "42e6 x", ("frequency_readings must be a list of finite numbers from 1000 to 1e+09 Hz "
                                     "(separated by commas, spaces or new lines) (got 'x')")),
    ("frequency_readings", "", ("frequency_readings must be a list of finite numbers from 1000 to 1e+09 Hz "
                               "(separated by commas, spaces or new lines) (got '')")),
    ("timebase_u", 1e-9, ("timebase_u must be left as the lab fixed it "
                         "(Certificate LMCL-FS-2026-0712: U = 1.0e-9, k = 2 (invented)) (got 1e-09)")),
    ("codata_edition", 2018, ("codata_edition must be left as the lab fixed it (Lab policy QP-07 (invented): "
                             "CODATA 2022 for all NMR field measurements from 2026-01) (got 2018)")),
])
def test_bad_entries_keep_the_previous_value(run, cid, value, message):
    before = dict(run.entered)
    with pytest.raises(InputError) as info:
        run.set(cid, value)
    assert str(info.value) == f"procedure 'nmr-reference-field': {message}"
    assert info.value.field == cid
    assert dict(run.entered) == before


def test_unknown_component(run):
    with pytest.raises(InputError, match="nope must be a component of this procedure"):
        run.set("nope", 1)


def test_choice_from_text(nmr_data):
    nmr_data["codata"].update(operator_may_choose=True, allowed=[2018, 2022])
    r = ProcedureRun(procedure_from_dict(nmr_data, "x.toml"))
    assert r.set("codata_edition", "2018") == 2018
    r.set("frequency_readings", READINGS)
    assert r.measurement_dict()["codata"] == 2018


def test_training_mode_and_listeners(run):
    calls = []
    off = run.subscribe(lambda r: calls.append(r.training))
    run.set_training(True)
    run.set_training(True)  # no change, no call
    assert run.training and calls == [True]
    off()
    run.set_training(False)
    assert calls == [True]


def test_entered_is_read_only(run):
    with pytest.raises(TypeError):
        run.entered["line_fwhm"] = 3  # type: ignore[index]
    assert run.fixed["timebase_u"] == 5.0e-10
    assert run.value("timebase_u") == 5.0e-10 and run.value("line_fwhm") == 8.0


def test_repr_and_to_dict(run):
    assert repr(run) == "<ProcedureRun 'nmr-reference-field' step 1/5 'prepare', 8 entered, 1 missing>"
    run.set_training(True)
    assert repr(run).endswith(", training>")
    d = run.to_dict()
    assert json.loads(json.dumps(d)) == d and d["step"] == "prepare"


# ---------------------------------------------------------------- acceptance limits
# Limits are inclusive (common practice for a stated "at most" / "at least"):
# at the threshold the limit is met; one step beyond it is not.


def _verdict(report, limit_id):
    return next(v for v in report.verdicts if v.limit.id == limit_id)


@pytest.mark.parametrize("cid, limit_id, value, passed", [
    ("line_fwhm", "line-width", 30.0, True),
    ("line_fwhm", "line-width", 30.000001, False),
    ("line_fwhm", "line-width", 29.999, True),
    ("line_snr", "snr", 20.0, True),
    ("line_snr", "snr", 19.99, False),
    ("sample_temperature", "temperature", 18.0, True),
    ("sample_temperature", "temperature", 28.0, True),
    ("sample_temperature", "temperature", 17.9, False),
    ("sample_temperature", "temperature", 28.1, False),
])
def test_component_limits_at_and_beyond(run, cid, limit_id, value, passed):
    run.set(cid, value)
    v = _verdict(run.check(), limit_id)
    assert v.value == value and v.passed is passed


def _result(value, U, warnings=()):
    return SimpleNamespace(estimate=value, standard_uncertainty=U / 2, expanded_uncertainty=U,
                           coverage_factor=2.0, effective_dof=float("inf"), warnings=tuple(warnings))


@pytest.mark.parametrize("U, passed", [(5.0e-7, True), (4.9e-7, True), (5.0001e-7, False)])
def test_relative_expanded_uncertainty_at_and_beyond(run, U, passed):
    # B = 1 T exactly, so U/B equals U in T; 5e-7 is the template's limit.
    v = _verdict(run.check(_result(1.0, U)), "u-rel")
    assert v.value == pytest.approx(U, rel=1e-15) and v.passed is passed


def test_report_overall(run):
    assert run.check().accepted is None               # no result yet
    ok = run.check(_result(1.0, 2e-7))
    assert ok.accepted is True and ok.failures == ()
    bad = run.check(_result(1.0, 2e-7, warnings=("line wide for the gradient",)))
    assert bad.accepted is False and [v.limit.id for v in bad.failures] == ["warnings"]
    assert repr(bad) == "<AcceptanceReport 'nmr-reference-field': REJECTED, 4/5 limits met>"
    html = bad._repr_html_()
    assert "Rejected:" in html and ">rejected<" in html and 'class="fb-proc-acceptance"' in html
    assert "warning_count" not in html and "&lt;=" not in html   # the rule in words, not code
    d = bad.to_dict()
    assert json.loads(json.dumps(d)) == d and d["accepted"] is False


# ---------------------------------------------------------------- with the NMR layer


def test_run_evaluates_like_the_hand_written_measurement(run):
    from fieldbudget.nmr.measurement import NMRMeasurement

    assert run.result is None and not run.current
    assert run.errors == {"frequency_readings": "Locked resonance frequency, counter readings: still to be entered"}
    run.set("frequency_readings", READINGS)
    assert run.current and run.errors == {}
    by_hand = NMRMeasurement.from_dict(run.measurement_dict()).evaluate()
    assert run.result.estimate == by_hand.estimate
    assert run.result.standard_uncertainty == by_hand.standard_uncertainty
    assert run.budget().to_dict() == by_hand.budget.to_dict()
    # The gradient times the positioning uncertainty is a component: doubling G changes u_c.
    u0 = run.result.standard_uncertainty
    run.set("gradient", 4e-4)
    assert run.result.standard_uncertainty > u0


def test_rejected_by_the_nmr_layer_keeps_last_good_result(run):
    run.set("frequency_readings", READINGS)
    good = run.result
    run.set("line_fwhm", 0)   # allowed by the procedure's bound (>= 0), refused by the NMR layer (> 0)
    assert not run.current
    assert run.result is good
    (field, message), = run.errors.items()
    assert field == "line_fwhm" and "#/line/fwhm_Hz" in message
    report = run.check()
    assert next(v for v in report.verdicts if v.limit.id == "u-rel").passed is None


def test_acceptance_on_a_real_evaluation(run):
    run.set("frequency_readings", READINGS)
    report = run.check()
    assert report.accepted is True, report.to_dict()
    u_rel = next(v for v in report.verdicts if v.limit.id == "u-rel").value
    assert u_rel == pytest.approx(run.result.expanded_uncertainty / run.result.estimate, rel=1e-12)


def test_record_and_measurement_file_of_a_run(run, tmp_path):
    from fieldbudget.files.record import verify_record
    from fieldbudget.nmr.measurement import NMRMeasurement

    with pytest.raises(InputError, match="budget must be evaluated first"):
        run.make_record()
    run.set("frequency_readings", READINGS)
    run.set("operator", "A. Tester")
    path = run.save_measurement(tmp_path / "m.json")
    again = NMRMeasurement.from_file(path).evaluate()
    assert again.standard_uncertainty == run.result.standard_uncertainty
    rec = run.make_record()
    assert rec.procedure == {"name": "Reference field by proton NMR", "version": "1.0", "id": "nmr-reference-field"}
    assert rec.operator == "A. Tester"
    assert rec.remarks == "Procedure nmr-reference-field v1.0: every acceptance limit met."
    from fieldbudget.files.record import save_record

    assert verify_record(save_record(rec, tmp_path / "r.json")).passed
