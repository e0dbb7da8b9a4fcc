"""One-call builders for the notebook templates: the whole form in one cell.

>>> from fieldbudget.widgets import app
>>> app(nmr="measurement.json")            # doctest: +SKIP
>>> app(budget="budget.json")              # doctest: +SKIP

Each call builds fresh drafts and views; building a new app over the same
draft object closes the one built before it, so re-running a cell does not
leave two live forms fighting over one draft.
"""

from __future__ import annotations

import os
import weakref
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import ipywidgets as w

from .._display import escape
from ..drafts.budget_draft import BudgetDraft
from ..drafts.mc_job import MonteCarloJob
from ..drafts.nmr_draft import NMRDraft
from ._binding import css
from ._style import style_widget
from .budget_view import BudgetView
from .export_bar import ExportBar
from .input_editor import InputEditor
from .montecarlo_panel import MonteCarloPanel
from .nmr_form import NMRForm

__all__ = ["App", "app", "budget_app", "calibration_app", "nmr_app"]

_LIVE: weakref.WeakValueDictionary[int, App] = weakref.WeakValueDictionary()


class App(w.VBox):
    """The form, the live budget, the Monte Carlo panel and the export bar over one draft.

    Attributes ``draft``, ``form``, ``view``, ``monte_carlo`` and ``export`` give
    the parts (``monte_carlo`` and ``export`` may be ``None``).
    """

    def __init__(self, draft: Any, form: w.Widget, *, title: str = "", monte_carlo: bool = True,
                 export: bool = True, trials: int = 1_000_000, seed: int = 1, folder: str | os.PathLike = ".",
                 **kwargs) -> None:
        super().__init__(**kwargs)
        old = _LIVE.get(id(draft))
        if old is not None and old is not self:
            old.close()
        self.draft = draft
        self.form = form
        self.view = BudgetView(draft)
        self.monte_carlo = MonteCarloPanel(draft, MonteCarloJob(trials=trials, seed=seed)) if monte_carlo else None
        self.export = ExportBar(draft, folder=folder, job=self.monte_carlo.job if self.monte_carlo else None) \
            if export else None
        head = [style_widget()] + ([w.HTML(f"<h3>{escape(title)}</h3>")] if title else [])
        parts = [*head, css(w.VBox([w.HTML("<h4>Inputs</h4>"), form]), "fb-app-inputs"),
                 css(w.VBox([w.HTML("<h4>Result and its budget</h4>"), self.view]), "fb-app-budget")]
        if self.monte_carlo is not None:
            parts.append(css(w.VBox([w.HTML("<h4>Monte Carlo check (JCGM 101)</h4>"), self.monte_carlo]),
                             "fb-app-mc"))
        if self.export is not None:
            parts.append(css(w.VBox([w.HTML("<h4>Save</h4>"), self.export]), "fb-app-export"))
        self.children = parts
        css(self, "fb-app")
        _LIVE[id(draft)] = self

    def close(self) -> None:
        for part in (self.form, self.view, self.monte_carlo, self.export):
            if part is not None:
                part.close()
        super().close()

    def __repr__(self) -> str:
        return f"<App over {self.draft!r}>"


def _load(source: Any) -> tuple[Any, Path | None]:
    if isinstance(source, (str, os.PathLike)):
        p = Path(source)
        from .._io import read_json_file

        return read_json_file(p), p.parent
    return source, None


def budget_app(budget: Any = None, *, title: str = "", **kwargs) -> App:
    """An app over a budget: an engine ``Budget``, a budget-file dict or path, a ``BudgetDraft``, or nothing."""
    if isinstance(budget, BudgetDraft):
        draft = budget
    elif budget is None:
        draft = BudgetDraft(model="x1", measurand="y", rows=[{"symbol": "x1", "uncertainty": "1"}])
    else:
        data, _ = _load(budget)
        if isinstance(data, Mapping):
            from ..engine import Budget

            data = Budget.from_dict(data, where=str(budget) if isinstance(budget, (str, os.PathLike)) else "budget")
        draft = BudgetDraft.from_budget(data)
    return App(draft, InputEditor(draft), title=title or draft.options.get("title", ""), **kwargs)


def nmr_app(measurement: Any = None, *, title: str = "", **kwargs) -> App:
    """An app over an NMR measurement: a description dict or file path, or an ``NMRDraft``."""
    if isinstance(measurement, NMRDraft):
        draft = measurement
    else:
        data, base = _load(measurement or {})
        draft = NMRDraft(data, base_dir=base or ".")
    return App(draft, NMRForm(draft), title=title or str(draft.base.get("title", "")), **kwargs)


def calibration_app(points: Any = (), settings: Any = None, *, title: str = "", **kwargs) -> App:
    """An app over a calibration: points and settings (see :class:`CalibrationDraft`), or a draft."""
    from ..drafts.calibration_draft import CalibrationDraft
    from .calibration_form import CalibrationForm

    draft = points if isinstance(points, CalibrationDraft) else CalibrationDraft(points, settings)
    return App(draft, CalibrationForm(draft), title=title or draft.settings["instrument"].text, **kwargs)


def app(budget: Any = None, *, nmr: Any = None, title: str = "", **kwargs) -> App:
    """The whole form in one call: ``app(nmr=...)`` for an NMR measurement, else ``app(budget)``.

    Keyword arguments go to :class:`App` (``monte_carlo``, ``export``, ``trials``, ``seed``, ``folder``).
    """
    if nmr is not None:
        return nmr_app(nmr, title=title, **kwargs)
    return budget_app(budget, title=title, **kwargs)
