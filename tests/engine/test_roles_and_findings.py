"""Input roles and provenance (traceability data), and structured findings."""

import pickle

import pytest

from fieldbudget.engine import ROLES, InputQuantity
from fieldbudget.errors import Finding, InputError


def test_role_round_trips_through_the_budget_file_form():
    q = InputQuantity.normal("f_cal", 1e-9, 2e-11, unit="", role="calibrated",
                             provenance={"certificate": "DEMO-CT-2026-0712", "issuer": "Demo Cal Lab", "date": "2026-07-12"})
    d = q.to_dict()
    assert d["role"] == "calibrated"
    assert d["provenance"] == {"certificate": "DEMO-CT-2026-0712", "date": "2026-07-12", "issuer": "Demo Cal Lab"}
    back = InputQuantity.from_dict("f_cal", d)
    assert back == q
    assert back.provenance_dict["issuer"] == "Demo Cal Lab"


def test_input_without_role_keeps_the_old_file_form():
    q = InputQuantity.normal("x", 1.0, 0.1)
    assert q.role == "" and q.provenance == ()
    assert "role" not in q.to_dict() and "provenance" not in q.to_dict()


@pytest.mark.parametrize("role, provenance, field", [
    ("traceable", {}, "role"),
    ("calibrated", {"report": "R-1"}, "provenance.report"),
    ("measured", {"citation": "x"}, "provenance.citation"),
    ("", {"citation": "x"}, "provenance"),
    ("published_data", {"citation": 3}, "provenance.citation"),
    ("published_data", "Auer 1933", "provenance"),
])
def test_bad_role_or_provenance_names_the_field(role, provenance, field):
    with pytest.raises(InputError) as e:
        InputQuantity.normal("x", 1.0, 0.1, role=role, provenance=provenance)
    assert e.value.field == field
    assert "input 'x'" in str(e.value)


def test_every_role_has_a_tuple_of_provenance_keys():
    assert set(ROLES) == {"reference_constant", "published_data", "calibrated", "lab_characterisation",
                          "convention", "measured", "specification"}
    for keys in ROLES.values():
        assert isinstance(keys, tuple)


def test_finding_is_its_message_and_keeps_its_attributes():
    f = Finding("gradient too strong", "nmr.gradient_invalid", "gradient.gradient_T_per_m",
                {"gradient_T_per_m": 0.5}, "invalid")
    assert f == "gradient too strong" and "too strong" in f
    assert f.key == "gradient.gradient_T_per_m" and f.values["gradient_T_per_m"] == 0.5
    assert Finding.from_dict(f.to_dict()).to_dict() == f.to_dict()
    g = pickle.loads(pickle.dumps(f))
    assert (g.code, g.key, g.severity, dict(g.values)) == (f.code, f.key, f.severity, dict(f.values))
    with pytest.raises(AttributeError):
        f.key = "elsewhere"
    with pytest.raises(TypeError):
        f.values["x"] = 1  # read-only view


def test_finding_refuses_an_unknown_severity_and_coerces_plain_text():
    with pytest.raises(InputError):
        Finding("m", severity="fatal")
    plain = Finding.coerce("a plain warning")
    assert isinstance(plain, Finding) and plain.key is None and plain.code == ""
