"""The neutral content of a report, built once from a record and rendered by every format.

A :class:`ReportData` holds plain text and numbers only: the identification
of the measurement, the model equation, the headline result (the Monte Carlo
one when the GUM result failed its JCGM 101 clause 8 validation, which then
stands beside it marked not validated, with d_low, d_high, delta and the
advice), the findings placed next to the result (warnings apart from notes,
which only record which of two documented choices was made), the budget rows
(how each uncertainty was stated, u(x_i), sensitivity coefficients with their
units; defined values with zero uncertainty apart; a correlation row and a
second-order row so that the shares add up to 100 %), the traceability chain
built from the inputs' roles (:mod:`fieldbudget.engine.traceability`), the
reference data not yet verified by the laboratory, the software versions and
the digest.  Each renderer (HTML, Markdown, LaTeX, CSV, XLSX, PDF) formats the
same data, so the reports cannot disagree.

Written by hand: the layout of an uncertainty budget is metrology, not
something a table library knows.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass

from .._display import fmt, fmt_dof

__all__ = ["COVERAGE_WORDINGS", "DISTRIBUTION_NAMES", "BudgetRow", "FindingLine", "ReportData", "SummaryRow",
           "TraceLink", "build_report_data", "sensitivity_unit", "stated_text", "stated_uncertainty"]

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


def stated_text(spec: Mapping) -> str:
    """How the input's uncertainty was stated, with its numbers: ``"U = 75 (k = 3)"``, ``"a = 2e-06, rectangular"``."""
    if "u" in spec:
        return f"u = {fmt(_float(spec['u']), 4)}, normal"
    if "expanded" in spec:
        return f"U = {fmt(_float(spec['expanded']), 4)} with k = {fmt(_float(spec.get('k')), 4)}, normal"
    if "half_width" in spec:
        kind = DISTRIBUTION_NAMES.get(spec.get("distribution", "rectangular"), spec.get("distribution", ""))
        extra = (f", limits known to ± {fmt(_float(spec.get('limit_uncertainty')), 3)}"
                 if "limit_uncertainty" in spec else "")
        return f"half-width a = {fmt(_float(spec['half_width']), 4)}, {kind}{extra}"
    if "readings" in spec:
        return f"{len(spec['readings'])} readings (Type A)"
    return "as evaluated"


def sensitivity_unit(output_unit: str, input_unit: str) -> str:
    """The unit of c_i = dy/dx_i, written from the two units (``"T/Hz"``; ``"1"`` when they are the same)."""
    uy = (output_unit or "").strip()
    ux = (input_unit or "").strip()
    if ux in ("", "1"):
        return uy or "1"
    if uy == ux:
        return "1"
    from ..units import quotient_unit

    simple = quotient_unit(uy, ux)
    if simple:
        return simple
    den = f"({ux})" if any(ch in ux for ch in "/* ") else ux
    return f"{uy or '1'}/{den}"


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
    stated_as: str = ""
    sensitivity_unit: str = ""
    role: str = ""

    @property
    def defined(self) -> bool:
        """A value with zero uncertainty (a defined value or an exact condition): shown apart."""
        return self.u_x == 0.0

    def cells(self) -> tuple[str, ...]:
        """Formatted cells, in the order of :data:`ReportData.COLUMNS` (c_i with its unit)."""
        c = "" if self.sensitivity is None else fmt(self.sensitivity, 4)
        if c and self.sensitivity_unit and self.sensitivity_unit != "1":
            c = f"{c} {self.sensitivity_unit}"
        return (
            self.symbol,
            "" if self.estimate is None else fmt(self.estimate, 12),
            self.unit,
            self.stated_as,
            "" if self.u_x is None else fmt(self.u_x, 3),
            fmt_dof(self.dof),
            c,
            "" if self.u_contribution is None else fmt(abs(self.u_contribution), 3),
            "" if self.share is None else f"{100.0 * self.share:.1f}",
            self.source,
        )

    def defined_cells(self) -> tuple[str, ...]:
        return (self.symbol, "" if self.estimate is None else fmt(self.estimate, 12), self.unit, self.role,
                self.source)


@dataclass(frozen=True)
class SummaryRow:
    """A row under the inputs: the correlation terms, the second-order terms, or the total (share 0..1)."""

    label: str
    variance: float
    share: float | None

    def cells(self) -> tuple[str, str]:
        return self.label, "" if self.share is None else f"{100.0 * self.share:.1f}"


