"""Report formats: what each shows, escaping of user text, CSV content, no plotting library."""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys
from html.parser import HTMLParser

import markupsafe
import pytest

from fieldbudget.errors import InputError
from fieldbudget.files.record import make_record
from fieldbudget.report import FORMATS, render, write_report
from fieldbudget.report._env import escape_latex, escape_markdown
from fieldbudget.report.tables import build_report_data, stated_uncertainty
from tests.report._budgets import mixed_budget, nmr_budget

STAMP = "2026-11-30T09:15:00Z"
TEXT_FORMATS = ("html", "md", "latex")


@pytest.fixture(scope="module")
def nmr_record():
    return make_record(nmr_budget(), monte_carlo=2000, seed=5, operator="R. Okafor", created_utc=STAMP,
                       procedure={"name": "BFSL-NMR-01", "version": "3"})


@pytest.fixture(scope="module")
def texts(nmr_record):
    return {fmt: render(nmr_record, fmt).decode("utf-8") for fmt in TEXT_FORMATS + ("csv",)}


@pytest.mark.parametrize("fmt", TEXT_FORMATS)
def test_each_report_shows_what_an_assessor_needs(texts, nmr_record, fmt):
    text = texts[fmt]
    esc = {"html": lambda s: str(markupsafe.escape(s)), "md": escape_markdown, "latex": escape_latex}[fmt]
    # model equation
    assert esc("B = f * (1 + y_tb) / (gp * 1e6)") in text
    # budget table with sources
    for source in ("counter CT-88 s/n 1190, 10 readings", "OCXO of CT-88, calibration certificate BFSL-F-2291"):
        assert esc(source) in text
    # the statement with rounding applied
    head = nmr_record.statement.split(". ")[0]
    assert esc(head) in text
    assert nmr_record.gum["rounded"]["U"] in text
    # traceability from the roles: the timebase through its certificate (stated role), the ratio through
    # CODATA (derived from its reference), the frequency as measured (no role stated: none is invented)
    assert esc("calibration: certificate BFSL-F-2291, issued by Brackwater Field Standards Laboratory, "
               "dated 2026-02-11") in text
    assert esc("CODATA 2022 recommended value 'shielded proton gyromag. ratio in MHz/T'") in text
    assert esc("role not stated; source given: counter CT-88 s/n 1190, 10 readings") in text
    # software versions and the digest
    for name in ("fieldbudget", "numpy", "scipy", "uncertainties"):
        assert esc(name) in text and nmr_record.software[name] in text
    assert nmr_record.digest in text


def test_warnings_are_shown(nmr_record):
    b = nmr_budget()
    b["inputs"]["f"]["u"] = 0.0
    b["inputs"]["y_tb"]["u"] = 0.0
    b["inputs"]["gp"]["u"] = 0.0
    rec = make_record(b, created_utc=STAMP)
    assert rec.gum["warnings"], "the engine warns about a zero uncertainty"
    data = build_report_data(rec)
    assert data.warnings == tuple(rec.gum["warnings"])
    page = render(rec, "html").decode()
    assert "fb-warning" in page
    assert escape_markdown(rec.gum["warnings"][0]) in render(rec, "md").decode()


