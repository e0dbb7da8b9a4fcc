"""Time of one GUM evaluation: a 15-input nonlinear model and a 200-input model; cost of the unit check;
cost of the second-order terms (JCGM 100:2008 5.1.2) on the demo NMR budget.

A script, not a test: it prints medians and ratios and asserts nothing.
Run: .venv/bin/python benchmarks/bench_gum.py
The second-order goal (issue 18): the NMR budget with its second-order terms
within 2x the first-order evaluation, timed interleaved.
"""

from __future__ import annotations

import statistics
import time

from fieldbudget.engine import Budget, InputQuantity, Measurand, dimensions, evaluate


def nonlinear_15(units: str = "checked") -> Budget:
    # an NMR-like product of corrections with a cosine, an exponential and a square root
    expr = ("2*pi*f*(1 + y_tb)*(1 + d1)*(1 + d2)*(1 + d3)*(1 + d4)/(g*(1 + a*(t - t0))*(1 + chi*(1/3 - N))"
            "*cos(theta)) + G*dx")
    inputs = [
        InputQuantity.from_readings("f", [42.576385e6 + i * 0.3 for i in range(10)], unit="Hz"),
        InputQuantity.normal("y_tb", 1e-9, 5e-10), InputQuantity.rectangular("d1", 0, 1e-8),
        InputQuantity.triangular("d2", 0, 2e-8), InputQuantity.arcsine("d3", 0, 1e-8),
        InputQuantity.normal("d4", 0, 3e-9),
        InputQuantity.normal("g", 2.675153194e8, 1.1, unit="s^-1 T^-1"),
        InputQuantity.normal("a", 10.36e-9, 0.3e-9, unit="1/K"),
        InputQuantity.normal("t", 22.0, 0.1, unit="degC"), InputQuantity.normal("t0", 25.0, 0.0, unit="degC"),
        InputQuantity.normal("chi", -9.05e-6, 0.05e-6), InputQuantity.normal("N", 0.3116, 0.002),
        InputQuantity.normal("theta", 0.0, 0.01, unit="rad"), InputQuantity.normal("G", 1e-4, 1e-5, unit="T/m"),
        InputQuantity.normal("dx", 0.0, 1e-4, unit="m"),
    ]
    return Budget(model=expr, inputs=tuple(inputs), measurand=Measurand("B", "T"), units=units)


def linear_200() -> Budget:
    expr = " + ".join(f"{1 + i % 7}*x{i}" for i in range(200))
    return Budget(model=expr, inputs=tuple(InputQuantity.normal(f"x{i}", float(i), 0.1 + i * 1e-3) for i in range(200)))


def timeit(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def unit_check_cost() -> None:
    """The dimensional check alone, on a fresh (uncached) 15-input budget, and its share of an evaluation."""
    t0 = time.perf_counter()
    dimensions.check(nonlinear_15())      # first call in the process: pint's registry and the unit parses
    cold = time.perf_counter() - t0
    budgets = [nonlinear_15() for _ in range(200)]
    it = iter(budgets)
    warm = timeit(lambda: dimensions.check(next(it)), 200)
    with_check = timeit(lambda: evaluate(nonlinear_15()), 50)
    without = timeit(lambda: evaluate(nonlinear_15("unchecked")), 50)
    print(f"unit check of the 15-input model: first call in the process {cold * 1e3:.1f} ms "
          f"(reads the unit table once), then median {warm * 1e3:.3f} ms (target < 5 ms)")
    print(f"GUM evaluation of a fresh 15-input budget with / without the unit check: {with_check * 1e3:.2f} / "
          f"{without * 1e3:.2f} ms (ratio {with_check / without:.2f})")


def second_order_cost(rounds: int = 200) -> None:
    """The demo NMR budget (second_order true, as the NMR layer writes it) against the same budget first-order."""
    from dataclasses import replace
    from pathlib import Path

    from fieldbudget.nmr import NMRMeasurement

    path = Path(__file__).resolve().parent.parent / "examples" / "data" / "nmr-measurement-2026-11-18.json"
    second = NMRMeasurement.from_file(path).to_budget()
    first = replace(second, second_order=False)
    evaluate(second), evaluate(first)  # warm up
    t2, t1 = [], []
    for _ in range(rounds):  # interleaved
        for fn, out in ((lambda: evaluate(second), t2), (lambda: evaluate(first), t1)):
            t0 = time.perf_counter()
            fn()
            out.append(time.perf_counter() - t0)
    m2, m1 = statistics.median(t2), statistics.median(t1)
    print(f"NMR demo budget ({len(second.inputs)} inputs): GUM with second-order terms {m2 * 1e3:.2f} ms, "
          f"first order {m1 * 1e3:.2f} ms, ratio {m2 / m1:.2f} (goal <= 2)")


def main() -> None:
    unit_check_cost()
    second_order_cost()
    b15, b200 = nonlinear_15(), linear_200()
    evaluate(b15), evaluate(b200)  # warm up (imports, scipy)
    t15 = timeit(lambda: evaluate(b15), 50)
    t200 = timeit(lambda: evaluate(b200), 20)
    build = timeit(nonlinear_15, 50)
    print(f"inputs in the nonlinear model: {len(b15.inputs)}")
    print(f"GUM evaluation, {len(b15.inputs)}-input nonlinear model: median {t15 * 1e3:.2f} ms")
    print(f"GUM evaluation, 200-input linear model: median {t200 * 1e3:.2f} ms")
    print(f"building the {len(b15.inputs)}-input budget (checks included): median {build * 1e3:.2f} ms")
    print(f"ratio 200-input / {len(b15.inputs)}-input: {t200 / t15:.1f}")


if __name__ == "__main__":
    main()
