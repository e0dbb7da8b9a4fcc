"""Budgets for the record and report tests, set in an invented lab (Brackwater Field Standards
Laboratory; instruments and certificate numbers invented).  Reference values are looked up,
never retyped."""

from __future__ import annotations

from fieldbudget.constants import lookup

GAMMA = "shielded proton gyromag. ratio in MHz/T"


def nmr_budget(edition: int = 2022) -> dict:
    """B = f (1 + y_tb) / (gamma'_p/2pi * 1e6): an NMR field reading in budget-file form."""
    rv = lookup(GAMMA, edition=edition)
    return {
        "title": "Reference field of electromagnet EM-3 (invented example)",
        "model": "f * (1 + y_tb) / (gp * 1e6)",
        "measurand": {"symbol": "B", "unit": "T", "description": "flux density at the probe centre"},
        "inputs": {
            "f": {"value": 63871224.32, "u": 0.012, "unit": "Hz", "source": "counter CT-88 s/n 1190, 10 readings"},
            "y_tb": {"value": 1.2e-10, "u": 0.5e-10, "unit": "",
                     "source": "OCXO of CT-88, calibration certificate BFSL-F-2291",
                     "description": "fractional offset of the timebase"},
            "gp": {"value": rv.value, "u": rv.uncertainty, "unit": rv.unit, "reference": GAMMA,
                   "source": f"CODATA {edition}"},
        },
        "metadata": {"codata": edition, "kind": "nmr-field", "nucleus": "shielded-proton"},
    }


def mixed_budget() -> dict:
    """Every way of stating an uncertainty, one correlation and a Type A input (invented numbers)."""
    return {
        "title": "Coil constant of coil HC-12 (invented example)",
        "model": "(a + b * c) / d + e - r + t",
        "measurand": {"symbol": "K", "unit": "mT/A"},
        "inputs": {
            "a": {"value": 1.2, "u": 0.003, "unit": "mT/A", "source": "transfer probe cert. BFSL-H-771"},
            "b": {"value": 0.75, "expanded": 0.004, "k": 2.0, "unit": "mT/A", "source": "report BFSL-C-19, k = 2"},
            "c": {"value": 1.1, "half_width": 0.02, "distribution": "rectangular", "unit": "1",
                  "source": "spec. sheet"},
            "d": {"value": 0.98, "half_width": 0.01, "distribution": "triangular", "unit": "1",
                  "source": "judgement", "dof": 12},
            "e": {"value": 0.0, "half_width": 0.001, "distribution": "arcsine", "unit": "mT/A",
                  "source": "mains ripple"},
            "r": {"value": 0.01, "half_width": 0.002, "limit_uncertainty": 0.0005,
                  "distribution": "curvilinear_trapezoid", "unit": "mT/A", "source": "drift bound"},
            "t": {"readings": [0.0012, 0.0015, 0.0011, 0.0014, 0.0013, 0.0016], "unit": "mT/A",
                  "source": "six repeated readings"},
        },
        "correlations": [["a", "c", 0.3]],
    }