class _Collect(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags: list[str] = []
        self.attrs: list[tuple[str, str | None]] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs.extend(attrs)


def test_html_is_self_contained_with_inline_svg_charts(texts):
    p = _Collect()
    p.feed(texts["html"])
    assert p.tags.count("svg") == 2  # variance shares, Monte Carlo histogram
    assert "script" not in p.tags and "link" not in p.tags and "img" not in p.tags
    assert not [v for k, v in p.attrs if k in ("src", "href") and v]


def test_user_text_is_escaped_in_every_format():
    b = mixed_budget()
    nasty = "<script>alert(1)</script> & | _ % $ # {x} ~ ^ \\ `code` *bold*"
    b["inputs"]["a"]["source"] = nasty
    rec = make_record(b, operator="<img src=x>", remarks="50 % | done", created_utc=STAMP)
    page = render(rec, "html").decode()
    assert "<script>" not in page and "&lt;script&gt;alert(1)&lt;/script&gt; &amp; |" in page
    assert "<img src=x>" not in page
    md = render(rec, "md").decode()
    assert "\\<script\\>" in md and "\\| \\_" in md and "\\`code\\` \\*bold\\*" in md
    assert "50 % \\| done" in md
    tex = render(rec, "latex").decode()
    assert r"\textless{}script\textgreater{}" in tex
    assert r"\& | \_ \% \$ \# \{x\} \textasciitilde{} \textasciicircum{} \textbackslash{}" in tex


def test_latex_escape_table():
    assert escape_latex("a_b & 5 % ± 1·2 µT") == r"a\_b \& 5 \% \ensuremath{\pm} 1\ensuremath{\cdot}2 \ensuremath{\mu}T"


def test_csv_is_the_budget_table_at_full_precision(nmr_record, texts):
    table = list(csv.DictReader(io.StringIO(texts["csv"])))
    rows = table[:3]
    assert [r["symbol"] for r in rows] == ["f", "y_tb", "gp"]
    assert [r["sensitivity_unit"] for r in rows] == ["T/Hz", "T", "T²/MHz"]
    # the correlation and second-order rows and the total: the shares add up to 1 (common practice)
    labels = [r["symbol"] for r in table[3:6]]
    assert labels[0].startswith("correlation") and labels[1].startswith("second-order") and labels[2].startswith("total")
    assert sum(float(r["variance_share"]) for r in table[:5]) == pytest.approx(1.0, abs=1e-12)
    for r, c in zip(rows, nmr_record.gum["contributions"]):
        assert float(r["u_x"]) == c["u_x"] and float(r["sensitivity"]) == c["sensitivity"]
        assert float(r["u_contribution"]) == c["u_contribution"] and float(r["variance_share"]) == c["share"]
    assert rows[2]["reference"] == "shielded proton gyromag. ratio in MHz/T"
    assert rows[1]["source"] == "OCXO of CT-88, calibration certificate BFSL-F-2291"


@pytest.mark.parametrize("spec, expected", [
    ({"u": 0.2}, ("standard uncertainty u", 0.2, 1.0)),
    ({"expanded": 0.4, "k": 2.0}, ("expanded uncertainty U (k = 2)", 0.4, 2.0)),
    # JCGM 100:2008 4.3.7 (a/sqrt 3), 4.3.9 (a/sqrt 6); arcsine a/sqrt 2 (EA-4/02 M)
    ({"half_width": 1.0, "distribution": "rectangular"}, ("half-width a", 1.0, 3 ** 0.5)),
    ({"half_width": 1.0, "distribution": "triangular"}, ("half-width a", 1.0, 6 ** 0.5)),
    ({"half_width": 1.0, "distribution": "arcsine"}, ("half-width a", 1.0, 2 ** 0.5)),
])
def test_stated_uncertainty_and_divisor(spec, expected):
    how, stated, divisor, _ = stated_uncertainty(spec)
    assert (how, stated) == expected[:2] and divisor == pytest.approx(expected[2], rel=1e-15)


def test_write_report_picks_the_format_from_the_suffix(tmp_path, nmr_record):
    for suffix in (".html", ".md", ".tex", ".csv", ".xlsx"):
        p = write_report(nmr_record, tmp_path / f"r{suffix}")
        assert p.stat().st_size > 200
    assert (tmp_path / "r.xlsx").read_bytes()[:2] == b"PK"
    with pytest.raises(InputError, match="report format must be given with --to"):
        write_report(nmr_record, tmp_path / "r.docx")
    with pytest.raises(InputError, match="report format must be one of html, pdf, md, latex, csv, xlsx"):
        render(nmr_record, "rtf")
    assert FORMATS == ("html", "pdf", "md", "latex", "csv", "xlsx")


def test_report_layer_imports_no_plotting_or_widget_library():
    code = ("import sys, fieldbudget.report, fieldbudget.report.html, fieldbudget.report.xlsx, "
            "fieldbudget.report.pdf, fieldbudget.report.markdown, fieldbudget.report.latex, fieldbudget.report.csv_; "
            "bad = [m for m in ('matplotlib', 'ipywidgets', 'IPython', 'traitlets') if m in sys.modules]; "
            "print(','.join(bad))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


# -- command line ---------------------------------------------------------------------------------

def _cli(*args):
    from fieldbudget.cli import main

    return main(list(args))


def test_cli_record_verify_compare_report(tmp_path, capsys):
    budget = tmp_path / "em3.json"
    budget.write_text(json.dumps(nmr_budget()), encoding="utf-8")
    rec = tmp_path / "em3.record.json"
    assert _cli("record", str(budget), "-o", str(rec), "--monte-carlo", "1000", "--seed", "9",
                "--operator", "R. Okafor", "--remarks", "EM-3") == 0
    out = capsys.readouterr().out
    assert "revision 1" in out and "seed 9" in out and "SHA-256" in out
    assert _cli("verify", str(rec)) == 0
    assert "verified" in capsys.readouterr().out
    assert _cli("compare", str(rec), "--codata", "2018") == 0
    assert "CODATA 2022 -> CODATA 2018" in capsys.readouterr().out
    assert _cli("report", str(rec), "--to", "md", "-o", str(tmp_path / "r.md")) == 0
    assert (tmp_path / "r.md").read_text(encoding="utf-8").startswith("# Reference field of electromagnet EM-3")
    # a second revision with a change log
    b2 = nmr_budget()
    b2["inputs"]["f"]["value"] = 63871230.0
    budget.write_text(json.dumps(b2), encoding="utf-8")
    rec2 = tmp_path / "em3.rev2.json"
    assert _cli("record", str(budget), "-o", str(rec2), "--previous", str(rec), "--reason", "new counter") == 0
    assert "revision 2" in capsys.readouterr().out
    # tampered: verification fails with exit 1; damaged: a one-line error and exit 2
    doc = json.loads(rec.read_text(encoding="utf-8"))
    doc["operator"] = "someone else"
    rec.write_text(json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False) + "\n", encoding="utf-8")
    assert _cli("verify", str(rec)) == 1
    assert "FAIL  digest" in capsys.readouterr().out
    rec.write_text("{", encoding="utf-8")
    assert _cli("verify", str(rec)) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "truncated" in err
    assert _cli("report", str(rec2), "-o", str(tmp_path / "r.docx")) == 2


def test_pdf_without_chromium_is_a_clear_error(monkeypatch, nmr_record):
    from fieldbudget.errors import FieldbudgetError
    from fieldbudget.report import pdf

    monkeypatch.setattr(pdf, "find_chromium", lambda: None)
    with pytest.raises(FieldbudgetError, match="the PDF report needs chromium, which was not found"):
        render(nmr_record, "pdf")


def test_traceability_chain_of_a_budget_from_the_nmr_layer(tmp_path):
    """An NMR measurement file (invented lab) -> budget -> record -> report: the chain comes from the
    roles: the readings as measured, gamma'_p as a CODATA constant, the water data as published data."""
    from pathlib import Path

    from fieldbudget.files.record import save_record, verify_record
    from fieldbudget.nmr import NMRMeasurement

    data = Path(__file__).resolve().parents[1] / "nmr" / "data" / "water_cylinder_1p5T.json"
    if not data.exists():
        pytest.skip(f"{data} is not there")
    m = NMRMeasurement.from_file(data)
    rec = make_record(m.to_budget(), created_utc=STAMP)
    assert rec.codata_edition == m.codata
    chain = build_report_data(rec).trace
    trace = {t.what: t.how for t in chain}
    role = {t.what: t.role for t in chain}
    assert role["f_read"] == "measured"
    n = len(json.loads(data.read_text())["frequency"]["readings_Hz"])
    assert trace["f_read"] == f"measured in this measurement (Type A from {n} readings)"
    assert trace["gamma_p_sh"].startswith(f"CODATA {m.codata} recommended value 'shielded proton gyromag. ratio")
    # regression: the water data were called "CODATA 2022 recommended value"
    for sym in ("alpha_T", "chi"):
        assert role[sym] == "published data" and "CODATA" not in trace[sym]
    assert trace["alpha_T"].startswith("published data: B. W. Petley, R. W. Donaldson")
    assert verify_record(save_record(rec, tmp_path / "nmr.record.json")).passed


def test_html_without_monte_carlo_has_only_the_share_chart():
    rec = make_record(mixed_budget(), created_utc=STAMP)
    p = _Collect()
    p.feed(render(rec, "html").decode())
    assert p.tags.count("svg") == 1
    assert "Monte Carlo propagation" not in render(rec, "html").decode()
