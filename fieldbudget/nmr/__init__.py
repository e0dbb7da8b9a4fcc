"""NMR field measurements: physics helpers, probe nuclei, and the measurement -> budget builder.

Builds ordinary engine budgets (``fieldbudget.engine.Budget``) whose model
equation and inputs show every correction; the engine knows nothing of NMR.
"""

from __future__ import annotations

from . import physics
from .measurement import FILE_FORMAT, NMRMeasurement, NMRResult
from .nuclei import (
    DEFAULT_NUCLEUS,
    NUCLEUS_NAMES,
    LarmorConversion,
    Nucleus,
    gamma_hz_per_t,
    larmor_field,
    larmor_frequency,
    nucleus,
    nucleus_names,
)

__all__ = [
    "DEFAULT_NUCLEUS",
    "FILE_FORMAT",
    "NUCLEUS_NAMES",
    "LarmorConversion",
    "NMRMeasurement",
    "NMRResult",
    "Nucleus",
    "gamma_hz_per_t",
    "larmor_field",
    "larmor_frequency",
    "nucleus",
    "nucleus_names",
    "physics",
]
