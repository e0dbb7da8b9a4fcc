"""The line centre fitted from a recorded trace (``line.trace_csv``), instead of stated line parameters.

The trace (a swept line ``f_Hz,signal`` or an FID ``t_s,signal[,signal_im]``)
is fitted by ``fieldbudget.nmr.linefit``; the fitted u of the centre enters
as the line-centre input d_line (estimate 0), its source naming the trace's
SHA-256 digest (:func:`fieldbudget.nmr.linefit.line_centre_input`).  A stated
``line.u_Hz`` (what the trace cannot show, such as a lock offset) is added in
quadrature.  As for stated fit parameters (``fieldbudget.nmr.components.line``),
the fitted u is the random part of locating the line: beside repeated
readings it is taken as in their scatter unless ``line.noise_in_readings``
is false, and a finding says which.  The fit's own findings (a poor fit, a
centre outside the trace) come with it.
"""

from __future__ import annotations

from pathlib import Path

from ..._io import read_named_file
from ...engine import InputQuantity, Normal
from ...errors import BudgetFileError, FieldbudgetError
from .. import linefit
from ._base import Built, Component, Context, Key, Term
from .line import noise_in_readings, readings_finding


def _build(ctx: Context) -> Built | None:
    ln = ctx.section("line")
    if not ln.has("trace_csv"):
        for k in ("trace_kind", "trace_reference_Hz"):
            if ln.has(k):
                raise ln.fail(k, "needs line.trace_csv")
        return None
    m = ctx.measurement
    name = ln.text("trace_csv")
    for k in ("snr", "points_per_fwhm", "amplitude_to_noise", "t2_s"):
        if ln.has(k):
            raise ln.fail(k, "give either trace_csv (a recorded trace) or the stated fit/FID keys, not both")
    raw, _, target = read_named_file(name, m.base_dir, m.where, ln.at("trace_csv"))
    try:
        trace = linefit.read_trace(Path(target), data=raw)
        fit = linefit.fit_trace(trace, ln.choice("trace_kind"), reference_hz=ln.number("trace_reference_Hz", 0.0))
    except BudgetFileError as err:
        raise BudgetFileError(m.where, ln.at("trace_csv"), f"{name!r}, {err.pointer}: {err.reason}".replace(
            ", : ", ": ")) from None
    except FieldbudgetError as err:
        raise BudgetFileError(m.where, ln.at("trace_csv"), f"{name!r}: {err}") from None
    ctx.facts["trace_fit"] = fit
    stated = ln.number("u_Hz", nonnegative=True)
    # the fitted u is the random part of locating the line: the same rule as the stated fit parameters
    in_readings = noise_in_readings(ctx, ln)
    findings = (*fit.warnings, *readings_finding(ctx, fit.u_centre_hz, in_readings))
    if in_readings:
        if not stated:
            return Built(findings=findings)
        q = InputQuantity("d_line", 0.0, Normal(u=stated), unit="Hz", role="specification",
                          source=f"stated part {stated:g} Hz; the noise of the fit to {Path(name).name} "
                                 f"({fit.digest}) is in the readings' scatter",
                          description="correction for locating the line centre")
        return Built(inputs=(q,), terms=(Term("frequency", "d_line"),), findings=findings)
    q = linefit.line_centre_input(fit, stated_u_hz=stated)
    return Built(inputs=(q,), terms=(Term("frequency", "d_line"),), findings=findings)


COMPONENT = Component(
    name="trace", section="line", order=51, group="line", title="`line`: a recorded trace",
    summary="the line centre's u fitted from a recorded trace (its SHA-256 digest in the source), instead of "
            "stated line parameters",
    keys=(
        Key("trace_csv", "text", "recorded trace (CSV)", "path relative to the measurement file: `f_Hz,signal` (a "
            "swept line) or `t_s,signal[,signal_im]` (an FID); a stated `u_Hz` is added in quadrature"),
        Key("trace_kind", "choice", "kind of trace", "`absorption`, `dispersion` or `fid` (default: from the "
            "columns)", choices=linefit.KINDS),
        Key("trace_reference_Hz", "number", "FID reference frequency", "the receiver's reference of an FID trace",
            unit="Hz", lo=0.0),
    ),
    build=_build,
)
