"""The calibration certificate: its checklist (ISO/IEC 17025:2017 7.8.2.1, 7.8.4.1, 7.8.6; clause letters
from memory), the DRAFT mark, the results table in mT/µT with the error rounded to U's decimal place
(JCGM 100:2008 7.2.6), and page x of y with the certificate id on every page of the PDF.
"""

from __future__ import annotations

import dataclasses
import json
import shutil
import subprocess
from pathlib import Path

import pytest

from fieldbudget.files.calibration_file import CalibrationFile
from fieldbudget.files.calibration_record import make_calibration_record
from fieldbudget.report.certificate import (
    CHECKLIST,
    certificate_content,
    checklist,
    missing,
    render_certificate,
    render_content,
)

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "data" / "calibration-LMCL-C-2026-0419.json"


@pytest.fixture(scope="module")
def record():
    cal = CalibrationFile.from_file(EXAMPLE)
    return make_calibration_record(cal, monte_carlo=20_000, seed=11, created_utc="2026-11-24T09:00:00Z")


@pytest.fixture(scope="module")
def content(record):
    return certificate_content(record)


def test_the_example_certificate_is_complete(content):
    items = checklist(content)
    assert [i["item"] for i in items] == [k for k, _, _ in CHECKLIST]
    assert all(i["present"] for i in items), missing(content)
    md = render_content(content, "md").decode()
    assert "DRAFT" not in md and "LMCL-C-2026-0419" in md
    assert "relate only to the item calibrated" in md


# what to blank for each item to go missing
_BLANK = {
    "title": {"title": ""}, "lab_name": {"lab_name": ""}, "lab_address": {"lab_address": ""},
    "place": {"place": ""}, "certificate_id": {"certificate_id": ""}, "customer_name": {"customer_name": ""},
    "customer_address": {"customer_address": ""}, "method": {"method": ""},
    "item": {"item_rows": (("type", "teslameter"), ("manufacturer", "X"), ("model", "DEMO-1"), ("serial", ""))},
    "date_received": {"date_received": ""}, "date_calibrated": {"date_calibrated": ""},
    "date_issued": {"date_issued": ""}, "relates_only": {"relates_only": ""}, "results": {"results": ()},
    "authorisation": {"signatures": (), "authorised_by": ()}, "uncertainty": {"uncertainty_statement": ""},
    "conditions": {"conditions": ""}, "traceability": {"traceability": ""}, "decision_rule": {"decision_rule": ""},
}


@pytest.mark.parametrize("key, what, clause", CHECKLIST)
def test_each_required_item_absent_in_turn_gives_a_draft(content, key, what, clause):
    c = dataclasses.replace(content, **_BLANK[key])
    state = {i["item"]: i["present"] for i in checklist(c)}
    assert state[key] is False
    assert [k for k, v in state.items() if not v] == [key] or key in ("results",)  # no results: no U either
    for to in ("md", "html"):
        text = render_content(c, to).decode()
        assert "DRAFT, incomplete" in text
        assert f"ISO/IEC 17025:2017 {clause}" in text


def test_decision_rule_is_required_only_when_conformity_is_stated(content):
    c = dataclasses.replace(content, conformity=(), decision_rule="")
    assert "decision_rule" not in {i["item"] for i in checklist(c)}
    assert not missing(c)


def test_a_file_without_customer_gives_a_draft_end_to_end():
    d = json.loads(EXAMPLE.read_text(encoding="utf-8"))
    del d["customer"]
    cal = CalibrationFile.from_dict(d, where="x", base_dir=EXAMPLE.parent)
    rec = make_calibration_record(cal, monte_carlo=10_000, seed=2)
    md = render_certificate(rec, "md").decode()
    assert "**DRAFT, incomplete**" in md and "name of the customer (ISO/IEC 17025:2017 7.8.2.1 e))" in md


def test_results_in_mT_and_uT_with_the_error_rounded_to_U(content, record):
    pts = record.results["summary"]["points"]
    for row, p in zip(content.results, pts):
        u_uT = p["U_T"] * 1e6
        assert len(row["U"].replace(".", "").lstrip("0")) == 2  # two significant digits
        dec = len(row["U"].split(".")[1]) if "." in row["U"] else 0
        assert (len(row["error"].split(".")[1]) if "." in row["error"] else 0) == dec
        assert abs(float(row["error"]) - p["error_T"] * 1e6) <= 0.5 * 10 ** -dec + 1e-9
        assert abs(float(row["U"]) - u_uT) <= 0.5 * 10 ** -dec + 1e-9
        assert float(row["reference"]) == pytest.approx(p["reference_T"] * 1e3, abs=1e-3)
        assert row["interval"].startswith("[")  # Monte Carlo points give their interval
    assert "probabilistically symmetric" in content.interval_statement


