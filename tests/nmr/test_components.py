"""The NMR components, declared once: loader keys, schema, form fields and docs all derive from them."""

from __future__ import annotations

import json
import math
from pathlib import Path

import jsonschema
import pytest

from fieldbudget.drafts.nmr_draft import NMR_FIELDS, NMRDraft
from fieldbudget.engine import InputQuantity, Normal
from fieldbudget.errors import BudgetFileError, Finding
from fieldbudget.lab import lab_folder
from fieldbudget.lab.register import load_register, resolve_instruments
from fieldbudget.nmr import NMRMeasurement
from fieldbudget.nmr import components as C

ROOT = Path(__file__).resolve().parents[2]


def _measurement_files() -> list[Path]:
    out = sorted((ROOT / "tests" / "nmr" / "data").glob("*.json"))
    out += sorted((ROOT / "examples" / "data").glob("nmr-measurement*.json"))
    out += sorted((ROOT / "examples" / "lab" / "measurements").glob("*.json"))
    return out


def _resolved(path: Path) -> dict:
    d = json.loads(path.read_text(encoding="utf-8"))
    if "lab" in path.parts and "measurements" in path.parts:
        d, _ = resolve_instruments(d, load_register(lab_folder(ROOT / "examples" / "lab")), accept_expired={
            k: v["accept_expired"] for k, v in d.items() if isinstance(v, dict) and "accept_expired" in v})
    return d


def test_shipped_schema_is_the_generated_one():
    # regenerate with: python -c "from fieldbudget.nmr.components import *; SCHEMA_PATH.write_text(schema_text())"
    assert C.SCHEMA_PATH.read_text(encoding="utf-8") == C.schema_text()
    jsonschema.Draft202012Validator.check_schema(C.schema())


@pytest.mark.parametrize("path", _measurement_files(), ids=lambda p: p.name)
def test_schema_validates_every_example_and_test_file(path):
    d = _resolved(path)
    jsonschema.validate(d, C.schema())
    NMRMeasurement.from_dict(d, where=str(path), base_dir=path.parent)  # and the loader takes it


def test_schema_rejects_what_the_loader_rejects():
    v = jsonschema.Draft202012Validator(C.schema())
    good = {"frequency": {"value_Hz": 63.87e6, "u_Hz": 0.1}}
    assert v.is_valid(good)
    for bad in ({"frequency": {"value_Hz": -1, "u_Hz": 0.1}},
                {"frequency": {"value_Hz": 1e6, "u_Hz": 0.1, "typo": 1}},
                {"frequency": {"value_Hz": 1e6, "u_Hz": 0.1}, "timebase": {"offset": -1.0}},
                {"frequency": {"value_Hz": 1e6, "u_Hz": 0.1}, "sample": {"shape": "cube"}}):
        assert not v.is_valid(bad)
        with pytest.raises(BudgetFileError):
            NMRMeasurement.from_dict(bad)


def test_loader_keys_are_the_declared_ones():
    assert C.top_keys() == set(C.schema()["properties"])
    for section, keys in C.section_keys().items():
        assert keys == set(C.schema()["properties"][section]["properties"]), section
    with pytest.raises(BudgetFileError, match="allowed keys here"):
        NMRMeasurement.from_dict({"frequency": {"value_Hz": 1e6, "u_Hz": 0.1}, "drift": {"stabilty": 1e-9}})


def test_the_form_offers_every_key_of_the_file():
    paths = {f.path for f in NMR_FIELDS}
    for section, keys in C.sections().items():
        for k in keys:
            p = k.name if section is None else f"{section}.{k.name}"
            if k.kind == "file":
                assert f"{p}.path" in paths and f"{p}.column" in paths
            elif k.form:
                assert p in paths, p
            else:
                assert k.kind == "object" or k.name == "format"
    # the sections the old form lacked
    for p in ("drift.stability", "curvature.d2B_dz2_T_per_m2", "shielding.value", "g_factor.value", "line.t2_s",
              "line.detection", "drift.log_csv.time_column"):
        assert p in paths


