"""``fieldbudget line TRACE.csv``: the line centre fitted from a recorded trace, with u and the Cramer-Rao bound.

The trace is a CSV file with a header: ``f_Hz,signal`` for a swept line
(``--kind absorption`` or ``dispersion``), ``t_s,signal`` (plus ``signal_im``
for I + iQ) for a free-induction decay (``--kind fid``) recorded after mixing
with ``--reference-Hz``.  ``--json`` prints ``centre_Hz, u_centre_Hz, crb_Hz,
fwhm_Hz, snr, chi2_reduced, n_points, kind`` (plus the trace's ``digest`` and
``warnings``); ``--svg`` writes the data, the fit and the residuals as SVG.
"""

from __future__ import annotations

import argparse
import json
import math

from ..errors import InputError
from ..nmr.linefit import KINDS, fit_trace, read_trace

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("line", help="fit the line centre of a recorded trace (swept line or FID)",
                       description="Fit a recorded NMR line by nonlinear least squares: a Lorentzian absorption or "
                                   "dispersion line against frequency, or a free-induction decay against time. "
                                   "Prints the centre frequency with its standard uncertainty, the Cramer-Rao bound "
                                   "and their ratio, the linewidth, the SNR and the reduced chi-squared.")
    p.add_argument("trace", help="CSV trace: f_Hz,signal (swept line) or t_s,signal[,signal_im] (FID)")
    p.add_argument("--kind", default=None, metavar="KIND",
                   help=f"line shape: {', '.join(KINDS)} (default: absorption for f_Hz, fid for t_s)")
    p.add_argument("--reference-Hz", dest="reference_hz", default=None, metavar="F",
                   help="the FID's reference (mixing) frequency in Hz (default 0: recorded without mixing)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--svg", metavar="OUT.svg", default=None, help="also write the data, fit and residuals as SVG")
    return p


def run(args: argparse.Namespace) -> int:
    if args.kind is not None and args.kind not in KINDS:
        raise InputError("--kind", args.kind, " or ".join(KINDS))
    trace = read_trace(args.trace)
    ref = 0.0
    if args.reference_hz is not None:
        try:
            ref = float(args.reference_hz)
        except ValueError:
            ref = math.nan
        if not math.isfinite(ref) or ref < 0:
            raise InputError("--reference-Hz", args.reference_hz, "a frequency >= 0 in Hz")
        if trace.axis != "t_s":
            raise InputError("--reference-Hz", args.reference_hz, "left out for a swept line (f_Hz): it is the "
                             "mixing frequency of an FID")
    fit = fit_trace(trace, args.kind, reference_hz=ref)
    if args.svg:
        from ..files.atomic import atomic_write_text
        from ..report.fit_charts import line_fit_svg

        _refuse_input(args.svg, args.trace)
        atomic_write_text(args.svg, line_fit_svg(fit))
    if args.json:
        print(json.dumps(fit.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(fit.text())
    return 0


def _refuse_input(out: str, source: str) -> None:
    import os

    if os.path.exists(out) and os.path.samefile(out, source):
        raise InputError("--svg", out, "a file other than the input trace")
