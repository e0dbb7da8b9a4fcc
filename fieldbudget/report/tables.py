"""The neutral content of a report, built once from a record and rendered by every format.

A :class:`ReportData` holds plain text and numbers only: the model equation,
the budget rows (with how each uncertainty was stated and its divisor), the
result lines, the rounded statement, the warnings, the traceability chain, the
software versions and the digest.  Each renderer (HTML, Markdown, LaTeX, CSV,
XLSX, PDF) formats the same data, so the reports cannot disagree.

Written by hand: the layout of an uncertainty budget is metrology, not
something a table library knows.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from .._display import fmt, fmt_dof

__all__ = ["DISTRIBUTION_NAMES", "BudgetRow", "ReportData", "TraceLink", "build_report_data", "stated_uncertainty"]

# Words for the distribution kinds of the budget file (our own wording).
DISTRIBUTION_NAMES = {
    "normal": "normal",
    "rectangular": "rectangular",
    "triangular": "triangular",
    "arcsine": "arcsine (U-shaped)",
    "curvilinear_trapezoid": "curvilinear trapezoid",
    "type_a": "Type A (readings)",
}


def stated_uncertainty(spec: Mapping) -> tuple[str, float | None, float | None, str]:
    """How an input's uncertainty was stated in the budget file.

    Returns ``(how, stated, divisor, divisor_text)``: ``stated / divisor`` is the
    standard uncertainty (JCGM 100:2008 4.3.4 for U/k, 4.3.7 rectangular a/sqrt(3),
    4.3.9 triangular a/sqrt(6); arcsine a/sqrt(2), EA-4/02 M).  For a curvilinear
    trapezoid (u^2 = a^2/3 + d^2/9, JCGM 101:2008 6.4.3) and Type A readings
    (u = s/sqrt(n), GUM 4.2.3) ``divisor`` is ``None`` and ``divisor_text`` says why.
    """
    if "u" in spec:
        return "standard uncertainty u", float(spec["u"]), 1.0, "1"
    if "expanded" in spec:
        k = float(spec.get("k", 1.0))
        return f"expanded uncertainty U (k = {k:g})", float(spec["expanded"]), k, f"k = {k:g}"
    if "half_width" in spec:
        kind = spec.get("distribution", "rectangular")
        a = float(spec["half_width"])
        if kind == "curvilinear_trapezoid":
            d = float(spec.get("limit_uncertainty", 0.0))
            return f"half-width a (known to +-{d:g})", a, None, "sqrt(a^2/3 + d^2/9)"
        div = {"rectangular": 3.0, "triangular": 6.0, "arcsine": 2.0}.get(kind)
        if div is None:
            return f"half-width a ({kind})", a, None, "?"
        return "half-width a", a, math.sqrt(div), f"sqrt({div:g})"
    if "readings" in spec:
        n = len(spec["readings"])
        return f"{n} readings", None, math.sqrt(n), f"sqrt(n), n = {n}"
    return "as evaluated", None, None, ""


@dataclass(frozen=True)
class BudgetRow:
    """One input of the budget table (numbers in the input's unit; ``share`` 0..1)."""

    symbol: str
    estimate: float | None
    unit: str
    distribution: str
    how_stated: str
    stated: float | None
    divisor: float | None
    divisor_text: str
    u_x: float | None
    dof: float | None
    sensitivity: float | None
    u_contribution: float | None
    share: float | None
    source: str
    reference: str

    def cells(self) -> tuple[str, ...]:
        """Formatted cells, in the order of :data:`ReportData.COLUMNS`."""
        return (
            self.symbol,
            "" if self.estimate is None else fmt(self.estimate, 12),
            self.unit,
            self.distribution,
            "" if self.u_x is None else fmt(self.u_x, 3),
            fmt_dof(self.dof),
            "" if self.sensitivity is None else fmt(self.sensitivity, 4),
            "" if self.u_contribution is None else fmt(abs(self.u_contribution), 3),
            "" if self.share is None else f"{100.0 * self.share:.1f}",
            self.source,
        )


@dataclass(frozen=True)
class TraceLink:
    """One link of the traceability chain: what, and how it is traceable."""

    what: str
    how: str


@dataclass(frozen=True)
class ReportData:
    """Everything a report shows, as plain values (see the module docstring)."""

    title: str
    symbol: str
    unit: str
    description: str
    equation: str
    rows: tuple[BudgetRow, ...]
    correlations: tuple[tuple[str, str, float], ...]
    value: float
    u: float
    k: float
    U: float
    nu_eff: float | None
    coverage_probability: float | None
    rounded_value: str
    rounded_U: str
    statement: str
    warnings: tuple[str, ...]
    trace: tuple[TraceLink, ...]
    monte_carlo: tuple[tuple[str, str], ...]
    details: tuple[tuple[str, str], ...]
    changes: tuple[tuple[str, str, str], ...]
    software: tuple[tuple[str, str], ...]
    digest: str
    histogram: tuple[tuple[float, float, int], ...] = ()
    higher_order_variance: float = 0.0

    COLUMNS = ("symbol", "estimate", "unit", "distribution", "u(x_i)", "dof", "c_i", "|u_i(y)|", "share / %",
               "source")
    COLUMN_TITLES = ("Input", "Estimate x_i", "Unit", "Distribution", "Standard uncertainty u(x_i)",
                     "Degrees of freedom", "Sensitivity coefficient c_i", "Contribution |c_i| u(x_i)",
                     "Variance share / %", "Source")

    def table_rows(self) -> list[tuple[str, ...]]:
        return [r.cells() for r in self.rows]

    def result_lines(self) -> tuple[tuple[str, str], ...]:
        u = f" {self.unit}" if self.unit else ""
        p = "" if self.coverage_probability is None else f"{100.0 * self.coverage_probability:.2f} %"
        second = ((("second-order terms in u_c^2 (JCGM 100:2008 5.1.2)", f"{fmt(self.higher_order_variance, 4)}"
                    f"{' ' + self.unit + '^2' if self.unit else ''}"),) if self.higher_order_variance else ())
        return (
            (f"estimate {self.symbol}", f"{fmt(self.value, 12)}{u}"),
            *second,
            ("combined standard uncertainty u_c", f"{fmt(self.u, 4)}{u}"),
            ("effective degrees of freedom nu_eff", fmt_dof(self.nu_eff)),
            ("coverage factor k", fmt(self.k, 4)),
            ("coverage probability p", p),
            ("expanded uncertainty U = k u_c", f"{fmt(self.U, 4)}{u}"),
            ("reported (rounded)", f"{self.symbol} = ({self.rounded_value} ± {self.rounded_U}){u}"),
        )

    def bars(self, width: float = 360.0) -> list[dict]:
        """Geometry of the variance-share bar chart (SVG user units), largest share first."""
        shares = [(r.symbol, r.share or 0.0) for r in self.rows]
        shares.sort(key=lambda t: -t[1])
        out = []
        for i, (sym, s) in enumerate(shares):
            out.append({"label": sym, "share": s, "y": 24 * i + 4, "w": max(0.0, min(1.0, s)) * width,
                        "text": f"{100.0 * s:.1f} %"})
        return out


def _text(x: object) -> str:
    return "" if x is None else str(x)


def _float(x: object) -> float | None:
    if x is None or isinstance(x, bool):
        return None
    try:
        return float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return None


_TIMEBASE_HINTS = ("timebase", "time base", "frequency standard", "oscillator", "ocxo", "rubidium", "gps")
_META_SKIP = {"codata", "codata_edition", "kind", "measurement_format", "id", "title", "nucleus",
              "reference_condition"}


def _is_timebase(sym: str, spec: Mapping) -> bool:
    text = f"{sym} {spec.get('description', '')} {spec.get('source', '')}".lower()
    return sym.startswith(("y_tb", "y_age")) or any(h in text for h in _TIMEBASE_HINTS[:3])


def _trace_chain(budget: Mapping, gum: Mapping, edition: int | None, equation: str, symbol: str) -> list[TraceLink]:
    """The traceability chain from what the budget carries.

    For an NMR budget (metadata from ``fieldbudget.nmr``): the field from the
    resonance frequency, the frequency through the frequency standard (its
    source names the calibration certificate), and the gyromagnetic ratio
    through its CODATA edition.  Any other budget: each input's source.
    """
    md = budget.get("metadata") if isinstance(budget.get("metadata"), Mapping) else {}
    inputs = budget.get("inputs") if isinstance(budget.get("inputs"), Mapping) else {}
    links = [TraceLink(symbol, f"from the model {equation}")]
    nucleus = md.get("nucleus")
    condition = md.get("reference_condition")
    timebase = [(s, q) for s, q in inputs.items() if isinstance(q, Mapping) and _is_timebase(s, q)]
    tb_text = "; ".join(_text(q.get("source")) for _, q in timebase if q.get("source"))
    cert = next((md[k] for k in ("frequency_standard_certificate", "certificate") if md.get(k)), None)
    std = next((md[k] for k in ("frequency_standard", "time_base") if md.get(k)), None)
    if std or cert:
        tb_text = "; ".join(t for t in (tb_text, _text(std), f"certificate {cert}" if cert else "") if t)
    for sym, spec in inputs.items():
        if not isinstance(spec, Mapping):
            continue
        unit = _text(spec.get("unit"))
        src = _text(spec.get("source"))
        ref = spec.get("reference")
        if ref:
            ed = f"CODATA {edition}" if edition is not None else "CODATA (edition not identified)"
            extra = ", ".join(_text(x) for x in (nucleus, condition) if x)
            links.append(TraceLink(sym, f"{ed} recommended value '{ref}' = {fmt(_float(spec.get('value')), 12)} "
                                        f"{unit}".rstrip() + (f" ({extra})" if extra else "")))
        elif (sym, spec) in timebase:
            links.append(TraceLink(sym, f"frequency standard: {src}" if src else "frequency standard"))
        elif unit.lower() in ("hz", "khz", "mhz") and (_float(spec.get("value")) or "readings" in spec):
            how = f"measured frequency ({src})" if src else "measured frequency"
            if tb_text:
                how += f", traceable to the SI second through the frequency standard: {tb_text}"
            links.append(TraceLink(sym, how))
        elif src:
            links.append(TraceLink(sym, src))
    flat: list[tuple[str, object]] = []
    for key in sorted(md):
        v = md[key]
        if key in _META_SKIP or key in ("frequency_standard", "time_base", "frequency_standard_certificate",
                                        "certificate"):
            continue
        if isinstance(v, Mapping):
            flat.extend((f"{key} {k}", x) for k, x in sorted(v.items()))
        else:
            flat.append((key, v))
    for key, v in flat:
        if isinstance(v, (str, int, float)) and not isinstance(v, bool):
            links.append(TraceLink(key.replace("_", " "), str(v)))
    return links


def build_report_data(record) -> ReportData:
    """Turn a :class:`~fieldbudget.files.record.Record` into :class:`ReportData`."""
    budget = record.budget
    gum = record.gum
    m = record.measurand
    symbol = _text(m.get("symbol")) or "y"
    unit = _text(m.get("unit"))
    model = budget.get("model")
    if isinstance(model, Mapping):
        equation = "; ".join(f"{k} = {v}" for k, v in model.items())
    else:
        text = _text(model or gum.get("model"))
        equation = text if "=" in text.replace("==", "") else f"{symbol} = {text}"
    inputs = budget.get("inputs") if isinstance(budget.get("inputs"), Mapping) else {}
    rows = []
    for c in gum.get("contributions") or ():
        sym = _text(c.get("symbol"))
        spec = inputs.get(sym, {}) if isinstance(inputs.get(sym, {}), Mapping) else {}
        how, stated, divisor, dtext = stated_uncertainty(spec)
        kind = _text(c.get("distribution")) or _text(spec.get("distribution")) or "normal"
        rows.append(BudgetRow(
            symbol=sym, estimate=_float(c.get("estimate")), unit=_text(c.get("unit") or spec.get("unit")),
            distribution=DISTRIBUTION_NAMES.get(kind, kind), how_stated=how, stated=stated, divisor=divisor,
            divisor_text=dtext, u_x=_float(c.get("u_x")), dof=_float(c.get("dof")),
            sensitivity=_float(c.get("sensitivity")), u_contribution=_float(c.get("u_contribution")),
            share=_float(c.get("share")), source=_text(c.get("source") or spec.get("source")),
            reference=_text(spec.get("reference")),
        ))
    corr = tuple((str(a), str(b), float(r)) for a, b, r in (budget.get("correlations") or ()))
    rounded = gum.get("rounded") or {}
    rv = _text(rounded.get("value_text", rounded.get("value", "")))
    ru = _text(rounded.get("uncertainty_text", rounded.get("U", rounded.get("uncertainty", ""))))

    mc_lines: list[tuple[str, str]] = []
    if record.monte_carlo:
        mc = record.monte_carlo
        u_ = f" {unit}" if unit else ""
        iv = mc.get("interval") or ()
        mc_lines = [
            ("trials M", str(mc.get("trials"))),
            ("seed", str(mc.get("seed"))),
            ("generator", f"{mc.get('generator')} (numpy {mc.get('numpy_version')})"),
            ("estimate", f"{fmt(_float(mc.get('value')), 12)}{u_}"),
            ("standard uncertainty", f"{fmt(_float(mc.get('u')), 4)}{u_}"),
        ]
        if len(iv) == 2:
            mc_lines.append(("probabilistically symmetric coverage interval",
                             f"[{fmt(_float(iv[0]), 10)}, {fmt(_float(iv[1]), 10)}]{u_}"))
        if record.validation is not None:
            ok = record.validation.get("validated")
            mc_lines.append(("GUM validated by Monte Carlo (JCGM 101 clause 8)", "yes" if ok else "no"))

    details = [
        ("revision", str(record.revision)),
        ("created (UTC)", record.created_utc),
        ("operator", record.operator or "(not given)"),
        ("CODATA edition", str(record.codata_edition) if record.codata_edition is not None else "none used"),
    ]
    if record.procedure:
        details.append(("procedure", f"{record.procedure.get('name')} version {record.procedure.get('version')}"))
    if record.previous_digest:
        details.append(("previous revision SHA-256", record.previous_digest))
    if record.remarks:
        details.append(("remarks", record.remarks))

    software = tuple((k, _text(v)) for k, v in sorted(record.software.items()))
    nu = _float(gum.get("nu_eff"))
    return ReportData(
        title=_text(budget.get("title")) or f"Uncertainty budget for {symbol}",
        symbol=symbol, unit=unit, description=_text(m.get("description")), equation=equation,
        rows=tuple(rows), correlations=corr,
        value=float(gum["value"]), u=float(gum["u"]), k=float(gum["k"]), U=float(gum["U"]), nu_eff=nu,
        coverage_probability=_float(gum.get("coverage_probability")),
        rounded_value=rv, rounded_U=ru, statement=_text(gum.get("statement")),
        warnings=tuple(_text(w) for w in (gum.get("warnings") or ())) +
        tuple(_text(w) for w in ((record.monte_carlo or {}).get("warnings") or ())),
        trace=tuple(_trace_chain(budget, gum, record.codata_edition, equation, symbol)),
        monte_carlo=tuple(mc_lines), details=tuple(details),
        changes=tuple((_text(c.get("change")), _text(c.get("what")), _text(c.get("detail"))) for c in record.changes),
        software=software, digest=record.digest, histogram=_histogram(record.monte_carlo),
        higher_order_variance=float(gum.get("higher_order_variance") or 0.0),
    )


def _histogram(mc) -> tuple[tuple[float, float, int], ...]:
    h = (mc or {}).get("histogram") or {}
    counts, edges = list(h.get("counts") or ()), list(h.get("edges") or ())
    if not counts or len(edges) != len(counts) + 1:
        return ()
    return tuple((float(edges[i]), float(edges[i + 1]), int(counts[i])) for i in range(len(counts)))
