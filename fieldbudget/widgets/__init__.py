"""ipywidgets forms over the drafts (needs the ``jupyter`` extra).

The only package of fieldbudget that imports ipywidgets.  Every view here is
thin: its callbacks read a widget's value, call one method of a plain-Python
draft (:mod:`fieldbudget.drafts`) and re-render from the draft's state.

Stable CSS classes for style sheets and the browser test: ``fb-app``,
``fb-input-editor``, ``fb-input-row``, ``fb-field`` and ``fb-field-<key>``,
``fb-msg`` (the message beside a field), ``fb-budget-view``,
``fb-budget-table`` (its ``td.fb-uc`` cell holds u_c), ``fb-chart``,
``fb-result``, ``fb-statement``, ``fb-mc-panel``, ``fb-mc-run``,
``fb-mc-cancel``, ``fb-mc-progress``, ``fb-mc-hist``, ``fb-mc-verdict``,
``fb-nmr-form``, ``fb-field-warning``, ``fb-export-bar``, ``fb-status``.
"""

from __future__ import annotations

from .app import App, app, budget_app, calibration_app, nmr_app
from .budget_view import BudgetView
from .calibration_form import CalibrationForm
from .export_bar import ExportBar
from .input_editor import InputEditor
from .montecarlo_panel import MonteCarloPanel
from .nmr_form import NMRForm

__all__ = ["App", "BudgetView", "CalibrationForm", "ExportBar", "InputEditor", "MonteCarloPanel", "NMRForm",
           "app", "budget_app", "calibration_app", "nmr_app"]
