"""Property tests: what an operator types reads back exactly, and limits are inclusive intervals."""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.procedure import ProcedureRun, load_procedure

PROC = load_procedure(Path(__file__).resolve().parents[2] / "templates" / "nmr-reference-field.toml")
finite = st.floats(allow_nan=False, allow_infinity=False, width=64)


class _NoEvaluation(ProcedureRun):
    """A run that skips the NMR evaluation: these properties are about parsing and judging only."""

    def _reevaluate(self) -> None:
        self._outcome, self._current, self._errors = None, False, {}


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(min_value=1e3, max_value=1e9), min_size=1, max_size=20),
       st.sampled_from([", ", " ", "\n", ";", " ,\n"]))
def test_typed_readings_read_back_exactly(values, sep):
    # repr() gives the shortest text that reads back as the same float (Python's float repr).
    run = _NoEvaluation(PROC)
    parsed = run.set("frequency_readings", sep.join(repr(v) for v in values))
    assert parsed == tuple(values)
    assert run.measurement_dict()["frequency"]["readings_Hz"] == list(values)


@settings(max_examples=100, deadline=None)
@given(finite, finite, finite)
def test_a_limit_is_an_inclusive_interval(x, a, b):
    lo, hi = min(a, b), max(a, b)
    data = {"id": "p", "name": "p", "version": "1", "lab": "lab", "kind": "nmr-field"}
    from fieldbudget.procedure import procedure_from_dict

    proc = procedure_from_dict({
        "format": "fieldbudget-procedure/1", "procedure": data,
        "components": {"t": {"target": "sample.temperature_C", "label": "t", "kind": "number", "set_by": "operator"}},
        "steps": [{"id": "s", "title": "s", "instruction": "i", "components": ["t"]}],
        "acceptance": [{"id": "a", "text": "a", "component": "t", "min": lo, "max": hi},
                       {"id": "b", "text": "b", "result": "value", "max": hi}],
    }, "p.toml")
    run = _NoEvaluation(proc)
    run.set("t", x)
    first, second = run.check(SimpleNamespace(estimate=x, warnings=())).verdicts
    assert first.passed is (lo <= x <= hi)
    assert second.passed is (x <= hi)
