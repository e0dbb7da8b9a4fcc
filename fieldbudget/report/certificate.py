"""The calibration certificate of a calibration record: HTML, PDF (headless chromium) and Markdown.

Its content follows ISO/IEC 17025:2017 7.8.2.1 (common content of reports),
7.8.4.1 (calibration certificates: uncertainty, conditions, traceability)
and 7.8.6 (statements of conformity: the decision rule).  The clause letters
of :data:`CHECKLIST` are given from memory; check them against the standard.
The expanded uncertainty is stated as ILAC P14 asks: U with its coverage
factor k and coverage probability.  A certificate that lacks required content
is marked "DRAFT, incomplete" with the list of what is missing.

The results table is in the units people read (mT for fields, µT for errors
and U), with U rounded to two significant digits (JCGM 100:2008 7.2.6) and the
error to the same decimal place.  The plot (error against field with U bars,
the fitted curve and the residuals) is inline SVG written here, because the
report layer imports no plotting library.

Written by hand: what a certificate must state, and how, is the metrology of
ISO/IEC 17025 and ILAC P14; templating is jinja2 and PDF is chromium.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from html import escape as _esc
from typing import Any

from ..engine import round_result
from ..errors import InputError
from ._env import html_env, markdown_env

__all__ = ["CERTIFICATE_FORMATS", "CHECKLIST", "CertificateContent", "certificate_content", "checklist",
           "missing", "render_certificate", "render_content", "write_certificate"]

CERTIFICATE_FORMATS = ("html", "pdf", "md")

#: (item key, what it is, clause of ISO/IEC 17025:2017; letters from memory)
CHECKLIST = (
    ("title", "title (calibration certificate)", "7.8.2.1 a)"),
    ("lab_name", "name of the laboratory", "7.8.2.1 b)"),
    ("lab_address", "address of the laboratory", "7.8.2.1 b)"),
    ("place", "place where the calibration was made", "7.8.2.1 c)"),
    ("certificate_id", "unique identification of the certificate on every page, with page x of y", "7.8.2.1 d)"),
    ("customer_name", "name of the customer", "7.8.2.1 e)"),
    ("customer_address", "contact information (address) of the customer", "7.8.2.1 e)"),
    ("method", "identification of the method used", "7.8.2.1 f)"),
    ("item", "unambiguous identification of the item (type, manufacturer, model, serial number)", "7.8.2.1 g)"),
    ("date_received", "date of receipt of the item", "7.8.2.1 h)"),
    ("date_calibrated", "date of calibration", "7.8.2.1 i)"),
    ("date_issued", "date of issue", "7.8.2.1 j)"),
    ("relates_only", "statement that the results relate only to the item calibrated", "7.8.2.1 l)"),
    ("results", "results with their units", "7.8.2.1 m)"),
    ("authorisation", "identification of the persons authorising the certificate", "7.8.2.1 o)"),
    ("uncertainty", "expanded uncertainty with k and coverage probability, in the unit of the result", "7.8.4.1 a)"),
    ("conditions", "conditions of the calibration (temperature)", "7.8.4.1 b)"),
    ("traceability", "statement of metrological traceability", "7.8.4.1 c)"),
    ("decision_rule", "the decision rule of the conformity statement", "7.8.6.2 c)"),
)

RELATES_ONLY = ("The results in this certificate relate only to the item calibrated, as received and "
                "identified above, at the time and under the conditions of the calibration.")


@dataclass(frozen=True)
class CertificateContent:
    """Everything a certificate prints, as plain values (built from a calibration record)."""

    title: str
    certificate_id: str
    lab_name: str
    lab_address: str
    place: str
    accreditation: str
    customer_name: str
    customer_address: str
    method: str
    item: str
    item_rows: tuple
    date_received: str
    date_calibrated: str
    date_issued: str
    relates_only: str
    conditions: str
    traceability: str
    results: tuple            # rows of the results table
    uncertainty_statement: str
    interval_statement: str
    curve: Mapping | None
    curve_use: str
    conformity: tuple
    decision_rule: str
    signatures: tuple
    authorised_by: tuple
    propagation: str
    warnings: tuple
    digest: str
    remarks: str = ""
    plot_svg: str = field(default="", repr=False)
    # the curve's coefficients: (name, value, unit, standard uncertainty), and their correlation coefficients
    curve_rows: tuple = ()
    curve_correlations: tuple = ()

    @property
    def conformity_stated(self) -> bool:
        return bool(self.conformity)

    def __repr__(self) -> str:
        state = "complete" if not missing(self) else f"DRAFT, {len(missing(self))} missing"
        return f"<CertificateContent {self.certificate_id or '(no id)'}: {len(self.results)} points, {state}>"

    def to_dict(self) -> dict:
        """Everything the certificate prints (without the plot), with its checklist."""
        from dataclasses import asdict

        d = {k: v for k, v in asdict(self).items() if k != "plot_svg"}
        d["checklist"] = checklist(self)
        return d

    def _repr_html_(self) -> str:
        return render_content(self, "html").decode("utf-8")


def _present(c: CertificateContent, key: str) -> bool:
    if key == "item":
        return bool(c.item) and all(v for k, v in c.item_rows if k in ("type", "manufacturer", "model", "serial"))
    if key == "results":
        return bool(c.results)
    if key == "uncertainty":
        return bool(c.results) and all(r["U"] and r["k"] for r in c.results) and bool(c.uncertainty_statement)
    if key == "authorisation":
        return bool(c.signatures) or bool(c.authorised_by)
    if key == "decision_rule":
        return bool(c.decision_rule)
    return bool(str(getattr(c, key) or "").strip())


def checklist(c: CertificateContent) -> list[dict]:
    """Each required item with its clause and whether the certificate has it.

    The decision rule is required only when conformity is stated (7.8.6).
    """
    out = []
    for key, what, clause in CHECKLIST:
        if key == "decision_rule" and not c.conformity_stated:
            continue
        out.append({"item": key, "description": what, "clause": f"ISO/IEC 17025:2017 {clause}",
                    "present": _present(c, key)})
    return out


def missing(c: CertificateContent) -> list[str]:
    return [f"{i['description']} ({i['clause']})" for i in checklist(c) if not i["present"]]


# ------------------------------------------------------------------------------------------ content
def _txt(d: Mapping, key: str) -> str:
    v = d.get(key)
    return "" if v is None else str(v)


def _round(value: float, u: float) -> tuple[str, str, int]:
    r = round_result(value, u, "gum", 2)
    return r.value_text, r.uncertainty_text, r.decimals


def _fixed(value: float, decimals: int) -> str:
    return f"{value:.{max(decimals, 0)}f}"


def certificate_content(record: Any) -> CertificateContent:
    """The content of the certificate of a calibration record."""
    from ..files.calibration_record import CalibrationRecord

    if not isinstance(record, CalibrationRecord) or not record.is_calibration:
        raise InputError("record", type(record).__name__, "a calibration record (made by 'fieldbudget calibrate "
                         "FILE -o RECORD' or 'fieldbudget record CALIBRATION_FILE')", "certificate")
    doc = record.to_dict()
    cf = dict(doc.get("calibration_file") or {})
    cf.update({k: v for k, v in (doc.get("certificate") or {}).items() if v not in (None, "", {})})
    lab, cust, item = (dict(cf.get(k) or {}) for k in ("lab", "customer", "item"))
    dates, env, meth = (dict(cf.get(k) or {}) for k in ("dates", "environment", "method"))
    res = doc["results"]
    summ = res["summary"]

    item_rows = (("type", _txt(item, "type")), ("manufacturer", _txt(item, "manufacturer")),
                 ("model", _txt(item, "model")), ("serial", _txt(item, "serial")),
                 ("probe", " s/n ".join(x for x in (_txt(item, "probe"), _txt(item, "probe_serial")) if x)))
    item_text = ", ".join(f"{k} {v}" if k in ("serial",) else v for k, v in item_rows if v)
    method = " ".join(x for x in (_txt(meth, "procedure"), f"version {meth['version']}" if meth.get("version") else "")
                      if x)
    if meth.get("description") and method:
        method += f": {meth['description']}"
    conditions = ""
    if env.get("temperature_C") is not None:
        conditions = f"ambient temperature {env['temperature_C']:g} °C"
        if env.get("u_temperature_C"):
            conditions += f" (standard uncertainty {float(env['u_temperature_C']):g} °C)"
        if env.get("humidity_percent") is not None:
            conditions += f", relative humidity {env['humidity_percent']:g} %"

    rows = []
    for p in summ["points"]:
        e_u, u_u = p["error_T"] * 1e6, p["U_T"] * 1e6
        e_txt, big_u_txt, dec = _round(e_u, u_u)
        dec_mT = dec + 3  # the same decimal place, in mT
        lo, hi = p.get("coverage_interval_T") or (p["error_T"] - p["U_T"], p["error_T"] + p["U_T"])
        rows.append({
            "id": p["id"],
            "reference": _fixed(p["reference_T"] * 1e3, dec_mT + 1),
            "indication": _fixed(p["indication_T"] * 1e3, max(dec_mT, 2)),
            "error": e_txt, "U": big_u_txt, "k": f"{p['k']:.2f}",
            "interval": (f"[{_fixed(lo * 1e6, dec)}, {_fixed(hi * 1e6, dec)}]" if p["propagation"] == "monte carlo"
                         else ""),
            "propagation": "Monte Carlo" if p["propagation"] == "monte carlo" else "GUM",
            "p": p["coverage_probability"],
        })
    pcov = {p["coverage_probability"] for p in summ["points"]}
    p_txt = " / ".join(f"{100 * x:.4g} %" for x in sorted(pcov))
    unc = (f"The expanded uncertainty U is the standard uncertainty of the error multiplied by the coverage "
           f"factor k given for each point, such that the coverage interval (error ± U, or for a Monte Carlo point "
           f"the interval given beside it) contains the error of the instrument with a coverage probability of "
           f"{p_txt}. The uncertainty was evaluated per JCGM 100:2008 (GUM) and, where marked, by Monte Carlo "
           "(JCGM 101:2008).")
    any_mc = any(p["propagation"] == "monte carlo" for p in summ["points"])
    interval = ""
    if any_mc:
        interval = ("Where a point was evaluated by Monte Carlo, its coverage interval is the probabilistically "
                    "symmetric interval of JCGM 101:2008 7.7, given in the last column; U is half its length and k "
                    "is U divided by the standard uncertainty. The interval is not centred on the error where the "
                    "probe's alignment term dominates, because a misaligned probe always reads less than the "
                    "field: then state the interval, not error ± U.")

    curve = summ.get("curve")
    use, curve_rows, curve_corr = "", (), ()
    if curve:
        a = curve["coefficients"]
        x0 = curve["x0"]
        fit = (res.get("curve") or {}).get("fit") or {}
        lo, hi = fit.get("x_range", [None, None])
        terms = " + ".join([f"{a[0]:.6g} T"] + [f"{c:.6g} (R − {x0:.6g} T)" + (f"^{j}" if j > 1 else "")
                                                 for j, c in enumerate(a) if j >= 1])
        curve_rows, curve_corr = _coefficient_rows(curve)
        if curve["form"] == "error":
            use = (f"Error of the indication R (in T): E(R) = {terms}. The corrected field for a later reading R "
                   f"is B = R − E(R). Use it only for readings between {lo:.6g} T and {hi:.6g} T; outside that "
                   "range the curve is not calibrated. The uncertainty of B combines the coefficients' covariance "
                   "(given below) with the new reading's own uncertainty.")
        else:
            use = (f"Indication as a function of the field: R(B) = B + {terms.replace('(R − ', '(B − ')}; solve for "
                   f"B at a later reading R, between {lo:.6g} T and {hi:.6g} T only.")
    conf = tuple({
        "point": c["point"], "decision": c["decision"], "p_c": f"{100 * c['p_c']:.1f} %",
        "tolerance": f"± {abs(c['tolerance_T'][1]) * 1e6:.4g} µT", "guard_band": f"{c['guard_band_T'] * 1e6:.3g} µT",
    } for c in summ.get("conformity") or [])
    rule_d = dict(cf.get("decision_rule") or {})
    tol = dict(cf.get("tolerance") or {})
    rule = ""
    if conf and rule_d.get("rule"):
        w = rule_d.get("guard_band_T")
        wtxt = ("the expanded uncertainty U of the point" if w is None else f"{float(w) * 1e6:g} µT")
        rule = (f"Decision rule: {rule_d['rule']} (JCGM 106:2012) against the specification "
                f"{tol.get('source') or 'given by the customer'}"
                + (f", with a guard band w equal to {wtxt}: a point is accepted when its error lies within the "
                   "tolerance reduced by w on each side." if rule_d["rule"] == "guarded acceptance" else
                   ": a point is accepted when its error lies within the tolerance.")
                + " p_c is the probability that the error lies within the tolerance.")
    auth = tuple(dict(a) for a in (cf.get("authorised_by") or []) if isinstance(a, Mapping))
    sigs = tuple({"name": s.get("name", ""), "role": s.get("role", ""), "time": s.get("time", ""),
                  "fingerprint": s.get("fingerprint", ""), "algorithm": s.get("algorithm", "")}
                 for s in doc.get("signatures", []))
    content = CertificateContent(
        title=str(cf.get("title") or "Calibration certificate"), certificate_id=_txt(cf, "certificate_id"),
        lab_name=_txt(lab, "name"), lab_address=_txt(lab, "address"),
        place=_txt(lab, "place_of_calibration"), accreditation=_txt(lab, "accreditation"),
        customer_name=_txt(cust, "name"), customer_address=_txt(cust, "address"), method=method, item=item_text,
        item_rows=item_rows, date_received=_txt(dates, "received"), date_calibrated=_txt(dates, "calibrated"),
        date_issued=_txt(dates, "issued"), relates_only=RELATES_ONLY, conditions=conditions,
        traceability=_txt(cf, "traceability"), results=tuple(rows), uncertainty_statement=unc,
        interval_statement=interval, curve=curve, curve_use=use, conformity=conf, decision_rule=rule,
        signatures=sigs, authorised_by=auth, propagation=str(res.get("propagation", "")),
        warnings=tuple(summ.get("warnings") or ()), digest=record.digest, remarks=_txt(cf, "remarks"),
        curve_rows=curve_rows, curve_correlations=curve_corr,
    )
    return replace(content, plot_svg=_plot(summ, res))


def _coefficient_unit(j: int) -> str:
    """The unit of a_j in E = a0 + a1 (R - x0) + a2 (R - x0)^2 + ..., with E and R in T: T^(1 - j)."""
    return {0: "T", 1: "1", 2: "1/T"}.get(j, f"T^-{j - 1}")


def _coefficient_rows(curve: Mapping) -> tuple[tuple, tuple]:
    """(a_j, value, unit, u(a_j)) for each coefficient, and (a_i, a_j, r) for each pair, from the covariance
    of the fit (u = sqrt of the diagonal; r_ij = cov_ij / (u_i u_j), JCGM 100:2008 5.2.2)."""
    a, cov = list(curve["coefficients"]), curve.get("covariance") or []
    u = [math.sqrt(cov[j][j]) if j < len(cov) and cov[j][j] >= 0 else float("nan") for j in range(len(a))]
    rows = tuple((f"a{j}", f"{v:.8g}", _coefficient_unit(j), f"{u[j]:.1e}") for j, v in enumerate(a))
    corr = tuple((f"a{i}", f"a{j}", f"{cov[i][j] / (u[i] * u[j]):+.3f}") for i in range(len(a))
                 for j in range(i + 1, len(a)) if u[i] > 0 and u[j] > 0)
    return rows, corr


# ------------------------------------------------------------------------------------------ the plot
def _ticks(lo: float, hi: float, n: int = 5) -> list[float]:
    """Round tick values (steps of 1, 2 or 5 times a power of ten) inside [lo, hi]."""
    import math

    span = hi - lo
    if not span > 0:
        return [lo]
    raw = span / n
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 5, 10) if m * mag >= raw)
    first = math.ceil(lo / step) * step
    return [round(first + k * step, 12) for k in range(int((hi - first) / step) + 1)]


def _plot(summ: Mapping, res: Mapping) -> str:
    """Error (µT) against the reference field (mT) with U bars and the curve; residuals below."""
    pts = summ["points"]
    if not pts:
        return ""
    w, h1, h2, left, right, top = 640, 260, 110, 70, 20, 20
    xs = [p["reference_T"] * 1e3 for p in pts]
    lows = [(p.get("coverage_interval_T") or [p["error_T"] - p["U_T"]])[0] * 1e6 for p in pts]
    highs = [(p.get("coverage_interval_T") or [0, p["error_T"] + p["U_T"]])[1] * 1e6 for p in pts]
    es = [p["error_T"] * 1e6 for p in pts]
    fit = (res.get("curve") or {}).get("fit")
    curve_y: list[tuple[float, float]] = []
    resid: list[float] = []
    if fit:
        a, x0 = fit["coefficients"], fit["x0"]
        xi = [p["indication_T"] for p in pts]
        lo_x, hi_x = min(xi), max(xi)
        for k in range(41):
            r = lo_x + (hi_x - lo_x) * k / 40
            e = sum(c * (r - x0) ** j for j, c in enumerate(a))
            b = r - e if fit.get("x_unit", "T") and (res.get("curve") or {}).get("form", "error") == "error" else r
            curve_y.append((b * 1e3, e * 1e6))
        resid = [q["residual"] * 1e6 for q in fit.get("points", [])]
    xmin, xmax = min(xs), max(xs)
    pad = 0.05 * (xmax - xmin or 1.0)
    xmin, xmax = xmin - pad, xmax + pad
    ymin = min(lows + [y for _, y in curve_y] + [0.0])
    ymax = max(highs + [y for _, y in curve_y] + [0.0])
    ypad = 0.08 * (ymax - ymin or 1.0)
    ymin, ymax = ymin - ypad, ymax + ypad

    def sx(x: float) -> float:
        return left + (w - left - right) * (x - xmin) / (xmax - xmin)

    def sy(y: float, y0: float, y1: float, off: float, hh: float) -> float:
        return off + hh * (1 - (y - y0) / (y1 - y0))

    out = [f'<svg xmlns="http://www.w3.org/2000/svg" class="fb-cert-plot" viewBox="0 0 {w} {top + h1 + h2 + 84}" '
           f'width="100%" role="img" aria-label="error against field with expanded uncertainty, fitted curve and '
           f'residuals" font-family="sans-serif" font-size="11">']
    off1, off2 = top, top + h1 + 40

    def axes(off: float, hh: float, y0: float, y1: float, label: str) -> None:
        out.append(f'<rect x="{left}" y="{off}" width="{w - left - right}" height="{hh}" fill="none" '
                   'stroke="#444" stroke-width="0.8"/>')
        for y in _ticks(y0, y1):
            yy = sy(y, y0, y1, off, hh)
            out.append(f'<line x1="{left - 4}" x2="{left}" y1="{yy:.1f}" y2="{yy:.1f}" stroke="#444"/>'
                       f'<text x="{left - 6}" y="{yy + 4:.1f}" text-anchor="end">{y:.3g}</text>')
        if y0 < 0 < y1:
            yy = sy(0, y0, y1, off, hh)
            out.append(f'<line x1="{left}" x2="{w - right}" y1="{yy:.1f}" y2="{yy:.1f}" stroke="#999" '
                       'stroke-dasharray="3,3"/>')
        out.append(f'<text x="14" y="{off + hh / 2:.1f}" transform="rotate(-90 14 {off + hh / 2:.1f})" '
                   f'text-anchor="middle">{_esc(label)}</text>')

    axes(off1, h1, ymin, ymax, "error (µT)")
    for x, e, lo, hi in zip(xs, es, lows, highs):
        X = sx(x)
        out.append(f'<line x1="{X:.1f}" x2="{X:.1f}" y1="{sy(lo, ymin, ymax, off1, h1):.1f}" '
                   f'y2="{sy(hi, ymin, ymax, off1, h1):.1f}" stroke="#1f4e79" stroke-width="1.4"/>')
        for yv in (lo, hi):
            Y = sy(yv, ymin, ymax, off1, h1)
            out.append(f'<line x1="{X - 4:.1f}" x2="{X + 4:.1f}" y1="{Y:.1f}" y2="{Y:.1f}" stroke="#1f4e79"/>')
        out.append(f'<circle cx="{X:.1f}" cy="{sy(e, ymin, ymax, off1, h1):.1f}" r="3" fill="#1f4e79"/>')
    if curve_y:
        path = " ".join(f"{'M' if k == 0 else 'L'}{sx(x):.1f},{sy(y, ymin, ymax, off1, h1):.1f}"
                        for k, (x, y) in enumerate(curve_y))
        out.append(f'<path d="{path}" fill="none" stroke="#b35900" stroke-width="1.2"/>')
    out.append(f'<text x="{left + 8}" y="{off1 + 14}">● error with its coverage interval   — fitted curve</text>')
    if resid:
        r0, r1 = min(resid + [0.0]), max(resid + [0.0])
        rp = 0.15 * (r1 - r0 or 1.0)
        r0, r1 = r0 - rp, r1 + rp
        axes(off2, h2, r0, r1, "residual (µT)")
        for x, r in zip(xs, resid):
            out.append(f'<rect x="{sx(x) - 3:.1f}" y="{sy(r, r0, r1, off2, h2) - 3:.1f}" width="6" height="6" '
                       'fill="#b35900"/>')
    for x in _ticks(xmin, xmax):
        out.append(f'<line x1="{sx(x):.1f}" x2="{sx(x):.1f}" y1="{off2 + h2}" y2="{off2 + h2 + 4}" stroke="#444"/>'
                   f'<text x="{sx(x):.1f}" y="{off2 + h2 + 16}" text-anchor="middle">{x:.4g}</text>')
    out.append(f'<text x="{(left + w - right) / 2:.1f}" y="{off2 + h2 + 34}" text-anchor="middle">'
               'reference field (mT)</text></svg>')
    return "".join(out)


# ------------------------------------------------------------------------------------------ rendering
def _css_string(text: str) -> str:
    """A CSS string literal for the page margin boxes (user text cannot end the string or the style)."""
    out = "".join(ch if ch.isalnum() or ch in " .,:;()/-_+'" else f"\\{ord(ch):x} " for ch in str(text))
    return f'"{out}"'


def _context(c: CertificateContent) -> dict:
    miss = missing(c)
    return {"c": c, "missing": miss, "draft": bool(miss), "checklist": checklist(c)}


def render_certificate(record: Any, to: str) -> bytes:
    """The certificate of a calibration record as bytes: ``to`` is ``html``, ``pdf`` or ``md``."""
    if to not in CERTIFICATE_FORMATS:
        raise InputError("certificate format", to, f"one of {', '.join(CERTIFICATE_FORMATS)}", "certificate")
    return render_content(certificate_content(record), to)


def render_content(c: CertificateContent, to: str) -> bytes:
    """Render an already built :class:`CertificateContent` (``html``, ``pdf`` or ``md``)."""
    if to not in CERTIFICATE_FORMATS:
        raise InputError("certificate format", to, f"one of {', '.join(CERTIFICATE_FORMATS)}", "certificate")
    ctx = _context(c)
    if to == "md":
        return markdown_env().get_template("certificate.md.j2").render(**ctx).encode("utf-8")
    from markupsafe import Markup

    css = {k: Markup(_css_string(v)) for k, v in (
        ("id", f"Certificate {c.certificate_id or '(no identification)'}"), ("lab", c.lab_name),
        ("draft", "DRAFT, incomplete" if ctx["draft"] else ""))}
    # the SVG is built here from numbers and escaped labels only
    html = html_env().get_template("certificate.html.j2").render(plot=Markup(c.plot_svg), css=css, **ctx)
    if to == "html":
        return html.encode("utf-8")
    from .pdf import html_to_pdf

    return html_to_pdf(html)


def write_certificate(record: Any, path: Any, to: str | None = None) -> Any:
    """Write the certificate (atomically); the format comes from ``to`` or the suffix of ``path``."""
    from pathlib import Path

    from ..files.atomic import atomic_write_bytes

    if to is None:
        to = {".html": "html", ".htm": "html", ".pdf": "pdf", ".md": "md"}.get(Path(path).suffix.lower())
        if to is None:
            raise InputError("certificate format", Path(path).suffix or str(path),
                             "given with --to, or a file suffix .html, .pdf or .md", "certificate")
    return atomic_write_bytes(path, render_certificate(record, to))

