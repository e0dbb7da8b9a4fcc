"""Monte Carlo speed and memory: a 15-input nonlinear model, M = 10^6 (and 10^7 for memory).

A script, not a test: it prints times, ratios and peak memory, and asserts nothing.
Run: .venv/bin/python benchmarks/bench_montecarlo.py [--quick]

Side by side in one process, best of a few repeats each:
  raw draws      the same random numbers drawn alone with one PCG64 generator;
  hand-written   those draws plus the model written out in numpy (what a user would type);
  hand + summary the hand-written run plus mean, standard deviation and a 95 % interval (np.quantile);
  engine, w = n  fieldbudget.engine.montecarlo.run with n worker threads.
Peak resident memory of one 10^7-trial run is measured in a fresh subprocess (VmHWM of
/proc/self/status), so that it counts only that run.
"""

from __future__ import annotations

import argparse
import math
import subprocess
import sys
import time

import numpy as np

from fieldbudget.engine import Budget, InputQuantity, montecarlo

EXPR = ("2*pi*f*(1 + y_tb)*(1 + d1)*(1 + d2)*(1 + d3)*(1 + d4)/(g*(1 + a*(t - t0))*(1 + chi*(1/3 - N))"
        "*cos(theta)) + G*dx")


def nonlinear_15() -> Budget:
    """An invented product of corrections with a cosine (15 inputs, every distribution kind)."""
    inputs = [
        InputQuantity.from_readings("f", [42.576385e6 + i * 0.3 for i in range(10)], unit="Hz"),
        InputQuantity.normal("y_tb", 1e-9, 5e-10), InputQuantity.rectangular("d1", 0, 1e-8),
        InputQuantity.triangular("d2", 0, 2e-8), InputQuantity.arcsine("d3", 0, 1e-8),
        InputQuantity.normal("d4", 0, 3e-9),
        InputQuantity.normal("g", 2.675153194e8, 1.1), InputQuantity.normal("a", 10.36e-9, 0.3e-9),
        InputQuantity.normal("t", 22.0, 0.1), InputQuantity.normal("t0", 25.0, 0.01),
        InputQuantity.normal("chi", -9.05e-6, 0.05e-6), InputQuantity.normal("N", 0.3116, 0.002),
        InputQuantity.normal("theta", 0.0, 0.01), InputQuantity.normal("G", 1e-4, 1e-5),
        InputQuantity.normal("dx", 0.0, 1e-4),
    ]
    return Budget(model=EXPR, inputs=tuple(inputs), coverage_probability=0.95)


def raw_draws(budget: Budget, m: int, seed: int) -> dict[str, np.ndarray]:
    """The same kinds and numbers of variates, drawn by hand with one generator (in-place scaling)."""
    rng = np.random.Generator(np.random.PCG64(seed))
    x = {}
    for q in budget.inputs:
        d, e = q.distribution, q.estimate
        if d.kind == "type_a":
            v = rng.standard_t(d.n - 1, m)
            v *= d.standard_uncertainty
        elif d.kind == "normal":
            v = rng.standard_normal(m)
            v *= d.u
        elif d.kind == "rectangular":
            v = rng.random(m)
            v -= 0.5
            v *= 2 * d.half_width
        elif d.kind == "triangular":
            v = rng.random(m)
            v += rng.random(m)
            v -= 1.0
            v *= d.half_width
        else:  # arcsine
            v = rng.random(m)
            v *= 2 * np.pi
            np.sin(v, out=v)
            v *= d.half_width
        v += e
        x[q.symbol] = v
    return x


def hand_written(budget: Budget, m: int, seed: int) -> np.ndarray:
    v = raw_draws(budget, m, seed)
    return (2 * np.pi * v["f"] * (1 + v["y_tb"]) * (1 + v["d1"]) * (1 + v["d2"]) * (1 + v["d3"]) * (1 + v["d4"])
            / (v["g"] * (1 + v["a"] * (v["t"] - v["t0"])) * (1 + v["chi"] * (1 / 3 - v["N"])) * np.cos(v["theta"]))
            + v["G"] * v["dx"])


def hand_with_summary(budget: Budget, m: int, seed: int) -> tuple:
    y = hand_written(budget, m, seed)
    return y.mean(), y.std(ddof=1), np.quantile(y, [0.025, 0.975])


