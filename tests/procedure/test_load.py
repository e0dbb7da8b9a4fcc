"""Loading procedure files: the shipped templates, and the values built from them."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from fieldbudget.procedure import (
    Component,
    Procedure,
    Step,
    load_procedure,
    procedure_from_dict,
)
from fieldbudget.procedure.procedure import CODATA_COMPONENT

TEMPLATES = Path(__file__).resolve().parents[2] / "templates"
NMR_TEMPLATE = TEMPLATES / "nmr-reference-field.toml"


@pytest.mark.parametrize("path", sorted(TEMPLATES.glob("*.toml")), ids=lambda p: p.name)
def test_every_template_loads(path):
    proc = load_procedure(path)
    assert isinstance(proc, Procedure)
    assert proc.path == str(path)
    assert proc.steps and proc.components
    # Every operator component is entered in exactly one step.
    listed = [cid for s in proc.steps for cid in s.components]
    assert len(listed) == len(set(listed))
    assert {c.id for c in proc.operator_components} <= set(listed)
    # Every lab value names where it comes from.
    assert all(c.source.strip() for c in proc.fixed_components)
    # The cautions the user rules ask for are there.
    text = " ".join(f"{s.title} {s.text}".lower() for s in proc.safety)
    for word in ("pacemaker", "ferromagnetic", "fringe", "helium"):
        assert word in text


def test_nmr_template_content():
    proc = load_procedure(NMR_TEMPLATE)
    assert proc.kind == "nmr-field"
    assert [s.id for s in proc.steps] == ["prepare", "place-probe", "lock", "timebase", "review"]
    f = proc.component("frequency_readings")
    assert (f.kind, f.set_by, f.unit, f.target) == ("numbers", "operator", "Hz", "frequency.readings_Hz")
    assert f.training is not None and "Type A" in f.training.why
    tb = proc.component("timebase_u")
    assert tb.fixed and tb.value == 5.0e-10 and "certificate" in tb.source.lower()
    # The [codata] table becomes a lab-fixed choice component.
    cd = proc.component(CODATA_COMPONENT)
    assert (cd.fixed, cd.value, cd.target, cd.choices) == (True, 2022, "codata", (2022,))
    assert proc.codata.edition == 2022 and not proc.codata.operator_may_choose


def test_values_are_frozen_and_plain():
    proc = load_procedure(NMR_TEMPLATE)
    with pytest.raises(AttributeError):
        proc.name = "x"  # type: ignore[misc]
    with pytest.raises(AttributeError):
        proc.steps[0].title = "x"  # type: ignore[misc]
    assert isinstance(proc.steps[0], Step) and isinstance(proc.components[0], Component)
    d = proc.to_dict()
    assert json.loads(json.dumps(d)) == d
    assert d["steps"][0]["id"] == "prepare"


def test_reprs_are_one_line():
    proc = load_procedure(NMR_TEMPLATE)
    for obj in (proc, proc.steps[0], proc.components[0], proc.acceptance[0]):
        r = repr(obj)
        assert "\n" not in r and r.startswith("<")
    assert repr(proc.steps[2]) == "<Step 'lock': Lock on the resonance and read the frequency (6 components)>"
    assert repr(proc.acceptance[3]) == "<AcceptanceLimit 'temperature': 18 <= sample_temperature <= 28>"


def test_html_escapes_lab_text(nmr_data):
    nmr_data["procedure"]["lab"] = "<b>Lab & Co</b>"
    proc = procedure_from_dict(nmr_data, "x.toml")
    html = proc._repr_html_()
    assert "<b>Lab" not in html and "&lt;b&gt;Lab &amp; Co&lt;/b&gt;" in html


def test_operator_may_choose_edition(nmr_data):
    nmr_data["codata"].update(operator_may_choose=True, allowed=[2018, 2022])
    proc = procedure_from_dict(nmr_data, "x.toml")
    cd = proc.component(CODATA_COMPONENT)
    assert not cd.fixed and cd.choices == (2018, 2022) and cd.value == 2022


def test_unknown_component_lookup_names_known_ids():
    proc = load_procedure(NMR_TEMPLATE)
    with pytest.raises(KeyError, match="no component 'nope'.*frequency_readings"):
        proc.component("nope")


def test_every_value_has_html_and_plain_dict():
    proc = load_procedure(NMR_TEMPLATE)
    for obj in (proc, proc.steps[0], proc.components[0], proc.acceptance[0], proc.safety[0], proc.codata):
        assert obj._repr_html_().startswith("<")
        d = obj.to_dict()
        assert json.loads(json.dumps(d)) == d
    assert repr(proc.codata) == "<CodataPolicy CODATA 2022, fixed>"
    assert repr(proc.safety[0]) == "<SafetyCaution 'implants': Implanted medical devices>"
