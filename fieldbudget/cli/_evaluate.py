"""``fieldbudget evaluate FILE``: the budget table and statement of a budget file."""

from __future__ import annotations

import argparse
import json

from ..engine import VectorResult, evaluate
from ..files.budget_file import load_budget

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("evaluate", help="evaluate a budget file (GUM, optionally Monte Carlo)",
                       description="Evaluate a budget file by the GUM law of propagation and print the budget "
                                   "table and the uncertainty statement.")
    p.add_argument("file", help="budget file (JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    p.add_argument("--monte-carlo", type=int, metavar="M", default=None,
                   help="also propagate by Monte Carlo with M trials (JCGM 101) and validate the GUM result")
    p.add_argument("--seed", type=int, default=None, help="seed of the Monte Carlo generator")
    p.add_argument("--adaptive", action="store_true", help="adaptive Monte Carlo (JCGM 101 7.9)")
    p.add_argument("--second-order", action="store_true",
                   help="add u_c with second-order terms (JCGM 100 5.1.2; uncorrelated inputs)")
    return p


def run(args: argparse.Namespace) -> int:
    budget = load_budget(args.file)
    result = evaluate(budget, second_order=args.second_order)
    if args.monte_carlo is not None or args.adaptive:
        from ..engine import montecarlo, validation

        trials = args.monte_carlo if args.monte_carlo is not None else 10**6
        mc = montecarlo.run(budget, trials=trials, seed=args.seed, adaptive=args.adaptive)
        if isinstance(result, VectorResult):
            result = result.with_monte_carlo(mc, validation.validate_outputs(result, mc))
        else:
            result = result.with_monte_carlo(mc, validation.validate(result, mc))
    if args.json:
        print(json.dumps(result.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(result.report())
    return 0