def best(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


# Peak RSS read in the child itself.  /proc/self/status VmHWM belongs to the child's own address space
# (reset at exec); getrusage's ru_maxrss is the fallback, but on Linux it keeps the high-water mark of the
# forked copy of this (large) parent process, so it would overstate the child's peak.
_PEAK = (
    "def _peak():\n"
    "    try:\n"
    "        for line in open('/proc/self/status'):\n"
    "            if line.startswith('VmHWM:'):\n"
    "                return int(line.split()[1])\n"
    "    except OSError:\n"
    "        pass\n"
    "    import resource\n"
    "    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss\n"
)


def _child_peak_mib(body: str) -> float:
    code = _PEAK + body + "\nprint(_peak())\n"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return int(out.stdout.split()[-1]) / 1024.0   # kilobytes -> MiB


def peak_rss_mib(trials: int, workers: int) -> float:
    return _child_peak_mib(
        "import sys; sys.path.insert(0, 'benchmarks')\n"
        "from bench_montecarlo import nonlinear_15\nfrom fieldbudget.engine import montecarlo\n"
        f"montecarlo.run(nonlinear_15(), {trials}, seed=1, workers={workers})")


def baseline_rss_mib() -> float:
    return _child_peak_mib("import sys; sys.path.insert(0, 'benchmarks')\n"
                           "from bench_montecarlo import nonlinear_15\nfrom fieldbudget.engine import montecarlo\n"
                           "nonlinear_15()")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="M = 10^5 and no 10^7 memory run")
    args = ap.parse_args()
    m = 100_000 if args.quick else 1_000_000
    repeat = 3 if args.quick else 7
    b = nonlinear_15()
    seed = 20261202

    # Interleaved repeats, best of each: the machine may be shared, and a burst of load then hits
    # every method alike instead of one of them.
    methods = {
        "raw": lambda: raw_draws(b, m, seed),
        "hand": lambda: hand_written(b, m, seed),
        "hsum": lambda: hand_with_summary(b, m, seed),
        1: lambda: montecarlo.run(b, m, seed=seed, workers=1),
        2: lambda: montecarlo.run(b, m, seed=seed, workers=2),
    }
    times = {k: math.inf for k in methods}
    for _ in range(repeat):
        for k, fn in methods.items():
            times[k] = min(times[k], best(fn, 1))
    t_raw, t_hand, t_hsum = times["raw"], times["hand"], times["hsum"]
    t_eng = {1: times[1], 2: times[2]}
    same = montecarlo.run(b, m, seed=seed, workers=1) == montecarlo.run(b, m, seed=seed, workers=2,
                                                                          chunk_size=70_000)

    print(f"Monte Carlo, 15-input nonlinear model, M = {m}, PCG64, numpy {np.__version__}, best of {repeat}")
    print(f"  raw draws alone          {t_raw * 1e3:8.1f} ms")
    print(f"  hand-written numpy       {t_hand * 1e3:8.1f} ms")
    print(f"  hand-written + summary   {t_hsum * 1e3:8.1f} ms")
    for w, t in t_eng.items():
        print(f"  engine, {w} worker{'s' if w > 1 else ' '}        {t * 1e3:8.1f} ms")
    print("ratios")
    for w, t in t_eng.items():
        print(f"  engine ({w}) / hand-written          {t / t_hand:5.2f}   (goal <= 1.2 with 1 worker)")
        print(f"  engine ({w}) / hand-written + summary {t / t_hsum:5.2f}")
        print(f"  engine ({w}) / raw draws             {t / t_raw:5.2f}")
    print(f"  identical results for 1 and 2 workers and another chunk size: {same}")

    if not args.quick:
        base = baseline_rss_mib()
        for w in (1, 2):
            rss = peak_rss_mib(10_000_000, w)
            print(f"peak RSS, M = 10^7, {w} worker{'s' if w > 1 else ''}: {rss:7.1f} MiB "
                  f"(imports alone {base:.1f} MiB; limit 1024 MiB)")
        print(f"  for comparison, holding the 15 x 10^7 draws at once would take {15 * 8 * 1e7 / 2**20:.0f} MiB")


if __name__ == "__main__":
    main()
