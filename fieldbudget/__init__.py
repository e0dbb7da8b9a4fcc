"""fieldbudget: traceable NMR magnetic-field measurements and field-instrument
calibrations with GUM and Monte Carlo uncertainty budgets.

Importing this package never imports ipywidgets, matplotlib or JupyterLab; the
forms live in ``fieldbudget.widgets`` (the ``jupyter`` extra).
"""

from __future__ import annotations

__version__ = "0.1.0"

__all__ = ["__version__"]
