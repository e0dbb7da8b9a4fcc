"""The XLSX budget sheet recomputes u(x_i), u_i(y), u_c and U with live formulas.

The formulas are evaluated by an independent evaluator, the ``formulas``
package (PyPI), not by fieldbudget, and compared with the engine to 12
significant digits.
"""

from __future__ import annotations

import math

import openpyxl
import pytest

from fieldbudget.files.record import make_record
from fieldbudget.report import write_report
from fieldbudget.report.xlsx import BUDGET_SHEET, FIRST_ROW
from tests.report._budgets import mixed_budget, nmr_budget

formulas = pytest.importorskip("formulas")

STAMP = "2026-11-30T09:15:00Z"
REL = 1e-12  # 12 significant digits


def _evaluate(path, tmp_path):
    """Cell values of the workbook as computed by ``formulas``.

    formulas 1.3 rounds numeric *constant* cells to 15 decimal places when it
    reads them (``excel/__init__.py``, ``compile_cell``), which would cut a
    sensitivity of 2e-8 to 8 digits; spreadsheet programs keep the stored
    double.  So each constant is handed over as the formula ``=<repr>``, which
    formulas parses exactly; every formula of the sheet is evaluated as written.
    """
    wb = openpyxl.load_workbook(path)
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if isinstance(cell.value, float):
                    cell.value = f"={cell.value!r}"
    exact = tmp_path / "exact.xlsx"
    wb.save(exact)
    solution = formulas.ExcelModel().loads(str(exact)).finish().calculate()
    out = {}
    for key, value in solution.items():
        if "!" in key and ":" not in key:
            sheet, cell = key.rsplit("!", 1)
            v = value.value[0, 0] if hasattr(value, "value") else value
            out[(sheet.split("]")[-1].strip("'").upper(), cell.upper())] = v
    return out


def _cell(values, ref, sheet=BUDGET_SHEET):
    return float(values[(sheet.upper(), ref)])


def _summary_rows(n_inputs):
    last = FIRST_ROW + n_inputs - 1
    s = last + 2
    return {"sumsq": s, "corr": s + 1, "u_c": s + 2, "k": s + 4, "U": s + 5}


@pytest.mark.parametrize("name, budget", [("nmr", nmr_budget), ("mixed", mixed_budget)])
def test_xlsx_formulas_give_the_engine_uncertainties_to_12_digits(tmp_path, name, budget):
    rec = make_record(budget(), created_utc=STAMP)
    path = write_report(rec, tmp_path / f"{name}.xlsx")
    values = _evaluate(path, tmp_path)
    contributions = rec.gum["contributions"]
    rows = _summary_rows(len(contributions))
    for i, c in enumerate(contributions):
        n = FIRST_ROW + i
        assert math.isclose(_cell(values, f"I{n}"), c["u_x"], rel_tol=REL), f"u({c['symbol']})"
        assert math.isclose(_cell(values, f"L{n}"), abs(c["u_contribution"]), rel_tol=REL), c["symbol"]
        assert math.isclose(_cell(values, f"M{n}"), c["share"], rel_tol=1e-11), c["symbol"]
    assert math.isclose(_cell(values, f"I{rows['u_c']}"), rec.gum["u"], rel_tol=REL)
    assert math.isclose(_cell(values, f"I{rows['U']}"), rec.gum["U"], rel_tol=REL)


def test_budget_sheet_holds_live_formulas_from_the_input_cells(tmp_path):
    rec = make_record(mixed_budget(), created_utc=STAMP)
    ws = openpyxl.load_workbook(write_report(rec, tmp_path / "m.xlsx"))[BUDGET_SHEET]
    symbols = [c["symbol"] for c in rec.gum["contributions"]]
    rows = _summary_rows(len(symbols))
    row = {s: FIRST_ROW + i for i, s in enumerate(symbols)}
    # u(x_i) from the stated value and the divisor of the distribution (JCGM 100:2008 4.3.7, 4.3.9)
    assert ws[f"G{row['c']}"].value == "=SQRT(3)" and ws[f"I{row['c']}"].value == f"=F{row['c']}/G{row['c']}"
    assert ws[f"G{row['d']}"].value == "=SQRT(6)"
    assert ws[f"G{row['e']}"].value == "=SQRT(2)"
    assert ws[f"G{row['b']}"].value == 2.0 and ws[f"F{row['b']}"].value == 0.004  # U and k
    r = row["r"]
    assert ws[f"I{r}"].value == f"=SQRT(F{r}^2/3+H{r}^2/9)"  # JCGM 101:2008 6.4.3
    t = row["t"]
    assert ws[f"F{t}"].value.startswith("=STDEV(Readings!") and ws[f"G{t}"].value.startswith("=SQRT(COUNT(")
    for n in row.values():
        assert ws[f"L{n}"].value == f"=ABS(K{n})*I{n}"
        assert isinstance(ws[f"K{n}"].value, (int, float))  # c_i as values
    assert ws[f"I{rows['sumsq']}"].value == f"=SUMSQ(L{FIRST_ROW}:L{FIRST_ROW + len(symbols) - 1})"
    corr = ws[f"I{rows['corr']}"].value
    assert corr.startswith("=2*D") and f"K{row['a']}*I{row['a']}*K{row['c']}*I{row['c']}" in corr
    second = rows["sumsq"] + 8  # the second-order terms' row (0 for a budget without them)
    assert ws[f"I{rows['u_c']}"].value == f"=SQRT(I{rows['sumsq']}+I{rows['corr']}+I{second})"
    assert ws[f"I{second}"].value == 0.0
    assert ws[f"I{rows['U']}"].value == f"=I{rows['k']}*I{rows['u_c']}"
    info = openpyxl.load_workbook(tmp_path / "m.xlsx")["Record"]
    texts = {info.cell(row=i, column=1).value: info.cell(row=i, column=2).value for i in range(1, info.max_row + 1)}
    assert texts["Statement"] == rec.statement and texts["Record SHA-256"] == rec.digest


def test_text_cells_are_not_read_as_formulas(tmp_path):
    b = mixed_budget()
    b["inputs"]["a"]["source"] = "=HYPERLINK(\"http://example.invalid\")"
    rec = make_record(b, created_utc=STAMP)
    ws = openpyxl.load_workbook(write_report(rec, tmp_path / "m.xlsx"))[BUDGET_SHEET]
    cells = [ws.cell(row=n, column=14) for n in range(FIRST_ROW, FIRST_ROW + 7)]
    hit = [c for c in cells if c.value == "=HYPERLINK(\"http://example.invalid\")"]
    # a text cell, shown as written (no visible leading apostrophe), never a formula (OWASP CSV injection)
    assert len(hit) == 1 and hit[0].data_type == "s"
    assert not any(c.data_type == "f" and "HYPERLINK" in str(c.value) for row in ws.iter_rows() for c in row)
