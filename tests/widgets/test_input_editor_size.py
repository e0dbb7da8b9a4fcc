"""The input editor stays small for big budgets (issue 18) and its boxes made on first need still work.

Check values: y = a + b with u(a) = 0.3 and u(b) = 0.4 gives u_c = 0.5
(JCGM 100:2008 5.1.2 eq. (10), c_i = 1); U = 0.6 with k = 2 stated for a
gives u(a) = U/k = 0.3 (JCGM 100:2008 4.3.4), so u_c stays 0.5.
"""

import math

import ipywidgets as w
import pytest

from fieldbudget.drafts import BudgetDraft
from fieldbudget.widgets import BudgetView, InputEditor
from fieldbudget.widgets._binding import LAST_GOOD


def reachable(widget, seen=None):
    """Every widget object the front end needs to show ``widget`` (children, layouts, styles), each once."""
    seen = set() if seen is None else seen
    if id(widget) in seen:
        return seen
    seen.add(id(widget))
    for name in widget.keys:
        value = getattr(widget, name)
        for v in value if isinstance(value, (list, tuple)) else (value,):
            if isinstance(v, w.Widget):
                reachable(v, seen)
    return seen


def editor(n):
    rows = [{"symbol": f"x{i}", "estimate": "1", "uncertainty": "0.01"} for i in range(n)]
    d = BudgetDraft(model=" + ".join(f"x{i}" for i in range(n)), rows=rows)
    return d, InputEditor(d)


def test_a_row_costs_at_most_a_dozen_widgets():
    # 8 entry boxes, 2 dropdowns, 3 buttons and a row box would be 14 even with no message
    # boxes and shared layouts; the k box and the readings area wait until a row needs them.
    _d, small = editor(2)
    _d, big = editor(42)
    per_row = (len(reachable(big.rows_box)) - len(reachable(small.rows_box))) / 40
    assert per_row <= 12


def test_rows_share_layouts_but_hide_their_own_boxes():
    d, ed = editor(3)
    views = [ed._row_views[r.id] for r in d.rows]
    assert views[0].texts["symbol"].box.layout is views[1].texts["symbol"].box.layout
    views[0].meaning.value = "readings"
    assert views[0].texts["estimate"].widget.layout.visibility == "hidden"
    assert views[1].texts["estimate"].widget.layout.visibility is None  # a shared Layout is swapped, never changed
    assert "readings" not in views[1].texts and "k" not in views[1].texts


@pytest.fixture
def views():
    d = BudgetDraft(model="a + b", measurand="y", measurand_unit="V", rows=[
        {"symbol": "a", "estimate": "1", "unit": "V", "uncertainty": "0.3"},
        {"symbol": "b", "estimate": "2", "unit": "V", "uncertainty": "0.4"}])
    return d, InputEditor(d), BudgetView(d)


def test_k_box_made_on_need_takes_input_and_shows_its_message_beside_it(views):
    d, ed, bv = views
    rv = ed._row_views[d.rows[0].id]
    assert "k" not in rv.texts
    rv.meaning.value = "expanded"
    k = rv.texts["k"]
    assert k.widget in rv.main.children and k.widget.layout.visibility is None
    rv.texts["uncertainty"].box.value = "0.6"
    assert d.result.standard_uncertainty == pytest.approx(0.5)  # U/k = 0.3 with k = 2
    good, table = d.result, bv.table.value
    k.box.value = "-2"
    assert d.result is good and bv.table.value == table  # the last good budget stays
    assert k.box.value == "-2" and "fb-bad" in k.box._dom_classes
    cell = k.widget  # now box and message together, in the box's place in the row
    assert "fb-cell" in cell._dom_classes and cell.children == (k.box, k.msg) and cell in rv.main.children
    assert "must be" in k.msg.value and LAST_GOOD in k.msg.value
    assert not any(b.msg.value for key, b in rv.texts.items() if key != "k")
    k.box.value = "3"
    assert k.msg.value == "" and d.result.standard_uncertainty == pytest.approx(math.hypot(0.2, 0.4))


def test_readings_area_made_on_need_refuses_a_bad_reading_beside_it(views):
    d, ed, _bv = views
    rv = ed._row_views[d.rows[1].id]
    assert rv.widget is rv.main  # no wrapper while the row has one line
    rv.meaning.value = "readings"
    area = rv.texts["readings"]
    assert rv.widget in ed.rows_box.children and rv.widget.children == (rv.main, area.widget)
    area.box.value = "1.0\n1.2\n0.8"
    assert d.result.contribution("b").dof == 2
    good = d.result
    area.box.value = "1.0\nabc"
    assert d.result is good and area.msg.value and area.widget.children == (area.box, area.msg)
    assert rv.widget.children == (rv.main, area.widget)
