"""The live budget view: table columns, variance shares, the statement, no budget yet."""

import math
import re
from html.parser import HTMLParser

import pytest

from fieldbudget.drafts import BudgetDraft
from fieldbudget.widgets import BudgetView
from fieldbudget.widgets.budget_view import format_u


class _Cells(HTMLParser):
    def __init__(self):
        super().__init__()
        self.rows, self._row, self._in = [], None, False

    def handle_starttag(self, tag, attrs):
        if tag == "tr":
            self._row = []
        elif tag in ("td", "th"):
            self._in = True
            self._row.append("")

    def handle_endtag(self, tag):
        if tag == "tr":
            self.rows.append(self._row)
        elif tag in ("td", "th"):
            self._in = False

    def handle_data(self, data):
        if self._in:
            self._row[-1] += data


def cells(html):
    p = _Cells()
    p.feed(html)
    return p.rows


@pytest.fixture
def draft():
    # y = a * b: c_a = b = 2, c_b = a = 1 (JCGM 100:2008 5.1.3, eq. (11a))
    return BudgetDraft(model="a * b", measurand="P", measurand_unit="W", rows=[
        {"symbol": "a", "estimate": "1", "unit": "A", "uncertainty": "0.01"},
        {"symbol": "b", "estimate": "2", "unit": "V", "distribution": "rectangular", "meaning": "half-width",
             "uncertainty": "0.03"}])


def test_table_has_sensitivity_contribution_and_share(draft):
    v = BudgetView(draft)
    head, a, b, foot = cells(v.table.value)
    assert head[:3] == ["input", "estimate x\u1d62", "u(x\u1d62)"] and "share of variance" in head
    ua, ub = 0.01, 0.03 / math.sqrt(3)  # GUM 4.3.7
    ca, cb = 2.0, 1.0
    uc = math.hypot(ca * ua, cb * ub)
    # sensitivity coefficients carry their unit: dP/da in W/A, dP/db in W/V (JCGM 100:2008 5.1.3)
    assert a[0] == "a" and a[5] == "2 W/A" and a[6] == format_u(ca * ua, "W")
    assert b[5] == "1 W/V" and b[6] == format_u(cb * ub, "W")
    assert a[7] == f"{100 * (ca * ua / uc) ** 2:.1f} %"
    assert foot[1] == format_u(uc, "W")


def test_chart_sorted_by_share_and_result_on_top(draft):
    v = BudgetView(draft)
    assert v.chart.value.count('class="fb-share-bar"') == 2 and "<svg" in v.chart.value
    # b's share (cb ub)^2 = 3e-4 exceeds a's (ca ua)^2 = 4e-4? no: a = 4e-4 > b = 3e-4, so a comes first
    assert v.chart.value.index(">a</text>") < v.chart.value.index(">b</text>")
    assert "P = (" in v.summary.value  # the statement
    assert "U = " in v.headline.value and v.children.index(v.headline) < v.children.index(v.table)


def test_chart_can_be_hidden(draft):
    assert BudgetView(draft, chart=False).chart.value == ""


def test_no_budget_yet_says_why():
    d = BudgetDraft(model="a", rows=[{"symbol": "a", "uncertainty": "-1"}])
    v = BudgetView(d)
    assert "No budget yet" in v.note.value and "&gt;= 0" in v.note.value and v.table.value == ""


def test_view_follows_the_draft_until_closed(draft):
    v = BudgetView(draft)
    draft.set(0, "uncertainty", "0.02")
    assert format_u(draft.result.standard_uncertainty, "W") in v.table.value
    old = v.table.value
    v.close()
    draft.set(0, "uncertainty", "0.05")
    assert v.table.value == old


# two significant digits (JCGM 100:2008, 7.2.6) with an SI prefix
@pytest.mark.parametrize("x, text", [(0.5, "500 mV"), (1.2649e-8, "13 nV"), (4.86e-6, "4.9 \u00b5V"), (0.0, "0 V"),
                                     (None, "")])
def test_format_u(x, text):
    assert format_u(x, "V" if x is not None else "") == text


def test_large_dof_and_unicode_units():
    d = BudgetDraft(model="t", measurand="T_room", measurand_unit="degC",
                    rows=[{"symbol": "t", "estimate": "23.1", "unit": "degC", "uncertainty": "0.2", "dof": "2e8"}])
    html = BudgetView(d).table.value
    assert "&gt; 1000" in html and "\u00b0C" in html and "degC" not in html


def test_uc_cell_is_findable_by_class(draft):
    assert re.search(r'<td class="fb-uc"[^>]*>[^<]+</td>', BudgetView(draft).table.value)


def test_bar_lengths_proportional_to_share(draft):
    import re as _re

    v = BudgetView(draft)
    widths = [float(x) for x in _re.findall(r'class="fb-share-bar" x="\d+" y="[\d.]+" width="([\d.]+)"', v.chart.value)]
    ua, ub = 0.01, 0.03 / math.sqrt(3)
    share_a = (2 * ua) ** 2 / ((2 * ua) ** 2 + ub ** 2)
    assert widths[0] / (widths[0] + widths[1]) == pytest.approx(share_a, abs=2e-3)
