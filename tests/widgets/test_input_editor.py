"""The input editor and live budget driven from Python, as a user would in the browser.

Check values: y = a + b with u(a) = 0.3 and u(b) = 0.4 gives u_c = 0.5
(JCGM 100:2008 5.1.2 eq. (10), c_i = 1); changing u(a) to 1.2 gives
u_c = sqrt(1.2^2 + 0.4^2) = 1.26491...
"""

import math
import re

import pytest

from fieldbudget.drafts import BudgetDraft
from fieldbudget.errors import InputError
from fieldbudget.widgets import BudgetView, InputEditor


@pytest.fixture
def views():
    d = BudgetDraft(model="a + b", measurand="y", measurand_unit="V", rows=[
        {"symbol": "a", "estimate": "1", "unit": "V", "uncertainty": "0.3", "source": "cert. <b>&"},
        {"symbol": "b", "estimate": "2", "unit": "V", "uncertainty": "0.4"}])
    return d, InputEditor(d), BudgetView(d)


def uc_text(view):
    return re.search(r'class="fb-uc"[^>]*>([^<]*)<', view.table.value).group(1)


def row_box(editor, i, key):
    return editor._row_views[editor.draft.rows[i].id].texts[key]


def test_value_change_rebuilds_budget_and_table(views):
    d, ed, bv = views
    assert uc_text(bv) == "500 mV"  # two significant digits with an SI prefix
    row_box(ed, 0, "uncertainty").box.value = "1.2"
    assert d.budget.inputs[0].standard_uncertainty == 1.2
    assert d.result.standard_uncertainty == pytest.approx(math.hypot(1.2, 0.4))
    assert uc_text(bv) == "1.3 V"
    assert bv.note.value == ""


@pytest.mark.parametrize("key, text", [("uncertainty", "-0.3"), ("estimate", "two"), ("dof", "0")])
def test_bad_value_message_beside_field_last_good_stays(views, key, text):
    d, ed, bv = views
    table_before, result_before = bv.table.value, d.result
    bt = row_box(ed, 0, key)
    bt.box.value = text
    assert d.result is result_before and bv.table.value == table_before
    assert bt.box.value == text  # nothing typed is lost
    assert "must be" in bt.msg.value and "fb-bad" in bt.box._dom_classes
    assert "last budget that could be evaluated" in bv.note.value
    others = [b.msg.value for i in (0, 1) for k, b in ed._row_views[d.rows[i].id].texts.items()
              if (i, k) != (0, key)]
    assert not any(others)  # the message is beside that field only
    bt.box.value = "0.3" if key != "dof" else ""
    assert bt.msg.value == "" and bv.note.value == "" and uc_text(bv) == "500 mV"


def test_impossible_correlation_message_beside_correlation(views):
    d, ed, _bv = views
    d.add_row(symbol="c", estimate="0", uncertainty="0.1")
    ed.model.box.value = "a + b + c"
    for a, b, r in (("a", "b", "0.9"), ("a", "c", "0.9")):
        ed.corr_a.value, ed.corr_b.value, ed.corr_r.value = a, b, r
        ed.corr_add.click()
    good = d.result
    ed.corr_a.value, ed.corr_b.value, ed.corr_r.value = "b", "c", "-0.9"
    ed.corr_add.click()
    assert d.result is good
    msgs = [bt.msg.value for bt in ed._corr_views]
    assert sum("positive semi-definite" in m for m in msgs) == 1


def test_unknown_symbol_in_model_message_beside_model(views):
    _d, ed, _bv = views
    ed.model.box.value = "a + q"
    assert "&#x27;q&#x27; is not an input" in ed.model.msg.value
    assert ed.model.box.value == "a + q"


def test_add_move_remove_rows_with_buttons(views):
    d, ed, bv = views
    ed.add_button.click()
    assert len(ed.rows_box.children) == 3 and d.rows[2].symbol == "x3"
    rv = ed._row_views[d.rows[2].id]
    rv.buttons[0].click()  # up
    assert [r.symbol for r in d.rows] == ["a", "x3", "b"]
    assert [c.symbol for c in d.result.contributions] == ["a", "x3", "b"]
    assert 'fb-row-x3' in bv.table.value
    rv.buttons[2].click()  # remove
    assert [r.symbol for r in d.rows] == ["a", "b"] and len(ed.rows_box.children) == 2


def test_meaning_dropdown_shows_the_boxes_it_needs(views):
    d, ed, _bv = views
    rv = ed._row_views[d.rows[0].id]
    rv.meaning.value = "readings"
    assert rv.texts["readings"].widget.layout.display is None
    assert rv.texts["estimate"].widget.layout.visibility == "hidden"
    rv.texts["readings"].box.value = "1.0\n1.2\n0.8"
    assert d.result.contribution("a").dof == 2
    rv.meaning.value = "expanded"
    rv.texts["uncertainty"].box.value = "0.6"
    rv.texts["k"].box.value = "2"
    assert d.result.contribution("a").standard_uncertainty == pytest.approx(0.3)  # GUM 4.3.4


def test_no_exception_escapes_a_callback(views, monkeypatch):
    d, ed, _bv = views

    def boom(*a, **k):
        raise RuntimeError("kaput")

    monkeypatch.setattr(d, "set", boom)
    row_box(ed, 0, "uncertainty").box.value = "0.7"  # would raise without the guard
    assert "internal error" in ed.status.value and "kaput" in ed.status.value

    def user_error(*a, **k):
        raise InputError("row", 9, "a row of this budget")

    monkeypatch.setattr(d, "set", user_error)
    row_box(ed, 0, "uncertainty").box.value = "0.8"
    assert "row must be a row of this budget (got 9)" in ed.status.value


def test_text_boxes_commit_on_enter_and_are_unbounded(views):
    d, ed, _bv = views
    bt = row_box(ed, 0, "estimate")
    assert bt.box.continuous_update is False
    bt.box.value = "1e300"  # no silent clamping
    assert d.result.contribution("a").estimate == 1e300


def test_user_text_is_escaped_in_the_table(views):
    _d, _ed, bv = views
    assert "cert. &lt;b&gt;&amp;" in bv.table.value and "<b>&" not in bv.table.value


def test_reprs_are_short(views):
    _d, ed, bv = views
    assert repr(ed) == "<InputEditor over <BudgetDraft y = 'a + b', 2 inputs, current>>"
    assert repr(bv).startswith("<BudgetView over <BudgetDraft")
