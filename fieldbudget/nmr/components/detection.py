"""How the line centre is found (``line.detection``), and the shift of that centre from the volume mean.

The bulk-susceptibility term corrects the volume mean of the local field.
Inside a finite cylinder the local field is spread
(``fieldbudget.nmr.lineshape``); a lock on the peak reads the mode of the
line (the distribution convolved with the natural line), a Lorentzian fit
something near it.  ``peak`` and ``fit`` add d_det, the computed shift of
that centre from the mean, as a factor (1 + d_det) of the field at the
nuclei, with u = |d_det|/2 by default (our assignment: the computation assumes an
ideal uniform cylinder and a Lorentzian natural line; ``line.u_detection_fraction``
states another fraction).  Spheres, ellipsoids and
long cylinders have a uniform field: no shift.  Findings warn when the spread
is comparable with the linewidth (the method then matters), and when a stated
linewidth is narrower than the spread (the sample cannot show such a line).
"""

from __future__ import annotations

from ...engine import InputQuantity, Normal
from ...errors import Finding
from .. import lineshape
from ._base import Built, Component, Context, Key, Term

#: The spread (5-95 %) counts as comparable with the linewidth above this fraction of it (our choice).
COMPARABLE = 0.5


def _build(ctx: Context) -> Built | None:
    ln = ctx.section("line")
    detection = ln.choice("detection", default="centroid")
    info = ctx.facts.get("shape")
    f_q = ctx.input("f_read")
    if info is None or info["shape"] != "cylinder" or info["chi"] == 0 or f_q is None:
        if detection != "centroid" and info is not None and info["shape"] is None:
            raise ln.fail("detection", "needs the sample's shape (a stated demagnetizing factor gives no line shape)")
        return None  # uniform field (sphere, ellipsoid, long cylinder) or no susceptibility: no shift
    f = f_q.estimate
    lf = lineshape.local_field("cylinder", info["ratio"], info["axis"])
    chi = info["chi"]
    natural = ln.number("natural_fwhm_Hz", positive=True)
    observed = ln.number("fwhm_Hz", positive=True)
    width = natural if natural is not None else observed
    spread_hz = lf.span(chi) * f
    findings = []
    inputs, terms = (), ()
    shift = 0.0
    fraction = ln.number("u_detection_fraction", 0.5)
    if detection != "centroid":
        shift = lf.centre(chi, detection, (natural or 0.0) / f)
        how = (f"{detection} of the line of a uniformly magnetised cylinder, L/D = {info['ratio']:g} {info['axis']} "
               f"to B0, chi = {chi:.4g}, natural width {natural or 0:g} Hz: local-field distribution with the "
               f"Lorentz-sphere field (fieldbudget.nmr.lineshape); u = {fraction:g} x the shift")
        inputs = (InputQuantity("d_det", shift, Normal(u=abs(shift) * fraction), unit="", source=how,
                                role="lab_characterisation",
                                description=f"shift of the line's {detection} from the volume mean of the local field"),)
        terms = (Term("denominator", "(1 + d_det)"),)
    values = {"spread_Hz": spread_hz, "linewidth_Hz": width, "shift": shift, "detection": detection}
    if observed is not None and spread_hz > observed:
        findings.append(Finding(
            f"the {observed:.3g} Hz line is narrower than the {spread_hz:.3g} Hz (5-95 %) spread of the local field "
            f"over this L/D = {info['ratio']:g} cylinder at {f:.6g} Hz: the sample cannot show such a line; check "
            "line.fwhm_Hz and the sample's shape", code="nmr.line_narrower_than_sample", key="line.fwhm_Hz",
            values=values, severity="invalid"))
    if width is not None and spread_hz > COMPARABLE * width:
        what = ("the centroid reads the volume mean: no shift" if detection == "centroid" else
                f"line.detection = {detection!r} adds d_det = {shift * 1e6:.3g} ppm from the volume mean")
        findings.append(Finding(
            f"the susceptibility broadening of the sample ({spread_hz:.3g} Hz, 5-95 %) is comparable with or larger "
            f"than the {width:.3g} Hz linewidth, so where the centre is read matters: {what}",
            code="nmr.susceptibility_broadening", key="line.detection", values=values))
    return Built(inputs=inputs, terms=terms, findings=tuple(findings))


COMPONENT = Component(
    name="detection", section="line", order=95, group="line", title="`line`: detection",
    summary="where the line centre is read; a finite cylinder's local field is spread and its peak is not its "
            "volume mean",
    keys=(
        Key("detection", "choice", "how the centre is found", "`centroid` (default: the volume mean, no shift), "
            "`peak` (the line's maximum) or `fit` (a Lorentzian fit): for a finite cylinder the matching shift "
            "d_det from the volume mean is added", choices=lineshape.DETECTIONS),
        Key("u_detection_fraction", "number", "u of the detection shift, as a fraction of it",
            "default 0.5 (our assignment: the shift is computed for an ideal uniform cylinder and a Lorentzian "
            "natural line); a laboratory that has checked its sample's shape states its own", lo=0.0, hi=1.0),
    ),
    build=_build,
)
