"""Plain-Python state behind each form: what the user typed, parsed, and the budget built from it.

Nothing here imports ipywidgets, traitlets or matplotlib; every form in
:mod:`fieldbudget.widgets` is a thin view over one of these objects, and a
test can drive them without a browser.
"""

from __future__ import annotations

from .budget_draft import DISTRIBUTIONS, MEANINGS, ROW_KEYS, BudgetDraft, InputRow
from .calibration_draft import CalibrationDraft
from .field import Field, message_for
from .mc_job import MonteCarloJob
from .nmr_draft import NMRDraft

__all__ = [
           "DISTRIBUTIONS",
           "MEANINGS",
           "ROW_KEYS",
           "BudgetDraft",
           "CalibrationDraft",
           "Field",
           "InputRow",
           "MonteCarloJob",
           "NMRDraft",
           "message_for",
]