@dataclass(frozen=True)
class TraceLink:
    """One link of the traceability chain: what, how it is traceable, and its role's title."""

    what: str
    how: str
    role: str = ""


@dataclass(frozen=True)
class FindingLine:
    """One finding as a report prints it: the message, what it concerns and its severity
    (``"note"``, ``"warning"`` or ``"invalid"``, as :class:`fieldbudget.errors.Finding`)."""

    message: str
    code: str = ""
    key: str | None = None
    severity: str = "warning"

    @property
    def invalid(self) -> bool:
        return self.severity == "invalid"

    def __str__(self) -> str:
        return self.message


#: How the coverage probability is worded in statements: as stated ("about 95.45 %"), or
#: "approximately 95 %" as EA-4/02 and ILAC P14 word it for k = 2.
COVERAGE_WORDINGS = ("stated", "approximate")


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
    correlation_variance: float = 0.0
    findings: tuple[FindingLine, ...] = ()
    identification: tuple[tuple[str, str], ...] = ()
    headline_kind: str = "gum"
    headline: tuple[tuple[str, str], ...] = ()
    headline_text: str = ""
    gum_validated: bool | None = None
    validation: tuple[tuple[str, str], ...] = ()
    advice: str = ""
    unverified: tuple[tuple[str, str], ...] = ()
    lab_checked: tuple[tuple[str, str], ...] = ()
    acceptance: tuple[tuple[str, str], ...] = ()
    notes: tuple[FindingLine, ...] = ()
    mc_result: tuple[float, float, float, float] | None = None  # value, u, interval ends (Monte Carlo)

    COLUMNS = ("symbol", "estimate", "unit", "stated as", "u(x_i)", "dof", "c_i", "|u_i(y)|", "share / %", "source")
    COLUMN_TITLES = ("Input", "Estimate x_i", "Unit", "Stated as (distribution)", "Standard uncertainty u(x_i)",
                     "Degrees of freedom", "Sensitivity coefficient c_i (unit)", "Contribution |c_i| u(x_i)",
                     "Variance share / %", "Source")
    DEFINED_TITLES = ("Input", "Value", "Unit", "Role", "Source")

    @property
    def uncertain_rows(self) -> tuple[BudgetRow, ...]:
        return tuple(r for r in self.rows if not r.defined)

    @property
    def defined_rows(self) -> tuple[BudgetRow, ...]:
        return tuple(r for r in self.rows if r.defined)

    def table_rows(self) -> list[tuple[str, ...]]:
        """Cells of the inputs with an uncertainty (the defined values are in :meth:`defined_table_rows`)."""
        return [r.cells() for r in self.uncertain_rows]

    def defined_table_rows(self) -> list[tuple[str, ...]]:
        return [r.defined_cells() for r in self.defined_rows]

    @property
    def summary_rows(self) -> tuple[SummaryRow, ...]:
        """Correlation terms, second-order terms and the total, as shares of u_c^2."""
        uc2 = self.u * self.u
        share = (lambda v: v / uc2) if uc2 > 0 else (lambda v: None)
        inputs = sum((r.share or 0.0) for r in self.rows)
        rows = (
            SummaryRow("correlation terms, sum of 2 c_i c_j u(x_i, x_j)", self.correlation_variance,
                       share(self.correlation_variance)),
            SummaryRow("second-order terms (JCGM 100:2008 5.1.2)", self.higher_order_variance,
                       share(self.higher_order_variance)),
        )
        total = inputs + sum((r.share or 0.0) for r in rows) if uc2 > 0 else None
        return (*rows, SummaryRow("total: u_c^2", uc2, total))

    @property
    def validated_or_none(self) -> bool:
        return self.gum_validated is not False

    def result_lines(self) -> tuple[tuple[str, str], ...]:
        """The GUM result's lines (the headline too, unless the Monte Carlo result replaces it)."""
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

    @property
    def gum_heading(self) -> str:
        if self.headline_kind == "monte_carlo":
            word = "undecided" if self.gum_validated is None else "NOT validated"
            return f"GUM result ({word} by Monte Carlo, JCGM 101 clause 8)"
        return "GUM result"

    def bars(self, width: float = 360.0) -> list[dict]:
        """Geometry of the variance-share bar chart (SVG user units), largest share first."""
        shares = [(r.symbol, r.share or 0.0) for r in self.rows]
        shares += [(name, s.share or 0.0) for name, s in zip(("correlation", "second order"), self.summary_rows[:2])
                   if (s.share or 0.0) > 0]
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


