"""Write the demo's raw-data examples: a swept absorption line, an I + iQ FID and a field map (fixed seed).

INVENTED DATA FOR THE FIELDBUDGET DEMO.  The Larkspur Magnetics Calibration
Laboratory, electromagnet EM-250 s/n EM-0417, the swept-line probe DEMO-SW1
s/n DSW-0042, the pulsed probe DEMO-FP1 s/n DFP-0107 and the mapping stage
DEMO-MS2 s/n DMS-0031 are fictional; the numbers are drawn from the models
below with numpy's PCG64 generator, seed 20261118.  Run from anywhere::

    python examples/data/make_rawdata_examples.py
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).parent
SEED = 20261118
NOTE = "# INVENTED DATA FOR THE FIELDBUDGET DEMO (fictional Larkspur Magnetics Calibration Laboratory)"

F0_HZ = 42576412.21      # the line centre the counter readings of 2026-11-18 point to
FWHM_HZ = 8.0            # a lightly doped water sphere
REFERENCE_HZ = 42576000.0


def swept_line(rng: np.random.Generator) -> None:
    f = F0_HZ - 0.6 + np.linspace(-40.0, 40.0, 2001)      # 10 FWHM swept, 25 points per FWHM
    q = (f - F0_HZ) / (FWHM_HZ / 2)
    signal = 1.0 / (1 + q * q) + 0.012 + rng.normal(0.0, 1.0 / 60, f.size)   # H/sigma = 60
    lines = [NOTE, "# swept absorption line, probe DEMO-SW1 s/n DSW-0042, EM-250 s/n EM-0417 at 112.5 A,"
             " lock-in output in V", "f_Hz,signal"]
    lines += [f"{a:.4f},{b:.6f}" for a, b in zip(f, signal)]
    (HERE / "line-absorption-2026-11-18.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


def fid(rng: np.random.Generator) -> None:
    dt, n, t_dead = 50e-6, 8192, 0.5e-3
    t = t_dead + dt * np.arange(n)
    t2 = 1.0 / (np.pi * FWHM_HZ)
    s = 0.8 * np.exp(-t / t2) * np.exp(1j * (2 * np.pi * (F0_HZ - REFERENCE_HZ) * t + 0.9))
    noise = (rng.normal(0.0, 1.0, n) + 1j * rng.normal(0.0, 1.0, n)) * (0.8 / 30) / np.sqrt(2)   # A/sigma = 30
    s = s + noise
    lines = [NOTE, f"# free-induction decay (I + iQ) after mixing with {REFERENCE_HZ:.1f} Hz, probe DEMO-FP1 s/n "
             "DFP-0107, EM-250 s/n EM-0417 at 112.5 A, digitiser in V", "t_s,signal,signal_im"]
    lines += [f"{a:.7f},{b.real:.6f},{b.imag:.6f}" for a, b in zip(t, s)]
    (HERE / "fid-2026-11-18.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


def field_map(rng: np.random.Generator) -> None:
    # the gap centre is the origin; z along the field; a cylinder of points, radius and half-length 20 mm
    pts = []
    for z in np.linspace(-0.02, 0.02, 9):
        pts.append((0.0, 0.0, z))
        for rho in (0.005, 0.01, 0.015, 0.02):
            for phi in np.linspace(0, 2 * np.pi, 12, endpoint=False):
                pts.append((rho * np.cos(phi), rho * np.sin(phi), z))
    x, y, z = np.array(pts).T
    rho2 = x * x + y * y
    b = (0.99999870 + 1.2e-5 * x - 0.8e-5 * y + 2.0e-4 * z
         + 0.45 * (z * z - rho2 / 2) + 0.03 * (x * x - y * y) + 0.02 * x * z
         - 260.0 * (z ** 4 - 3 * rho2 * z * z + 3 / 8 * rho2 * rho2))   # harmonic terms up to order 4
    gamma = 42.57638543e6   # shielded proton, CODATA 2022, Hz/T
    u_f = 0.05
    f = b * gamma + rng.normal(0.0, u_f, b.size)
    lines = [NOTE, "# field map of EM-250 s/n EM-0417 at 112.5 A, mapping stage DEMO-MS2 s/n DMS-0031 with probe "
             "PX-3 s/n PX3-2291; positions about the gap centre", "x_m,y_m,z_m,f_Hz,u_f_Hz"]
    lines += [f"{a:.8f},{c:.8f},{d:.8f},{e:.4f},{u_f}" for a, c, d, e in zip(x, y, z, f)]
    (HERE / "fieldmap-EM-0417-2026-11-17.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


if __name__ == "__main__":
    rng = np.random.default_rng(SEED)
    swept_line(rng)
    fid(rng)
    field_map(rng)
