"""Export buttons: save the budget file, and write a report in each format the report layer offers.

The report formats are looked up at run time, so the bar offers only what
exists in this installation.  Buttons size to their labels (nothing is cut
off); an existing file is replaced only when the replace box is ticked.
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


def _record(budget: Any, job: Any, draft: Any = None, sign: Any = None) -> Any:
    """The record the bar saves or reports: as rich as the draft can make it.

    A guided procedure (``draft.make_record``) names its operator, procedure
    and acceptance results; an NMR form records its measurement description
    itself (with its physics warnings); anything else records the budget.
    ``sign`` (a key) signs the record.
    """
    from ..files.record import make_record

    mc = job.result if job is not None and job.state == "done" and job.budget is budget else None
    seed = mc.seed if mc is not None else None
    maker = getattr(draft, "make_record", None)
    if callable(maker):
        return maker(monte_carlo=mc, sign=sign) if sign is not None else maker(monte_carlo=mc)
    m = getattr(draft, "measurement", None)
    if m is not None and callable(getattr(m, "to_dict", None)) and getattr(m, "to_budget", None) is not None:
        from ..files.measurement_record import make_measurement_record

        return make_measurement_record(m.to_dict(), where=getattr(m, "where", "measurement"),
                                       base_dir=getattr(m, "base_dir", "."), monte_carlo=mc, sign=sign)
    return make_record(budget, monte_carlo=mc, seed=seed, sign=sign)


class ExportBar(w.VBox):
    """Save the draft's last good budget as a budget file, or write a report of its result.

    Parameters
    ----------
    draft
        Anything with ``budget`` and ``result``; an NMR draft may also offer
        ``save_measurement(path)``.
    folder : str or Path
        Where files go when a bare name is given (the notebook's folder by default).
    sign : SigningKey, optional
        Sign the records (and the records behind reports) with this key
        (:func:`fieldbudget.files.signing.load_signing_key`).

    A record is never overwritten; an existing report or budget file only
    when "replace existing files" is ticked.
    """

    def __init__(self, draft: Any, folder: str | os.PathLike = ".", stem: str = "budget", job: Any = None,
                 sign: Any = None, **kwargs) -> None:
        super().__init__(**kwargs)
        self.draft = draft
        self.job = job
        self.sign = sign
        self.folder = Path(folder)
        self.status = css(w.HTML(), "fb-status")
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
        self.replace = css(w.Checkbox(value=False, description="replace existing files (never a record)",
                                      indent=False), "fb-export-replace")
        reports = w.HBox([self.report_format, self.report_button, self.record_button, self.replace])
        if not self.writers:
            reports.layout.display = "none"
        self.children = [w.HBox(row), reports, self.status]
        css(self, "fb-export-bar")

    def _target(self, suffix: str | None = None) -> Path:
        p = Path(self.path.value.strip() or "budget.json")
        if suffix is not None:
            p = p.with_suffix(suffix)
        return p if p.is_absolute() else self.folder / p

    def _allowed(self, path: Path, what: str) -> Path:
        from ..files.guard import check_output

        return check_output(path, force=bool(self.replace.value), what=what)

    def _done(self, path: Path) -> None:
        self.status.value = f'<div class="fb-status-ok">saved {escape(path)}</div>'

    @guarded
    def _save(self, _button=None) -> None:
        if self.draft.budget is None:
            self.status.value = status_html("nothing to save yet: no budget could be evaluated")
            return
        from ..files.budget_file import save_budget

        self._done(save_budget(self.draft.budget, self._allowed(self._target(), "budget file")))

    @guarded
    def _save_measurement(self, _button=None) -> None:
        self._done(self.draft.save_measurement(self._allowed(self._target(".measurement.json"), "measurement file")))

    @guarded
    def _report(self, _button=None) -> None:
        if self.draft.budget is None or not self.report_format.value:
            self.status.value = status_html("nothing to report yet: no budget could be evaluated")
            return
        from ..report import SUFFIXES, write_report

        fmt = self.report_format.value
        suffix = next(s for s, f in SUFFIXES.items() if f == fmt)
        target = self._allowed(self._target(suffix), "report")
        self._done(write_report(_record(self.draft.budget, self.job, self.draft, self.sign), target, to=fmt))

    @guarded
    def _save_record(self, _button=None) -> None:
        if self.draft.budget is None:
            self.status.value = status_html("nothing to record yet: no budget could be evaluated")
            return
        from ..files.guard import check_output
        from ..files.record import save_record

        target = check_output(self._target(".record.json"), force=True, what="record")
        if target.exists():
            self.status.value = status_html(f"{target} exists already: a record is never replaced; "
                                            "give another name")
            return
        self._done(save_record(_record(self.draft.budget, self.job, self.draft, self.sign), target))

    def __repr__(self) -> str:
        return f"<ExportBar {self.path.value!r}, reports: {', '.join(self.writers) or 'none'}>"
