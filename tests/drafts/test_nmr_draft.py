"""NMRDraft: the NMR measurement description as text fields, evaluated on each valid change."""

import math
import statistics

import pytest
import scipy.constants as sc
from nmr_description import nmr_description

from fieldbudget.drafts.nmr_draft import NMR_FIELDS, NMRDraft
from fieldbudget.nmr.measurement import NMRMeasurement


@pytest.fixture
def draft():
    return NMRDraft(nmr_description())


def test_draft_evaluates_like_the_nmr_layer(draft):
    direct = NMRMeasurement.from_dict(nmr_description()).evaluate()
    assert draft.current and draft.errors == {}
    assert draft.result.to_dict() == direct.result.to_dict()
    # 14: the line noise is in the scatter of the eight readings, not a separate input
    assert len(draft.budget.inputs) == 14 and "d_line" not in draft.budget.symbols


def test_field_is_close_to_frequency_over_gamma_p_codata_2022(draft):
    # B ~ f / (gamma'_p / 2 pi): CODATA 2022 via scipy.constants, 'shielded proton gyromag. ratio in MHz/T';
    # the corrections of the model (temperature, shape, timebase) are a few ppm here.
    f = statistics.fmean(nmr_description()["frequency"]["readings_Hz"])
    gamma = sc.physical_constants["shielded proton gyromag. ratio in MHz/T"][0] * 1e6
    assert draft.result.estimate == pytest.approx(f / gamma, rel=1e-5)


def test_bad_value_beside_its_field_last_good_kept(draft):
    good = draft.result
    assert draft.set("sample.u_temperature_C", "-0.3") is False
    assert draft.result is good and not draft.current
    assert list(draft.errors) == ["sample.u_temperature_C"]
    assert "-0.3" in draft.errors["sample.u_temperature_C"]
    assert draft.fields["sample.u_temperature_C"].text == "-0.3"
    draft.set("sample.u_temperature_C", "warm")
    assert draft.errors == {"sample.u_temperature_C":
                            "sample.u_temperature_C must be a finite number, or blank to leave it out (got 'warm')"}
    draft.set("sample.u_temperature_C", "3")
    assert draft.current and draft.result.standard_uncertainty > good.standard_uncertainty


def test_conflicting_keys_are_marked_on_a_frequency_field(draft):
    draft.set("frequency.value_Hz", "42576395")
    (path, msg), = draft.errors.items()
    assert path.startswith("frequency.") and "exactly one of" in msg
    draft.set("frequency.value_Hz", "")
    assert draft.current


def test_physics_warnings_sit_beside_their_fields(draft):
    # the notes of the description itself sit beside their own keys: the line noise is in the readings'
    # scatter, and the cylinder's susceptibility spread makes the detection method matter
    base = ["line.noise_in_readings", "line.detection"]
    assert list(draft.warnings_by_field) == base
    draft.set("line.noise_in_readings", "false")  # counted twice, on purpose: the note says so
    assert "counted twice" in draft.warnings_by_field["line.noise_in_readings"][0]
    draft.set("line.noise_in_readings", "")
    draft.set("sample.temperature_C", "60")  # outside the 5-45 degC validity of the shielding coefficient
    assert set(draft.warnings_by_field) == {*base, "sample.temperature_C"}
    assert "outside" in draft.warnings_by_field["sample.temperature_C"][0]
    draft.set("gradient_T_per_m", "0.002")  # broadens the line far beyond its width
    assert "gradient_T_per_m" in draft.warnings_by_field
    draft.set("sample.temperature_C", "22.5")
    draft.set("gradient_T_per_m", "1e-5")
    assert list(draft.warnings_by_field) == base and draft.other_warnings == []


def test_blank_box_leaves_the_key_out(draft):
    draft.set("probe_perturbation.u", "")
    draft.set("probe_perturbation.value", "")
    draft.set("probe_perturbation.source", "")
    assert "probe_perturbation" not in draft.description()
    assert "d_probe" not in {q.symbol for q in draft.budget.inputs}


def test_readings_from_counter_csv(draft):
    readings = [42576395.10, 42576395.30, 42576395.25]
    csv = "time_s;frequency_Hz\n" + "\n".join(f"{i};{r}" for i, r in enumerate(readings))
    assert draft.load_counter_csv(csv.encode())
    c = draft.result.contribution("f_read")
    assert c.estimate == pytest.approx(statistics.fmean(readings), rel=1e-15)
    assert c.standard_uncertainty == pytest.approx(statistics.stdev(readings) / math.sqrt(3))  # GUM 4.2.3
    assert draft.fields["frequency.readings_Hz"].text.splitlines()[0] == "42576395.1"


def test_bad_counter_csv_keeps_readings(draft):
    before = draft.fields["frequency.readings_Hz"].text
    assert not draft.load_counter_csv(b"frequency_Hz\n42576395.1\nabc\n")
    assert "line 3" in draft.errors["frequency.readings_Hz"]
    assert draft.fields["frequency.readings_Hz"].text == before and draft.current


def test_edition_choice_and_keys_not_in_the_form_are_kept():
    desc = nmr_description()
    desc["metadata"] = {"operator": "A. N. Other"}
    d = NMRDraft(desc)
    assert d.description()["metadata"] == {"operator": "A. N. Other"}
    d.set("codata", "2018")
    assert d.current and d.budget.metadata["codata"] == 2018


