"""Start-up of the command line: each command's wall time against ``python -c "import numpy, scipy.stats"``.

A script, not a test: it prints medians and ratios and asserts nothing.
Run: .venv/bin/python benchmarks/bench_startup.py [--rounds N] [--python OTHER_PYTHON]

Every round runs the baseline and then each command once, in a fresh
process, so a busy machine slows them alike (interleaved runs); the figure
is the median over the rounds, and each ratio is a command's median over
the baseline's.  The goal (issue 18) is <= 1.3 for every command that reads
a record and for ``evaluate``, ``nmr`` and ``larmor`` without Monte Carlo.
Each installation's fieldbudget package is byte-compiled first (``compileall``,
as pip does when it installs a wheel), because numpy and scipy in the baseline
are already compiled: otherwise, with PYTHONDONTWRITEBYTECODE set (as here),
every run would also compile our own sources.
``--python`` times another installation (for example the main branch's
virtual environment) with the same inputs, for a before/after comparison.
PDF rendering is left out: it is start-up plus chromium.
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
MEASUREMENT = ROOT / "examples" / "data" / "nmr-measurement-2026-11-18.json"


def _fixtures(python: str, folder: Path) -> dict[str, Path]:
    """A budget file and a GUM-only record of the demo NMR measurement, made with ``python``."""
    shutil.copy(MEASUREMENT, folder / MEASUREMENT.name)
    for csv in (ROOT / "examples" / "data").glob("*.csv"):
        shutil.copy(csv, folder / csv.name)
    budget, record = folder / "nmr-budget.json", folder / "gum.record.json"
    subprocess.run([python, "-m", "fieldbudget", "nmr", str(folder / MEASUREMENT.name), "--budget-out",
                    str(budget)], check=True, capture_output=True, cwd=folder)
    subprocess.run([python, "-m", "fieldbudget", "record", str(budget), "-o", str(record), "--operator",
                    "bench"], check=True, capture_output=True, cwd=folder)
    return {"measurement": folder / MEASUREMENT.name, "budget": budget, "record": record}


def _commands(f: dict[str, Path], out: Path) -> dict[str, list[str]]:
    return {
        "larmor": ["larmor", "42.576", "MHz"],
        "evaluate": ["evaluate", str(f["budget"])],
        "nmr": ["nmr", str(f["measurement"])],
        "verify": ["verify", str(f["record"])],
        "compare": ["compare", str(f["record"]), "--codata", "2018"],
        "report --to html": ["report", str(f["record"]), "--to", "html", "-o", str(out / "r.html"), "--force"],
        "report --to md": ["report", str(f["record"]), "--to", "md", "-o", str(out / "r.md"), "--force"],
        "--help": ["--help"],
    }


def _time(argv: list[str], env: dict, cwd: Path) -> float:
    # cwd outside the work tree: `python -m` puts the current folder first on sys.path, and another
    # install's interpreter would otherwise import this checkout's package
    t0 = time.perf_counter()
    done = subprocess.run(argv, check=False, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env, cwd=cwd)
    took = time.perf_counter() - t0
    if done.returncode != 0:
        raise SystemExit(f"bench_startup: {' '.join(argv)} failed: {done.stderr.decode(errors='replace')[-300:]}")
    return took


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rounds", type=int, default=7)
    ap.add_argument("--python", action="append", default=None,
                    help="an interpreter whose fieldbudget is timed (repeat to interleave several installs; "
                         "default this one)")
    args = ap.parse_args()
    pythons = args.python or [sys.executable]
    env = dict(os.environ, PYTHONDONTWRITEBYTECODE="1")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        fixtures = _fixtures(pythons[0], folder)
        commands = _commands(fixtures, folder)
        times = {py: {"baseline": [], **{k: [] for k in commands}} for py in pythons}
        for py in pythons:
            _time([py, "-c", "import numpy, scipy.stats"], env, folder)  # warm the file cache once
            _time([py, "-c", "import compileall, pathlib, fieldbudget; "
                   "compileall.compile_dir(pathlib.Path(fieldbudget.__file__).parent, quiet=1)"], env, folder)
        for _ in range(args.rounds):
            for py in pythons:
                times[py]["baseline"].append(_time([py, "-c", "import numpy, scipy.stats"], env, folder))
                for name, argv in commands.items():
                    times[py][name].append(_time([py, "-m", "fieldbudget", *argv], env, folder))
    for py in pythons:
        base = statistics.median(times[py]["baseline"])
        print(f"python: {py}; {args.rounds} interleaved rounds, medians")
        print(f"baseline `python -c \"import numpy, scipy.stats\"`: {base * 1e3:.0f} ms")
        for name in commands:
            med = statistics.median(times[py][name])
            print(f"  fieldbudget {name:<18} {med * 1e3:6.0f} ms   ratio {med / base:4.2f}  (goal <= 1.3)")


if __name__ == "__main__":
    main()
