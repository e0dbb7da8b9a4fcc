"""``fieldbudget evaluate FILE``: the budget table and statement of a budget file."""

from __future__ import annotations

import argparse
import json
import math
import sys

from ..engine import VectorResult, evaluate
from ..files.budget_file import load_budget

__all__ = ["add_parser", "run", "trials_count"]


def trials_count(text: str) -> int:
    """A number of trials written as an integer or as an integral float (``1e6``, ``2.5e5``)."""
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value) or value < 1 or value != math.floor(value) or value > 1e12:
        raise argparse.ArgumentTypeError(f"must be a whole number of trials >= 1, such as 1000000 or 1e6 "
                                         f"(got {text!r})")
    return int(value)


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("evaluate", help="evaluate a budget file (GUM, optionally Monte Carlo)",
                       description="Evaluate a budget file by the GUM law of propagation and print the budget "
                                   "table and the uncertainty statement.")
    p.add_argument("file", help="budget file (JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    p.add_argument("--monte-carlo", type=trials_count, metavar="M", default=None,
                   help="also propagate by Monte Carlo with M trials (JCGM 101) and validate the GUM result; "
                        "M may be written 1e6. With --adaptive, M is the most trials the adaptive run may use")
    p.add_argument("--seed", type=int, default=None,
                   help="seed of the Monte Carlo generator (used only with --monte-carlo or --adaptive)")
    p.add_argument("--adaptive", action="store_true",
                   help="adaptive Monte Carlo (JCGM 101 7.9), run until the validation is decided")
    p.add_argument("--second-order", action="store_true",
                   help="also show u_c with second-order terms (JCGM 100 5.1.2; uncorrelated inputs), for "
                        "comparison; the statement keeps the first-order u_c unless the budget says "
                        "\"second_order\": true")
    return p


def run(args: argparse.Namespace) -> int:
    budget = load_budget(args.file)
    result = evaluate(budget, second_order=args.second_order)
    notes = []
    if args.seed is not None and args.monte_carlo is None and not args.adaptive:
        print("fieldbudget evaluate: warning: --seed is ignored without --monte-carlo or --adaptive",
              file=sys.stderr)
    if args.monte_carlo is not None or args.adaptive:
        from ..engine import montecarlo, validation

        if args.adaptive:
            cap = args.monte_carlo
            if cap is not None:
                notes.append(f"adaptive Monte Carlo with at most {cap} trials (--monte-carlo sets the limit "
                             "with --adaptive)")
            if isinstance(result, VectorResult):
                mc = montecarlo.run(budget, seed=args.seed, adaptive=True, max_trials=cap)
                result = result.with_monte_carlo(mc, validation.validate_outputs(result, mc))
            else:
                mc, check = validation.validate_adaptive(result, budget, seed=args.seed, max_trials=cap)
                result = result.with_monte_carlo(mc, check)
        else:
            mc = montecarlo.run(budget, trials=args.monte_carlo, seed=args.seed)
            if isinstance(result, VectorResult):
                result = result.with_monte_carlo(mc, validation.validate_outputs(result, mc))
            else:
                result = result.with_monte_carlo(mc, validation.validate(result, mc))
    if args.json:
        d = result.to_dict()
        if notes:
            d["notes"] = notes
        print(json.dumps(d, indent=2, ensure_ascii=False))
    else:
        print(result.report())
        for n in notes:
            print(f"note: {n}")
    return 0
