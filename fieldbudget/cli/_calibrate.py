"""``fieldbudget calibrate FILE``: evaluate a calibration file (points, covariance, curve, conformity)."""

from __future__ import annotations

import argparse
import json
from pathlib import Path

from ..errors import InputError
from ..files.calibration_file import load_calibration

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("calibrate", help="evaluate a calibration file: errors, U, curve, conformity",
                       description="Evaluate a calibration file (format fieldbudget-calibration/1): the error of "
                                   "the instrument at each point with its expanded uncertainty, the correlation "
                                   "between points, the calibration curve and the conformity decisions. With -o, "
                                   "also write the calibration's hash-stamped record.")
    p.add_argument("file", help="calibration file (JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    p.add_argument("--monte-carlo", type=int, metavar="M", default=None,
                   help="propagate every point by Monte Carlo with M trials (JCGM 101); without it the file's "
                        "'propagation' decides (default auto)")
    p.add_argument("--seed", type=int, default=None, help="seed of the Monte Carlo generator")
    p.add_argument("-o", "--output", metavar="RECORD", default=None,
                   help="write the calibration record here (refused if the file exists)")
    p.add_argument("--sign", metavar="KEY", default=None, help="sign the record with this signing key file")
    p.add_argument("--operator", default="", help="who made the calibration (kept in the record)")
    return p


def run(args: argparse.Namespace) -> int:
    if args.monte_carlo is not None and args.monte_carlo < 1:
        raise InputError("--monte-carlo", args.monte_carlo, "a number of trials >= 1", "calibrate")
    if args.seed is not None and args.seed < 0:
        raise InputError("--seed", args.seed, "a whole number >= 0", "calibrate")
    if args.sign and not args.output:
        raise InputError("--sign", args.sign, "given with -o RECORD (the signature belongs to a record)", "calibrate")
    cal = load_calibration(args.file)
    if args.output:
        from ..files.calibration_record import make_calibration_record, save_calibration_record

        out = Path(args.output)
        if out.resolve() == Path(args.file).resolve():
            raise InputError("-o", args.output, "a new file, not the calibration file itself", "calibrate")
        if out.exists():
            raise InputError("-o", args.output, "a file that does not exist yet (records are never overwritten)",
                             "calibrate")
        rec = make_calibration_record(cal, monte_carlo=args.monte_carlo, seed=args.seed, operator=args.operator,
                                      sign=args.sign)
        save_calibration_record(rec, out)
        summary = rec.summary()
    else:
        summary = cal.evaluate(monte_carlo=args.monte_carlo, seed=args.seed)
    if args.json:
        print(json.dumps(summary.to_dict() if hasattr(summary, "to_dict") else summary, indent=2,
                         ensure_ascii=False))
    else:
        print(summary.report())
        if args.output:
            print(f"record: {args.output}, SHA-256 {rec.digest}")
    return 0
