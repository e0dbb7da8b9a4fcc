"""CMC envelope: linear-programming envelope against independent checks (common practice)."""

from __future__ import annotations

import json

import numpy as np
import pytest
import scipy.optimize
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.calibration import BestMeasurement, build_cmc_table, round_up
from fieldbudget.errors import InputError

KW = {"measurand": "B", "method": "teslameter vs NMR"}


@pytest.mark.parametrize("x, up", [(0.0123, 0.013), (0.012, 0.012), (1.2000000000000002, 1.2), (9.91, 10.0),
                                   (5e-6, 5e-6), (5.01e-6, 5.1e-6), (0.0, 0.0)])
def test_round_up(x, up):
    assert round_up(x) == up


def test_points_on_a_line_give_that_line():
    pts = [BestMeasurement(b, 2e-6 + 5e-6 * b) for b in (0.1, 0.4, 1.0, 2.0)]
    t = build_cmc_table(pts, [(0.1, 2.0)], **KW)
    (e,) = t.entries
    assert e.a == pytest.approx(2e-6) and e.b == pytest.approx(5e-6)
    assert e.margin == pytest.approx(0.0, abs=1e-18)


def test_envelope_is_least_mean_over_range():
    # the same linear programme solved by brute force over the pairs of points that can be active
    pts = [BestMeasurement(b, u) for b, u in [(0.1, 3e-6), (0.5, 3.5e-6), (0.8, 8e-6), (1.2, 7e-6), (2.0, 1.2e-5)]]
    t = build_cmc_table(pts, [(0.1, 2.0)], digits=6, **KW)
    (e,) = t.entries
    best = np.inf
    bs = np.array([p.value for p in pts])
    us = np.array([p.expanded_uncertainty for p in pts])
    grid_b = np.linspace(0, 1e-5, 20001)
    for b in grid_b:
        a = max(0.0, float(np.max(us - b * bs)))
        best = min(best, a + b * 1.05)
    assert e.a + e.b * 1.05 == pytest.approx(best, rel=1e-3)


def test_bad_ranges():
    pts = [BestMeasurement(1.0, 1e-5)]
    with pytest.raises(InputError, match="do not overlap"):
        build_cmc_table(pts, [(0.5, 1.5), (1.0, 2.0)], **KW)
    with pytest.raises(InputError, match="at least one best measurement"):
        build_cmc_table(pts, [(0.5, 1.5), (1.5, 2.0)], **KW)
    with pytest.raises(InputError, match="0 <= lower < upper"):
        build_cmc_table(pts, [(1.5, 0.5)], **KW)
    with pytest.raises(InputError, match="form"):
        build_cmc_table(pts, [(0.5, 1.5)], form="quadratic", **KW)
    with pytest.raises(InputError) as e:
        build_cmc_table([BestMeasurement(0.0, 1e-6)], [(0.0, 1.0)], form="relative", **KW)
    assert e.value.field == "form"
    with pytest.raises(InputError):
        BestMeasurement(1.0, 0.0)


def test_unbacked_range_ends_and_unused_points_are_reported():
    pts = [BestMeasurement(0.5, 4e-6), BestMeasurement(1.0, 6e-6), BestMeasurement(3.0, 2e-5)]
    t = build_cmc_table(pts, [(0.1, 2.0)], **KW)
    assert any("not backed by a measurement" in w for w in t.warnings)
    assert any("outside every range" in w for w in t.warnings)
    with pytest.raises(InputError):
        t.uncertainty_at(2.5)


def test_from_engine_results_and_forms():
    from fieldbudget.engine import Budget, InputQuantity, Measurand, Normal, evaluate

    res = [evaluate(Budget(model="B0 + d", inputs=(InputQuantity("B0", b, Normal(u=1e-6 * b)),
                                                   InputQuantity("d", 0.0, Normal(u=1e-6))),
                           measurand=Measurand("B", "T"))) for b in (0.5, 1.0, 2.0)]
    t = build_cmc_table(res, [(0.5, 2.0)], measurand="B <static>", method="NMR & Hall")
    (e,) = t.entries
    for r in res:
        assert e.uncertainty_at(r.estimate) >= r.expanded_uncertainty * (1 - 1e-12)
    assert "\n" not in repr(t) and "\n" not in repr(e)
    assert "&lt;static&gt;" in t._repr_html_() and "NMR &amp; Hall" in t._repr_html_()
    d = json.loads(json.dumps(t.to_dict()))
    assert d["entries"][0]["form"] == "linear"


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(0.01, 3.0), st.floats(1e-7, 1e-4)), min_size=1, max_size=12),
       st.sampled_from(["absolute", "relative", "linear"]))
def test_envelope_above_every_point(data, form):
    # Invariant: the CMC claim is >= every best measurement's U in its range (ILAC P14, from memory)
    pts = [BestMeasurement(b, u) for b, u in data]
    lo, hi = min(b for b, _ in data), max(b for b, _ in data)
    if hi <= lo:
        hi = lo + 1.0
    t = build_cmc_table(pts, [(lo, hi)], form=form, **KW)
    (e,) = t.entries
    for p in pts:
        assert e.uncertainty_at(p.value) >= p.expanded_uncertainty * (1 - 1e-9)


def test_linprog_is_what_decides():
    # an independent scipy.optimize.linprog call with the objective written out gives the same a, b
    pts = [(0.2, 2e-6), (0.7, 4.2e-6), (1.6, 7e-6)]
    res = scipy.optimize.linprog([1, (0.2 + 1.6) / 2], A_ub=[[-1, -b] for b, _ in pts], b_ub=[-u for _, u in pts],
                                 bounds=[(0, None), (0, None)], method="highs")
    t = build_cmc_table([BestMeasurement(b, u) for b, u in pts], [(0.2, 1.6)], digits=12, **KW)
    assert t.entries[0].a == pytest.approx(res.x[0], rel=1e-9, abs=1e-15)
    assert t.entries[0].b == pytest.approx(res.x[1], rel=1e-9)
