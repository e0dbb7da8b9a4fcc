"""Time of fitting a 10 000-point trace and a 2 000-point field map to order 4 (targets: under 0.5 s each).

A script, not a test: it prints medians (of several runs, after one warm-up)
and the ratio to a baseline of the same size, and asserts nothing.  The
baselines are bare numpy least squares: ``numpy.linalg.lstsq`` of a
10 000 x 4 matrix (the trace fit's Jacobian size) and of the 2 000 x 25 design
matrix of an order-4 map.  BLAS threads compete on a busy machine; set
OPENBLAS_NUM_THREADS=1 to compare like with like.
Run: .venv/bin/python benchmarks/bench_fits.py
"""

from __future__ import annotations

import statistics
import time

import numpy as np

from fieldbudget.nmr.fieldmap import FieldMap, fit_map, harmonic_terms
from fieldbudget.nmr.linefit import Trace, fit_trace


def timeit(fn, repeat: int) -> float:
    fn()  # warm-up (imports, caches)
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def swept_trace(n: int = 10_000) -> Trace:
    rng = np.random.default_rng(1)
    f = 42576412.2 + np.linspace(-60.0, 60.0, n)
    q = (f - 42576412.2) / 4.0
    return Trace(f, 1.0 / (1 + q * q) + rng.normal(0, 0.02, n))


def fid_trace(n: int = 10_000) -> Trace:
    rng = np.random.default_rng(2)
    t = 1e-4 * np.arange(n)
    s = np.exp(-t / 0.05) * np.exp(1j * (2 * np.pi * 412.2 * t + 0.4))
    w = (rng.normal(0, 0.03, n) + 1j * rng.normal(0, 0.03, n))
    return Trace(t, (s + w).real, (s + w).imag, axis="t_s")


def field_map(n: int = 2_000) -> FieldMap:
    rng = np.random.default_rng(3)
    xyz = rng.uniform(-0.02, 0.02, (n, 3))
    terms = harmonic_terms(4)
    c = rng.normal(size=len(terms)) * np.array([10.0 ** (-t.l) for t in terms])
    b = 1.0 + sum(ci * t.evaluate(*xyz.T) for ci, t in zip(c, terms)) + rng.normal(0, 1e-8, n)
    return FieldMap(xyz, b, np.full(n, 1e-8))


def main() -> None:
    tr, fid, fm = swept_trace(), fid_trace(), field_map()
    a_line = np.random.default_rng(4).normal(size=(10_000, 4))
    a_map = np.random.default_rng(5).normal(size=(2_000, 25))
    y_line, y_map = a_line[:, 0].copy(), a_map[:, 0].copy()
    base_line = timeit(lambda: np.linalg.lstsq(a_line, y_line, rcond=None), 20)
    base_map = timeit(lambda: np.linalg.lstsq(a_map, y_map, rcond=None), 20)
    rows = [
        ("10 000-point absorption trace", timeit(lambda: fit_trace(tr), 7), base_line, "lstsq 10 000 x 4"),
        ("10 000-point complex FID", timeit(lambda: fit_trace(fid), 7), base_line, "lstsq 10 000 x 4"),
        ("2 000-point map, order 4", timeit(lambda: fit_map(fm, 4), 7), base_map, "lstsq 2 000 x 25"),
    ]
    print(f"{'fit':<32} {'median / s':>11} {'target':>8}  ratio to baseline")
    for name, t, base, what in rows:
        print(f"{name:<32} {t:11.4f} {'< 0.5':>8}  {t / base:8.0f} x ({what}: {base * 1e3:.3f} ms)")


if __name__ == "__main__":
    main()
