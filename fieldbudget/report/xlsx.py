"""XLSX workbook (openpyxl) whose budget sheet recomputes the budget with live formulas.

Sheet ``Budget``: one row per input with the stated uncertainty and the
divisor of its distribution as input cells, and formulas for

- u(x_i) = stated / divisor (JCGM 100:2008 4.3.4, 4.3.7, 4.3.9; EA-4/02 M for arcsine),
  or SQRT(a^2/3 + d^2/9) for a curvilinear trapezoid (JCGM 101:2008 6.4.3),
  or STDEV(readings)/SQRT(COUNT(readings)) for Type A (JCGM 100:2008 4.2.3);
- u_i(y) = ABS(c_i) * u(x_i) (JCGM 100:2008 5.1.3), with c_i as values from the engine;
- u_c = SQRT(SUMSQ(u_i(y)) + sum over pairs 2 r_ij c_i c_j u(x_i) u(x_j) + second-order terms)
  (JCGM 100:2008 5.2.2, eq. 13; the second-order terms of 5.1.2, when the budget asks for them, enter as
  fieldbudget's value because they come from numerical derivatives);
- U = k * u_c (JCGM 100:2008 6.2.1), with k as a value;

so an assessor can audit the arithmetic in any spreadsheet program.  Sheet
``Readings`` holds Type A readings; sheet ``Record`` the statement, warnings,
traceability chain, software versions and the digest.
"""

from __future__ import annotations

import io

from openpyxl import Workbook
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter

from .._display import DOF_DISPLAY_LIMIT, fmt_dof
from .tables import ReportData

__all__ = ["BUDGET_SHEET", "CELLS", "render_xlsx"]

BUDGET_SHEET = "Budget"
FIRST_ROW = 6
_HEADS = ("Input", "Estimate x_i", "Unit", "Distribution", "Stated as", "Stated value", "Divisor",
          "Limit uncertainty d", "u(x_i)", "Degrees of freedom", "Sensitivity c_i", "u_i(y) = |c_i| u(x_i)",
          "Variance share", "Source", "Unit of c_i")
# Column letters by meaning (documented for the tests and for the assessor).
CELLS = {"estimate": "B", "stated": "F", "divisor": "G", "limit": "H", "u_x": "I", "dof": "J", "c": "K",
         "u_y": "L", "share": "M"}


def _safe_text(x: object) -> str:
    """The text of a text cell (written as a string cell by :func:`_t`, so it is never read as a formula)."""
    return "" if x is None else str(x)


def _t(cell, x: object):
    """Put ``x`` in ``cell`` as *text*: openpyxl would store a text starting with ``=`` as a formula.

    The cell's type is set to string, so the text shows as written, with no
    visible leading apostrophe, and a spreadsheet never evaluates it.
    """
    cell.value = _safe_text(x)
    cell.data_type = "s"
    return cell