def test_the_curve_coefficients_carry_their_unit_uncertainty_and_correlation(content, record):
    # u(a_j) = sqrt(V_jj) and r_ij = V_ij / (u_i u_j) (JCGM 100:2008 5.2.2), recomputed here with numpy
    import numpy as np

    curve = record.results["summary"]["curve"]
    V = np.array(curve["covariance"])
    u = np.sqrt(np.diag(V))
    assert [r[0] for r in content.curve_rows] == [f"a{j}" for j in range(len(u))]
    assert [r[2] for r in content.curve_rows][:2] == ["T", "1"]   # E in T, (R - x0) in T
    for (_, value, _, u_text), a, uj in zip(content.curve_rows, curve["coefficients"], u):
        assert float(value) == pytest.approx(a, rel=1e-7) and float(u_text) == pytest.approx(uj, rel=0.05)
    (x, y, r), = content.curve_correlations  # degree 1: one pair
    assert (x, y) == ("a0", "a1") and float(r) == pytest.approx(V[0, 1] / (u[0] * u[1]), abs=5e-4)
    md = render_content(content, "md").decode("utf-8")
    assert f"r(a0, a1) = {r}" in md and "| a1 |" in md


def test_signature_lines_from_the_record(record):
    doc = record.to_dict()
    doc["signatures"] = [{"name": "I. Marchetti", "role": "approver", "fingerprint": "ab12", "time":
                          "2026-11-24T10:00:00Z", "algorithm": "Ed25519", "public_key": "x", "signature": "y"}]
    from fieldbudget.files.calibration_record import CalibrationRecord

    c = certificate_content(CalibrationRecord(doc))
    html = render_content(c, "html").decode()
    assert "I. Marchetti" in html and "signed electronically (Ed25519)" in html


def test_html_has_the_id_and_page_counter_on_every_printed_page(content):
    html = render_content(content, "html").decode()
    assert 'content: "Certificate LMCL-C-2026-0419";' in html
    assert 'counter(page) " of " counter(pages)' in html
    assert "<svg" in html and "fb-cert-plot" in html


@pytest.mark.skipif(not (Path("/usr/bin/chromium").exists() or shutil.which("chromium")),
                    reason="the PDF needs chromium")
def test_pdf_pages_carry_the_id_and_page_x_of_y(content, tmp_path):
    pdf = render_content(content, "pdf")
    assert pdf.startswith(b"%PDF")
    if not shutil.which("pdftotext"):
        pytest.skip("pdftotext (poppler-utils) not installed to read the PDF back")
    f = tmp_path / "c.pdf"
    f.write_bytes(pdf)
    text = subprocess.run(["pdftotext", "-layout", str(f), "-"], capture_output=True, text=True).stdout
    pages = text.split("\f")
    pages = [p for p in pages if p.strip()]
    n = len(pages)
    assert n >= 2
    for i, page in enumerate(pages, start=1):
        assert f"page {i} of {n}" in page
        assert "Certificate LMCL-C-2026-0419" in page


from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402


@settings(max_examples=200, deadline=None)
@given(e=st.floats(-1e4, 1e4, allow_nan=False), u=st.floats(1e-3, 1e3, allow_nan=False))
def test_error_is_rounded_to_the_decimal_place_of_U(e, u):
    # JCGM 100:2008 7.2.6: U to (at most) two significant digits, the result to the same decimal place
    from fieldbudget.report.certificate import _round

    e_txt, u_txt, dec = _round(e, u)
    places = lambda t: len(t.split(".")[1]) if "." in t else 0  # noqa: E731
    assert places(e_txt) == places(u_txt) == max(dec, 0)
    digits = u_txt.replace(".", "").lstrip("0")
    assert len(digits) - max(0, -dec) <= 2  # zeros left of the decimal point beyond its place are not significant
    assert abs(float(e_txt) - e) <= 0.5 * 10.0 ** -dec * (1 + 1e-9)


def test_content_is_a_readable_value(content):
    assert repr(content) == "<CertificateContent LMCL-C-2026-0419: 5 points, complete>"
    d = json.loads(json.dumps(content.to_dict()))
    assert d["certificate_id"] == "LMCL-C-2026-0419" and all(i["present"] for i in d["checklist"])
