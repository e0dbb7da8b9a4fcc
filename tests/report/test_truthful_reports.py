"""Reports tell the whole truth: the measurement recorded as itself, its warnings beside the result in every
format, the Monte Carlo headline when the GUM result fails its check, traceability from roles, identification,
the budget table's full content and reference-data wording.  Scenario and data invented (Brackwater Field
Standards Laboratory); reference values looked up, never retyped."""

from __future__ import annotations

import csv
import io
import json
import math
import re
import shutil
import subprocess
from pathlib import Path

import markupsafe
import openpyxl
import pytest

from fieldbudget.constants import lookup_other
from fieldbudget.errors import BudgetFileError, RecordError
from fieldbudget.files.measurement_record import record_file
from fieldbudget.files.record import load_record, make_record, save_record, verify_record
from fieldbudget.report import render
from fieldbudget.report._env import escape_latex, escape_markdown
from fieldbudget.report.tables import build_report_data

ROOT = Path(__file__).resolve().parents[2]
README_EXAMPLE = ROOT / "tests" / "nmr" / "data" / "water_cylinder_1p5T.json"
CSV_EXAMPLE = ROOT / "tests" / "nmr" / "data" / "low_field_47mT.json"
STAMP = "2026-11-30T09:15:00Z"
TEXT = ("html", "md", "latex")
CHROMIUM = shutil.which("chromium") or ("/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)

_ESC = {"html": lambda s: str(markupsafe.escape(s)), "md": escape_markdown, "latex": escape_latex,
        "csv": lambda s: s, "pdf": lambda s: s, "xlsx": lambda s: s}


def _gradient_file(tmp_path: Path) -> Path:
    """The README example with a gradient strong enough that the reading may be invalid (invented)."""
    d = json.loads(README_EXAMPLE.read_text(encoding="utf-8"))
    d["id"] = "BFSL-2026-0414"
    d["gradient_T_per_m"] = [0.0, 0.0, 1e-4]
    path = tmp_path / "em3-gradient.json"
    path.write_text(json.dumps(d), encoding="utf-8")
    return path


def _pdf_text(record) -> list[str]:
    pypdf = pytest.importorskip("pypdf")
    if CHROMIUM is None:
        pytest.skip("chromium is not installed (PDF reports need it)")
    reader = pypdf.PdfReader(io.BytesIO(render(record, "pdf")))
    return [re.sub(r"\s+", " ", p.extract_text()) for p in reader.pages]


def _xlsx_texts(record, tmp_path) -> list[str]:
    path = tmp_path / "r.xlsx"
    path.write_bytes(render(record, "xlsx"))
    wb = openpyxl.load_workbook(path)
    return [str(c.value) for ws in wb.worksheets for row in ws.iter_rows() for c in row if c.value is not None]


def _all_formats(record, tmp_path, pdf=True) -> dict[str, str]:
    out = {fmt: render(record, fmt).decode("utf-8") for fmt in (*TEXT, "csv")}
    out["xlsx"] = "\n".join(_xlsx_texts(record, tmp_path))
    if pdf and CHROMIUM is not None:
        out["pdf"] = "\n".join(_pdf_text(record))
    return out


def _flat(text: str) -> str:
    return re.sub(r"\s+", " ", text)


# -- 1. an NMR measurement recorded as itself -----------------------------------------------------

def test_record_takes_an_nmr_measurement_file_and_keeps_its_description(tmp_path):
    # regression: `fieldbudget record` stopped with "#/codata: unknown key" on a measurement file
    rec = record_file(CSV_EXAMPLE, created_utc=STAMP)
    kept = rec.extra["measurement"]
    assert kept["description"] == json.loads(CSV_EXAMPLE.read_text(encoding="utf-8"))
    (named,) = kept["files"]  # the CSV it names, with its SHA-256 and its text
    raw = (CSV_EXAMPLE.parent / "counter_readings.csv").read_bytes()
    import hashlib

    assert named["path"] == "counter_readings.csv" and named["sha256"] == hashlib.sha256(raw).hexdigest()
    assert named["text"].encode("utf-8") == raw
    path = save_record(rec, tmp_path / "lf.record.json")
    result = verify_record(path)
    assert result.passed
    check = next(c for c in result.checks if c.name == "measurement")
    assert check.status == "pass" and "1 file(s)" in check.detail


def test_verify_rebuilds_the_budget_from_the_recorded_description(tmp_path):
    from dataclasses import replace

    from fieldbudget.files.record import _thaw, _with_digest

    rec = record_file(README_EXAMPLE, created_utc=STAMP)
    m = _thaw(rec.extra["measurement"])
    m["description"]["sample"]["temperature_C"] = 24.0  # the description no longer gives the recorded budget
    forged = _with_digest(replace(rec, extra={**_thaw(rec.extra), "measurement": m}))
    result = verify_record(forged)
    assert not result.passed
    assert [c.name for c in result.failures] == ["measurement"]
    assert "differs from the recorded budget" in result.failures[0].detail


def test_a_changed_copy_of_a_named_file_fails_verification():
    from dataclasses import replace

    from fieldbudget.files.record import _thaw, _with_digest

    rec = record_file(CSV_EXAMPLE, created_utc=STAMP)
    m = _thaw(rec.extra["measurement"])
    m["files"][0]["text"] = m["files"][0]["text"].replace("2012345.71", "2012345.81")
    result = verify_record(_with_digest(replace(rec, extra={**_thaw(rec.extra), "measurement": m})))
    assert [c.name for c in result.failures] == ["measurement"] and "SHA-256" in result.failures[0].detail


@pytest.mark.parametrize("command, what, use", [
    ("evaluate", "an NMR measurement file", "`fieldbudget nmr` or `fieldbudget record`"),
    ("verify", "an NMR measurement file", "`fieldbudget nmr` or `fieldbudget record`"),
])
def test_a_file_of_the_wrong_kind_says_what_it_is(capsys, command, what, use):
    from fieldbudget.cli import main

    assert main([command, str(README_EXAMPLE)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and f"this is {what}" in err and use in err


def test_nmr_on_a_record_says_it_is_a_record(tmp_path, capsys):
    from fieldbudget.cli import main

    path = save_record(make_record({"model": "a", "inputs": {"a": {"value": 1, "u": 0.1}}}, created_utc=STAMP),
                       tmp_path / "a.record.json")
    assert main(["nmr", str(path)]) == 2
    assert "this is a fieldbudget record" in capsys.readouterr().err
    with pytest.raises(RecordError, match="this is a budget file, not a record"):
        from fieldbudget.files.record import parse_record_text

        parse_record_text(b'{"model": "a", "inputs": {}}', "b.json")


def test_record_command_on_a_measurement_file(tmp_path, capsys):
    from fieldbudget.cli import main

    path = _gradient_file(tmp_path)
    out = tmp_path / "g.record.json"
    assert main(["record", str(path), "-o", str(out), "--operator", "R. Okafor"]) == 0
    printed = capsys.readouterr().out
    assert "warning: the gradient" in printed
    assert main(["verify", str(out)]) == 0
    assert "PASS  measurement" in capsys.readouterr().out
    with pytest.raises(BudgetFileError, match="#/points"):  # a calibration file is recorded as one
        cal = tmp_path / "cal.json"
        cal.write_text(json.dumps({"format": "fieldbudget-calibration/1"}), encoding="utf-8")
        record_file(cal)


# -- 2. the physics warnings reach the record and every format ---------------------------------------

def test_gradient_warning_reaches_the_record_and_every_report_format(tmp_path):
    # regression: "the reading may be invalid" never reached the record or any report
    rec = record_file(_gradient_file(tmp_path), created_utc=STAMP)
    findings = [f for f in rec.extra["findings"] if "gradient" in f["message"]]
    assert len(findings) == 1 and "the reading may be invalid" in findings[0]["message"]
    assert set(findings[0]) == {"message", "code", "key", "values", "severity"}
    message = findings[0]["message"]
    again = load_record(save_record(rec, tmp_path / "g.record.json"))
    assert [f["message"] for f in again.extra["findings"]] == [f["message"] for f in rec.extra["findings"]]
    for fmt, text in _all_formats(rec, tmp_path).items():
        assert _flat(_ESC[fmt](message)) in _flat(text), fmt


def test_warnings_stand_next_to_the_result_not_at_the_end(tmp_path):
    rec = record_file(_gradient_file(tmp_path), created_utc=STAMP)
    page = render(rec, "html").decode()
    assert page.index('id="fb-statement"') < page.index('id="fb-findings"') < page.index("Uncertainty budget")
    md = render(rec, "md").decode()
    assert md.index("## Result") < md.index("Warnings on this result") < md.index("## Uncertainty budget")


def _between(text: str, start: str, end: str) -> str:
    a = text.index(start)
    return text[a:text.index(end, a)]


def test_a_note_is_reported_as_a_note_not_among_the_warnings(tmp_path):
    # regression: the note saying the line noise is already in the readings' scatter (a documented
    # choice, JCGM 100:2008 4.2) was listed under "Warnings on this result" in every format
    rec = record_file(README_EXAMPLE, created_utc=STAMP)
    severities = {f["code"]: f["severity"] for f in rec.extra["findings"]}
    assert severities == {"nmr.line_in_readings": "note", "nmr.susceptibility_broadening": "warning"}
    note = next(f["message"] for f in rec.extra["findings"] if f["severity"] == "note")
    warning = next(f["message"] for f in rec.extra["findings"] if f["severity"] == "warning")
    data = build_report_data(rec)
    assert [f.code for f in data.findings] == ["nmr.susceptibility_broadening"]
    assert [f.code for f in data.notes] == ["nmr.line_in_readings"] and note not in data.warnings
    out = _all_formats(rec, tmp_path)
    html = _flat(out["html"])
    assert _flat(_ESC["html"](note)) in _between(html, 'id="fb-notes"', "</div>")
    assert _flat(_ESC["html"](note)) not in _between(html, 'id="fb-findings"', "</div>")
    md = _flat(out["md"])
    warned = _between(md, "Warnings on this result", "Notes on this result")
    assert _flat(_ESC["md"](warning)) in warned and _flat(_ESC["md"](note)) not in warned
    assert _flat(_ESC["md"](note)) in _between(md, "Notes on this result", "##")
    latex = _flat(out["latex"])
    assert _flat(_ESC["latex"](note)) in _between(latex, "Notes on this result", "end{itemize}")
    assert _flat(_ESC["latex"](note)) not in _between(latex, "Warnings on this result", "end{itemize}")
    rows = list(csv.reader(io.StringIO(out["csv"])))
    assert [r[0] for r in rows if note in r] == ["note"]
    assert [r[0] for r in rows if warning in r] == ["warning"]
    xlsx = _xlsx_texts(rec, tmp_path)
    assert xlsx[xlsx.index(note) - 1].startswith("Note") and xlsx[xlsx.index(warning) - 1].startswith("Warning")
    if "pdf" in out:
        assert "Notes on this result" in _flat(out["pdf"])


def test_structured_finding_keeps_its_key_in_the_record_and_the_report():
    from fieldbudget.errors import Finding

    f = Finding("the gradient broadens the line (invented check)", "nmr.gradient_invalid",
                "gradient_T_per_m", {"G_T_per_m": 1e-4}, "invalid")
    rec = make_record({"model": "a", "inputs": {"a": {"value": 1, "u": 0.1}}}, created_utc=STAMP,
                      details={"findings": [f]})
    assert rec.extra["findings"][0] == f.to_dict()
    data = build_report_data(rec)
    assert data.findings[0].key == "gradient_T_per_m" and data.findings[0].invalid
    assert 'data-key="gradient_T_per_m"' in render(rec, "html").decode()


# -- 3. a result that fails its own check says so ----------------------------------------------------

def _failing_budget() -> dict:
    # y = exp(x), x ~ N(0, 0.5): the output is log-normal and skewed, so the GUM interval y +- U fails
    # the clause 8 comparison (JCGM 101:2008 8.2) at two significant digits (invented example)
    return {"title": "Skewed output (invented example)", "model": "exp(x)",
            "measurand": {"symbol": "y", "unit": ""}, "inputs": {"x": {"value": 0.0, "u": 0.5}}}


@pytest.fixture(scope="module")
def failing_record():
    rec = make_record(_failing_budget(), monte_carlo=200_000, seed=11, created_utc=STAMP)
    assert rec.validation["validated"] is False
    return rec


def test_failed_validation_puts_the_monte_carlo_result_first_in_every_format(failing_record, tmp_path):
    rec = failing_record
    data = build_report_data(rec)
    assert data.headline_kind == "monte_carlo"
    assert "results of the Monte Carlo method" in data.headline_text
    page = render(rec, "html").decode()
    statement = re.search(r'<p class="fb-statement" id="fb-statement">(.*?)</p>', page, re.S).group(1)
    assert "Monte Carlo" in statement and "not pass the validation" in statement
    assert "GUM result (NOT validated by Monte Carlo, JCGM 101 clause 8)" in page
    for word in ("d_low", "d_high", "numerical tolerance δ", markupsafe.escape(rec.validation["advice"])):
        assert str(word) in page
    md = render(rec, "md").decode()
    first = md.split("## Result", 1)[1].strip().split("\n\n")[0]
    assert first.startswith(escape_markdown(f"y = {data.headline[4][1].split(',')[0].split('= ')[1]}"))
    assert "results of the Monte Carlo method" in first
    tex = render(rec, "latex").decode()
    assert re.search(r"\\fbox\{\\parbox\{[^}]*\}\{y = [^}]*Monte Carlo method", tex)
    rows = list(csv.reader(io.StringIO(render(rec, "csv").decode())))
    results = [r for r in rows if r[0].startswith("result:")]
    assert results[0][0] == "result: Monte Carlo (headline)" and "not validated" in results[1][0]
    assert float(results[0][1]) == rec.monte_carlo["value"] and float(results[0][7]) == rec.monte_carlo["u"]
    wb_path = tmp_path / "f.xlsx"
    wb_path.write_bytes(render(rec, "xlsx"))
    wb = openpyxl.load_workbook(wb_path)
    assert wb["Budget"]["D3"].value == "Result reported (Monte Carlo)"
    info = [(r[0].value, r[1].value) for r in wb["Record"].iter_rows()]
    head = next(i for i, (k, _) in enumerate(info) if str(k).startswith("Result (Monte Carlo"))
    gum = next(i for i, (k, _) in enumerate(info) if str(k).startswith("Statement (GUM, not validated)"))
    assert head < gum
    if CHROMIUM is not None:
        first_page = _pdf_text(rec)[0]
        assert first_page.index("results of the Monte Carlo method") < first_page.index("GUM result (NOT")


def test_cli_text_gives_the_advice_as_a_sentence(tmp_path, capsys):
    from fieldbudget.cli import main

    path = tmp_path / "skew.json"
    path.write_text(json.dumps(_failing_budget()), encoding="utf-8")
    assert main(["evaluate", str(path), "--monte-carlo", "200000", "--seed", "11"]) == 0
    out = capsys.readouterr().out
    assert "ValidationResult(" not in out and "MonteCarloResult(" not in out
    assert "GUM result NOT validated" in out and "Report the Monte Carlo" in out
    assert out.index("Result (Monte Carlo") < out.index("GUM result, not validated")


def test_demo_report_is_consistent_with_its_own_checks(tmp_path, capsys):
    # regression: the demo's report stated the GUM interval while its own check said "not validated",
    # and its remark said every acceptance limit was met
    from fieldbudget.cli import main

    main(["demo", "--out", str(tmp_path), "--trials", "200000"])
    capsys.readouterr()
    rec = load_record(tmp_path / "demo-record.json")
    data = build_report_data(rec)
    if rec.validation["validated"] is False:
        assert data.headline_kind == "monte_carlo"
        assert "did not pass its validation by Monte Carlo" in rec.remarks
        assert "every acceptance limit met" not in rec.remarks
    else:
        assert data.headline_kind == "gum"
    md = (tmp_path / "demo-report.md").read_text(encoding="utf-8")
    assert escape_markdown(data.headline_text) in md


# -- 4. traceability from roles ----------------------------------------------------------------------

def test_readme_example_in_every_format_lists_the_water_data_as_published_data(tmp_path):
    rec = record_file(README_EXAMPLE, created_utc=STAMP)
    data = build_report_data(rec)
    roles = {t.what: t.role for t in data.trace}
    assert roles["alpha_T"] == roles["chi"] == roles["c_chi"] == "published data"
    citation = lookup_other("proton shielding temperature coefficient in water").source
    # the example's two findings: the line noise is in the readings (a note), the cylinder's
    # susceptibility broadening makes the detection method matter
    codes = ["nmr.line_in_readings", "nmr.susceptibility_broadening"]
    assert [f["code"] for f in rec.extra["findings"]] == codes
    assert [f.code for f in data.notes] == codes[:1] and [f.code for f in data.findings] == codes[1:]
    for fmt, text in _all_formats(rec, tmp_path).items():
        flat = _flat(text)
        if fmt == "csv":  # the budget table itself: the source column carries the citation
            assert citation in flat
            continue
        assert _flat(_ESC[fmt]("published data: " + citation)) in flat, fmt
        assert "CODATA 2022 recommended value 'proton shielding" not in flat, fmt
        assert "susceptibility broadening" in flat, fmt


# -- 5. identification -------------------------------------------------------------------------------

def test_every_format_identifies_the_measurement(tmp_path):
    rec = record_file(README_EXAMPLE, created_utc=STAMP, operator="R. Okafor",
                      procedure={"name": "Reference field by NMR", "id": "BFSL-NMR-01", "version": "3"},
                      details={"identification": {"customer": "Vintry Magnet Works (invented)",
                                                  "item": "magnet VM-9 s/n 33"}})
    ident = dict(build_report_data(rec).identification)
    assert ident["measurement id"] == "BFSL-2026-0412"
    assert ident["procedure"] == "Reference field by NMR (id BFSL-NMR-01), version 3"
    assert ident["probe"] == "BW-P3 s/n 2207" and ident["instrument"] == "NMR teslameter BW-NT2 s/n 4471"
    for fmt, text in _all_formats(rec, tmp_path, pdf=False).items():
        if fmt == "csv":
            continue
        for v in ("BFSL-2026-0412", "R. Okafor", "BFSL-NMR-01", "BW-P3 s/n 2207", "Vintry Magnet Works (invented)",
                  "magnet VM-9 s/n 33", "2026-11-30"):
            assert _ESC[fmt](v) in text, (fmt, v)


# -- 6. the budget table -----------------------------------------------------------------------------

def test_budget_table_shows_how_inputs_were_stated_units_of_c_and_shares_adding_to_100(tmp_path):
    from tests.report._budgets import mixed_budget

    rec = make_record(mixed_budget(), created_utc=STAMP)
    data = build_report_data(rec)
    stated = {r.symbol: r.stated_as for r in data.rows}
    assert stated["b"] == "U = 0.004 with k = 2, normal"
    assert stated["c"] == "half-width a = 0.02, rectangular" and stated["t"] == "6 readings (Type A)"
    assert {r.symbol: r.sensitivity_unit for r in data.rows}["a"] == "1"  # mT/A over mT/A
    corr, second, total = data.summary_rows
    assert corr.share > 0  # r(a, c) = 0.3
    # JCGM 100:2008 eq. (16): u_c^2 = sum (c_i u_i)^2 + 2 sum r c_i c_j u_i u_j, so the shares add up to 1
    assert total.share == pytest.approx(1.0, abs=1e-12)
    assert math.isclose(sum(r.share for r in data.rows) + corr.share + second.share, 1.0, abs_tol=1e-12)
    md = render(rec, "md").decode()
    assert escape_markdown("correlation terms, sum of 2 c_i c_j u(x_i, x_j)") in md and "| 100.0 |" in md


def test_defined_values_are_grouped_apart(tmp_path):
    rec = record_file(README_EXAMPLE, created_utc=STAMP)
    data = build_report_data(rec)
    assert {"t_ref", "t_chi"} <= {r.symbol for r in data.defined_rows}
    assert all(r.u_x == 0.0 for r in data.defined_rows) and all(r.u_x > 0 for r in data.uncertain_rows)
    assert all(r[0] not in ("t_ref", "t_chi") for r in data.table_rows())
    assert "Defined values (zero uncertainty)" in render(rec, "html").decode()


def test_large_nu_eff_reads_the_same_everywhere(tmp_path):
    # regression: a finite nu_eff of 4e8 was printed as "427046218.8"
    b = {"model": "a + b", "inputs": {"a": {"value": 1.0, "u": 0.1, "dof": 4.27e8}, "b": {"value": 0, "u": 1e-9}}}
    rec = make_record(b, created_utc=STAMP)
    assert 1000 < rec.gum["nu_eff"] < math.inf
    raw = repr(rec.gum["nu_eff"])
    for fmt, text in _all_formats(rec, tmp_path, pdf=False).items():
        assert raw not in text and f"{rec.gum['nu_eff']:.1f}" not in text, fmt
        assert _ESC[fmt]("> 1000") in text, fmt


# -- 7. reference-data wording -----------------------------------------------------------------------

def test_no_source_text_says_from_memory():
    from fieldbudget.constants import editions, lookup, names, other_names

    texts = [lookup_other(n).source for n in other_names()]
    texts += [lookup(n, e).source for e in editions() for n in names(e)]
    assert texts and not [t for t in texts if "memory" in t or "not re-read" in t]
    assert "from memory" in lookup_other("proton shielding temperature coefficient in water").verification


def test_unverified_reference_data_are_listed_until_the_lab_checks_them(tmp_path, monkeypatch):
    monkeypatch.delenv("FIELDBUDGET_LAB", raising=False)
    rec = record_file(README_EXAMPLE, created_utc=STAMP)
    name = "proton shielding temperature coefficient in water"
    data = build_report_data(rec)
    assert name in dict(data.unverified)
    assert dict(data.unverified)[name] == lookup_other(name).verification
    page = render(rec, "html").decode()
    assert "Reference data not yet verified by the laboratory" in page
    assert "volume and page from memory)" not in _flat(page.split("Uncertainty budget")[1].split("Traceability")[0])
    lab = tmp_path / "lab"
    lab.mkdir()
    (lab / "settings.toml").write_text(
        f'[reference_checks."{name}"]\nby = "Q. Ilves"\ndate = 2026-10-14\nagainst = "Metrologia 20, 81 (1984), printed"\n',
        encoding="utf-8")
    checked = build_report_data(rec, lab=lab)
    assert name not in dict(checked.unverified)
    assert dict(checked.lab_checked)[name] == "checked by Q. Ilves on 2026-10-14 against Metrologia 20, 81 (1984), printed"
    monkeypatch.setenv("FIELDBUDGET_LAB", str(lab))
    assert name in dict(build_report_data(rec).lab_checked)


def test_a_bad_lab_settings_entry_names_its_place(tmp_path):
    (tmp_path / "settings.toml").write_text('[reference_checks."x"]\nby = "Q"\ndate = "2026-10-14"\n', encoding="utf-8")
    from fieldbudget.files.lab_settings import reference_checks

    with pytest.raises(BudgetFileError, match=r'reference_checks\."x"\.against'):
        reference_checks(tmp_path)


# -- 8. formats --------------------------------------------------------------------------------------

def test_statement_can_read_approximately_95_percent():
    rec = make_record({"model": "a", "inputs": {"a": {"value": 1, "u": 0.1}}}, created_utc=STAMP)
    assert "about 95.45 %" in rec.statement
    data = build_report_data(rec, coverage_wording="approximate")
    assert "approximately 95 %" in data.statement and "about 95.45 %" not in data.statement
    # JCGM 100:2008 7.2.3: value, U, k and p stay in the statement
    assert data.statement.replace("approximately 95 %", "about 95.45 %") == rec.statement
    assert "approximately 95 %" in render(rec, "md", coverage_wording="approximate").decode()


def test_terminal_table_fits_columns(monkeypatch):
    from fieldbudget.nmr import NMRMeasurement

    monkeypatch.setenv("COLUMNS", "130")
    text = NMRMeasurement.from_file(README_EXAMPLE).evaluate().report()
    assert max(len(line) for line in text.splitlines()) <= 130
    assert "Petley" in text or "stated field gradient" in text


def test_latex_is_a_complete_document_or_a_fragment(tmp_path):
    rec = record_file(README_EXAMPLE, created_utc=STAMP)
    doc = render(rec, "latex").decode()
    assert doc.count(r"\documentclass") == 1 and r"\begin{document}" in doc and doc.rstrip().endswith(r"\end{document}")
    assert r"\begin{longtable}{lrlp{3.2cm}rrp{2.6cm}rrp{7cm}}" in doc  # the source column wraps (p{})
    frag = render(rec, "latex", fragment=True).decode()
    assert r"\documentclass" not in frag and r"\begin{longtable}" in frag
    with pytest.raises(Exception, match="fragment"):
        render(rec, "html", fragment=True)
    if shutil.which("pdflatex") is None:
        pytest.skip("pdflatex is not installed: structure checked, compiling skipped")
    (tmp_path / "r.tex").write_text(doc, encoding="utf-8")
    run = subprocess.run(["pdflatex", "-interaction=nonstopmode", "-halt-on-error", "r.tex"], cwd=tmp_path,
                         capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stdout[-2000:]
    assert (tmp_path / "r.pdf").read_bytes()[:5] == b"%PDF-"
