"""``fieldbudget map MAP.csv``: a field map fitted to the regular solid-harmonic expansion of a source-free field.

The map is a CSV file with a header: ``x_m,y_m,z_m`` and ``f_Hz`` or ``B_T``,
optionally ``u_f_Hz`` or ``u_B_T``.  ``--json`` prints ``B0_T, u_B0_T,
gradient_T_per_m, u_gradient_T_per_m, d2B_dz2_T_per_m2, coefficients,
covariance, homogeneity_ppm {shape, size_m, peak_to_peak, rms},
residual_rms_T, n_points, order`` plus the term names, the Hessian, u's,
``representable`` and ``warnings``.  A map that the expansion cannot represent
at that order is flagged in the output (the fit is still printed).
"""

from __future__ import annotations

import argparse
import json
import math

from .. import constants
from ..errors import InputError
from ..nmr.fieldmap import BASES, fit_map, read_map
from ..nmr.nuclei import DEFAULT_NUCLEUS, NUCLEUS_NAMES, nucleus

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("map", help="fit a field map to solid harmonics (field, gradient, curvature, homogeneity)",
                       description="Fit a map of the field (a probe scanned over positions) to the regular "
                                   "solid-harmonic expansion of a source-free field, by least squares with the "
                                   "per-point uncertainties; print the field, gradient and second derivatives at "
                                   "the reference point, the coefficients with their covariance, the residuals and "
                                   "the homogeneity.")
    p.add_argument("map", help="CSV map: x_m,y_m,z_m and f_Hz or B_T, optionally u_f_Hz or u_B_T")
    p.add_argument("--order", default="4", metavar="N", help="highest order of the expansion (default 4)")
    p.add_argument("--about", default="0,0,0", metavar="X,Y,Z", help="reference point in m (default 0,0,0)")
    p.add_argument("--nucleus", default=DEFAULT_NUCLEUS,
                   help=f"probe nucleus of an f_Hz map: {', '.join(NUCLEUS_NAMES)} ... (default {DEFAULT_NUCLEUS})")
    p.add_argument("--codata", default=None, metavar="YEAR",
                   help=f"CODATA edition for an f_Hz map (default {constants.DEFAULT_EDITION})")
    p.add_argument("--basis", default="cartesian", metavar="BASIS",
                   help=f"how the terms are written and scaled: {' or '.join(BASES)} (default cartesian)")
    group = p.add_mutually_exclusive_group()
    group.add_argument("--sphere", default=None, metavar="D",
                       help="homogeneity over a sphere of diameter D m about the reference point "
                            "(default: the largest sphere inside the mapped box)")
    group.add_argument("--cylinder", default=None, metavar="D,L",
                       help="homogeneity over a cylinder of diameter D and length L (m) along z")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--svg", metavar="OUT.svg", default=None, help="also write maps of the field and residuals as SVG")
    return p


def _numbers(text: str, option: str, count: int, allowed: str, *, positive: bool = False) -> tuple[float, ...]:
    try:
        values = tuple(float(x) for x in str(text).split(","))
    except ValueError:
        raise InputError(option, text, allowed) from None
    if len(values) != count or not all(math.isfinite(v) for v in values) or (positive and min(values) <= 0):
        raise InputError(option, text, allowed)
    return values


def run(args: argparse.Namespace) -> int:
    try:
        order = int(args.order)
    except ValueError:
        raise InputError("--order", args.order, "a whole number from 0 to 12") from None
    if not 0 <= order <= 12:
        raise InputError("--order", args.order, "a whole number from 0 to 12")
    about = _numbers(args.about, "--about", 3, "three coordinates X,Y,Z in m, e.g. 0,0,0.01")
    if args.basis not in BASES:
        raise InputError("--basis", args.basis, " or ".join(BASES))
    codata = None
    if args.codata is not None:
        try:
            codata = int(args.codata)
        except ValueError:
            codata = None
        if codata not in constants.editions():
            raise InputError("--codata", args.codata, f"one of the CODATA editions {list(constants.editions())}")
    try:
        nucleus(args.nucleus)
    except InputError as err:
        raise InputError("--nucleus", args.nucleus, err.allowed) from None
    region = None
    if args.sphere is not None:
        (d,) = _numbers(args.sphere, "--sphere", 1, "a diameter > 0 in m", positive=True)
        region = {"shape": "sphere", "diameter_m": d}
    elif args.cylinder is not None:
        d, length = _numbers(args.cylinder, "--cylinder", 2, "D,L: a diameter and a length > 0 in m", positive=True)
        region = {"shape": "cylinder", "diameter_m": d, "length_m": length}
    fmap = read_map(args.map, nucleus=args.nucleus, codata=codata)
    fit = fit_map(fmap, order, about_m=about, basis=args.basis, region=region)
    if args.svg:
        import os

        from ..files.atomic import atomic_write_text
        from ..report.fit_charts import field_map_svg

        if os.path.exists(args.svg) and os.path.samefile(args.svg, args.map):
            raise InputError("--svg", args.svg, "a file other than the input map")
        atomic_write_text(args.svg, field_map_svg(fit))
    if args.json:
        print(json.dumps(fit.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(fit.text())
    return 0
