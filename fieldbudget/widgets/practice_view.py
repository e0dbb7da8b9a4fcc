"""The trainee's view of a practice case: the guided form, the verdict, and the comparison after submitting.

A thin view over :class:`~fieldbudget.procedure.practice.PracticeSession`:
the guided form is the ordinary :class:`ProcedureView` over the session's
run (the practice readings fixed, each decision a box); above it the case's
story and the trainee's progress; below it the choice whether to issue the
value, **Submit**, and, only after submitting, the differences explained
and the two budgets side by side.  A printable summary and the practice
record are saved from the bar under the result.

Stable CSS classes: ``fb-practice`` (the whole view), ``fb-practice-story``,
``fb-practice-progress``, ``fb-practice-issue``, ``fb-practice-submit``,
``fb-practice-msg``, ``fb-practice-result`` (empty until submitted; the
table inside is ``fb-practice-side-by-side``, a differing row
``fb-practice-differs``, each explanation ``fb-practice-difference``),
``fb-practice-save`` (the path box and the two save buttons).
"""

from __future__ import annotations

import os
from pathlib import Path

import ipywidgets as w

from .._display import escape
from ..errors import FieldbudgetError
from ..procedure import load_procedure
from ..procedure.practice import PracticeSession
from ._binding import css, guarded, status_html
from ._style import style_widget
from .procedure_view import ProcedureView

__all__ = ["PracticeView", "practice_app"]

_ISSUE = {"issue the value": True, "do not issue the value": False}


class PracticeView:
    """The practice screen for one :class:`PracticeSession`; ``view.widget`` is what the notebook shows."""

    def __init__(self, session: PracticeSession) -> None:
        self.session = session
        case = session.case
        self.story = css(w.HTML(
            f"<h3>Practice: {escape(case.title)}</h3><p><em>{escape(case.invented)}</em></p>"
            f"<p>{escape(case.story)}</p><p>Make each decision in its step, then say whether the value may be "
            "issued and press <strong>Submit</strong>. The reference answer stays hidden until then.</p>"),
            "fb-practice-story")
        self.progress = css(w.HTML(), "fb-practice-progress")
        self.form = ProcedureView(session.run, trials=20_000)
        self.issue = css(w.RadioButtons(options=list(_ISSUE), value=None, description="Your verdict:",
                                        layout=w.Layout(width="auto")), "fb-practice-issue")
        self.submit_button = css(w.Button(description="Submit", icon="check", button_style="primary"),
                                 "fb-practice-submit")
        self.message = css(w.HTML(), "fb-practice-msg")
        self.status = self.message  # where @guarded callbacks put their message
        self.result = css(w.HTML(), "fb-practice-result")
        self.path = w.Text(value=f"{case.id}.practice.json", description="Save as:", layout=w.Layout(width="28em"))
        self.save_record_button = css(w.Button(description="Save practice record", icon="save"),
                                      "fb-practice-save-record")
        self.save_summary_button = css(w.Button(description="Save printable summary", icon="print"),
                                       "fb-practice-save-summary")
        self.save = css(w.VBox([self.path, w.HBox([self.save_record_button, self.save_summary_button])]),
                        "fb-practice-save")
        self.save.layout.display = "none"
        self.issue.observe(self._issue, names="value")
        self.submit_button.on_click(self._submit)
        self.save_record_button.on_click(self._save_record)
        self.save_summary_button.on_click(self._save_summary)
        self.widget = css(w.VBox([style_widget(), self.story, self.progress, self.form.widget,
                                  css(w.VBox([w.HTML("<h4>Your verdict and submission</h4>"), self.issue,
                                              self.submit_button, self.message]), "fb-practice-submit-box"),
                                  self.result, self.save]), "fb-practice")
        self._unsubscribe = session.run.subscribe(lambda _run: self.render())
        self.render()

    # ------------------------------------------------------------ callbacks (thin)
    @guarded
    def _issue(self, change) -> None:
        if change["new"] is not None:
            self.session.decide_issue(_ISSUE[change["new"]])
        self.render()

    @guarded
    def _submit(self, _button=None) -> None:
        self.session.submit()
        self.message.value = ""
        self.render()

    @guarded
    def _write(self, what: str) -> None:
        from ..files.competence_record import make_practice_record, save_document
        from ..files.guard import check_output

        result = self.session.result
        path = Path(self.path.value.strip() or f"{self.session.case.id}.practice.json")
        if what == "record":
            out = save_document(make_practice_record(result), path)
        else:
            from ..files.atomic import atomic_write_text

            target = path.with_suffix(".html") if path.suffix == ".json" else path
            out = atomic_write_text(check_output(target, what="summary"), result.summary_html())
        self.message.value = status_html(f"Saved {out}", "ok")

    def _save_record(self, _button=None) -> None:
        self._write("record")

    def _save_summary(self, _button=None) -> None:
        self._write("summary")

    # ------------------------------------------------------------ rendering
    def render(self) -> None:
        s = self.session
        self.progress.value = f"<p>{escape(s.progress_text())}</p>"
        done = s.submitted
        self.submit_button.disabled = done
        self.issue.disabled = done
        if done:
            self.result.value = s.result._repr_html_()
            self.save.layout.display = None
        else:
            self.result.value = ""

    def _repr_mimebundle_(self, **kwargs):
        return self.widget._repr_mimebundle_(**kwargs)

    def close(self) -> None:
        self._unsubscribe()
        self.form.close()
        self.widget.close()

    def __repr__(self) -> str:
        return f"<PracticeView over {self.session!r}>"


def practice_app(path: str | os.PathLike, case: str, *, trainee: str = "") -> PracticeView | w.HTML:
    """Build the practice screen for case ``case`` of a procedure file: the one call a practice notebook makes.

    Returns the :class:`PracticeView`, or an ``HTML`` widget (CSS class
    ``fb-proc-error``) with the one-line message when the file or the case
    cannot be used.
    """
    try:
        return PracticeView(PracticeSession(load_procedure(path), case, trainee=trainee))
    except FieldbudgetError as err:
        return css(w.HTML(status_html(f"The practice case cannot be shown: {err}")), "fb-proc-error")
