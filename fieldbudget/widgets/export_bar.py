"""Export buttons: save the budget file, and write a report in each format the report layer offers.

The report formats are looked up at run time, so the bar offers only what
exists in this installation.  Buttons size to their labels (nothing is cut
off), and a file that already exists is overwritten only after a second click
on the same button, which the status line asks for.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import ipywidgets as w

from .._display import escape
from ._binding import css, guarded, status_html

__all__ = ["ExportBar", "report_writers"]


def report_writers() -> tuple[str, ...]:
    """Report formats this installation can write (empty when the report layer is missing)."""
    try:
        from ..files import record  # noqa: F401
        from ..report import FORMATS
    except ImportError:
        return ()
    return tuple(FORMATS)


def _record(budget: Any, job: Any) -> Any:
    from ..files.record import make_record

    mc = job.result if job is not None and job.state == "done" and job.budget is budget else None
    return make_record(budget, monte_carlo=mc, seed=mc.seed if mc is not None else None)


class ExportBar(w.VBox):
    """Save the draft's last good budget as a budget file, or write a report of its result.

    Parameters
    ----------
    draft
        Anything with ``budget`` and ``result``; an NMR draft may also offer
        ``save_measurement(path)``.
    folder : str or Path
        Where files go when a bare name is given (the notebook's folder by default).
    """

    def __init__(self, draft: Any, folder: str | os.PathLike = ".", stem: str = "budget", job: Any = None,
                 **kwargs) -> None:
        super().__init__(**kwargs)
        self.draft = draft
        self.job = job
        self.folder = Path(folder)
        self.status = css(w.HTML(), "fb-status")
        self._armed: tuple[str, Path] | None = None
        auto = {"layout": w.Layout(width="auto")}
        self.path = css(w.Text(value=f"{stem}.json", description="file name", continuous_update=False,
                               style={"description_width": "initial"},
                               layout=w.Layout(width=f"{max(24, 0.62 * len(stem) + 14):.0f}em")),
                        "fb-export-path")
        self.save_button = css(w.Button(description="save budget file", icon="save", **auto), "fb-export-budget")
        self.save_button.on_click(self._save)
        row = [self.path, self.save_button]
        if callable(getattr(draft, "save_measurement", None)):
            self.measurement_button = css(w.Button(description="save measurement file", icon="save", **auto),
                                          "fb-export-measurement")
            self.measurement_button.on_click(self._save_measurement)
            row.append(self.measurement_button)
        self.writers = report_writers()
        self.report_format = css(w.Dropdown(options=self.writers, description="report format",
                                            style={"description_width": "initial"},
                                            layout=w.Layout(width="16em")), "fb-export-format")
        self.report_button = css(w.Button(description="write report", icon="file", **auto), "fb-export-report")
        self.report_button.on_click(self._report)
        self.record_button = css(w.Button(description="save record", icon="archive", **auto,
                                          tooltip="hash-stamped record an assessor can re-check"), "fb-export-record")
        self.record_button.on_click(self._save_record)
        reports = w.HBox([self.report_format, self.report_button, self.record_button])
        if not self.writers:
            reports.layout.display = "none"
        self.children = [w.HBox(row), reports, self.status]
        css(self, "fb-export-bar")

    def _target(self, suffix: str | None = None) -> Path:
        p = Path(self.path.value.strip() or "budget.json")
        if suffix is not None:
            p = p.with_suffix(suffix)
        return p if p.is_absolute() else self.folder / p

    def _done(self, path: Path) -> None:
        self._armed = None
        self.status.value = f'<div class="fb-status-ok">saved {escape(path)}</div>'

    def _may_write(self, action: str, path: Path) -> bool:
        """False (and a question in the status line) the first time an existing file would be replaced."""
        if not path.exists() or self._armed == (action, path):
            return True
        self._armed = (action, path)
        self.status.value = status_html(f"{path} exists. Click the same button again to replace it, or change the "
                                        "file name.", "note")
        return False

    @guarded
    def _save(self, _button=None) -> None:
        if self.draft.budget is None:
            self.status.value = status_html("nothing to save yet: no budget could be evaluated")
            return
        from ..files.budget_file import save_budget

        target = self._target()
        if self._may_write("budget", target):
            self._done(save_budget(self.draft.budget, target))

    @guarded
    def _save_measurement(self, _button=None) -> None:
        target = self._target(".measurement.json")
        if self._may_write("measurement", target):
            self._done(self.draft.save_measurement(target))

    @guarded
    def _report(self, _button=None) -> None:
        if self.draft.budget is None or not self.report_format.value:
            self.status.value = status_html("nothing to report yet: no budget could be evaluated")
            return
        from ..report import SUFFIXES, write_report

        fmt = self.report_format.value
        suffix = next(s for s, f in SUFFIXES.items() if f == fmt)
        target = self._target(suffix)
        if self._may_write("report", target):
            self._done(write_report(_record(self.draft.budget, self.job), target, to=fmt))

    @guarded
    def _save_record(self, _button=None) -> None:
        if self.draft.budget is None:
            self.status.value = status_html("nothing to record yet: no budget could be evaluated")
            return
        from ..files.record import save_record

        target = self._target(".record.json")
        if self._may_write("record", target):
            self._done(save_record(_record(self.draft.budget, self.job), target))

    def __repr__(self) -> str:
        return f"<ExportBar {self.path.value!r}, reports: {', '.join(self.writers) or 'none'}>"
