"""CSV and XLSX reports never hand a spreadsheet a formula hidden in a text (OWASP "CSV Injection" guidance)."""

from __future__ import annotations

import csv
import io

import openpyxl
import pytest

from fieldbudget.files.record import make_record
from fieldbudget.report import render, write_report
from fieldbudget.report.csv_ import csv_text_cell
from tests.report._budgets import mixed_budget

STAMP = "2026-11-30T09:15:00Z"


# OWASP CSV Injection: cells starting with = + - @ tab or CR are prefixed with ' and the cell quoted.
@pytest.mark.parametrize("text", ["=1+2", "+1", "-1+cmd", "@SUM(A1)", "\tx", "\rx", '=HYPERLINK("http://x.invalid")'])
def test_risky_text_is_prefixed_and_quoted(text):
    cell = csv_text_cell(text)
    assert cell.startswith("\"'") and cell.endswith('"')
    assert next(csv.reader(io.StringIO(cell))) == ["'" + text]  # reads back as the prefixed text


@pytest.mark.parametrize("text,expected", [("plain", "plain"), ("a,b", '"a,b"'), ('say "x"', '"say ""x"""'),
                                           ("two\nlines", '"two\nlines"'), ("cr\rinside", '"cr\rinside"')])
def test_quoting_of_ordinary_text(text, expected):
    # RFC 4180: fields with comma, quote or line breaks are quoted (CR/LF inside included)
    assert csv_text_cell(text) == expected


def test_csv_report_round_trips_and_neutralises(tmp_path):
    b = mixed_budget()
    b["inputs"]["a"]["source"] = "=cmd|' /C calc'!A0"
    b["inputs"]["a"]["note"] = "@SUM(1+1)"  # a risky note beside the risky source
    b["inputs"]["b"]["source"] = "line one\r\nline two, with comma"
    rec = make_record(b, created_utc=STAMP)
    rows = list(csv.DictReader(io.StringIO(render(rec, "csv").decode("utf-8"), newline="")))
    by = {r["symbol"]: r for r in rows}
    assert by["a"]["source"] == "'=cmd|' /C calc'!A0"
    assert by["b"]["source"] == "line one\r\nline two, with comma"
    assert float(by["a"]["estimate"]) == rec.budget["inputs"]["a"]["value"]  # numbers are not prefixed


def test_xlsx_text_stays_text_without_apostrophe(tmp_path):
    b = mixed_budget()
    b["inputs"]["a"]["source"] = "@SUM(1+1)*cmd"
    p = write_report(make_record(b, created_utc=STAMP), tmp_path / "r.xlsx")
    wb = openpyxl.load_workbook(p)
    found = [c for ws in wb for row in ws.iter_rows() for c in row if c.value == "@SUM(1+1)*cmd"]
    assert found and all(c.data_type == "s" for c in found)