def render_xlsx(data: ReportData, record) -> bytes:
    """The workbook as bytes (``record`` supplies the budget file content: readings, correlations)."""
    wb = Workbook()
    ws = wb.active
    ws.title = BUDGET_SHEET
    bold = Font(bold=True)
    _t(ws["A1"], data.title)
    ws["A1"].font = Font(bold=True, size=13)
    ws["A2"] = "Model"
    _t(ws["B2"], data.equation)
    ws["A3"], ws["B3"] = "Record SHA-256", data.digest
    ws["D3"] = "Result reported" if data.headline_kind == "gum" else "Result reported (Monte Carlo)"
    ws["D3"].font = bold
    ws["E3"] = _safe_text(data.headline_text)
    ws["A4"] = ("Grey cells are inputs; u(x_i), u_i(y), u_c and U are formulas. "
                "c_i and k are the values fieldbudget computed.")
    for j, h in enumerate(_HEADS, start=1):
        c = ws.cell(row=FIRST_ROW - 1, column=j, value=h)
        c.font = bold
        c.alignment = Alignment(wrap_text=True, vertical="top")
    grey = PatternFill("solid", fgColor="EEEEEE")

    inputs = record.budget.get("inputs") or {}
    readings_ws = None
    readings_col = 0
    rows = list(data.rows)
    last = FIRST_ROW + len(rows) - 1
    ucell = f"$I${last + 4}"  # u_c, placed below (see the summary block)
    for i, r in enumerate(rows):
        n = FIRST_ROW + i
        spec = inputs.get(r.symbol, {}) or {}
        _t(ws.cell(row=n, column=1), r.symbol)
        _t(ws.cell(row=n, column=3), r.unit)
        _t(ws.cell(row=n, column=4), r.distribution)
        _t(ws.cell(row=n, column=5), r.how_stated)
        if "readings" in spec:
            if readings_ws is None:
                readings_ws = wb.create_sheet("Readings")
            readings_col += 1
            col = get_column_letter(readings_col)
            _t(readings_ws.cell(row=1, column=readings_col), r.symbol).font = bold
            vals = [float(v) for v in spec["readings"]]
            for k, v in enumerate(vals, start=2):
                readings_ws.cell(row=k, column=readings_col, value=v).fill = grey
            rng = f"Readings!${col}$2:${col}${len(vals) + 1}"
            ws.cell(row=n, column=2, value=f"=AVERAGE({rng})")
            ws.cell(row=n, column=6, value=f"=STDEV({rng})")
            ws.cell(row=n, column=7, value=f"=SQRT(COUNT({rng}))")
            ws.cell(row=n, column=9, value=f"=F{n}/G{n}")
        else:
            ws.cell(row=n, column=2, value=r.estimate).fill = grey
            kind = spec.get("distribution", "normal")
            if "half_width" in spec and kind == "curvilinear_trapezoid":
                ws.cell(row=n, column=6, value=float(spec["half_width"])).fill = grey
                ws.cell(row=n, column=8, value=float(spec.get("limit_uncertainty", 0.0))).fill = grey
                ws.cell(row=n, column=9, value=f"=SQRT(F{n}^2/3+H{n}^2/9)")
            elif "half_width" in spec and kind in ("rectangular", "triangular", "arcsine"):
                ws.cell(row=n, column=6, value=float(spec["half_width"])).fill = grey
                ws.cell(row=n, column=7, value=f"=SQRT({ {'rectangular': 3, 'triangular': 6, 'arcsine': 2}[kind]})")
                ws.cell(row=n, column=9, value=f"=F{n}/G{n}")
            elif "expanded" in spec:
                ws.cell(row=n, column=6, value=float(spec["expanded"])).fill = grey
                ws.cell(row=n, column=7, value=float(spec["k"])).fill = grey
                ws.cell(row=n, column=9, value=f"=F{n}/G{n}")
            else:  # a standard uncertainty, or anything else: stated as u, divisor 1
                stated = float(spec["u"]) if "u" in spec else r.u_x
                ws.cell(row=n, column=6, value=stated).fill = grey
                ws.cell(row=n, column=7, value=1).fill = grey
                ws.cell(row=n, column=9, value=f"=F{n}/G{n}")
        ws.cell(row=n, column=10, value=r.dof if r.dof is not None and r.dof <= DOF_DISPLAY_LIMIT else fmt_dof(r.dof))
        ws.cell(row=n, column=11, value=r.sensitivity).fill = grey
        ws.cell(row=n, column=12, value=f"=ABS(K{n})*I{n}")
        ws.cell(row=n, column=13, value=f"=L{n}^2/{ucell}^2")
        _t(ws.cell(row=n, column=14), r.source)
        _t(ws.cell(row=n, column=15), r.sensitivity_unit)

    # correlation coefficients, as input cells
    corr_first = last + 12
    row_of = {r.symbol: FIRST_ROW + i for i, r in enumerate(rows)}
    terms = []
    if data.correlations:
        ws.cell(row=corr_first - 1, column=1, value="Correlation coefficients").font = bold
        ws.cell(row=corr_first - 1, column=2, value="input a")
        ws.cell(row=corr_first - 1, column=3, value="input b")
        ws.cell(row=corr_first - 1, column=4, value="r(a, b)")
        for j, (a, b, rr) in enumerate(data.correlations):
            n = corr_first + j
            _t(ws.cell(row=n, column=2), a)
            _t(ws.cell(row=n, column=3), b)
            ws.cell(row=n, column=4, value=float(rr)).fill = grey
            if a in row_of and b in row_of:
                ia, ib = row_of[a], row_of[b]
                terms.append(f"2*D{n}*K{ia}*I{ia}*K{ib}*I{ib}")

    s = last + 2
    labels = [
        ("sum of squares of u_i(y)", f"=SUMSQ(L{FIRST_ROW}:L{last})"),
        ("correlation terms, sum of 2 r c_i c_j u(x_i) u(x_j)", "=" + ("+".join(terms) if terms else "0")),
        ("combined standard uncertainty u_c", f"=SQRT(I{s}+I{s + 1}+I{s + 8})"),
        ("effective degrees of freedom nu_eff (fieldbudget)", fmt_dof(data.nu_eff)),
        ("coverage factor k (fieldbudget)", data.k),
        ("expanded uncertainty U = k u_c", f"=I{s + 4}*I{s + 2}"),
        ("u_c as computed by fieldbudget", data.u),
        ("U as computed by fieldbudget", data.U),
        # row s + 8: the second-order terms (JCGM 100:2008 5.1.2) come from numerical derivatives, as a value
        ("second-order terms in u_c^2 (fieldbudget, JCGM 100 5.1.2)", data.higher_order_variance),
    ]
    # u_c lands on row s + 2 == last + 4, the row the share formulas reference (ucell)
    for j, (label, value) in enumerate(labels):
        ws.cell(row=s + j, column=1, value=label).font = bold if j in (2, 5) else Font()
        ws.cell(row=s + j, column=9, value=value)
    ws.cell(row=s + 4, column=9).fill = grey
    # shares of the correlation and second-order terms, so that column M adds up to 1
    ws.cell(row=s + 1, column=13, value=f"=I{s + 1}/{ucell}^2")
    ws.cell(row=s + 8, column=13, value=f"=I{s + 8}/{ucell}^2")
    ws.cell(row=s + 9, column=1, value="sum of the variance shares (inputs, correlation, second order)").font = bold
    ws.cell(row=s + 9, column=13, value=f"=SUM(M{FIRST_ROW}:M{last})+M{s + 1}+M{s + 8}")
    for col, width in zip("ABCDEFGHIJKLMNO", (28, 16, 8, 16, 18, 14, 10, 10, 14, 10, 14, 14, 10, 40, 12)):
        ws.column_dimensions[col].width = width

    info = wb.create_sheet("Record")
    head = "Result" if data.headline_kind == "gum" else "Result (Monte Carlo; the GUM result is not validated)"
    lines = [(k, v) for k, v in data.identification]
    lines += [(head, data.headline_text)]
    lines += [(f"Result: {k}", v) for k, v in data.headline] if data.headline_kind == "monte_carlo" else []
    lines += [(f"Warning{' (concerns ' + f.key + ')' if f.key else ''}", f.message) for f in data.findings] \
        or [("Warnings", "none")]
    lines += [(f"Note{' (concerns ' + f.key + ')' if f.key else ''}", f.message) for f in data.notes]
    lines += [("Statement" if data.headline_kind == "gum" else "Statement (GUM, not validated)", data.statement)]
    lines += list(data.result_lines())
    lines += [(f"Validation: {k}", v) for k, v in data.validation]
    lines += [("Validation: advice", data.advice)] if data.advice else []
    lines += [(f"Acceptance: {k}", v) for k, v in data.acceptance]
    lines += [(f"Traceability: {t.what} ({t.role})" if t.role else f"Traceability: {t.what}", t.how) for t in data.trace]
    lines += [(f"Reference data not yet verified by the laboratory: {n}", r) for n, r in data.unverified]
    lines += [(f"Reference data verified by the laboratory: {n}", r) for n, r in data.lab_checked]
    lines += [(f"Monte Carlo: {k}", v) for k, v in data.monte_carlo]
    lines += list(data.details)
    lines += [(f"Change: {c} {w}", x) for c, w, x in data.changes]
    lines += [(f"Software: {k}", v) for k, v in data.software]
    lines += [("Record SHA-256", data.digest)]
    for i, (k, v) in enumerate(lines, start=1):
        _t(info.cell(row=i, column=1), k).font = bold
        _t(info.cell(row=i, column=2), v)
    info.column_dimensions["A"].width = 40
    info.column_dimensions["B"].width = 100

    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()