def _decimals_for(u: float) -> int:
    """Decimal places that keep two significant digits of u (JCGM 100:2008 7.2.6)."""
    return max(0, 1 - math.floor(math.log10(abs(u)))) if u else 6


def _fixed(x: float, decimals: int) -> str:
    return f"{x:.{decimals}f}"


_P_WORDS = re.compile(r"about (\d+(?:\.\d+)?) %")


def _coverage_words(p: float | None, wording: str) -> str:
    if p is None:
        return ""
    if wording == "approximate" and abs(p - 0.95) <= 0.0046:
        return "approximately 95 %"
    text = f"{100.0 * p:.2f}".rstrip("0").rstrip(".")
    return f"about {text} %"


def _reword(statement: str, p: float | None, wording: str) -> str:
    """The statement with the coverage probability worded as asked (the numbers are left as they are)."""
    if wording != "approximate" or p is None or abs(p - 0.95) > 0.0046:
        return statement
    return _P_WORDS.sub("approximately 95 %", statement)


_ID_LABELS = (("id", "measurement id"), ("title", "title"), ("date", "date"), ("operator", "operator"),
              ("procedure", "procedure"), ("lab", "laboratory"), ("instrument", "instrument"), ("probe", "probe"),
              ("customer", "customer"), ("item", "item"))
_ALWAYS = ("id", "title", "date", "operator", "procedure", "instrument", "probe")


def _identification(record, title: str) -> tuple[tuple[str, str], ...]:
    from ..files.record_details import identification_of

    ident = identification_of(record)
    proc = record.procedure
    if proc:
        ident["procedure"] = (f"{proc.get('name')}" + (f" (id {proc.get('id')})" if proc.get("id") else "")
                              + f", version {proc.get('version')}")
    ident.setdefault("title", title)
    out = []
    for key, label in _ID_LABELS:
        v = ident.get(key, "")
        if v or key in _ALWAYS:
            out.append((label, v or "(not given)"))
    return tuple(out)


def _trace(record, equation: str, symbol: str) -> tuple[tuple[TraceLink, ...], list]:
    """The chain from the inputs' roles, and the links whose estimate is reference data."""
    from ..engine import Budget
    from ..engine.traceability import traceability
    from ..errors import FieldbudgetError
    from ..files.record import budget_content

    links = [TraceLink(symbol, f"from the model {equation}", "measurand")]
    try:
        chain = traceability(Budget.from_dict(budget_content(record), where="record budget"))
    except FieldbudgetError as err:
        links.append(TraceLink("(inputs)", f"the recorded budget does not load, so no chain: {err}", ""))
        return tuple(links), []
    for group in chain.by_role().values():
        for link in group:
            how = link.text
            if link.role and not link.stated:
                how += " (role derived from the data)"
            links.append(TraceLink(link.symbol, how, link.title))
    return tuple(links), list(chain.reference_data)


def _monte_carlo_headline(record, symbol: str, unit: str, wording: str):
    mc = record.monte_carlo
    u_ = f" {unit}" if unit else ""
    y, u = float(mc["value"]), float(mc["u"])
    lo, hi = (float(x) for x in mc["interval"])
    dec = _decimals_for(u)
    p = _float(mc.get("coverage_probability")) or _float(record.gum.get("coverage_probability"))
    pw = _coverage_words(p, wording)
    lines = (
        (f"estimate {symbol} (Monte Carlo)", f"{fmt(y, 12)}{u_}"),
        (f"standard uncertainty u({symbol}) (Monte Carlo)", f"{fmt(u, 4)}{u_}"),
        ("coverage probability p", "" if p is None else f"{100.0 * p:.2f} %"),
        ("probabilistically symmetric coverage interval", f"[{fmt(lo, 12)}, {fmt(hi, 12)}]{u_}"),
        ("reported (rounded)", f"{symbol} = {_fixed(y, dec)}{u_}, u = {fmt(u, 2)}{u_}, "
                               f"interval [{_fixed(lo, dec)}, {_fixed(hi, dec)}]{u_}"),
        ("trials M, seed", f"{mc.get('trials')}, {mc.get('seed')}"),
    )
    text = (f"{symbol} = {_fixed(y, dec)}{u_} with standard uncertainty u({symbol}) = {fmt(u, 2)}{u_}; "
            f"the probabilistically symmetric coverage interval for a coverage probability of {pw} is "
            f"[{_fixed(lo, dec)}, {_fixed(hi, dec)}]{u_}. These are the results of the Monte Carlo method "
            f"(JCGM 101:2008, {mc.get('trials')} trials, seed {mc.get('seed')}), reported because the GUM result "
            "did not pass the validation of JCGM 101:2008 clause 8 (see below).")
    return lines, text