def test_declared_limits_are_checked_by_the_loader():
    base = {"frequency": {"value_Hz": 63.87e6, "u_Hz": 0.1}, "sample": {"temperature_C": 22.0}}
    cases = [("timebase", {"offset": -1.0}, "#/timebase/offset: must be a number > -1"),
             ("frequency", {"value_Hz": 0.0, "u_Hz": 0.1}, "#/frequency/value_Hz: must be a number > 0"),
             ("sample", {"temperature_C": 120.0}, "#/sample/temperature_C: must be a number in (0, 100) degC"),
             ("shielding", {"value": 1.5}, "#/shielding/value: must be a number in (-1, 1)")]
    for section, value, words in cases:
        d = dict(base, **{section: value})
        with pytest.raises(BudgetFileError) as e:
            NMRMeasurement.from_dict(d, where="m.json")
        assert words in str(e.value)


# --- one declaration is enough: a component added in a test ---------------------------------

def _tilt_build(ctx):
    if not ctx.present("tilt"):
        return None
    t = ctx.section("tilt")
    angle = t.number("angle_deg", 0.0)
    q = InputQuantity("theta_tilt", math.radians(angle), Normal(u=math.radians(t.number("u_deg", 0.0))),
                      unit="rad", source="invented tilt gauge", description="probe tilt", role="measured")
    f = ()
    if angle > 1:
        f = (Finding(f"the probe is tilted {angle:g} deg", code="test.tilt", key="tilt.angle_deg"),)
    return C.Built(inputs=(q,), terms=(C.Term("denominator", "cos(theta_tilt)"),), findings=f)


TILT = C.Component(
    name="tilt", section="tilt", order=105, group="probe tilt", title="`tilt`", summary="an invented test component",
    keys=(C.Key("angle_deg", "number", "tilt angle", unit="deg", lo=0.0, hi=90.0, hi_open=True),
          C.Key("u_deg", "number", "its standard uncertainty", unit="deg", lo=0.0)),
    build=_tilt_build)


def test_a_new_component_is_one_declaration():
    d = {"frequency": {"value_Hz": 63.87e6, "u_Hz": 0.1}, "sample": {"temperature_C": 22.0},
         "tilt": {"angle_deg": 2.0, "u_deg": 0.5}}
    with pytest.raises(BudgetFileError, match="unknown key"):
        NMRMeasurement.from_dict(d)
    with C.registered(TILT):
        r = NMRMeasurement.from_dict(d).evaluate()
        assert "cos(theta_tilt)" in r.budget.model.text()
        plain = NMRMeasurement.from_dict({k: v for k, v in d.items() if k != "tilt"}).evaluate()
        assert r.estimate == pytest.approx(plain.estimate / math.cos(math.radians(2.0)), rel=1e-14)
        assert [f.key for f in r.findings if f.code == "test.tilt"] == ["tilt.angle_deg"]
        assert "tilt" in C.schema()["properties"] and "tilt" in C.top_keys()
        assert "tilt.angle_deg" in C.key_tables() or "`angle_deg`" in C.key_tables()
        draft = NMRDraft(d)
        assert draft.specs["tilt.angle_deg"].section == "probe tilt"
        assert draft.warnings_by_field["tilt.angle_deg"] == ["the probe is tilted 2 deg"]
        with pytest.raises(BudgetFileError, match=r"#/tilt/angle_deg: must be a number in \[0, 90\)"):
            NMRMeasurement.from_dict(dict(d, tilt={"angle_deg": 95.0}))
    assert "tilt" not in C.top_keys()


# --- the docs ----------------------------------------------------------------------------------

def _between(text: str, name: str) -> str:
    start, end = f"<!-- {name}: generated from fieldbudget.nmr.components -->", f"<!-- end of {name} -->"
    assert start in text and end in text, name
    return text.split(start, 1)[1].split(end, 1)[0].strip()


def test_docs_key_tables_follow_the_declarations():
    # regenerate with: python -m fieldbudget.nmr.components --docs
    doc = (ROOT / "docs" / "nmr-measurement-file.md").read_text(encoding="utf-8")
    assert _between(doc, "key reference") == C.key_tables(full=True).strip()
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    assert _between(readme, "key summary") == C.key_tables(full=False).strip()
