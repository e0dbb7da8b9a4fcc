"""From a value change in a widget to the re-rendered budget table, for a 15-input NMR budget.

Measured in Python (no browser): set ``.value`` on the NMR form's entry box,
which runs the observer -> NMRDraft.set -> NMRMeasurement.from_dict ->
evaluate -> BudgetView.render, and stop the clock when the table HTML has
changed.  Also splits the time into the draft (build and evaluate) and the
view (render), and times the generic input editor on a 15-input budget.
Goal: median under 50 ms.  Prints figures; asserts nothing.

    .venv/bin/python benchmarks/bench_widgets.py [repeats]
"""

from __future__ import annotations

import copy
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from fieldbudget.drafts import BudgetDraft
from fieldbudget.drafts.nmr_draft import NMRDraft
from fieldbudget.widgets import BudgetView, InputEditor, NMRForm

# Invented demo data (a test magnet near 1 T, a water-cylinder proton probe).
DESCRIPTION = {
    "format": "fieldbudget-nmr/1", "nucleus": "shielded-proton", "codata": 2022,
    "frequency": {"readings_Hz": [42576395.12, 42576395.31, 42576395.18, 42576395.02, 42576395.22,
                                  42576395.40, 42576395.09, 42576395.27], "counter_resolution_Hz": 0.01},
    "timebase": {"offset": 2.0e-10, "u": 5.0e-11},
    "sample": {"shape": "cylinder", "axis": "parallel", "length_over_diameter": 2.0,
               "u_length_over_diameter": 0.01, "temperature_C": 22.5, "u_temperature_C": 0.3,
               "diameter_m": 0.004, "length_m": 0.008},
    "line": {"fwhm_Hz": 4.0, "snr": 80, "points_per_fwhm": 20},
    "probe_perturbation": {"value": 0.0, "u": 5.0e-9},
    "gradient_T_per_m": 1.0e-5, "u_gradient_T_per_m": 2.0e-6, "offset_m": 0.0, "u_offset_m": 5.0e-4,
}


def _stats(name: str, ms: list[float]) -> float:
    ms = sorted(ms)
    med = statistics.median(ms)
    p90 = ms[int(0.9 * (len(ms) - 1))]
    print(f"  {name:<52s} median {med:7.2f} ms   p90 {p90:7.2f} ms   min {ms[0]:6.2f} ms   (n = {len(ms)})")
    return med


def bench_nmr(repeats: int) -> float:
    draft = NMRDraft(copy.deepcopy(DESCRIPTION))
    form, view = NMRForm(draft), BudgetView(draft)
    n_inputs = len(draft.budget.inputs)
    box = form.boxes["sample.u_temperature_C"].box
    values = ["0.31", "0.3"]
    whole, build, render = [], [], []
    for i in range(repeats + 5):
        before = view.table.value
        t0 = time.perf_counter()
        box.value = values[i % 2]
        t1 = time.perf_counter()
        assert view.table.value != before and draft.current
        if i >= 5:  # warm-up
            whole.append(1e3 * (t1 - t0))
    for i in range(repeats):
        t0 = time.perf_counter()
        draft.fields["sample.u_temperature_C"].set(values[i % 2])
        draft.rebuild()
        t1 = time.perf_counter()
        view.render()
        t2 = time.perf_counter()
        build.append(1e3 * (t1 - t0))
        render.append(1e3 * (t2 - t1))
    print(f"NMR form, {n_inputs}-input budget (value change -> table re-rendered):")
    med = _stats("widget .value -> re-rendered table (end to end)", whole)
    _stats("  of which: draft (NMRMeasurement + GUM evaluate)", build)
    _stats("  of which: view (table, bars, statement HTML)", render)
    return med


def bench_editor(repeats: int) -> float:
    rows = [{"symbol": f"x{i}", "estimate": str(1.0 + 0.1 * i), "uncertainty": "0.01"} for i in range(15)]
    draft = BudgetDraft(model=" * ".join(f"x{i}" for i in range(15)), rows=rows)
    editor, _view = InputEditor(draft), BudgetView(draft)
    box = editor._row_views[draft.rows[3].id].texts["uncertainty"].box
    values = ["0.02", "0.03"]
    times = []
    for i in range(repeats + 5):
        t0 = time.perf_counter()
        box.value = values[i % 2]
        t1 = time.perf_counter()
        if i >= 5:
            times.append(1e3 * (t1 - t0))
    print("Input editor, 15 inputs, product model:")
    return _stats("widget .value -> re-rendered table (end to end)", times)


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 100
    nmr = bench_nmr(repeats)
    ed = bench_editor(repeats)
    goal = 50.0
    print(f"goal: median under {goal:.0f} ms -> NMR form {nmr:.1f} ms ({nmr / goal:.2f} x goal), "
          f"input editor {ed:.1f} ms ({ed / goal:.2f} x goal)")


if __name__ == "__main__":
    main()
