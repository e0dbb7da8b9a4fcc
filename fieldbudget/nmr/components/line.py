"""Locating the line centre: a fitted Lorentzian, a free-induction decay, or a lock servo's specification.

The fitted-Lorentzian and FID bounds are the random part of locating the
line (``fieldbudget.nmr.physics``).  When the frequency comes from repeated,
independent readings, that random part is already in their scatter
(JCGM 100:2008 4.2: s/sqrt(n) of the readings), so it is not added again
unless ``noise_in_readings`` is false; a stated ``u_Hz`` (what repetition
cannot show, e.g. a lock offset) is always carried.  A finding says which
choice was made.
"""

from __future__ import annotations

from ...engine import InputQuantity, Normal
from ...errors import Finding
from .. import physics
from ._base import Built, Component, Context, Key, Term

_DESC = "correction for locating the line centre"


def _random_part(ln) -> tuple[float, str] | None:
    src = ln.text("source", "")
    if ln.has("amplitude_to_noise") or ln.has("t2_s"):
        a = ln.number("amplitude_to_noise", required=True, positive=True)
        t2 = ln.number("t2_s", required=True, positive=True)
        dt = ln.number("sample_interval_s", required=True, positive=True)
        rec = ln.number("record_s", positive=True)
        how = f"record {rec:g} s" if rec is not None else "long record"
        return physics.fid_frequency_crb_hz(a, t2, dt, rec), src or (
            f"FID Cramer-Rao bound, A/sigma = {a:g}, T2* = {t2:g} s, dt = {dt:g} s, {how} "
            "(complex exponential in white noise)")
    if ln.has("snr") or ln.has("points_per_fwhm"):
        w = ln.number("fwhm_Hz", required=True, positive=True)
        snr = ln.number("snr", required=True, positive=True)
        n = ln.number("points_per_fwhm", required=True, positive=True)
        return physics.lorentzian_centre_uncertainty_hz(w, snr, n), src or (
            f"Lorentzian fit: Gamma (sigma/H) sqrt(2/(pi n)) with Gamma = {w:g} Hz, H/sigma = {snr:g}, "
            f"n = {n:g} points per FWHM")
    return None


def _build(ctx: Context) -> Built | None:
    if not ctx.present("line"):
        return None
    ln = ctx.section("line")
    if ln.has("trace_csv"):
        return None  # the trace component gives d_line
    ln.number("fwhm_Hz", positive=True)
    ln.number("natural_fwhm_Hz", positive=True)
    ln.number("max_broadening_ratio", positive=True)
    in_readings = noise_in_readings(ctx, ln)
    if ln.has("u_Hz"):  # a stated u takes the place of the fit/FID bound
        u = ln.number("u_Hz", nonnegative=True)
        q = InputQuantity("d_line", 0.0, Normal(u=u), unit="Hz", description=_DESC, role="specification",
                          source=ln.text("source", "lock servo specification"))
        return Built(inputs=(q,), terms=(Term("frequency", "d_line"),))
    part = _random_part(ln)
    if part is None:
        return None
    u, how = part
    finding = readings_finding(ctx, u, in_readings)
    if in_readings:
        return Built(findings=finding)
    q = InputQuantity("d_line", 0.0, Normal(u=u), unit="Hz", description=_DESC, source=how,
                      role="lab_characterisation")
    return Built(inputs=(q,), terms=(Term("frequency", "d_line"),), findings=finding)


def noise_in_readings(ctx: Context, ln) -> bool:
    """``line.noise_in_readings``: default true when the frequency is repeated readings, else false."""
    n_read = ctx.facts.get("readings", 0)
    in_readings = ln.flag("noise_in_readings", n_read >= 2)
    if in_readings and n_read < 2:
        raise ln.fail("noise_in_readings", "can be true only when the frequency is given as repeated readings "
                                           "(readings_Hz or readings_csv)")
    return in_readings


def readings_finding(ctx: Context, u: float, in_readings: bool) -> tuple[Finding, ...]:
    """The finding that says which choice was made for the line noise u (Hz) beside repeated readings."""
    n_read = ctx.facts.get("readings", 0)
    key = "line.noise_in_readings"
    values = {"u_line_Hz": u, "readings": n_read, "noise_in_readings": in_readings}
    if in_readings:
        return (Finding(f"the line-centre noise (u = {u:.3g} Hz) is taken as already in the scatter of the "
                        f"{n_read} repeated readings and is not added again; set line.noise_in_readings to false if "
                        "the readings are not independent locations of the line", code="nmr.line_in_readings",
                        key=key, values=values, severity="note"),)
    if n_read >= 2:
        return (Finding(f"the line-centre noise (u = {u:.3g} Hz) is added to the scatter of the {n_read} readings "
                        "(line.noise_in_readings is false): it is counted twice if the readings are independent "
                        "locations of the line", code="nmr.line_in_readings", key=key, values=values),)
    return ()


COMPONENT = Component(
    name="line", section="line", order=50, group="line", title="`line`",
    summary="the uncertainty of locating the line centre (fitted Lorentzian, FID, or a stated u), and the "
            "linewidths the warnings use",
    keys=(
        Key("fwhm_Hz", "number", "line width (FWHM)", "the observed linewidth; with `snr` and `points_per_fwhm`, "
            "sigma = Gamma (sigma/H) sqrt(2/(pi n)) of a fitted Lorentzian", unit="Hz", lo=0.0, lo_open=True),
        Key("snr", "number", "signal-to-noise ratio", "peak height / rms noise per point", lo=0.0, lo_open=True),
        Key("points_per_fwhm", "number", "points per FWHM", lo=0.0, lo_open=True),
        Key("amplitude_to_noise", "number", "FID amplitude / noise", "per sample; with `t2_s` and "
            "`sample_interval_s`: the Cramer-Rao bound of a damped complex exponential", lo=0.0, lo_open=True),
        Key("t2_s", "number", "FID decay time T2*", unit="s", lo=0.0, lo_open=True),
        Key("sample_interval_s", "number", "FID sample interval", unit="s", lo=0.0, lo_open=True),
        Key("record_s", "number", "FID record length", "optional; left out: the long-record limit", unit="s",
            lo=0.0, lo_open=True),
        Key("u_Hz", "number", "or: u of the line centre", "a stated u (lock servo specification), always carried",
            unit="Hz", lo=0.0),
        Key("noise_in_readings", "boolean", "line noise already in the readings",
            "default true when the frequency is repeated readings: the fit/FID noise is then not added again"),
        Key("natural_fwhm_Hz", "number", "natural linewidth", "the sample's own width without gradients or "
            "susceptibility broadening; the warnings compare against it", unit="Hz", lo=0.0, lo_open=True),
        Key("max_broadening_ratio", "number", "usable broadening ratio k", "default 1", lo=0.0, lo_open=True),
        Key("source", "text", "source", "free text"),
    ),
    build=_build,
)
