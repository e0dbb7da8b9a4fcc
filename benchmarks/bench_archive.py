"""Archive speed: adding records, finding them, checking the chain, as the archive grows.

A script, not a test: it prints times and ratios and asserts nothing.
Run: .venv/bin/python benchmarks/bench_archive.py [N]
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

from fieldbudget.engine import Budget, InputQuantity, Measurand
from fieldbudget.files.record import make_record, save_record
from fieldbudget.lab.archive import Archive


def main(n: int = 400) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        paths = []
        t0 = time.perf_counter()
        for i in range(n):
            b = Budget(model="x + d", measurand=Measurand("B", "T"),
                       inputs=(InputQuantity.normal("x", 1.0 + i * 1e-6, 1e-7, unit="T"),
                               InputQuantity.normal("d", 0.0, 1e-7, unit="T")),
                       metadata={"measurement_metadata": {"date": f"2026-{1 + i % 12:02d}-15",
                                                          "item": f"check standard CS-{i % 3}"}})
            paths.append(save_record(make_record(b, created_utc="2026-11-30T10:00:00Z"), tmp / f"r{i}.json"))
        t_make = time.perf_counter() - t0
        archive = Archive(tmp / "lab")
        half = n // 2
        t0 = time.perf_counter()
        for p in paths[:half]:
            archive.add(p)
        t_first = (time.perf_counter() - t0) / half
        t0 = time.perf_counter()
        for p in paths[half:]:
            archive.add(p)
        t_second = (time.perf_counter() - t0) / (n - half)
        t0 = time.perf_counter()
        found = archive.find(item="CS-1", date_from="2026-03-01", date_to="2026-06-30")
        t_find = time.perf_counter() - t0
        t0 = time.perf_counter()
        ok = archive.check().intact
        t_check = time.perf_counter() - t0
    print(f"{n} records (making them took {t_make:.2f} s)")
    print(f"add: {1e3 * t_first:.2f} ms per record for the first {half}, {1e3 * t_second:.2f} ms for the next "
          f"{n - half} (ratio {t_second / t_first:.2f}: near 1 means the cost does not grow with the archive)")
    print(f"find (item and dates, {len(found)} found): {1e3 * t_find:.2f} ms")
    print(f"check of {n} entries: {t_check:.2f} s ({1e3 * t_check / n:.2f} ms per entry), intact: {ok}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 400)
