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


def bench_editor_100(repeats: int) -> tuple[float, float]:
    """The budget editor for 100 inputs: build (editor and table view) and one value change.

    Also counts the widget objects made and the rows a value change re-synchronises (issue 18:
    build under 300 ms, a change re-renders only what changed).
    """
    from ipywidgets.widgets.widget import _instances  # every live widget (Widget.widgets is deprecated)

    from fieldbudget.widgets import input_editor

    n = 100
    rows = [{"symbol": f"x{i}", "estimate": str(1.0 + 0.01 * i), "uncertainty": "0.01"} for i in range(n)]
    model = " + ".join(f"x{i}" for i in range(n))
    builds, widgets, editor, view = [], (0, 0), None, None
    for _ in range(max(5, repeats // 10)):
        if editor is not None:
            editor.close()
            view.close()
        before = len(_instances)
        t0 = time.perf_counter()
        draft = BudgetDraft(model=model, rows=rows)
        editor, view = InputEditor(draft), BudgetView(draft)
        builds.append(1e3 * (time.perf_counter() - t0))
        widgets = (before, len(_instances))
    synced = [0]
    original = input_editor._RowView.sync

    def counting(self, last_good=False):
        if self._state(last_good) != self._shown:
            synced[0] += 1
        return original(self, last_good)

    input_editor._RowView.sync = counting
    try:
        box = editor._row_views[draft.rows[40].id].texts["uncertainty"].box
        times = []
        for i in range(repeats + 5):
            synced[0] = 0
            t0 = time.perf_counter()
            box.value = ["0.02", "0.03"][i % 2]
            if i >= 5:
                times.append(1e3 * (time.perf_counter() - t0))
    finally:
        input_editor._RowView.sync = original
    made = widgets[1] - widgets[0]
    print(f"Budget editor, {n} inputs (a sum): {made} widget objects made ({made / n:.1f} per input; "
          f"live widgets before the build {widgets[0]}, after {widgets[1]})")
    build = _stats("build (draft, editor, table view)", builds)
    change = _stats("widget .value -> re-rendered table (end to end)", times)
    print(f"  rows re-synchronised by one value change: {synced[0]} of {n}")
    return build, change


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 100
    nmr = bench_nmr(repeats)
    ed = bench_editor(repeats)
    build100, _ = bench_editor_100(repeats)
    print(f"budget editor for 100 inputs: build median {build100:.0f} ms ({build100 / 300:.2f} x the 300 ms goal)")
    goal = 50.0
    print(f"goal: median under {goal:.0f} ms -> NMR form {nmr:.1f} ms ({nmr / goal:.2f} x goal), "
          f"input editor {ed:.1f} ms ({ed / goal:.2f} x goal)")


if __name__ == "__main__":
    main()
