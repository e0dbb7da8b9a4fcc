"""Every value of fieldbudget.lab has a one-line repr, an HTML view that escapes user text, and plain to_dict."""

from __future__ import annotations

import dataclasses
import json

import pytest

from fieldbudget.lab import lab_folder
from fieldbudget.lab.archive import Archive
from fieldbudget.lab.monitoring import (
    chart_from_settings,
    drift,
    en_number,
    review_interval,
    score_rounds,
    special_causes,
)
from fieldbudget.lab.register import load_register, resolve_instruments

from .conftest import EXAMPLE_LAB


def _values():
    lab = lab_folder(EXAMPLE_LAB)
    reg = load_register(lab)
    fc9 = reg.get("FC-9")
    fit = drift(fc9)
    desc = json.loads((EXAMPLE_LAB / "measurements" / "LMCL-CM1-2026-11.json").read_text())
    _, notes = resolve_instruments(desc, reg)
    archive = Archive(lab)
    chart = chart_from_settings(lab, "check-magnet", ewma_lambda=0.2)
    return [reg, fc9, fc9.latest, reg.status_on()[0], notes[0], archive.entries()[0], archive.check(), chart,
            chart.violations[0], chart.ewma, fit, review_interval(fc9, fit), en_number(1, 1, 0, 1),
            score_rounds({"rounds": [{"id": "<b>r</b>", "lab_value": 1, "lab_U": 1, "reference_value": 0,
                                      "reference_U": 1}]})[0], special_causes([5.0])[0]]


@pytest.mark.parametrize("value", _values(), ids=lambda v: type(v).__name__)
def test_repr_html_and_plain_dict(value):
    text = repr(value)
    assert "\n" not in text and len(text) < 400
    html = value._repr_html_()
    assert html.startswith("<table") and "<b>r</b>" not in html
    json.dumps(value.to_dict(), allow_nan=False)
    if dataclasses.is_dataclass(value):
        with pytest.raises(dataclasses.FrozenInstanceError):
            setattr(value, dataclasses.fields(value)[0].name, None)
