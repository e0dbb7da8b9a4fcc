"""Errors in procedure files: each names the file, the key path and what is allowed (exact text)."""

from __future__ import annotations

import pickle

import pytest

from fieldbudget.errors import BudgetFileError
from fieldbudget.procedure import load_procedure, procedure_from_dict


def _err(data, where="lab.toml") -> BudgetFileError:
    with pytest.raises(BudgetFileError) as info:
        procedure_from_dict(data, where)
    return info.value


def _set(d, path, value):
    *head, last = path
    for k in head:
        d = d[k]
    d[last] = value


def _del(d, path):
    *head, last = path
    for k in head:
        d = d[k]
    del d[last]


CASES = [
    # (change, exact message)
    (lambda d: _set(d, ["format"], "v2"),
     ("lab.toml, at format: must be 'fieldbudget-procedure/1' (got 'v2')")),
    (lambda d: _del(d, ["procedure", "lab"]),
     ("lab.toml, at procedure: missing required key 'lab'; required keys are 'id', 'name', 'version', 'lab', 'kind'")),
    (lambda d: _set(d, ["procedure", "kind"], "hall"),
     ("lab.toml, at procedure.kind: must be one of 'nmr-field', 'teslameter-calibration' (got 'hall')")),
    (lambda d: _set(d, ["procedure", "colour"], "red"),
     ("lab.toml, at procedure: unknown key 'colour'; allowed keys are 'approved_by', 'id', 'issued', "
     "'kind', 'lab', 'name', 'summary', 'version'")),
    (lambda d: _set(d, ["steps", 2, "title"], 5),
     ("lab.toml, at steps[2].title: must be a string (got 5)")),
    (lambda d: _set(d, ["steps", 1, "instruction"], ""),
     ("lab.toml, at steps[1].instruction: must not be empty")),
    (lambda d: _set(d, ["steps"], []),
     ("lab.toml, at steps: must have at least 1 entry")),
    (lambda d: _set(d, ["components", "line_fwhm", "kind"], "float"),
     ("lab.toml, at components.line_fwhm.kind: must be one of 'number', 'numbers', 'choice', 'text', "
     "'boolean' (got 'float')")),
    (lambda d: _set(d, ["components", "line_fwhm", "target"], "line..fwhm"),
     ("lab.toml, at components.line_fwhm.target: must be a dotted key path such as "
     "'frequency.readings_Hz' (got 'line..fwhm')")),
    (lambda d: _set(d, ["components", "Bad Name"], {}),
     ("lab.toml, at components: must be a name of lower-case letters, digits, '_' or '-', starting with "
     "a letter (got 'Bad Name')")),
    (lambda d: _set(d, ["steps", 0, "id"], "Prepare"),
     ("lab.toml, at steps[0].id: must be a name of lower-case letters, digits, '_' or '-', starting with "
     "a letter (got 'Prepare')")),
    (lambda d: _del(d, ["components", "timebase_u", "source"]),
     ("lab.toml, at components.timebase_u: missing required key 'source' for a component the lab fixes: "
     "name the certificate, characterisation or policy it comes from")),
    (lambda d: _del(d, ["components", "timebase_u", "value"]),
     ("lab.toml, at components.timebase_u: missing required key 'value' for a component the lab fixes "
     "(set_by = 'lab')")),
    (lambda d: _set(d, ["components", "timebase_u", "value"], "5e-10"),
     ("lab.toml, at components.timebase_u.value: must be a finite number for a component of kind "
     "'number' (got '5e-10')")),
    (lambda d: _set(d, ["components", "sample_shape", "value"], "cube"),
     ("lab.toml, at components.sample_shape.value: must be one of 'sphere', 'cylinder', "
     "'long-cylinder' (got 'cube')")),
    (lambda d: _set(d, ["components", "days_since_calibration", "value"], 900),
     ("lab.toml, at components.days_since_calibration.value: must lie in [0, 730] (got 900)")),
    (lambda d: _set(d, ["steps", 2, "components", 1], "line_snR"),
     ("lab.toml, at steps[2].components[1]: must be a name of lower-case letters, digits, '_' or '-', "
     "starting with a letter (got 'line_snR')")),
    (lambda d: _set(d, ["steps", 2, "components", 1], "line_noise"),
     ("lab.toml, at steps[2].components[1]: must name a component of this file (codata_edition, "
     "counter_resolution, days_since_calibration, frequency_readings, gradient, gradient_u, instrument, line_fwhm, "
     "line_points, line_snr, magnet_current, measurement_id, nucleus, offset, offset_u, operator, probe_id, "
     "probe_perturbation, probe_perturbation_u, probe_report, probe_source, sample_shape, sample_temperature, "
     "sample_temperature_u, timebase_ageing, timebase_ageing_document, timebase_calibration_date, "
     "timebase_certificate, timebase_certificate_id, timebase_offset, timebase_u) (got 'line_noise')")),
    (lambda d: _set(d, ["steps", 3, "components"], ["days_since_calibration", "line_fwhm"]),
     ("lab.toml, at steps[3].components[1]: must not repeat a component already shown in steps[2] "
     "(got 'line_fwhm')")),
    (lambda d: _set(d, ["steps", 3, "components"], []),
     ("lab.toml, at components.days_since_calibration: an operator component must be listed in the "
     "'components' of one step")),
    (lambda d: _set(d, ["steps", 1, "cautions"], ["lasers"]),
     ("lab.toml, at steps[1].cautions[0]: must name a [[safety]] entry (implants, projectiles, fringe, "
     "energy, cryogens) (got 'lasers')")),
    (lambda d: _set(d, ["steps", 4, "id"], "prepare"),
     ("lab.toml, at steps[4].id: must be unique; 'prepare' is used twice")),
    (lambda d: _set(d, ["codata", "edition"], 2010),
     ("lab.toml, at codata.edition: must be one of the CODATA editions 2014, 2018, 2022 (got 2010)")),
    (lambda d: _set(d, ["codata", "allowed"], [2018]),
     ("lab.toml, at codata.edition: must be one of 'allowed' [2018] (got 2022)")),
    (lambda d: _set(d, ["acceptance", 0, "result"], "u_rel"),
     ("lab.toml, at acceptance[0].result: must be one of 'value', 'standard_uncertainty', "
     "'expanded_uncertainty', 'relative_expanded_uncertainty', 'coverage_factor', 'effective_dof', "
     "'warning_count', 'max_abs_error', 'max_expanded_uncertainty', 'nonconforming_points' (got 'u_rel')")),
    (lambda d: _set(d, ["acceptance", 0, "result"], "max_abs_error"),
     ("lab.toml, at acceptance[0].result: must be one of 'value', 'standard_uncertainty', "
     "'expanded_uncertainty', 'relative_expanded_uncertainty', 'coverage_factor', 'effective_dof', "
     "'warning_count' for kind 'nmr-field' (got 'max_abs_error')")),
    (lambda d: _set(d, ["acceptance", 1, "result"], "value"),
     ("lab.toml, at acceptance[1]: must name exactly one of 'result' or 'component', not both")),
    (lambda d: _del(d, ["acceptance", 1, "component"]),
     ("lab.toml, at acceptance[1]: must name exactly one of 'result' or 'component'")),
    (lambda d: _del(d, ["acceptance", 1, "max"]),
     ("lab.toml, at acceptance[1]: must give 'min', 'max' or both")),
    (lambda d: _set(d, ["acceptance", 3, "max"], 10.0),
     ("lab.toml, at acceptance[3].max: must be >= min = 18.0 (got 10.0)")),
    (lambda d: _set(d, ["acceptance", 1, "component"], "sample_shape"),
     ("lab.toml, at acceptance[1].component: must name a component of kind 'number'")),
    (lambda d: _set(d, ["components", "gradient", "target"], "sample"),
     ("lab.toml, at components.gradient.target: must not overlap the target of component "
     "'sample_temperature' ('sample.temperature_C') (got 'sample')")),
    (lambda d: _set(d, ["components", "gradient", "training"], {"what": "x", "why": "y"}),
     ("lab.toml, at components.gradient.training: missing required key 'typical'; required keys are "
     "'what', 'why', 'typical'")),
]


@pytest.mark.parametrize("change, message", CASES, ids=range(len(CASES)))
def test_error_message(nmr_data, change, message):
    change(nmr_data)
    err = _err(nmr_data)
    assert str(err) == message
    assert err.path == "lab.toml"
    assert isinstance(err, ValueError)
    assert str(pickle.loads(pickle.dumps(err))) == message


def test_missing_file(tmp_path):
    with pytest.raises(BudgetFileError) as info:
        load_procedure(tmp_path / "none.toml")
    assert str(info.value) == f"{tmp_path / 'none.toml'}: cannot be read (No such file or directory)"


def test_not_toml(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text('format = "fieldbudget-procedure/1"\n[procedure\n', encoding="utf-8")
    with pytest.raises(BudgetFileError) as info:
        load_procedure(p)
    assert str(info.value).startswith(f"{p}: is not valid TOML: ")
    assert "line 2" in str(info.value)


def test_not_utf8(tmp_path):
    p = tmp_path / "latin.toml"
    p.write_bytes('name = "Zürich"'.encode("latin-1"))
    with pytest.raises(BudgetFileError, match="must be UTF-8 text"):
        load_procedure(p)
