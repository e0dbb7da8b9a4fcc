"""A Monte Carlo run in a background thread, so the kernel stays free for the Cancel click.

:class:`MonteCarloJob` wraps :func:`fieldbudget.engine.montecarlo.run`
(JCGM 101:2008) and, when it finishes, compares it with the GUM result
through :func:`fieldbudget.engine.validation.validate` (JCGM 101:2008, 8).
It holds only state: how far the run got, whether it was cancelled, the
result or the message.  Listeners are called from the worker thread.
"""

from __future__ import annotations

import threading
from collections.abc import Callable
from typing import Any

from ..errors import FieldbudgetError, InputError, MonteCarloCancelled
from .field import Field, Observable, message_for

__all__ = ["STATES", "MonteCarloJob"]

STATES = ("idle", "running", "done", "cancelled", "failed")


def _parse_trials(text: str, name: str) -> int:
    try:
        n = int(float(text.strip()))
    except ValueError:
        raise InputError(name, text, "a whole number of trials >= 1000") from None
    if n < 1000 or n != float(text.strip()):
        raise InputError(name, text, "a whole number of trials >= 1000")
    return n


def _parse_seed(text: str, name: str) -> int:
    try:
        n = int(text.strip())
    except ValueError:
        raise InputError(name, text, "a whole number >= 0") from None
    if n < 0:
        raise InputError(name, text, "a whole number >= 0")
    return n


class MonteCarloJob(Observable):
    """State of one Monte Carlo propagation at a time.

    Parameters
    ----------
    trials, seed : int
        Initial number of trials M and the seed of the random generator.

    Attributes
    ----------
    state : str
        One of :data:`STATES`.
    done, planned : int
        Trials done so far and planned (from the engine's progress callback).
    result, validation, gum
        The :class:`MonteCarloResult`, the :class:`ValidationResult` and the GUM
        result it was compared with, from the last run that finished.
    error : str or None
        The message of the last run that failed or was cancelled.
    """

    def __init__(self, trials: int = 1_000_000, seed: int = 1) -> None:
        self.trials = Field("trials", str(trials), _parse_trials)
        self.seed = Field("seed", str(seed), _parse_seed)
        self.state = "idle"
        self.done = 0
        self.planned = 0
        self.result: Any = None
        self.validation: Any = None
        self.gum: Any = None
        self.budget: Any = None  # the budget the last finished run propagated
        self.error: str | None = None
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None
        self._listeners: list[Callable[[MonteCarloJob], None]] = []
        self._lock = threading.Lock()

    def _notify(self) -> None:
        for fn in list(self._listeners):
            try:
                fn(self)
            except Exception:  # noqa: BLE001, S110 - a broken view must not kill the worker
                pass

    @property
    def running(self) -> bool:
        return self.state == "running"

    @property
    def fraction(self) -> float:
        return self.done / self.planned if self.planned else 0.0

    def start(self, budget: Any, gum: Any = None, *, background: bool = True) -> bool:
        """Run Monte Carlo on ``budget``; returns False (with ``error`` set) if it cannot start."""
        with self._lock:
            if self.running:
                return False
            if budget is None:
                self.error, self.state = "no budget to propagate yet (fix the messages above)", "failed"
                self._notify()
                return False
            if not (self.trials.ok and self.seed.ok):
                self.error, self.state = self.trials.error or self.seed.error, "failed"
                self._notify()
                return False
            self._stop.clear()
            self.state, self.error, self.done, self.planned = "running", None, 0, self.trials.value
        self._notify()
        args = (budget, gum, self.trials.value, self.seed.value)
        if background:
            self._thread = threading.Thread(target=self._work, args=args, daemon=True, name="fieldbudget-mc")
            self._thread.start()
        else:
            self._work(*args)
        return True

    def _progress(self, done: int, planned: int) -> None:
        self.done, self.planned = int(done), int(planned)
        self._notify()

    def _work(self, budget: Any, gum: Any, trials: int, seed: int) -> None:
        try:
            from ..engine import evaluate, montecarlo

            mc = montecarlo.run(budget, trials, seed, progress=self._progress, should_stop=self._stop.is_set)
            gum = gum if gum is not None else evaluate(budget)
            self.result, self.gum, self.validation, self.budget = mc, gum, None, budget
            try:
                from ..engine import validation
            except ImportError:  # an engine without the comparison still gives the Monte Carlo result
                validation = None
            if validation is not None:
                self.validation = validation.validate(gum, mc)
            self.state = "done"
        except MonteCarloCancelled as err:
            self.state, self.error = "cancelled", str(err)
        except FieldbudgetError as err:
            self.state, self.error = "failed", message_for(err)
        except Exception as err:  # noqa: BLE001 - shown, never raised into a thread nobody joins
            self.state, self.error = "failed", message_for(err)
        self._notify()

    def cancel(self) -> None:
        """Ask the run to stop after its current chunk."""
        self._stop.set()

    def wait(self, timeout: float | None = None) -> bool:
        """Wait for the worker; returns whether it has finished."""
        t = self._thread
        if t is not None:
            t.join(timeout)
            return not t.is_alive()
        return True

    def __repr__(self) -> str:
        return f"<MonteCarloJob {self.state}, {self.done}/{self.planned or self.trials.text} trials, seed {self.seed.text}>"