def _validation_lines(val: Mapping, unit: str) -> tuple[tuple[tuple[str, str], ...], str]:
    u_ = f" {unit}" if unit else ""
    ok = val.get("validated")
    gi, mi = val.get("gum_interval") or (), val.get("mc_interval") or ()
    lines = [("GUM result validated (JCGM 101:2008 clause 8)",
              "yes" if ok is True else "no" if ok is False else "undecided")]
    if len(gi) == 2:
        lines.append(("GUM interval y ± U", f"[{fmt(_float(gi[0]), 12)}, {fmt(_float(gi[1]), 12)}]{u_}"))
    if len(mi) == 2:
        lines.append((f"Monte Carlo interval ({val.get('interval_kind', 'probabilistically symmetric')})",
                      f"[{fmt(_float(mi[0]), 12)}, {fmt(_float(mi[1]), 12)}]{u_}"))
    for key, label in (("d_low", "d_low"), ("d_high", "d_high"), ("delta", "numerical tolerance δ")):
        if key in val:
            lines.append((label, f"{fmt(_float(val[key]), 3)}{u_}"))
    return tuple(lines), _text(val.get("advice"))


def build_report_data(record, *, lab=None, coverage_wording: str = "stated") -> ReportData:
    """Turn a :class:`~fieldbudget.files.record.Record` into :class:`ReportData`.

    ``lab`` is the laboratory folder whose ``settings.toml`` marks reference
    values as checked (default: ``$FIELDBUDGET_LAB``); ``coverage_wording`` is
    one of :data:`COVERAGE_WORDINGS`.
    """
    from ..errors import InputError
    from ..files.lab_settings import reference_checks
    from ..files.record_details import acceptance_of, findings_of

    if coverage_wording not in COVERAGE_WORDINGS:
        raise InputError("coverage wording", coverage_wording, f"one of {', '.join(COVERAGE_WORDINGS)}", "report")
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
    trace, reference_links = _trace(record, equation, symbol)
    role_of = {t.what: t.role for t in trace[1:]}
    rows = []
    for c in gum.get("contributions") or ():
        sym = _text(c.get("symbol"))
        spec = inputs.get(sym, {}) if isinstance(inputs.get(sym, {}), Mapping) else {}
        how, stated, divisor, dtext = stated_uncertainty(spec)
        kind = _text(c.get("distribution")) or _text(spec.get("distribution")) or "normal"
        in_unit = _text(c.get("unit") or spec.get("unit"))
        rows.append(BudgetRow(
            symbol=sym, estimate=_float(c.get("estimate")), unit=in_unit,
            distribution=DISTRIBUTION_NAMES.get(kind, kind), how_stated=how, stated=stated, divisor=divisor,
            divisor_text=dtext, u_x=_float(c.get("u_x")), dof=_float(c.get("dof")),
            sensitivity=_float(c.get("sensitivity")), u_contribution=_float(c.get("u_contribution")),
            share=_float(c.get("share")), source=_text(c.get("source") or spec.get("source")),
            reference=_text(spec.get("reference")), stated_as=stated_text(spec),
            sensitivity_unit=sensitivity_unit(unit, in_unit), role=role_of.get(sym, ""),
        ))
    corr = tuple((str(a), str(b), float(r)) for a, b, r in (budget.get("correlations") or ()))
    rounded = gum.get("rounded") or {}
    rv = _text(rounded.get("value_text", rounded.get("value", "")))
    ru = _text(rounded.get("uncertainty_text", rounded.get("U", rounded.get("uncertainty", ""))))
    p = _float(gum.get("coverage_probability"))

    mc_lines: list[tuple[str, str]] = []
    validation: tuple[tuple[str, str], ...] = ()
    advice = ""
    validated = None
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
            validated = record.validation.get("validated")
            validated = validated if isinstance(validated, bool) else None
            validation, advice = _validation_lines(record.validation, unit)

    statement = _reword(_text(gum.get("statement")), p, coverage_wording)
    headline_kind = "gum"
    headline: tuple[tuple[str, str], ...] = ()
    headline_text = statement
    if record.monte_carlo and record.validation is not None and validated is not True:
        headline_kind = "monte_carlo"
        headline, headline_text = _monte_carlo_headline(record, symbol, unit, coverage_wording)

    details = [
        ("revision", str(record.revision)),
        ("created (UTC)", record.created_utc),
        ("operator", record.operator or "(not given)"),
        ("CODATA edition", str(record.codata_edition) if record.codata_edition is not None else "none used"),
    ]
    if record.procedure:
        pid = f" (id {record.procedure.get('id')})" if record.procedure.get("id") else ""
        details.append(("procedure", f"{record.procedure.get('name')}{pid} version {record.procedure.get('version')}"))
    if record.previous_digest:
        details.append(("previous revision SHA-256", record.previous_digest))
    if record.remarks:
        details.append(("remarks", record.remarks))

    acc = acceptance_of(record)
    acceptance: list[tuple[str, str]] = []
    if acc:
        word = {True: "every acceptance limit met", False: "an acceptance limit NOT met"}.get(
            acc.get("accepted"), "acceptance incomplete")
        acceptance.append(("verdict", word))
        for v in acc.get("verdicts") or ():
            if isinstance(v, Mapping):
                verdict = {True: "met", False: "NOT met"}.get(v.get("passed"), "not yet known")
                value = fmt(_float(v.get("value"))) or "-"
                acceptance.append((_text(v.get("text") or v.get("id")),
                                   f"{_text(v.get('limit'))}: {value}, {verdict}".lstrip(": ")))

    checks = reference_checks(lab)
    unverified, checked = [], []
    seen = set()
    for link in reference_links:
        if link.reference in seen:
            continue
        seen.add(link.reference)
        if link.reference in checks:
            c = checks[link.reference]
            checked.append((link.reference, f"checked by {c.by} on {c.date} against {c.against}"))
        else:
            unverified.append((link.reference, link.verification or "no remark in the kit's data file"))

    lines = [FindingLine(f.message, f.code, f.key, f.severity) for f in findings_of(record)]
    findings = tuple(f for f in lines if f.severity != "note")  # notes are not warnings: listed apart
    notes = tuple(f for f in lines if f.severity == "note")
    software = tuple((k, _text(v)) for k, v in sorted(record.software.items()))
    nu = _float(gum.get("nu_eff"))
    title = _text(budget.get("title")) or f"Uncertainty budget for {symbol}"
    return ReportData(
        title=title,
        symbol=symbol, unit=unit, description=_text(m.get("description")), equation=equation,
        rows=tuple(rows), correlations=corr,
        value=float(gum["value"]), u=float(gum["u"]), k=float(gum["k"]), U=float(gum["U"]), nu_eff=nu,
        coverage_probability=p,
        rounded_value=rv, rounded_U=ru, statement=statement,
        warnings=tuple(f.message for f in findings),
        trace=trace, monte_carlo=tuple(mc_lines), details=tuple(details),
        changes=tuple((_text(c.get("change")), _text(c.get("what")), _text(c.get("detail"))) for c in record.changes),
        software=software, digest=record.digest, histogram=_histogram(record.monte_carlo),
        higher_order_variance=float(gum.get("higher_order_variance") or 0.0),
        correlation_variance=float(gum.get("correlation_variance") or 0.0),
        findings=findings, notes=notes, identification=_identification(record, title),
        headline_kind=headline_kind, headline=headline or _gum_headline(symbol, unit, rv, ru, p, coverage_wording),
        headline_text=headline_text, gum_validated=validated, validation=validation, advice=advice,
        unverified=tuple(unverified), lab_checked=tuple(checked), acceptance=tuple(acceptance),
        mc_result=_mc_numbers(record.monte_carlo),
    )


def _mc_numbers(mc) -> tuple[float, float, float, float] | None:
    if not mc or len(mc.get("interval") or ()) != 2:
        return None
    return float(mc["value"]), float(mc["u"]), float(mc["interval"][0]), float(mc["interval"][1])


def _gum_headline(symbol, unit, rv, ru, p, wording) -> tuple[tuple[str, str], ...]:
    u_ = f" {unit}" if unit else ""
    return ((f"{symbol}", f"({rv} ± {ru}){u_}"), ("coverage probability", _coverage_words(p, wording)))


def _histogram(mc) -> tuple[tuple[float, float, int], ...]:
    h = (mc or {}).get("histogram") or {}
    counts, edges = list(h.get("counts") or ()), list(h.get("edges") or ())
    if not counts or len(edges) != len(counts) + 1:
        return ()
    return tuple((float(edges[i]), float(edges[i + 1]), int(counts[i])) for i in range(len(counts)))
