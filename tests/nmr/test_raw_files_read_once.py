"""A CSV file a measurement file names (drift log, trace, field map) is read from disk once, and the digest
the budget records is the SHA-256 of exactly those bytes (a byte-order mark included).

Independent check: hashlib's SHA-256 of the file (FIPS 180-4).  Invented data only.
"""

from __future__ import annotations

import hashlib
import pathlib

import numpy as np
import pytest

from fieldbudget.nmr import NMRMeasurement

F0 = 42576395.0
BOM = "\ufeff"


@pytest.fixture
def reads(monkeypatch):
    """Counts Path.read_bytes calls by file name."""
    counts: dict[str, int] = {}
    original = pathlib.Path.read_bytes

    def counting(self):
        counts[self.name] = counts.get(self.name, 0) + 1
        return original(self)

    monkeypatch.setattr(pathlib.Path, "read_bytes", counting)
    return counts


def _sha(path) -> str:
    return "sha256:" + hashlib.sha256(path.read_bytes()).hexdigest()


def test_drift_log_is_read_once(tmp_path, reads):
    rows = "".join(f"{i * 10.0},{F0 + 0.01 * ((-1) ** i)}\n" for i in range(12))
    (tmp_path / "drift.csv").write_text(BOM + "t_s,f_Hz\n" + rows, encoding="utf-8")
    d = {"frequency": {"value_Hz": F0, "u_Hz": 0.01}, "sample": {"temperature_C": 25.0},
         "drift": {"log_csv": {"path": "drift.csv", "time_column": "t_s", "column": "f_Hz"}}}
    r = NMRMeasurement.from_dict(d, base_dir=tmp_path).evaluate()
    assert "y_drift" in r.budget.symbols
    assert reads["drift.csv"] == 1


def test_trace_is_read_once_and_its_digest_is_of_those_bytes(tmp_path, reads):
    rng = np.random.default_rng(3)
    f = np.linspace(F0 - 40, F0 + 40, 201)
    y = 1.0 / (1 + ((f - F0) / 4.0) ** 2) + rng.normal(0, 0.01, f.size)
    path = tmp_path / "sweep.csv"
    path.write_text(BOM + "f_Hz,signal\n" + "".join(f"{a:.4f},{b:.6f}\n" for a, b in zip(f, y)), encoding="utf-8")
    d = {"frequency": {"value_Hz": F0, "u_Hz": 0.01}, "sample": {"temperature_C": 25.0},
         "line": {"trace_csv": "sweep.csv"}}
    r = NMRMeasurement.from_dict(d, base_dir=tmp_path).evaluate()
    assert reads["sweep.csv"] == 1
    assert _sha(path) in r.budget.input("d_line").source


def test_field_map_is_read_once_and_its_digest_is_of_those_bytes(tmp_path, reads):
    g = np.linspace(-0.01, 0.01, 4)
    x, yy, z = (a.ravel() for a in np.meshgrid(g, g, g, indexing="ij"))
    b = 1.0 + 2e-4 * x + 5e-4 * z
    path = tmp_path / "map.csv"
    path.write_text(BOM + "x_m,y_m,z_m,B_T\n" + "".join(f"{a:.6f},{c:.6f},{e:.6f},{v:.12f}\n"
                                                          for a, c, e, v in zip(x, yy, z, b)), encoding="utf-8")
    d = {"frequency": {"value_Hz": F0, "u_Hz": 1e-4}, "sample": {"temperature_C": 25.0},
         "field_map": {"path": "map.csv", "sample_position_m": [0.001, 0.0, 0.002], "order": 1}}
    r = NMRMeasurement.from_dict(d, base_dir=tmp_path).evaluate()
    assert reads["map.csv"] == 1
    assert any(_sha(path) in q.source for q in r.budget.inputs)
