"""The demo scenario, headless: the NMR procedure run with the invented lab's data.

The fictional Larkspur Magnetics Calibration Laboratory measures the field of
its electromagnet DEMO-EM-250 s/n EM-0417 with proton probe DEMO-PX-3 s/n PX3-2291 and
counter DEMO-FC-9 s/n FC9-30118 (all invented).  Copies of the demo's inputs ship
inside the package (``data/demo/``: the NMR procedure file and the counter
readings), so ``fieldbudget demo`` works from an installed package too; a test
checks that they equal ``templates/nmr-reference-field.toml`` and the file in
``examples/data/``.  The data is invented for the demo.
"""

from __future__ import annotations

import csv
import io
from importlib import resources
from pathlib import Path

from .procedure import Procedure, load_procedure
from .run import ProcedureRun

__all__ = ["DEMO_ENTRIES", "DEMO_FILES", "demo_file", "demo_procedure", "demo_readings", "demo_run"]

DEMO_FILES = ("nmr-reference-field.toml", "counter-readings-2026-11-18.csv")

#: What the demo operator enters besides the counter readings (invented).
DEMO_ENTRIES = {
    "operator": "R. Okafor (invented)",
    "measurement_id": "LMCL-2026-1118-01 (invented)",
    "magnet_current": 112.5,
    "sample_temperature": 22.4,
    "gradient": 2.0e-4,
    "line_fwhm": 8.0,
    "line_snr": 60.0,
    "days_since_calibration": 106,
}


def demo_file(name: str) -> Path:
    """The path of one of :data:`DEMO_FILES` inside the installed package."""
    if name not in DEMO_FILES:
        raise KeyError(f"no demo file {name!r}; demo files: {', '.join(DEMO_FILES)}")
    return Path(str(resources.files(__package__).joinpath("data", "demo", name)))


def demo_procedure() -> Procedure:
    return load_procedure(demo_file("nmr-reference-field.toml"))


def demo_readings() -> tuple[float, ...]:
    """The counter readings of the demo (column ``frequency_Hz`` of the CSV), Hz."""
    text = demo_file("counter-readings-2026-11-18.csv").read_text("utf-8")
    return tuple(float(row["frequency_Hz"]) for row in csv.DictReader(io.StringIO(text)))


def demo_run(*, training: bool = False) -> ProcedureRun:
    """The NMR procedure with every demo value entered (ready to evaluate and check)."""
    entered = dict(DEMO_ENTRIES, frequency_readings=demo_readings())
    return ProcedureRun(demo_procedure(), training=training, entered=entered)
