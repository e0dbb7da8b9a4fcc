"""Build the demo laboratory's archive (examples/lab/archive) from invented measurements.

INVENTED FOR THE FIELDBUDGET DEMO: the Larkspur Magnetics Calibration
Laboratory, its staff, instruments, serial numbers, certificates and every
reading made here are fictional.

Twenty-four monthly measurements of check magnet CM-1 by proton NMR (the
check standard), each made with the reference probe PX-3 and then with the
second probe PX-5, and two reference-field measurements of electromagnet
EM-250, one of them with the spare probe PX-4 whose characterisation had
expired (accepted with a reason).  Each measurement names its counter's
timebase and its probe by register id; the values, the certificate and the
days since calibration come from the register.  Run it from anywhere:

    python examples/lab/build_demo_archive.py            # refuses to touch an existing archive
    python examples/lab/build_demo_archive.py --rebuild  # deletes examples/lab/archive first
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import stat
import sys
import tempfile
from pathlib import Path

from fieldbudget.constants import lookup
from fieldbudget.files.record import make_record, save_record
from fieldbudget.lab import LabFolder
from fieldbudget.lab.archive import Archive
from fieldbudget.lab.register import load_register, resolve_instruments
from fieldbudget.nmr.measurement import NMRMeasurement

LAB = Path(__file__).resolve().parent
LAB_NAME = "Larkspur Magnetics Calibration Laboratory (invented)"
OPERATORS = ("R. Okafor (invented)", "M. Lindqvist (invented)")
B_CHECK = 0.35  # T, nominal field of check magnet CM-1

# Deviation of the check magnet's field from 0.35 T in microtesla, month by month (invented).
# Months 1-12 are the baseline; month 14 is an outlier (probe not seated), and from month 16
# on the field stays above the centre line (nine in a row by month 24).
DEVIATIONS_uT = (0.3, -0.5, 0.1, 0.6, -0.2, -0.7, 0.4, -0.1, 0.5, -0.4, 0.2, -0.3,
                 -0.2, 2.3, -0.4, 0.3, 0.5, 0.2, 0.45, 0.35, 0.55, 0.25, 0.65, 0.4)
DAYS = ("2024-12-10", "2025-01-14", "2025-02-11", "2025-03-11", "2025-04-15", "2025-05-13", "2025-06-10",
        "2025-07-15", "2025-08-12", "2025-09-09", "2025-10-14", "2025-11-11", "2025-12-09", "2026-01-13",
        "2026-02-10", "2026-03-10", "2026-04-14", "2026-05-12", "2026-06-09", "2026-07-14", "2026-08-11",
        "2026-09-08", "2026-10-13", "2026-11-10")
WATER_C = (21.3, 20.8, 20.6, 21.0, 21.6, 22.1, 22.8, 23.4, 23.1, 22.5, 21.9, 21.2,
           20.7, 20.5, 20.9, 21.4, 21.8, 22.4, 23.0, 23.5, 23.2, 22.6, 21.8, 21.1)
# PX-5 reads the check magnet this many nanotesla above PX-3 (invented; in control, mean about -4 nT)
PX5_MINUS_PX3_nT = (4.0, 9.0, 1.0, 6.0, 12.0, 3.0, 7.0, -2.0, 5.0, 10.0, 2.0, 8.0,
                    6.0, 0.0, 14.0, 4.0, 11.0, -3.0, 7.0, 1.0, 13.0, 8.0, 2.0, 6.0)
# ten-reading pattern of the counter (Hz about the mean), the same shape each month
PATTERN_Hz = (0.021, -0.013, 0.008, -0.027, 0.016, -0.004, 0.011, -0.019, 0.003, 0.004)


def _gamma_hz_per_t() -> float:
    return lookup("shielded proton gyromag. ratio in MHz/T", edition=2022).value * 1e6


def check_magnet_description(i: int, probe: str = "PX-3") -> dict:
    b = B_CHECK + DEVIATIONS_uT[i] * 1e-6 + (PX5_MINUS_PX3_nT[i] * 1e-9 if probe == "PX-5" else 0.0)
    f0 = b * _gamma_hz_per_t()
    return {
        "format": "fieldbudget-nmr/1",
        "id": f"LMCL-CM1-{DAYS[i][:7]}" + ("-PX5" if probe == "PX-5" else ""),
        "title": "Check magnet CM-1 (DEMO-CM1 s/n CM1-0042), monthly check by proton NMR",
        "description": "INVENTED DATA FOR THE FIELDBUDGET DEMO.",
        "metadata": {
            "lab": LAB_NAME, "operator": OPERATORS[i % 2], "date": DAYS[i],
            "item": "check magnet DEMO-CM1 s/n CM1-0042", "instruments": ["CM-1", "TH-7"],
        },
        "nucleus": "shielded-proton",
        "codata": 2022,
        "frequency": {"readings_Hz": [round(f0 + p, 3) for p in PATTERN_Hz], "counter_resolution_Hz": 0.01,
                      "source": "counter FC-9 s/n FC9-30118, 10 readings, 1 s gate (invented)"},
        "timebase": {"instrument": "FC-9"},
        "sample": {"temperature_C": WATER_C[i], "u_temperature_C": 0.3, "shape": "sphere",
                   "source": "thermometer TH-7 s/n TH7-88120 (invented)"},
        "line": {"fwhm_Hz": 6.0, "snr": 40, "points_per_fwhm": 10},
        "gradient_T_per_m": 1.0e-3,
        "u_gradient_T_per_m": 2.0e-4,
        "offset_m": 0.0,
        "u_offset_m": 1.0e-4,
        "probe_perturbation": {"instrument": probe},
    }


def reference_field_description(day: str, probe: str, f0: float, reason: str | None) -> dict:
    pp: dict = {"instrument": probe}
    if reason:
        pp["accept_expired"] = reason
    return {
        "format": "fieldbudget-nmr/1",
        "id": f"LMCL-NMR-{day}-01",
        "title": "Reference field at the centre of electromagnet EM-250 s/n EM-0417, 112.5 A",
        "description": "INVENTED DATA FOR THE FIELDBUDGET DEMO.",
        "metadata": {"lab": LAB_NAME, "operator": OPERATORS[0], "date": day,
                     "item": "electromagnet EM-250 s/n EM-0417 at 112.5 A", "instruments": ["TH-7"]},
        "nucleus": "shielded-proton",
        "codata": 2022,
        "frequency": {"readings_Hz": [round(f0 + p, 3) for p in PATTERN_Hz], "counter_resolution_Hz": 0.01,
                      "source": "counter FC-9 s/n FC9-30118, 10 readings, 1 s gate (invented)"},
        "timebase": {"instrument": "FC-9"},
        "sample": {"temperature_C": 22.4, "u_temperature_C": 0.3, "shape": "sphere"},
        "line": {"fwhm_Hz": 8.0, "snr": 60, "points_per_fwhm": 10},
        "gradient_T_per_m": 2.0e-4,
        "u_gradient_T_per_m": 5.0e-5,
        "offset_m": 0.0,
        "u_offset_m": 2.0e-4,
        "probe_perturbation": pp,
    }


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rebuild", action="store_true", help="delete examples/lab/archive first")
    args = ap.parse_args()
    lab = LabFolder(LAB)
    if lab.archive_dir.exists():
        if not args.rebuild:
            print(f"{lab.archive_dir} exists; use --rebuild to make it again", file=sys.stderr)
            return 2
        for p in lab.archive_dir.rglob("*"):
            if p.is_file():
                os.chmod(p, stat.S_IWUSR | stat.S_IRUSR)
        shutil.rmtree(lab.archive_dir)
    register = load_register(lab)
    archive = Archive(lab)
    jobs = [(check_magnet_description(i, probe), DAYS[i]) for i in range(len(DAYS)) for probe in ("PX-3", "PX-5")]
    f_em = 1.0 * _gamma_hz_per_t() + 123.4
    jobs.insert(6, (reference_field_description("2025-06-18", "PX-3", f_em, None), "2025-06-18"))
    jobs.append((reference_field_description(
        "2026-07-21", "PX-4", f_em + 0.9, "PX-3 away for repair (job LMCL-R-2026-014); PX-4's characterisation "
        "of 2024 is the latest, its u of 2e-8 is kept and the result is marked for re-measurement with PX-3"),
        "2026-07-21"))
    jobs.sort(key=lambda j: j[1])  # stable: PX-3 before PX-5 on the same day
    example_dir = LAB / "measurements"
    with tempfile.TemporaryDirectory() as tmp:
        for n, (desc, day) in enumerate(jobs):
            resolved, notes = resolve_instruments(desc, register)
            m = NMRMeasurement.from_dict(resolved, where=desc["id"])
            remarks = "; ".join(f"{x.section}: {x.instrument} certificate {x.certificate} used after its due date "
                                f"{x.due}: {x.reason}" for x in notes if x.reason)
            rec = make_record(m.to_budget(), operator=desc["metadata"]["operator"], remarks=remarks,
                              created_utc=f"{day}T15:{10 + n % 40:02d}:00Z")
            path = save_record(rec, Path(tmp) / f"{desc['id']}.record.json")
            archive.add(path, added_by=desc["metadata"]["operator"], added_utc=f"{day}T16:00:00Z")
            if day in ("2026-11-10", "2026-07-21"):  # two descriptions kept as examples of the file
                (example_dir / f"{desc['id']}.json").write_text(json.dumps(desc, indent=2) + "\n", encoding="utf-8")
    print(archive.check().report())
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