def test_save_measurement_round_trip(draft, tmp_path):
    p = draft.save_measurement(tmp_path / "m.json")
    again = NMRDraft.from_file(p)
    assert again.result.to_dict() == draft.result.to_dict()


def test_repr(draft):
    assert repr(draft) == f"<NMRDraft shielded-proton, {len(NMR_FIELDS)} fields, current>"


from hypothesis import given, settings
from hypothesis import strategies as st

_DRAFT = NMRDraft(nmr_description())
_PATHS = sorted(_DRAFT.fields)


@settings(max_examples=60, deadline=None)
@given(path=st.sampled_from(_PATHS), text=st.one_of(st.text(max_size=10), st.sampled_from(
    ["-1", "0", "1e300", "nan", "inf", "", " ", "1,2", "42576395 42576396", "2018", "sphere"])))
def test_any_text_in_any_field_never_raises(path, text):
    d = NMRDraft(nmr_description())
    good = d.result
    d.set(path, text)
    assert d.fields[path].text == text
    assert (d.current and not d.errors) or (d.result is good and d.errors)


def test_a_defect_below_is_shown_and_the_last_good_budget_kept(draft, monkeypatch):
    import fieldbudget.nmr.measurement as m

    good = draft.result

    def broken(self):
        raise TypeError("a defect below the draft")

    monkeypatch.setattr(m.NMRMeasurement, "evaluate", broken)
    assert draft.set("line.snr", "70") is False
    assert draft.result is good and draft.errors[""] == "internal error: TypeError: a defect below the draft"


def test_huge_effective_dof_evaluates(draft):
    # a line-centre u of 2 kHz dominates: nu_eff ~ 3e19, k must be the normal 2.0 (JCGM 100:2008 G.6.6)
    assert draft.set("line.u_Hz", "2000"), draft.errors
    assert draft.result.coverage_factor == pytest.approx(2.0, abs=1e-9)


def test_loading_a_counter_file_replaces_a_csv_reference(tmp_path):
    readings = nmr_description()["frequency"]["readings_Hz"]
    csv = "time_s,frequency_Hz\n" + "".join(f"{i},{r}\n" for i, r in enumerate(readings))
    (tmp_path / "counter.csv").write_text(csv)
    desc = nmr_description()
    del desc["frequency"]["readings_Hz"]
    desc["frequency"]["readings_csv"] = {"path": "counter.csv", "column": "frequency_Hz"}
    d = NMRDraft(desc, base_dir=tmp_path)
    assert d.current, d.errors
    by_reference = d.result.standard_uncertainty
    assert d.specs["frequency.readings_csv.path"].section == "frequency"
    assert d.load_counter_csv(csv.encode())
    assert "readings_csv" not in d.description()["frequency"]
    assert d.result.standard_uncertainty == by_reference  # the same readings, typed in now


def _write_map(path, slope_z_t_per_m):
    # an invented source-free field: uniform plus linear gradients (harmonic), on a 5 x 5 x 5 grid
    g = [-0.01 + 0.005 * i for i in range(5)]
    rows = "".join(f"{x},{y},{z},{1.0 + 2e-4 * x + slope_z_t_per_m * z:.12f}\n" for x in g for y in g for z in g)
    path.write_text("x_m,y_m,z_m,B_T\n" + rows)


def test_a_field_map_is_fitted_again_only_when_its_file_or_settings_change(tmp_path, monkeypatch):
    from fieldbudget.nmr import fieldmap
    from fieldbudget.nmr.components import field_map

    fits = []
    original = fieldmap.fit_map
    monkeypatch.setattr(fieldmap, "fit_map", lambda *a, **k: fits.append(a[1:]) or original(*a, **k))
    field_map._fitted_map.cache_clear()  # a fit of the same bytes cached by another test would hide the count
    _write_map(tmp_path / "map.csv", 5e-4)
    desc = nmr_description()
    for k in ("gradient_T_per_m", "u_gradient_T_per_m", "offset_m", "u_offset_m"):
        del desc[k]
    desc["field_map"] = {"path": "map.csv", "sample_position_m": [0.001, 0.0, 0.002], "order": 2}
    d = NMRDraft(desc, base_dir=tmp_path)
    assert d.current, d.errors
    assert fits == [(2,)]
    assert d.set("sample.u_temperature_C", "0.2"), d.errors  # an entry elsewhere: the same fit
    assert d.set("frequency.counter_resolution_Hz", "0.02"), d.errors
    assert fits == [(2,)]
    assert d.set("field_map.order", "1"), d.errors  # a setting of the fit
    assert fits == [(2,), (1,)]
    before = d.budget.input("G_z").estimate
    _write_map(tmp_path / "map.csv", 6e-4)  # new bytes: the next build refits
    assert d.set("sample.u_temperature_C", "0.3"), d.errors
    assert fits == [(2,), (1,), (1,)]
    assert d.budget.input("G_z").estimate == pytest.approx(6e-4, rel=1e-9) and before == pytest.approx(5e-4, rel=1e-9)
    field_map._fitted_map.cache_clear()  # leave no fit made under the counting stand-in
