"""``fieldbudget monitor chart|drift|scores``: monitoring the validity of results (ISO/IEC 17025 7.7.1).

``chart`` draws the individuals chart of an archived series (a check
standard, a probe against a second probe) with the ISO 7870-2 tests and an
optional EWMA; ``drift`` fits an instrument's drift over its certificates and
reviews its recalibration interval (ILAC-G24 control-chart method); ``scores``
gives the E_n, zeta and z scores of a comparison file.  See
:mod:`fieldbudget.lab.monitoring`.
"""

from __future__ import annotations

import argparse
import json

from ..errors import InputError
from ..lab.archive import Archive
from ..lab.monitoring import (
    chart_from_entries,
    chart_from_settings,
    chart_of_differences,
    drift,
    review_interval,
    score_rounds,
)
from ..lab.register import load_register
from ._labopts import add_lab_option, lab_of

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("monitor", help="control charts, drift and interval review, comparison scores",
                       description="Monitor the validity of results: control charts of archived series, drift of "
                                   "an instrument between calibrations with the review of its interval, and scores "
                                   "of interlaboratory comparisons and proficiency tests.")
    verbs = p.add_subparsers(dest="verb", metavar="ACTION")
    verbs.required = True

    c = verbs.add_parser("chart", help="individuals chart of an archived series, with the ISO 7870-2 tests")
    c.add_argument("--series", help="a series set up in settings.toml [monitoring.NAME]")
    c.add_argument("--item", help="records whose item contains this text (instead of --series)")
    c.add_argument("--measurand", help="records of this measurand symbol")
    c.add_argument("--instrument", help="records that used this instrument")
    c.add_argument("--against-instrument", metavar="ID",
                   help="chart the day-by-day difference from the same records made with this instrument "
                        "(e.g. the reference probe against a second probe)")
    c.add_argument("--against-item", metavar="TEXT", help="the second series' item, when it differs")
    c.add_argument("--baseline", type=int, default=None, help="number of first points that set the limits")
    c.add_argument("--ewma", type=float, metavar="LAMBDA", default=None, help="add an EWMA chart (e.g. 0.2)")
    c.add_argument("--json", action="store_true", help="print the chart as JSON")
    add_lab_option(c)

    d = verbs.add_parser("drift", help="an instrument's drift over its certificates, and its interval review")
    d.add_argument("instrument", help="the instrument's id in the register")
    d.add_argument("--quantity", help="the certified value to follow (default: the register's [review] quantity)")
    d.add_argument("--limit", type=float, default=None,
                   help="allowed change since calibration (default: the register's [review] limit)")
    d.add_argument("--k", type=float, default=None, help="coverage factor of the prediction (default 2)")
    d.add_argument("--json", action="store_true", help="print JSON")
    add_lab_option(d)

    s = verbs.add_parser("scores", help="E_n, zeta and z scores of a comparison file (TOML or JSON)")
    s.add_argument("file", help="comparison file with [[rounds]] (see docs/lab.md)")
    s.add_argument("--json", action="store_true", help="print JSON")
    return p


def _read_doc(path: str) -> dict:
    from .._io import read_object_file

    return read_object_file(path)


def run(args: argparse.Namespace) -> int:
    if args.verb == "scores":
        rounds = score_rounds(_read_doc(args.file), where=args.file)
        if args.json:
            print(json.dumps([r.to_dict() for r in rounds], indent=2, ensure_ascii=False))
        else:
            for r in rounds:
                parts = ", ".join(f"{s.kind} = {s.value:+.2f} ({s.verdict})" for s in r.scores)
                print(f"{r.id} {r.date}: {parts}".replace("  ", " "))
        return 0
    lab = lab_of(args)
    if args.verb == "chart":
        if args.series and (args.item or args.measurand or args.instrument or args.against_instrument
                            or args.against_item):
            raise InputError("--series", args.series, "given alone (or use --item/--measurand/--instrument)",
                             "monitor chart")
        if args.series:
            chart = chart_from_settings(lab, args.series, ewma_lambda=args.ewma)
            if args.baseline is not None:
                from ..lab.monitoring import individuals_chart

                chart = individuals_chart(chart.values, baseline=args.baseline, U=chart.U, labels=chart.labels,
                                          unit=chart.unit, title=chart.title, ewma_lambda=args.ewma)
        elif args.item or args.measurand or args.instrument:
            archive = Archive(lab)
            entries = archive.series(item=args.item, measurand=args.measurand, instrument=args.instrument)
            title = " ".join(x for x in (args.item, args.measurand, args.instrument) if x)
            if args.against_instrument or args.against_item:
                other = archive.series(item=args.against_item or args.item, measurand=args.measurand,
                                       instrument=args.against_instrument)
                chart = chart_of_differences(entries, other, baseline=args.baseline, ewma_lambda=args.ewma,
                                             title=f"{title} minus {args.against_item or args.against_instrument}")
            else:
                chart = chart_from_entries(entries, baseline=args.baseline, ewma_lambda=args.ewma, title=title)
        else:
            raise InputError("--series", None, "a series of settings.toml, or --item/--measurand/--instrument",
                             "monitor chart")
        if args.json:
            print(json.dumps(chart.to_dict(), indent=2, ensure_ascii=False))
        else:
            print(chart.summary())
            print()
            print(chart.ascii())
        return 0
    ins = load_register(lab).get(args.instrument, "monitor drift")
    fit = drift(ins, args.quantity)
    review = None
    if args.limit is not None or (ins.review or {}).get("limit") is not None:
        review = review_interval(ins, fit, limit=args.limit, k=args.k)
    if args.json:
        print(json.dumps({"drift": fit.to_dict(), "review": review.to_dict() if review else None}, indent=2,
                         ensure_ascii=False))
    else:
        print(fit.summary())
        print(review.summary() if review else "no interval review: give --limit or a [review] limit in the register")
    return 0
