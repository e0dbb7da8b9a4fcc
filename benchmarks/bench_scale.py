"""Budgets of many inputs: build plus GUM evaluation, against plain Python + numpy on the same numbers.

A script, not a test: it prints medians and ratios and asserts nothing.
Run: .venv/bin/python benchmarks/bench_scale.py [--rounds N]

- correlated: n = 1000 inputs, a full correlation matrix given as n (n - 1) / 2
  pairs (r = 0.2, positive definite).  Baseline: a hand-written computation
  of u_c = sqrt(J V J^T) from the same pair list (a dict of symbols to
  indices, the matrix filled by numpy indexing, J from the known linear
  model).  Goal (issue 18): ratio <= 3.
- independent: n = 1000, 3000 and 10 000 inputs, no correlation; the time per
  input should stay flat (linear in n).  The three sizes take turns in each
  round, so a change in the machine's load reaches all three alike.
- long model: a flat sum of 10 000 terms, build and evaluate (no recursion limit).

Rounds are interleaved (engine, baseline, engine, ...) and medians are printed.
Python's garbage collector runs as usual around both.  The engine pauses it
while it builds and evaluates (``fieldbudget.engine._runtime``) and it runs
once afterwards; the baseline allocates hardly any containers (its lists hold
numbers), so the collector does not run during it.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np

from fieldbudget.engine import Budget, InputQuantity, evaluate


def _linear(n: int) -> tuple[str, list[InputQuantity]]:
    expr = " + ".join(f"{1 + i % 7}*x{i}" for i in range(n))
    return expr, [InputQuantity.normal(f"x{i}", float(i), 0.1 + i * 1e-4) for i in range(n)]


def _pairs(n: int, r: float = 0.2) -> list[tuple[str, str, float]]:
    return [(f"x{i}", f"x{j}", r) for i in range(n) for j in range(i + 1, n)]


def engine(expr: str, inputs: list, pairs: list) -> float:
    b = Budget(model=expr, inputs=tuple(inputs), correlations=tuple(pairs))
    return evaluate(b).standard_uncertainty


def plain(n: int, inputs: list, pairs: list) -> float:
    """J V J^T from the pair list, written out by hand in Python + numpy."""
    idx = {q.symbol: i for i, q in enumerate(inputs)}
    R = np.eye(n)
    a = np.array([idx[p[0]] for p in pairs], dtype=np.intp)
    b = np.array([idx[p[1]] for p in pairs], dtype=np.intp)
    v = np.array([p[2] for p in pairs])
    R[a, b] = v
    R[b, a] = v
    u = np.array([q.standard_uncertainty for q in inputs])
    J = np.array([1 + i % 7 for i in range(n)], dtype=float)
    V = R * np.outer(u, u)
    return float(np.sqrt(J @ V @ J))


def _time(fn) -> float:
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rounds", type=int, default=5)
    ap.add_argument("--n", type=int, default=1000)
    args = ap.parse_args()
    n = args.n
    expr, inputs = _linear(n)
    pairs = _pairs(n)
    assert abs(engine(expr, inputs, pairs) / plain(n, inputs, pairs) - 1) < 1e-9
    te, tp = [], []
    for _ in range(args.rounds):
        te.append(_time(lambda: engine(expr, inputs, pairs)))
        tp.append(_time(lambda: plain(n, inputs, pairs)))
    me, mp = statistics.median(te), statistics.median(tp)
    print(f"correlated, n = {n} ({len(pairs)} pairs): engine build + evaluate {me * 1e3:.0f} ms, "
          f"plain Python + numpy J V J^T {mp * 1e3:.0f} ms, ratio {me / mp:.2f} (goal <= 3)")
    sizes = (1000, 3000, 10_000)
    cases = {m: _linear(m) for m in sizes}
    times: dict[int, list[float]] = {m: [] for m in sizes}
    for _ in range(args.rounds):
        for m in sizes:
            e, q = cases[m]
            times[m].append(_time(lambda e=e, q=q: engine(e, q, [])))
    per = {m: statistics.median(times[m]) for m in sizes}
    for m in sizes:
        print(f"independent, n = {m:>6}: build + evaluate {per[m] * 1e3:7.0f} ms, {per[m] / m * 1e6:6.1f} us per input")
    print(f"independent: time per input at 10 000 over that at 1000: {per[10_000] / 10 / per[1000]:.2f} "
          "(1.0 is linear)")
    e = " + ".join(f"x{i}" for i in range(10_000))
    q = [InputQuantity.normal(f"x{i}", 1.0, 0.1) for i in range(10_000)]
    t = _time(lambda: evaluate(Budget(model=e, inputs=tuple(q))))
    print(f"flat sum of 10 000 terms: build + evaluate {t * 1e3:.0f} ms")


if __name__ == "__main__":
    main()
