"""Invented demo scenario for the calibration tests (not real data).

Lab: the invented "Harrowgate Field Standards Laboratory"; instrument: teslameter
HX-400, serial HX4-0193, calibrated against a proton NMR probe in an
electromagnet at five fields.  The reference budgets below are simplified NMR
budgets, B = f / (gamma'_p/2pi) * (1 + d_fs) * (1 + d_pert) * (1 + d_loc), with
the CODATA value, the frequency standard d_fs and the probe perturbation d_pert
shared by every point and the line-centre term d_loc point by point.
"""

from __future__ import annotations

from fieldbudget.constants import lookup
from fieldbudget.engine import Budget, InputQuantity, Measurand, Normal, Rectangular

GAMMA_KEY = "shielded proton gyromag. ratio in MHz/T"


def nmr_budget(field_t: float, u_loc: float = 2e-8) -> Budget:
    """A simplified NMR reference budget for a field near ``field_t`` (T)."""
    rv = lookup(GAMMA_KEY)
    f = field_t * rv.value  # MHz, so that B comes out as field_t
    return Budget(
        model="f / gp * (1 + d_fs) * (1 + d_pert) * (1 + d_loc)",
        inputs=(
            InputQuantity("f", f, Normal(u=f * 1e-9), unit="MHz", source="counter reading"),
            InputQuantity("gp", rv.value, Normal(u=rv.uncertainty), unit="MHz/T", reference=GAMMA_KEY,
                          source="CODATA 2022"),
            InputQuantity("d_fs", 0.0, Normal(u=5e-8), source="frequency standard certificate (invented)"),
            InputQuantity("d_pert", 0.0, Rectangular(half_width=2e-7), source="probe perturbation (invented)"),
            InputQuantity("d_loc", 0.0, Normal(u=u_loc), source="line centre"),
        ),
        measurand=Measurand("B", "T"),
    )
