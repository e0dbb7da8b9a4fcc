"""An NMR measurement description for the draft, widget and browser tests.

Invented data (a demo lab's electromagnet at about 1 T, a water-cylinder
proton probe); the values are plausible but belong to no real instrument.
"""

import copy

_DESCRIPTION = {
    "format": "fieldbudget-nmr/1",
    "title": "Reference field, test magnet TM-1 (invented)",
    "nucleus": "shielded-proton",
    "codata": 2022,
    "frequency": {"readings_Hz": [42576395.12, 42576395.31, 42576395.18, 42576395.02, 42576395.22,
                                  42576395.40, 42576395.09, 42576395.27],
                  "counter_resolution_Hz": 0.01, "source": "counter CT-9 s/n 30118 (invented)"},
    "timebase": {"offset": 2.0e-10, "u": 5.0e-11,
                 "source": "rubidium standard RS-2 cert. 2026-114 (invented)"},
    "sample": {"shape": "cylinder", "axis": "parallel", "length_over_diameter": 2.0, "u_length_over_diameter": 0.01,
               "temperature_C": 22.5, "u_temperature_C": 0.3, "diameter_m": 0.004, "length_m": 0.008},
    # the observed line is as wide as this cylinder's susceptibility spread (about 130 Hz, 5-95 %) makes it
    "line": {"fwhm_Hz": 140.0, "natural_fwhm_Hz": 4.0, "snr": 80, "points_per_fwhm": 20},
    "probe_perturbation": {"value": 0.0, "u": 5.0e-9, "source": "probe DEMO-PX-3 characterisation (invented)"},
    "gradient_T_per_m": 1.0e-5, "u_gradient_T_per_m": 2.0e-6, "offset_m": 0.0, "u_offset_m": 5.0e-4,
    "probe": {"tuning_range_Hz": [1.0e7, 1.0e8], "name": "DEMO-PX-3", "serial": "PX3-2291"},
}


def nmr_description() -> dict:
    """A fresh copy (tests may change it)."""
    return copy.deepcopy(_DESCRIPTION)
