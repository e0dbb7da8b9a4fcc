"""Monte Carlo propagation of distributions (JCGM 101:2008).

``run(budget, trials, seed)`` draws every input from its distribution
(``engine.sampling``, JCGM 101 6.4), evaluates the budget's model over all
trials (``Model.evaluate_many``), and summarises each output (JCGM 101 7.6,
7.7): the estimate is the mean of the M model values, the standard
uncertainty their standard deviation with divisor M - 1, and two coverage
intervals for coverage probability p:

- probabilistically symmetric: with the values sorted, q = int(p M + 1/2) and
  r = int((M - q + 1) / 2), the interval [y_(r), y_(r+q)] (7.7.2);
- shortest: [y_(r*), y_(r*+q)] with r* minimising y_(r+q) - y_(r) over
  r = 1 ... M - q (7.7.3).

With ``adaptive=True`` the trials run in stages of max(J, 10^4) (J the smallest
integer >= 100 / (1 - p)) until twice the standard deviation of the stage
averages of y, u(y) and of both ends of the probabilistically symmetric
interval is within the numerical tolerance delta of u(y) (JCGM 101 7.9.4,
delta from 7.9.2; see ``numerical_tolerance``).

Reproducibility.  Trials are grouped in fixed blocks of ``BLOCK_SIZE``; block
k draws from its own PCG64 stream seeded by
``numpy.random.SeedSequence(seed).spawn(...)[k]`` (that is
``SeedSequence(seed, spawn_key=(k,))``), inputs in the budget's order.  Chunks
(the unit of work that bounds memory) and worker threads only group whole
blocks, so for a given seed the numbers are bit-identical whatever the chunk
size or the number of workers.  Model values are kept (8 bytes per trial and
output); the draws are not, so memory is bounded by the chunk size.

Sampler versions.  ``SAMPLER`` numbers the way inputs are drawn, recorded
with every result (``sampler`` in ``to_dict``, from version 2 on):

- 1: every input is drawn, a zero-uncertainty one too (its draws are then
  multiplied by zero);
- 2 (current): an input with zero standard uncertainty takes no draws and
  holds its estimate, so the later inputs of a block take other numbers of
  the stream than under version 1.

``run(..., sampler=1)`` (or ``with sampler_version(1):``) repeats a version-1
run bit for bit; records made before versions existed are version 1.

Written by hand because the run loop, the streams per block and the
JCGM 101 summaries are the standard's procedure, not a library's; numpy does
the sampling and the arithmetic.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable
from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait
from dataclasses import dataclass, field

import numpy as np

from .. import _display
from ..errors import InputError, ModelEvaluationError, MonteCarloCancelled
from . import sampling
from ._versions import VersionSetting
from .distributions import Normal, TypeA

__all__ = [
    "SAMPLER", "SAMPLERS", "sampler_version",
    "ADAPTIVE_MAX_TRIALS",
    "BLOCK_SIZE",
    "DEFAULT_TRIALS",
    "GENERATOR",
    "MonteCarloResult",
    "MonteCarloVectorResult",
    "coverage_intervals",
    "numerical_tolerance",
    "run",
]

BLOCK_SIZE = 10_000
"""Trials per random-number stream; the unit that fixes reproducibility."""
DEFAULT_TRIALS = 1_000_000
"""JCGM 101:2008 7.2.1: M = 10^6 can often be expected to give a 95 % interval correct to one or two digits."""
ADAPTIVE_MAX_TRIALS = 10_000_000
"""Upper limit of the adaptive procedure unless ``max_trials`` says otherwise (keeps memory bounded)."""
DEFAULT_CHUNK = 100_000
HISTOGRAM_BINS = 100
GENERATOR = "PCG64"
#: How inputs are drawn (see the module docstring); recorded with each result.
SAMPLER = 2
SAMPLERS = (1, 2)
_SAMPLER = VersionSetting("sampler", SAMPLER, SAMPLERS, "Monte Carlo")
sampler_version = _SAMPLER.use
"""``with sampler_version(v):`` makes ``run`` draw with sampler ``v`` unless told otherwise (record checks)."""
_WHERE = "Monte Carlo"


# --------------------------------------------------------------------------- helpers
def numerical_tolerance(u: float, significant_digits: int = 2) -> float:
    """Numerical tolerance delta of a standard uncertainty (JCGM 101:2008 7.9.2).

    u is written as c x 10^l with c an integer of ``significant_digits``
    digits; delta = 10^l / 2.  E.g. u = 0.02 with one digit gives 0.005
    (the delta of JCGM 101 9.2, from memory), u = 1.234 with two digits 0.05.
    Units: those of u.
    """
    n = int(significant_digits)
    if n < 1:
        raise InputError("significant_digits", significant_digits, "an integer >= 1", _WHERE)
    u = abs(float(u))
    if not math.isfinite(u):
        raise InputError("standard uncertainty", u, "a finite number", "numerical tolerance")
    if u == 0.0:
        return 0.0
    ell = math.floor(math.log10(u)) - (n - 1)
    if round(u / 10.0**ell) >= 10**n:  # rounding carried into one more digit (e.g. 0.0996 -> 0.10)
        ell += 1
    return 0.5 * 10.0**ell


def _q_of(p: float, m: int) -> int:
    """q = p M if integer, else int(p M + 1/2) (JCGM 101 7.7.1); the same formula covers both."""
    return math.floor(p * m + 0.5 + 1e-9)


def coverage_intervals(values: np.ndarray, p: float, *, in_place: bool = False,
                       bins: int = HISTOGRAM_BINS) -> tuple[tuple[float, float], tuple[float, float], tuple]:
    """Probabilistically symmetric and shortest 100p % intervals (JCGM 101 7.7) and a histogram.

    Returns ``((low, high), (short_low, short_high), (counts, edges))``.  Only
    the two tails of the sorted values are needed (every interval end lies in
    the lowest or the highest M - q values when p >= 1/2), so the values are
    partitioned and just the tails sorted.  The histogram spans all but the
    extreme (M - q) / 20 values in each tail, so that a heavy tail does not
    flatten the plot.  ``in_place=True`` reorders ``values`` to save memory.
    """
    y = values if in_place else np.array(values, dtype=np.float64)
    m = y.size
    q = _q_of(p, m)
    if q < 1 or m - q < 1:
        raise InputError("trials", m, f"large enough that {p:g} x trials leaves at least one trial outside "
                         "the interval (JCGM 101 7.2.2: M much larger than 1/(1 - p))", _WHERE)
    tail = m - q
    if tail <= q:
        y.partition((tail - 1, q))
        y[:tail].sort()
        y[q:].sort()
    else:
        y.sort()
    low_idx = y[:tail]
    high_idx = y[q:]
    r = (m - q + 1) // 2                      # 1-based, JCGM 101 7.7.2
    symmetric = (float(y[r - 1]), float(y[r + q - 1]))
    widths = high_idx - low_idx               # interval [y_(r), y_(r+q)], r = 1 ... M - q
    rs = int(np.argmin(widths))
    shortest = (float(low_idx[rs]), float(high_idx[rs]))
    j = tail // 20
    lo, hi = float(y[j]), float(y[m - 1 - j])
    if not hi > lo:
        lo, hi = lo - 0.5, hi + 0.5 if lo == hi else hi
    counts, edges = np.histogram(y, bins=bins, range=(lo, hi))
    return symmetric, shortest, (tuple(int(c) for c in counts), tuple(float(e) for e in edges))


def _stream(seed: int, block: int) -> np.random.Generator:
    # Same as SeedSequence(seed).spawn(block + 1)[block], without spawning all earlier children.
    return np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed, spawn_key=(block,))))


# --------------------------------------------------------------------------- results
@dataclass(frozen=True)
class MonteCarloResult:
    """Monte Carlo result for one output (JCGM 101:2008 7.6, 7.7).

    ``estimate`` and ``standard_uncertainty`` in the output's unit;
    ``interval`` is the probabilistically symmetric coverage interval and
    ``shortest_interval`` the shortest one, both for ``coverage_probability``.
    ``seed``, ``generator``, ``numpy_version`` and ``block_size`` are what is
    needed to repeat the run bit for bit; ``evaluation`` says whether the model
    ran ``"vectorised"`` or ``"trial by trial"``.  ``histogram`` is
    ``(counts, edges)`` for plots.
    """

    estimate: float
    standard_uncertainty: float
    coverage_probability: float
    interval: tuple[float, float]
    shortest_interval: tuple[float, float]
    trials: int
    seed: int
    generator: str
    numpy_version: str
    evaluation: str
    adaptive: bool
    histogram: tuple[tuple[int, ...], tuple[float, ...]] = field(repr=False)
    block_size: int = BLOCK_SIZE
    output: str = "y"
    unit: str = ""
    stabilised: bool | None = None
    warnings: tuple[str, ...] = ()
    interval_se: tuple[float, float] | None = None
    shortest_interval_se: tuple[float, float] | None = None
    stages: int = 0
    skewness: float = 0.0
    excess_kurtosis: float = 0.0
    sampler: int = SAMPLER

    @property
    def interval_tolerance(self) -> tuple[float, float] | None:
        """2 s of each end of the symmetric interval: its numerical tolerance at about 95 % (JCGM 101 7.9.4)."""
        return None if self.interval_se is None else (2 * self.interval_se[0], 2 * self.interval_se[1])

    @property
    def coverage_interval(self) -> tuple[float, float]:
        """Alias of ``interval`` (the probabilistically symmetric one)."""
        return self.interval

    def to_dict(self) -> dict:
        counts, edges = self.histogram
        d = {
            "output": self.output,
            "unit": self.unit,
            "value": self.estimate,
            "u": self.standard_uncertainty,
            "coverage_probability": self.coverage_probability,
            "interval": [self.interval[0], self.interval[1]],
            "shortest_interval": [self.shortest_interval[0], self.shortest_interval[1]],
            "trials": self.trials,
            "seed": self.seed,
            "generator": self.generator,
            "numpy_version": self.numpy_version,
            "block_size": self.block_size,
            "evaluation": self.evaluation,
            "adaptive": self.adaptive,
            "stabilised": self.stabilised,
            "stages": self.stages,
            "interval_se": None if self.interval_se is None else list(self.interval_se),
            "shortest_interval_se": None if self.shortest_interval_se is None else list(self.shortest_interval_se),
            "skewness": self.skewness,
            "excess_kurtosis": self.excess_kurtosis,
            "histogram": {"counts": list(counts), "edges": list(edges)},
            "warnings": list(self.warnings),
        }
        if self.sampler != 1:  # version 1 wrote no key: its results keep the form they were recorded in
            d["sampler"] = self.sampler
        return d

    def _line(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        lo, hi = self.interval
        return (f"{self.output} = {_display.fmt(self.estimate, 10)}{unit}, u = "
                f"{_display.fmt(self.standard_uncertainty, 3)}{unit}, {self.coverage_probability * 100:g} % "
                f"[{_display.fmt(lo, 10)}, {_display.fmt(hi, 10)}]"
                f", M = {self.trials}, seed = {self.seed}")

    def __repr__(self) -> str:
        return f"MonteCarloResult({self._line()})"

    def _repr_html_(self) -> str:
        unit = self.unit
        rows = [
            ("estimate (mean)", _display.fmt(self.estimate, 10), unit),
            ("standard uncertainty", _display.fmt(self.standard_uncertainty, 3), unit),
            (f"{self.coverage_probability * 100:g} % interval, probabilistically symmetric",
             f"[{_display.fmt(self.interval[0], 10)}, {_display.fmt(self.interval[1], 10)}]", unit),
            (f"{self.coverage_probability * 100:g} % interval, shortest",
             f"[{_display.fmt(self.shortest_interval[0], 10)}, {_display.fmt(self.shortest_interval[1], 10)}]", unit),
            ("trials M", str(self.trials) + (" (adaptive)" if self.adaptive else ""), ""),
            ("seed", str(self.seed), ""),
            ("generator", f"{self.generator}, numpy {self.numpy_version}, blocks of {self.block_size}", ""),
            ("model evaluation", self.evaluation, ""),
        ]
        body = _display.html_table(("item", "value", "unit"), rows,
                                   caption=f"Monte Carlo (JCGM 101) for {self.output}")
        if self.warnings:
            body += "<ul>" + "".join(f"<li>{_display.escape(w)}</li>" for w in self.warnings) + "</ul>"
        return _display.html_block("Monte Carlo result", body)


@dataclass(frozen=True)
class MonteCarloVectorResult:
    """Monte Carlo results of a model with several outputs: one ``MonteCarloResult`` each.

    ``correlation`` is the sample correlation matrix of the outputs
    (JCGM 102:2011 7.5 generalises the summary to several outputs).
    """

    results: tuple[MonteCarloResult, ...]
    correlation: tuple[tuple[float, ...], ...]

    @property
    def outputs(self) -> tuple[str, ...]:
        return tuple(r.output for r in self.results)

    def __getitem__(self, key: int | str) -> MonteCarloResult:
        if isinstance(key, str):
            for r in self.results:
                if r.output == key:
                    return r
            raise KeyError(key)
        return self.results[key]

    def __len__(self) -> int:
        return len(self.results)

    @property
    def trials(self) -> int:
        return self.results[0].trials

    @property
    def seed(self) -> int:
        return self.results[0].seed

    def to_dict(self) -> dict:
        return {"outputs": [r.to_dict() for r in self.results],
                "correlation": [list(row) for row in self.correlation],
                "trials": self.trials, "seed": self.seed}

    def __repr__(self) -> str:
        return "MonteCarloVectorResult(" + "; ".join(r._line() for r in self.results) + ")"

    def _repr_html_(self) -> str:
        return "".join(r._repr_html_() for r in self.results)


# --------------------------------------------------------------------------- plan
@dataclass(frozen=True)
class _Group:
    """Correlated inputs drawn together: multivariate normal, or multivariate t when ``dof`` is finite."""

    index: tuple[int, ...]
    factor: np.ndarray          # L with L L^T = R over ``index``
    dof: float


@dataclass(frozen=True)
class _Plan:
    names: tuple[str, ...]
    estimates: tuple[float, ...]
    distributions: tuple
    groups: tuple[_Group, ...]
    grouped: frozenset[int]
    model: object
    outputs: tuple[str, ...]
    units: tuple[str, ...]
    held: frozenset[int] = frozenset()   # inputs that hold their estimate (sampler 2: zero uncertainty)
    sampler: int = SAMPLER


def _sampled_dof(d) -> float:
    return float(d.n - 1) if isinstance(d, TypeA) else float(d.dof)


def _plan(budget, sampler: int = SAMPLER) -> _Plan:
    inputs = tuple(budget.inputs)
    names = tuple(q.symbol for q in inputs)
    estimates = tuple(float(q.estimate) for q in inputs)
    dists = tuple(q.distribution for q in inputs)
    groups: list[_Group] = []
    if budget.has_correlations:
        R = np.asarray(budget.correlation_matrix(), dtype=float)
        from .gum import correlated_sets

        for idx in correlated_sets(R):           # connected sets of correlated inputs, in input order
            if len(idx) == 1:
                continue
            for i in idx:
                if not isinstance(dists[i], (Normal, TypeA)):
                    raise InputError(
                        "distribution", dists[i].describe(),
                        "normal (or readings) for an input correlated with others (JCGM 101 6.4.8: "
                        "correlated inputs are drawn as a multivariate normal)", f"input {names[i]!r}")
            dofs = {_sampled_dof(dists[i]) for i in idx}
            if len(dofs) > 1:
                listing = ", ".join(f"{names[i]}: {_sampled_dof(dists[i]):g}" for i in idx)
                raise InputError(
                    "degrees of freedom", listing,
                    "the same for all correlated inputs (infinite for a multivariate normal, JCGM 101 6.4.8; "
                    "one finite value for a multivariate t)", f"inputs {', '.join(repr(names[i]) for i in idx)}")
            groups.append(_Group(idx, sampling.correlation_factor(R[np.ix_(idx, idx)]), dofs.pop()))
    model = budget.model
    outputs = tuple(model.outputs)
    measurands = tuple(getattr(budget, "measurands", ()) or ())
    units = tuple(str(m.unit or "") for m in measurands) if len(measurands) == len(outputs) else ("",) * len(outputs)
    grouped = frozenset(i for g in groups for i in g.index)
    held = frozenset() if sampler == 1 else frozenset(
        i for i, d in enumerate(dists) if i not in grouped and d.standard_uncertainty == 0)
    return _Plan(names, estimates, dists, tuple(groups), grouped, model, outputs, units, held, sampler)


def _fill_chunk(plan: _Plan, seed: int, first_block: int, n_blocks: int, total: int,
                x: np.ndarray) -> int:
    """Draw the inputs of blocks ``first_block ...`` into ``x`` (n_inputs, >= n); return n trials.

    Per block, from that block's stream: one call sequence per input in input
    order (standard normals for a correlated input), then one chi-square draw
    per multivariate-t group; then each group is mixed elementwise,
    x = est + u (L z) [sqrt(nu / w)] (JCGM 101 6.4.8.4; 6.4.9 for the t form).
    """
    off = 0
    for b in range(first_block, first_block + n_blocks):
        n = min(BLOCK_SIZE, total - b * BLOCK_SIZE)
        if n <= 0:
            break
        rng = _stream(seed, b)
        for i, (d, est) in enumerate(zip(plan.distributions, plan.estimates)):
            row = x[i, off:off + n]
            if i in plan.held:
                row.fill(est)  # sampler 2: no draws for an input known exactly
            elif i in plan.grouped:
                sampling.draw_standard(rng, row)
            else:
                sampling.draw_into(d, est, rng, row)
        for g in plan.groups:
            scale = None
            if not math.isinf(g.dof):
                scale = np.sqrt(g.dof / rng.chisquare(g.dof, size=n))
            z = x[list(g.index), off:off + n].copy()
            for a, i in enumerate(g.index):
                row = x[i, off:off + n]
                np.multiply(z[0], g.factor[a, 0], out=row)
                for k in range(1, len(g.index)):
                    if g.factor[a, k] != 0.0:
                        row += g.factor[a, k] * z[k]
                if scale is not None:
                    row *= scale
                row *= plan.distributions[i].standard_uncertainty
                row += plan.estimates[i]
        off += n
    return off


def _evaluate_chunk(plan: _Plan, seed: int, first_block: int, n_blocks: int, total: int,
                    out: np.ndarray, start: int) -> str:
    x = np.empty((len(plan.names), n_blocks * BLOCK_SIZE), dtype=np.float64)
    n = _fill_chunk(plan, seed, first_block, n_blocks, total, x)
    values, how = plan.model.evaluate_many({nm: x[i, :n] for i, nm in enumerate(plan.names)})
    values = np.asarray(values, dtype=np.float64).reshape(len(plan.outputs), n)
    out[:, start:start + n] = values
    return how


# --------------------------------------------------------------------------- run
def run(budget, trials: int = DEFAULT_TRIALS, seed: int | None = None, *, adaptive: bool = False,
        coverage_probability: float | None = None, significant_digits: int = 2,
        chunk_size: int | None = None, progress: Callable[[int, int], object] | None = None,
        should_stop: Callable[[], bool] | None = None, workers: int = 1,
        max_trials: int | None = None,
        stop_when: Callable[[dict], bool] | None = None,
        sampler: int | None = None) -> MonteCarloResult | MonteCarloVectorResult:
    """Propagate the budget's input distributions through its model (JCGM 101:2008).

    Parameters
    ----------
    budget : Budget
        Inputs, correlations and model.  A model with several outputs is run
        for all of them at once and gives a :class:`MonteCarloVectorResult`.
    trials : int
        M, the number of trials (default 10^6, JCGM 101 7.2.1).  Ignored when
        ``adaptive``.
    seed : int, optional
        Seed of ``numpy.random.SeedSequence``; when omitted a fresh one (63 bits)
        is drawn from the operating system's entropy and recorded in the result.
    adaptive : bool
        Run the adaptive procedure of JCGM 101 7.9.4 instead of a fixed M.
    coverage_probability : float, optional
        p of the coverage intervals; default the budget's (else 0.95).
    significant_digits : int
        Digits of u(y) held meaningful, for the adaptive procedure's tolerance
        (JCGM 101 7.9.2).
    chunk_size : int, optional
        Trials evaluated at once (rounded up to whole blocks of ``BLOCK_SIZE``);
        bounds memory, never changes the numbers.
    progress : callable, optional
        ``progress(done, planned)`` between chunks (``planned`` may grow in the
        adaptive procedure).
    should_stop : callable, optional
        Polled between chunks; returning True raises
        :class:`~fieldbudget.errors.MonteCarloCancelled`.
    workers : int
        Threads evaluating chunks at the same time (numpy releases the GIL in
        its loops); never changes the numbers.
    max_trials : int, optional
        Upper limit of the adaptive procedure (default ``ADAPTIVE_MAX_TRIALS``).
    stop_when : callable, optional
        Adaptive only: a further condition for stopping, called after each
        stage once the results are stabilised with ``{"trials": M, "outputs":
        [{"estimate", "u", "interval", "interval_se"}, ...]}`` (the stage
        averages and the standard deviations of those averages, JCGM 101
        7.9.4 d); the run goes on while it returns False (used by
        :func:`fieldbudget.engine.validation.validate_adaptive` to run until
        the validation is decided).
    sampler : int, optional
        Sampler version (``SAMPLERS``; default the one set by
        :func:`sampler_version`, else ``SAMPLER``).  Version 1 repeats runs
        recorded before zero-uncertainty inputs stopped taking draws.

    Every result carries the standard errors of its interval ends
    (``interval_se``), from the spread of the ends over stages of
    max(J, 10^4) trials (the stages of JCGM 101 7.9.4; at least two stages
    are needed), and the skewness and excess kurtosis of the output values.
    """
    p = _coverage(budget, coverage_probability)
    workers = _positive_int("workers", workers)
    if chunk_size is None:
        chunk_blocks = max(1, DEFAULT_CHUNK // BLOCK_SIZE)
    else:
        chunk_blocks = max(1, -(-_positive_int("chunk_size", chunk_size) // BLOCK_SIZE))
    if seed is None:
        # 63 of the 128 bits of fresh OS entropy: enough to never repeat, and it fits a signed 64-bit
        # integer in JSON records and other tools.
        seed = int(np.random.SeedSequence().entropy) & (2**63 - 1)
    elif isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise InputError("seed", seed, "an integer >= 0", _WHERE)
    seed = int(seed)
    from .budget import Budget
    from .dimensions import prepare

    if isinstance(budget, Budget):
        budget, _ = prepare(budget)   # the same unit conversions as the GUM evaluation
    sampler = _SAMPLER.get() if sampler is None else _SAMPLER.check(sampler)
    plan = _plan(budget, sampler)

    if adaptive:
        stage = _adaptive_stage(p)
        cap = _positive_int("max_trials", ADAPTIVE_MAX_TRIALS if max_trials is None else max_trials)
        cap = max(stage * 2, cap // stage * stage)
        values, hows, stabilised = _run_adaptive(plan, seed, p, significant_digits, stage, cap, chunk_blocks,
                                                 workers, progress, should_stop, stop_when)
    else:
        m = _positive_int("trials", trials)
        limit = max_trials_in_memory(len(plan.outputs))
        if m > limit:
            raise InputError("trials", m, f"at most {limit} on this machine (every trial's output is kept, "
                             f"{8 * len(plan.outputs)} bytes each, to find the coverage intervals; half the memory "
                             "is the bound)", _WHERE)
        values = np.empty((len(plan.outputs), m), dtype=np.float64)
        hows = _run_blocks(plan, seed, m, 0, -(-m // BLOCK_SIZE), chunk_blocks, workers, values,
                           progress, should_stop, m, 0)
        stabilised = None
    return _summarise(plan, values, p, seed, hows, adaptive, stabilised)


def max_trials_in_memory(n_outputs: int = 1) -> int:
    """Most trials one run may keep: half the machine's memory over 3 x 8 bytes per output and trial.

    The outputs of every trial are kept (the coverage intervals need them all,
    JCGM 101 7.7) and sorting needs about as much again; the inputs go in
    fixed blocks and do not grow with M.
    """
    try:
        total = os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (ValueError, OSError, AttributeError):  # pragma: no cover - not POSIX
        total = 8 * 1024**3
    return max(BLOCK_SIZE, int(total // 2 // (24 * max(1, n_outputs))))


def _positive_int(name: str, value: object) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise InputError(name, value, "an integer >= 1", _WHERE)
    return int(value)


def _coverage(budget, p: float | None) -> float:
    if p is None:
        p = getattr(budget, "coverage_probability", None) or 0.95
    try:
        pf = float(p)
    except (TypeError, ValueError):
        raise InputError("coverage_probability", p, "a number between 0 and 1", _WHERE) from None
    if not 0.0 < pf < 1.0:
        raise InputError("coverage_probability", p, "a number between 0 and 1", _WHERE)
    return pf


def _adaptive_stage(p: float) -> int:
    """Trials per stage: max(J, 10^4), J = ceil(100 / (1 - p)) (JCGM 101 7.9.4 b), in whole blocks."""
    j = math.ceil(100.0 / (1.0 - p) - 1e-9)
    m = max(j, 10_000)
    return -(-m // BLOCK_SIZE) * BLOCK_SIZE


def _run_blocks(plan, seed, total, first_block, end_block, chunk_blocks, workers, out, progress,
                should_stop, planned, done_before) -> list[str]:
    """Evaluate blocks [first_block, end_block) into ``out`` (columns offset by first_block)."""
    hows: list[str] = []
    starts = list(range(first_block, end_block, chunk_blocks))
    base = first_block * BLOCK_SIZE

    def job(b0: int) -> tuple[int, str]:
        nb = min(chunk_blocks, end_block - b0)
        how = _evaluate_chunk(plan, seed, b0, nb, total, out, b0 * BLOCK_SIZE - base)
        return min(nb * BLOCK_SIZE, total - b0 * BLOCK_SIZE), how

    done = done_before
    if workers == 1:
        for b0 in starts:
            if should_stop is not None and should_stop():
                raise MonteCarloCancelled(done)
            n, how = job(b0)
            hows.append(how)
            done += n
            if progress is not None:
                progress(done, planned)
        return hows
    with ThreadPoolExecutor(max_workers=workers) as pool:
        pending: set = set()
        it = iter(starts)
        cancelled = False
        while True:
            while not cancelled and len(pending) < workers:
                b0 = next(it, None)
                if b0 is None:
                    break
                if should_stop is not None and should_stop():
                    cancelled = True
                    break
                pending.add(pool.submit(job, b0))
            if not pending:
                break
            finished, pending = wait(pending, return_when=FIRST_COMPLETED)
            for f in finished:
                n, how = f.result()
                hows.append(how)
                done += n
                if progress is not None:
                    progress(done, planned)
        if cancelled:
            wait(pending)
            raise MonteCarloCancelled(done + sum(f.result()[0] for f in pending))
    return hows


def _sym_ends(y: np.ndarray, p: float) -> tuple[float, float]:
    m = y.size
    q = _q_of(p, m)
    r = (m - q + 1) // 2
    part = np.partition(y, (r - 1, r + q - 1))
    return float(part[r - 1]), float(part[r + q - 1])


def _run_adaptive(plan, seed, p, significant_digits, stage, cap, chunk_blocks, workers, progress, should_stop,
                  stop_when=None):
    """JCGM 101:2008 7.9.4: stages of ``stage`` trials until 2 s <= delta for y, u, y_low, y_high."""
    n_out = len(plan.outputs)
    values = np.empty((n_out, cap), dtype=np.float64)   # pages are touched only as trials are written
    blocks_per_stage = stage // BLOCK_SIZE
    stats: list[list[tuple[float, float, float, float]]] = [[] for _ in range(n_out)]
    hows: list[str] = []
    done = 0
    h = 0
    planned = 2 * stage
    chunk_stages = max(1, chunk_blocks // blocks_per_stage) * max(1, workers)
    stabilised = False
    grow = 2                      # stages per round: 2, 4, 8, ... so that an early stop wastes little
    while done < cap and not stabilised:
        n_st = min(grow, chunk_stages, (cap - done) // stage)
        grow *= 2
        b0 = done // BLOCK_SIZE
        hows += _run_blocks(plan, seed, cap, b0, b0 + n_st * blocks_per_stage, chunk_blocks, workers,
                            values[:, done:], None, should_stop, planned, done)
        for _ in range(n_st):
            lo_, hi_ = h * stage, (h + 1) * stage
            h += 1
            for o in range(n_out):
                y = values[o, lo_:hi_]
                stats[o].append((float(np.mean(y)), float(np.std(y, ddof=1)), *_sym_ends(y, p)))
            if h >= 2 and _stable(stats, h, stage, significant_digits) and (
                    stop_when is None or stop_when(_stage_summary(stats, h, stage))):
                stabilised = True
                break
        done = h * stage
        if not stabilised and h >= 2:
            planned = min(cap, max(done + stage, _stages_needed(stats, h, stage, significant_digits) * stage))
        else:
            planned = done if stabilised else max(planned, done + stage)
        if progress is not None:
            progress(done, planned)
    return values[:, :done], hows, stabilised


def _stage_summary(stats, h: int, stage: int) -> dict:
    outs = []
    for stats_o in stats:
        a = np.asarray(stats_o[:h], dtype=np.float64)
        spread = _stage_spread(stats_o, h)
        outs.append({"estimate": float(a[:, 0].mean()), "u": _pooled_u(stats_o, h, stage),
                     "interval": (float(a[:, 2].mean()), float(a[:, 3].mean())),
                     "interval_se": (float(spread[2]), float(spread[3]))})
    return {"trials": h * stage, "outputs": outs}


def _interval_ends(y: np.ndarray, p: float) -> tuple[float, float, float, float]:
    """Ends of the symmetric and the shortest 100p % interval of ``y`` (JCGM 101 7.7), reordering ``y``."""
    m = y.size
    q = _q_of(p, m)
    tail = m - q
    r = (m - q + 1) // 2
    if tail <= q:
        y.partition((tail - 1, q))
        y[:tail].sort()
        y[q:].sort()
    else:
        y.sort()
    rs = int(np.argmin(y[q:] - y[:tail]))
    return float(y[r - 1]), float(y[r + q - 1]), float(y[rs]), float(y[rs + q])


def _stage_errors(y: np.ndarray, p: float, stage: int):
    """(h, se of the symmetric ends, se of the shortest ends) over h stages of ``stage`` values (JCGM 101 7.9.4 d)."""
    h = y.size // stage
    if h < 2:
        return h, None, None
    ends = np.empty((h, 4))
    buf = np.empty(stage)
    for i in range(h):
        buf[:] = y[i * stage:(i + 1) * stage]
        ends[i] = _interval_ends(buf, p)
    se = np.std(ends, axis=0, ddof=1) / math.sqrt(h)
    return h, (float(se[0]), float(se[1])), (float(se[2]), float(se[3]))


def _shape(y: np.ndarray) -> tuple[float, float]:
    """Sample skewness and excess kurtosis of ``y`` (moment estimators; 0, 0 for a normal)."""
    m = float(np.mean(y))
    d = y - m
    m2 = float(np.mean(d * d))
    if m2 <= 0:
        return 0.0, 0.0
    m3 = float(np.mean(d * d * d))
    m4 = float(np.mean((d * d) ** 2))
    return m3 / m2 ** 1.5, m4 / (m2 * m2) - 3.0


def _stage_spread(stats_o, h) -> np.ndarray:
    a = np.asarray(stats_o[:h], dtype=np.float64)           # (h, 4): y, u, y_low, y_high
    return np.sqrt(np.sum((a - a.mean(axis=0)) ** 2, axis=0) / (h * (h - 1)))


def _pooled_u(stats_o, h: int, n: int) -> float:
    """u(y) of all h n values from the stages' means and standard deviations (equal stage sizes n)."""
    a = np.asarray(stats_o[:h], dtype=np.float64)
    means, sds = a[:, 0], a[:, 1]
    ss = np.sum((n - 1) * sds**2) + n * np.sum((means - means.mean()) ** 2)
    return float(math.sqrt(ss / (h * n - 1)))


