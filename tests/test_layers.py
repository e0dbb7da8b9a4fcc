"""Layering: `import fieldbudget` and every layer below the widgets import no Jupyter or plotting package.

Run in a fresh interpreter so that nothing imported by other tests hides a lazy import.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

FORBIDDEN = ("ipywidgets", "IPython", "traitlets", "jupyterlab", "matplotlib")
PKG = Path(__file__).resolve().parents[1] / "fieldbudget"
BELOW_WIDGETS = ["fieldbudget", "fieldbudget.engine", "fieldbudget.constants", "fieldbudget.cli"] + [
    f"fieldbudget.{p.name}" for p in sorted(PKG.iterdir())
    if p.is_dir() and (p / "__init__.py").exists() and p.name in {"nmr", "calibration", "files", "report", "procedure",
                                                                   "drafts", "lab"}
]


@pytest.mark.parametrize("module", BELOW_WIDGETS)
def test_no_jupyter_or_matplotlib_below_widgets(module):
    code = (f"import importlib, sys; importlib.import_module({module!r}); "
            f"print(','.join(m for m in {FORBIDDEN!r} if m in sys.modules))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "", f"{module} imports {proc.stdout.strip()}"


def test_engine_and_constants_know_nothing_of_nmr():
    for layer in ("engine", "constants"):
        for f in (PKG / layer).rglob("*.py"):
            text = f.read_text()
            assert "fieldbudget.nmr" not in text and "from ..nmr" not in text and "from ...nmr" not in text, f


def test_import_linter_contracts():
    # the layer map of DEVELOPERS.md, as contracts in pyproject.toml
    root = Path(__file__).resolve().parents[1]
    exe = Path(sys.executable).with_name("lint-imports")
    proc = subprocess.run([str(exe)], capture_output=True, text=True, cwd=root)
    assert proc.returncode == 0, proc.stdout[-3000:]


HEAVY = ("scipy.stats", "scipy.optimize", "scipy.special", "scipy.integrate")


@pytest.mark.parametrize("module", ["fieldbudget.drafts.nmr_draft", "fieldbudget.nmr.measurement",
                                    "fieldbudget.nmr.fieldmap", "fieldbudget.nmr.linefit"])
def test_the_nmr_form_and_layer_import_no_scipy_submodule(module):
    # scipy's statistics, optimisers, special functions and quadrature are imported by the functions that use
    # them, so opening the NMR form does not wait for them; the form's field list loads every component
    code = (f"import importlib, sys; importlib.import_module({module!r}); "
            f"import fieldbudget.nmr.components as c; c.components(); "
            f"print(','.join(m for m in {HEAVY!r} if m in sys.modules))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "", f"{module} imports {proc.stdout.strip()}"