def _stable(stats, h, stage, digits) -> bool:
    for stats_o in stats:
        delta = numerical_tolerance(_pooled_u(stats_o, h, stage), digits)
        if np.any(2.0 * _stage_spread(stats_o, h) > delta):
            return False
    return True


def _stages_needed(stats, h, stage, digits) -> int:
    """Rough number of stages after which 2 s <= delta, since s falls as 1/sqrt(h) (for progress only)."""
    need = h + 1
    for stats_o in stats:
        delta = numerical_tolerance(_pooled_u(stats_o, h, stage), digits)
        s = float(np.max(_stage_spread(stats_o, h)))
        if delta > 0:
            need = max(need, math.ceil(h * (2.0 * s / delta) ** 2))
    return need


def _summarise(plan: _Plan, values: np.ndarray, p: float, seed: int, hows: list[str], adaptive: bool,
               stabilised: bool | None):
    m = values.shape[1]
    how = "trial by trial" if "trial by trial" in hows else (hows[0] if hows else "vectorised")
    bad = ~np.isfinite(values)
    if bad.any():
        o, j = (int(v) for v in np.argwhere(bad)[0])
        raise ModelEvaluationError(
            f"the model gave a non-finite value for {plan.outputs[o]} in {int(bad[o].sum())} of {m} "
            f"Monte Carlo trials (first at trial {j}); check the input distributions against the model's "
            "domain, e.g. a denominator or a square root that can reach zero or below")
    warnings: list[str] = []
    for nm, d in zip(plan.names, plan.distributions):
        if isinstance(d, (Normal, TypeA)) and (nu := _sampled_dof(d)) <= 2:
            warnings.append(f"input {nm!r} is drawn from a t-distribution with {nu:g} degrees of freedom, "
                            "which has no finite variance (JCGM 101 6.4.9): u(y) is not a stable figure")
    if adaptive and not stabilised:
        warnings.append(f"the adaptive procedure did not stabilise within {m} trials; the results are "
                        "from all of them")
    correlation: tuple[tuple[float, ...], ...] = ((1.0,),)
    if len(plan.outputs) > 1:  # before the intervals reorder each row in place
        c = np.corrcoef(values)
        correlation = tuple(tuple(float(v) for v in r) for r in c)
    summary = [(float(np.mean(values[o])), float(np.std(values[o], ddof=1))) for o in range(len(plan.outputs))]
    stage = _adaptive_stage(p)
    results = []
    for o, name in enumerate(plan.outputs):
        est, u = summary[o]
        skew, kurt = _shape(values[o])
        h, se_sym, se_short = _stage_errors(values[o], p, stage)   # before the in-place sort below
        sym, short, hist = coverage_intervals(values[o], p, in_place=True)
        results.append(MonteCarloResult(
            estimate=est, standard_uncertainty=u, coverage_probability=p, interval=sym,
            shortest_interval=short, trials=m, seed=seed, generator=GENERATOR,
            numpy_version=np.__version__, evaluation=how, adaptive=adaptive, histogram=hist,
            block_size=BLOCK_SIZE, output=name, unit=plan.units[o], stabilised=stabilised,
            warnings=tuple(warnings), interval_se=se_sym, shortest_interval_se=se_short, stages=h,
            skewness=skew, excess_kurtosis=kurt, sampler=plan.sampler))
    if len(results) == 1:
        return results[0]
    return MonteCarloVectorResult(tuple(results), correlation)
