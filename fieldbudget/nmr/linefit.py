"""The line centre fitted from a recorded trace: a swept Lorentzian line or a free-induction decay.

A lab records the resonance as a CSV trace: ``f_Hz,signal`` for a swept line
(absorption or dispersion against frequency), or ``t_s,signal`` with an
optional ``signal_im`` for a free-induction decay (FID) recorded after mixing
with a reference frequency.  :func:`fit_trace` fits the line by nonlinear
least squares (``scipy.optimize.least_squares``, Levenberg-Marquardt with an
analytic Jacobian) and returns a :class:`LineFit`: the centre frequency and
its standard uncertainty, the Cramer-Rao bound beside it, the linewidth, the
signal-to-noise ratio and a goodness-of-fit figure.

Models (H, f0, Gamma, c; A, nu, phi, R = 1/T2*, c all fitted)::

    absorption  y(f) = H / (1 + q^2) + c,        q = (f - f0) / (Gamma/2)
    dispersion  y(f) = H q / (1 + q^2) + c
    FID, real   y(t) = A exp(-R t) cos(2 pi nu t + phi) + c
    FID, I + iQ y(t) = A exp(-R t) exp(i (2 pi nu t + phi)) + c_re + i c_im

The FID's line centre is ``reference_Hz + nu`` and its Lorentzian FWHM
R/pi = 1/(pi T2*) (the Fourier pair of the exponential decay).  A real FID
cannot tell a line above the reference from one below it: its centre is
given as ``reference_Hz + |nu|`` (record I and Q to resolve the sign).

Uncertainties, with s^2 = RSS/(m - p) the residual variance (m real
residuals, p parameters) taken as the white noise per sample:

* the covariance of the parameters is s^2 (J^T J)^-1, J the Jacobian at the
  solution (the usual linearised least-squares covariance; Bates & Watts,
  *Nonlinear Regression Analysis and Its Applications*, Wiley 1988, ch. 2,
  from memory); ``u_centre_Hz`` is the centre's entry;
* the Cramer-Rao bound ``crb_Hz`` is the bound on the centre for the same
  line shape in white Gaussian noise of variance s^2 *with the baseline
  known*: [I^-1]_f0f0 with the Fisher information I = J_s^T J_s / s^2 over the
  recorded sample points, J_s the derivatives of the noise-free line (without
  the baseline columns) (Kay, *Fundamentals of Statistical Signal Processing:
  Estimation Theory*, Prentice Hall 1993, eq. 3.31 for a signal in white
  Gaussian noise, from memory).  For a long, finely sampled record it tends to
  the closed forms in ``fieldbudget.nmr.physics``
  (``lorentzian_centre_uncertainty_hz``, ``fid_frequency_crb_hz``).  The ratio
  u/CRB is near 1 when the fit extracts all the information in the trace; a
  fitted baseline that couples with the centre (a dispersion line swept over
  too narrow a range, a short FID) makes it larger;
* ``chi2_reduced`` compares s^2 with the white-noise variance estimated from
  the fourth differences of the residuals, mean((D^4 r)^2)/70 (a fourth
  difference of white noise has variance C(8,4) sigma^2 = 70 sigma^2, and it
  removes any misfit that varies slowly from point to point).  It is about 1
  for a right line shape in white noise, and above 1 for a wrong line shape,
  baseline structure or correlated noise (then the u here is too small).

Written by hand around scipy because no library fits NMR line shapes with
these uncertainties; the minimiser is scipy's.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .. import _display as D
from ..errors import BudgetFileError, Finding, InputError
from ._csvdata import read_table

__all__ = ["CHI2_FLAG_SIGMAS", "KINDS", "LineFit", "Trace", "fit_trace", "line_centre_input", "read_trace"]

KINDS = ("absorption", "dispersion", "fid")

#: chi2_reduced is flagged when it exceeds 1 by this many of its standard deviations,
#: sqrt(3.25/m) for m white-noise residuals: the relative variances 2/m (the residual variance) and
#: 2 x 2.625/m (the fourth-difference estimate, whose terms are correlated over 4 lags either side),
#: less twice their covariance 2/m (derived here; a simulation of 200 traces agrees).
CHI2_FLAG_SIGMAS = 5.0

#: A swept line should cover at least this many FWHM either side of the centre (common practice).
MIN_HALF_SPAN_FWHM = 3.0
#: Fewer points per FWHM than this make the fit fragile (common practice).
MIN_POINTS_PER_FWHM = 5.0


@dataclass(frozen=True)
class Trace:
    """A recorded trace: ``axis`` is ``"f_Hz"`` (swept line) or ``"t_s"`` (FID); arrays are read-only."""

    x: np.ndarray = field(repr=False)
    signal: np.ndarray = field(repr=False)
    signal_im: np.ndarray | None = field(default=None, repr=False)
    axis: str = "f_Hz"
    path: str = ""
    digest: str = ""

    def __post_init__(self) -> None:
        where = self.path or "trace"
        if self.axis not in ("f_Hz", "t_s"):
            raise InputError("axis", self.axis, "'f_Hz' (a swept line) or 't_s' (an FID)", where)
        x = np.array(self.x, dtype=float)
        y = np.array(self.signal, dtype=float)
        if x.ndim != 1 or y.shape != x.shape:
            raise InputError("signal", f"{y.shape} values", f"one value per {self.axis} value ({x.shape[0]})", where)
        if not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
            raise InputError("trace", "a non-finite value", "finite numbers only", where)
        arrays = [x, y]
        if self.signal_im is not None:
            yi = np.array(self.signal_im, dtype=float)
            if yi.shape != x.shape or not np.all(np.isfinite(yi)):
                raise InputError("signal_im", f"{yi.shape} values", "one finite value per sample", where)
            arrays.append(yi)
        for a in arrays:
            a.setflags(write=False)
        object.__setattr__(self, "x", arrays[0])
        object.__setattr__(self, "signal", arrays[1])
        if self.signal_im is not None:
            object.__setattr__(self, "signal_im", arrays[2])

    @property
    def n_points(self) -> int:
        return int(self.x.shape[0])

    @property
    def complex(self) -> bool:
        return self.signal_im is not None

    def __repr__(self) -> str:
        what = "swept line" if self.axis == "f_Hz" else ("complex FID" if self.complex else "real FID")
        src = f" from {self.path!r}" if self.path else ""
        return f"<Trace {what}, {self.n_points} points{src}>"


def read_trace(path: str | Path, *, data: bytes | None = None) -> Trace:
    """Read a CSV trace: ``f_Hz,signal`` or ``t_s,signal[,signal_im]`` (header row; ``#`` comment lines first).

    ``data``: the file's bytes when already read (see :func:`~fieldbudget.nmr._csvdata.read_table`)."""
    table = read_table(path, needed=(("f_Hz", "t_s"), ("signal",)), optional=("signal_im",), min_rows=8,
                       what="trace", data=data)
    axis = "f_Hz" if table.has("f_Hz") else "t_s"
    if axis == "f_Hz" and table.has("signal_im"):
        raise BudgetFileError(table.path, "header", "signal_im belongs to an FID (t_s); a swept line has f_Hz,signal")
    return Trace(x=table.column(axis), signal=table.column("signal"),
                 signal_im=table.column("signal_im") if table.has("signal_im") else None,
                 axis=axis, path=table.path, digest=table.digest)


# --- the result -----------------------------------------------------------------------


@dataclass(frozen=True)
class LineFit:
    """The fitted line (all frequencies in Hz).

    ``centre_hz`` and ``u_centre_hz`` (standard uncertainty), ``crb_hz`` (the
    Cramer-Rao bound for the centre), ``fwhm_hz`` and ``u_fwhm_hz``, ``snr``
    (line height H over the rms noise per point for a swept line; the FID's
    amplitude at its first sample over the rms noise per sample, sqrt(E|w|^2)
    for I + iQ), ``chi2_reduced`` (see the module docstring), ``n_points``,
    ``dof`` (m - p), ``noise_rms`` (in signal units), ``parameters`` ((name,
    value, u, unit) per fitted parameter), ``covariance`` (of the
    parameters, in that order), ``warnings`` (:class:`Finding` objects), and
    the trace's ``path`` and ``digest``.  ``x``, ``signal``, ``fitted`` and
    ``residuals`` are the arrays for plots (complex for an I + iQ FID).
    """

    kind: str
    centre_hz: float
    u_centre_hz: float
    crb_hz: float
    fwhm_hz: float
    u_fwhm_hz: float
    snr: float
    chi2_reduced: float
    n_points: int
    dof: int
    noise_rms: float
    reference_hz: float = 0.0
    complex_fid: bool = False
    parameters: tuple = ()
    covariance: tuple = field(default=(), repr=False)
    path: str = ""
    digest: str = ""
    warnings: tuple = ()
    x: np.ndarray = field(default=None, repr=False, compare=False)
    signal: np.ndarray = field(default=None, repr=False, compare=False)
    fitted: np.ndarray = field(default=None, repr=False, compare=False)
    residuals: np.ndarray = field(default=None, repr=False, compare=False)

    @property
    def ratio(self) -> float:
        """u_centre / CRB (1 when the fit reaches the bound)."""
        return self.u_centre_hz / self.crb_hz if self.crb_hz > 0 else math.inf

    @property
    def axis(self) -> str:
        return "t_s" if self.kind == "fid" else "f_Hz"

    @property
    def label(self) -> str:
        if self.kind == "fid":
            return "free-induction decay (I + iQ)" if self.complex_fid else "free-induction decay (real)"
        return f"Lorentzian {self.kind}"

    def to_dict(self) -> dict:
        """The ``fieldbudget line --json`` object: the issue's keys, plus ``digest`` and ``warnings``."""
        return {
            "centre_Hz": self.centre_hz, "u_centre_Hz": self.u_centre_hz, "crb_Hz": self.crb_hz,
            "fwhm_Hz": self.fwhm_hz, "snr": self.snr, "chi2_reduced": self.chi2_reduced,
            "n_points": self.n_points, "kind": self.kind, "digest": self.digest,
            "warnings": [Finding.coerce(w).to_dict() for w in self.warnings],
        }

    def source_text(self) -> str:
        """The budget source of the line-centre input this fit gives."""
        name = Path(self.path).name if self.path else "trace"
        return (f"{self.label} fitted to {name} ({self.digest}), {self.n_points} points: u(centre) from the fit "
                f"covariance, Cramer-Rao bound {self.crb_hz:.3g} Hz")

    def text(self) -> str:
        rows = [
            ("centre", D.fmt_si(self.centre_hz, "Hz", self.u_centre_hz, group=False)),
            ("u(centre)", f"{self.u_centre_hz:.3g} Hz"),
            ("Cramer-Rao bound", f"{self.crb_hz:.3g} Hz   (u/CRB = {self.ratio:.3f})"),
            ("FWHM", f"{self.fwhm_hz:.4g} Hz, u = {self.u_fwhm_hz:.2g} Hz"),
            ("SNR", f"{self.snr:.4g}"),
            ("chi2_reduced", f"{self.chi2_reduced:.3f}   (residual variance / white noise from 4th differences)"),
            ("points", f"{self.n_points} ({self.dof} degrees of freedom)"),
        ]
        if self.kind == "fid":
            rows.insert(1, ("reference", f"{self.reference_hz:.12g} Hz"))
        name = self.path or "trace"
        out = [f"{self.label} fitted to {name}"] + [f"  {k:<17} {v}" for k, v in rows]
        out += [f"warning: {w}" for w in self.warnings]
        return "\n".join(out)

    def __repr__(self) -> str:
        w = f", {len(self.warnings)} warning(s)" if self.warnings else ""
        return (f"<LineFit {self.kind}: centre = {self.centre_hz:.12g} Hz, u = {self.u_centre_hz:.3g} Hz, "
                f"CRB = {self.crb_hz:.3g} Hz, FWHM = {self.fwhm_hz:.4g} Hz, SNR = {self.snr:.4g}{w}>")

    def _repr_html_(self) -> str:
        rows = [
            ("centre", D.fmt_si(self.centre_hz, "Hz", self.u_centre_hz)),
            ("u(centre)", f"{self.u_centre_hz:.3g} Hz"),
            ("Cramér–Rao bound", f"{self.crb_hz:.3g} Hz"),
            ("u / CRB", f"{self.ratio:.3f}"),
            ("FWHM", f"{self.fwhm_hz:.4g} Hz (u = {self.u_fwhm_hz:.2g} Hz)"),
            ("SNR", f"{self.snr:.4g}"),
            ("reduced chi²", f"{self.chi2_reduced:.3f}"),
            ("points", str(self.n_points)),
        ]
        body = D.html_table(("quantity", "value"), rows)
        for w in self.warnings:
            body += f'<p class="fb-warning">{D.escape(w)}</p>'
        return D.html_block(f"{self.label}: {self.path or 'trace'}", body)


# --- models ---------------------------------------------------------------------------


def _line_model(kind: str, x: np.ndarray, p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(model, Jacobian) of a swept line at x (Hz, centred); p = (H, f0, Gamma, c)."""
    h, f0, g, _c = p
    q = (x - f0) / (0.5 * g)
    d = 1.0 + q * q
    jac = np.empty((x.size, 4))
    if kind == "absorption":
        y = h / d + _c
        jac[:, 0] = 1.0 / d
        dq = -2.0 * h * q / (d * d)          # dy/dq
    else:
        y = h * q / d + _c
        jac[:, 0] = q / d
        dq = h * (1.0 - q * q) / (d * d)
    jac[:, 1] = dq * (-2.0 / g)
    jac[:, 2] = dq * (-q / g)
    jac[:, 3] = 1.0
    return y, jac


def _fid_model(t: np.ndarray, p: np.ndarray, complex_: bool) -> tuple[np.ndarray, np.ndarray]:
    """(model, Jacobian) of an FID; p = (A, nu, phi, R, c[, c_im]); complex models stack re, im."""
    a, nu, phi, r = p[:4]
    env = np.exp(-r * t)
    arg = 2.0 * np.pi * nu * t + phi
    c, s = np.cos(arg), np.sin(arg)
    if not complex_:
        y = a * env * c + p[4]
        jac = np.empty((t.size, 5))
        jac[:, 0] = env * c
        jac[:, 1] = -a * env * s * 2.0 * np.pi * t
        jac[:, 2] = -a * env * s
        jac[:, 3] = -t * a * env * c
        jac[:, 4] = 1.0
        return y, jac
    n = t.size
    y = np.concatenate([a * env * c + p[4], a * env * s + p[5]])
    jac = np.zeros((2 * n, 6))
    jac[:n, 0], jac[n:, 0] = env * c, env * s
    jac[:n, 1], jac[n:, 1] = -a * env * s * 2.0 * np.pi * t, a * env * c * 2.0 * np.pi * t
    jac[:n, 2], jac[n:, 2] = -a * env * s, a * env * c
    jac[:n, 3], jac[n:, 3] = -t * a * env * c, -t * a * env * s
    jac[:n, 4] = 1.0
    jac[n:, 5] = 1.0
    return y, jac


def _smooth(y: np.ndarray, width: int) -> np.ndarray:
    if width <= 1:
        return y
    kernel = np.ones(width) / width
    return np.convolve(y, kernel, mode="same")


def _line_start(kind: str, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    n = x.size
    edge = max(2, n // 10)
    base = float(np.median(np.concatenate([y[:edge], y[-edge:]])))
    ys = _smooth(y - base, max(1, n // 200))
    step = float(np.median(np.diff(x)))
    if kind == "absorption":
        i = int(np.argmax(np.abs(ys)))
        h = float(ys[i])
        width = step * max(2, int(np.count_nonzero(np.sign(h) * ys > 0.5 * abs(h))))
        return np.array([h, x[i], width, base])
    imax, imin = int(np.argmax(ys)), int(np.argmin(ys))
    h = float(ys[imax] - ys[imin]) * (1.0 if x[imax] > x[imin] else -1.0)
    width = max(2 * step, abs(float(x[imax] - x[imin])))
    return np.array([h, 0.5 * (x[imax] + x[imin]), width, base])


def _fid_start(t: np.ndarray, z: np.ndarray, complex_: bool) -> np.ndarray:
    n = t.size
    dt = float(t[1] - t[0])
    base = complex(np.mean(z[-max(2, n // 10):])) if n > 20 else 0j
    zc = z - (base if complex_ else base.real)
    m = 1 << int(math.ceil(math.log2(4 * n)))
    spec = np.abs(np.fft.fft(zc, m))
    freqs = np.fft.fftfreq(m, dt)
    if not complex_:  # positive frequencies, away from the baseline's zero-frequency peak
        spec = np.where(freqs > 0, spec, 0.0)
    k = int(np.argmax(spec))
    if 0 < k < m - 1:  # parabolic interpolation of the peak
        a, b, c = spec[k - 1], spec[k], spec[k + 1]
        den = a - 2 * b + c
        shift = 0.5 * (a - c) / den if den != 0 else 0.0
    else:
        shift = 0.0
    nu = float(freqs[k] + shift / (m * dt))
    demod = zc * np.exp(-2j * np.pi * nu * t)
    if not complex_:
        demod = 2.0 * demod  # cos = (e^{i} + e^{-i})/2; the smoothing removes the 2 nu term
    cycles = max(1, int(round(1.0 / (abs(nu) * dt)))) if nu else 1
    env = np.abs(_smooth(demod, max(cycles, n // 100, 1)))
    top = float(env.max()) if env.size else 0.0
    keep = env > 0.2 * top
    keep[: max(1, cycles // 2)] = False  # the smoothing window runs off the start of the record
    rate = 1.0 / (t[-1] - t[0] + dt)
    if np.count_nonzero(keep) >= 3:
        slope = np.polyfit(t[keep], np.log(env[keep]), 1)[0]
        rate = max(rate, -float(slope))
    w = np.exp(-rate * (t - t[0]))
    proj = np.sum(demod * w) / np.sum(w * w)  # amplitude and phase at t[0]
    amp = float(abs(proj)) * math.exp(rate * t[0])
    phi = float(np.angle(proj))
    p = [amp, nu, phi, rate, base.real]
    if complex_:
        p.append(base.imag)
    return np.array(p)


# --- the fit --------------------------------------------------------------------------


def fit_trace(trace: Trace, kind: str | None = None, *, reference_hz: float = 0.0) -> LineFit:
    """Fit the line of ``trace`` (see the module docstring for the models and uncertainties).

    ``kind`` is ``"absorption"``, ``"dispersion"`` or ``"fid"``; it defaults
    to ``"absorption"`` for a swept line and ``"fid"`` for a time record.
    ``reference_hz`` is the FID's reference (mixing) frequency in Hz (0 for a
    record taken without mixing); it is not used for a swept line.
    """
    where = trace.path or "trace"
    if kind is None:
        kind = "absorption" if trace.axis == "f_Hz" else "fid"
    if kind not in KINDS:
        raise InputError("kind", kind, " or ".join(KINDS), where)
    if (kind == "fid") != (trace.axis == "t_s"):
        need = "a time record (t_s,signal)" if kind == "fid" else "a swept line (f_Hz,signal)"
        raise InputError("kind", kind, f"a kind that fits the trace: {kind!r} needs {need}, the trace has "
                         f"{trace.axis}", where)
    if not isinstance(reference_hz, (int, float)) or isinstance(reference_hz, bool) or not math.isfinite(
            reference_hz) or reference_hz < 0:
        raise InputError("reference_Hz", reference_hz, "a frequency >= 0 Hz", where)
    if kind == "fid":
        return _fit_fid(trace, float(reference_hz))
    return _fit_line(trace, kind)


def _sort_check(x: np.ndarray, where: str, name: str) -> np.ndarray:
    order = np.argsort(x, kind="stable")
    xs = x[order]
    if np.any(np.diff(xs) <= 0):
        raise InputError(name, "a repeated value", f"distinct {name} values (one sample per {name})", where)
    return order


def _solve(fun, p0: np.ndarray, where: str):
    try:
        from scipy.optimize import least_squares  # scipy is imported where it is used: importing the NMR layer stays light

        res = least_squares(fun, p0, jac=lambda p: fun(p, jac=True)[1], method="lm", x_scale="jac")
    except (ValueError, np.linalg.LinAlgError) as err:
        raise InputError("trace", "data the fit cannot follow", f"a recorded line ({err})", where) from None
    if not res.success or not np.all(np.isfinite(res.x)):
        raise InputError("trace", "data the fit cannot follow", f"a recorded line (the fit did not converge: "
                         f"{res.message})", where)
    return res


def _covariances(jac: np.ndarray, resid: np.ndarray, signal_cols: list[int], centre: int):
    m, p = jac.shape
    dof = m - p
    s2 = float(resid @ resid) / dof
    # scale the columns so that J^T J is well conditioned before inverting it
    norms = np.linalg.norm(jac, axis=0)
    norms[norms == 0] = 1.0
    js = jac / norms
    cov = s2 * np.linalg.inv(js.T @ js) / np.outer(norms, norms)
    jsig = js[:, signal_cols]
    fisher_inv = s2 * np.linalg.inv(jsig.T @ jsig) / np.outer(norms[signal_cols], norms[signal_cols])
    crb = math.sqrt(fisher_inv[signal_cols.index(centre), signal_cols.index(centre)])
    return cov, s2, dof, crb


def _chi2_reduced(resid_blocks: list[np.ndarray], s2: float) -> float:
    d4 = np.concatenate([np.diff(r, n=4) for r in resid_blocks])
    white = float(np.mean(d4 * d4)) / 70.0
    return s2 / white if white > 0 else math.inf


def _chi2_finding(chi2: float, m: int) -> Finding | None:
    limit = 1.0 + CHI2_FLAG_SIGMAS * math.sqrt(3.25 / m)
    if chi2 > limit:
        return Finding(f"chi2_reduced = {chi2:.3g} (above {limit:.3g}): the residuals are not white noise about "
                       "the fitted line (wrong line shape, baseline structure or correlated noise); the u of the "
                       "centre is then too small", code="line.chi2", key="line.trace_csv",
                       values={"chi2_reduced": chi2, "limit": limit})
    return None


def _fit_line(trace: Trace, kind: str) -> LineFit:
    where = trace.path or "trace"
    order = _sort_check(trace.x, where, "f_Hz")
    f = trace.x[order]
    y = trace.signal[order]
    mid = 0.5 * (f[0] + f[-1])
    x = f - mid  # centred axis keeps the digits of a 60 MHz centre
    p0 = _line_start(kind, x, y)

    def fun(p, jac=False):
        model, j = _line_model(kind, x, p)
        return (model - y, j) if jac else model - y

    res = _solve(fun, p0, where)
    p = res.x.copy()
    if p[2] < 0:  # the model depends on Gamma through q = (f - f0)/(Gamma/2): a negative width flips the sign
        p[2] = -p[2]
        if kind == "dispersion":
            p[0] = -p[0]
    model, jac = _line_model(kind, x, p)
    resid = y - model
    cov, s2, dof, crb = _covariances(jac, resid, [0, 1, 2], 1)
    sd = np.sqrt(np.diag(cov))
    centre, width = mid + p[1], p[2]
    chi2 = _chi2_reduced([resid], s2)
    noise = math.sqrt(s2)
    warnings: list[Finding] = []
    fnd = _chi2_finding(chi2, resid.size)
    if fnd:
        warnings.append(fnd)
    step = float(np.median(np.diff(f)))
    per_fwhm = width / step
    if per_fwhm < MIN_POINTS_PER_FWHM:
        warnings.append(Finding(f"{per_fwhm:.3g} points per FWHM (fewer than {MIN_POINTS_PER_FWHM:g}): the sweep "
                                "is too coarse for a reliable fit", code="line.coarse", key="line.trace_csv",
                                values={"points_per_fwhm": per_fwhm}))
    if not f[0] <= centre <= f[-1]:
        warnings.append(Finding(f"the fitted centre {centre:.12g} Hz lies outside the swept range "
                                f"{f[0]:.12g} to {f[-1]:.12g} Hz: the fit is not a line centre", code="line.outside",
                                key="line.trace_csv", values={"centre_Hz": centre}, severity="invalid"))
    else:
        half_span = min(centre - f[0], f[-1] - centre) / width
        if half_span < MIN_HALF_SPAN_FWHM:
            warnings.append(Finding(f"the sweep reaches only {half_span:.3g} FWHM from the centre on one side (at "
                                    f"least {MIN_HALF_SPAN_FWHM:g} is usual): the wings and the baseline are poorly "
                                    "determined", code="line.narrow_sweep", key="line.trace_csv",
                                    values={"half_span_fwhm": half_span}))
    names = (("H", "signal"), ("f0", "Hz"), ("Gamma", "Hz"), ("c", "signal"))
    params = tuple((n, float(v if n != "f0" else centre), float(u), unit) for (n, unit), v, u in zip(names, p, sd))
    arrays = [np.array(a) for a in (f, y, model, resid)]
    for a in arrays:
        a.setflags(write=False)
    return LineFit(kind=kind, centre_hz=float(centre), u_centre_hz=float(sd[1]), crb_hz=crb, fwhm_hz=float(width),
                   u_fwhm_hz=float(sd[2]), snr=abs(float(p[0])) / noise if noise > 0 else math.inf,
                   chi2_reduced=chi2, n_points=int(f.size), dof=int(dof), noise_rms=noise, parameters=params,
                   covariance=tuple(tuple(float(v) for v in row) for row in cov), path=trace.path,
                   digest=trace.digest, warnings=tuple(warnings), x=arrays[0], signal=arrays[1], fitted=arrays[2],
                   residuals=arrays[3])


def _fit_fid(trace: Trace, reference_hz: float) -> LineFit:
    where = trace.path or "trace"
    order = _sort_check(trace.x, where, "t_s")
    t = trace.x[order]
    dts = np.diff(t)
    dt = float(np.median(dts))
    if np.max(np.abs(dts - dt)) > 1e-6 * dt:
        raise InputError("t_s", "unevenly spaced times", "a record sampled at a constant interval", where)
    cplx = trace.complex
    yr = trace.signal[order]
    yi = trace.signal_im[order] if cplx else None
    z = yr + 1j * yi if cplx else yr.astype(complex)
    p0 = _fid_start(t, z if cplx else yr, cplx)
    target = np.concatenate([yr, yi]) if cplx else yr

    def fun(p, jac=False):
        model, j = _fid_model(t, p, cplx)
        return (model - target, j) if jac else model - target

    res = _solve(fun, p0, where)
    p = res.x.copy()
    if p[0] < 0:  # A -> -A is a phase of pi
        p[0], p[2] = -p[0], p[2] + np.pi
    sign_note = None
    if not cplx and p[1] < 0:  # cos is even: nu -> -nu with phi -> -phi is the same record
        p[1], p[2] = -p[1], -p[2]
    p[2] = (p[2] + np.pi) % (2 * np.pi) - np.pi
    if not cplx and reference_hz > 0:
        sign_note = Finding("a real FID cannot tell a line above the reference from one below it: the centre is "
                            "given as reference + |offset|; record I and Q (signal_im) to resolve the sign",
                            code="line.fid_sign", key="line.trace_csv", values={"offset_Hz": float(p[1])})
    model, jac = _fid_model(t, p, cplx)
    resid = target - model
    cov, s2, dof, crb = _covariances(jac, resid, [0, 1, 2, 3], 1)
    sd = np.sqrt(np.diag(cov))
    n = t.size
    blocks = [resid[:n], resid[n:]] if cplx else [resid]
    chi2 = _chi2_reduced(blocks, s2)
    noise = math.sqrt(2.0 * s2) if cplx else math.sqrt(s2)  # complex: sqrt(E|w|^2) per sample
    rate = float(p[3])
    warnings: list[Finding] = []
    fnd = _chi2_finding(chi2, resid.size)
    if fnd:
        warnings.append(fnd)
    if sign_note:
        warnings.append(sign_note)
    record = float(t[-1] - t[0] + dt)
    if rate <= 0:
        warnings.append(Finding(f"the fitted decay rate {rate:.3g} 1/s is not positive: the record shows no decay, "
                                "so the linewidth is not determined", code="line.no_decay", key="line.trace_csv",
                                values={"rate_per_s": rate}))
    elif record * rate < 1.0:
        warnings.append(Finding(f"the record ({record:.3g} s) is shorter than T2* ({1 / rate:.3g} s): the decay and "
                                "the linewidth are poorly determined", code="line.short_record",
                                key="line.trace_csv", values={"record_s": record, "t2_s": 1 / rate}))
    nyquist = 0.5 / dt
    if abs(p[1]) > 0.9 * nyquist:
        warnings.append(Finding(f"the offset {p[1]:.6g} Hz is close to the Nyquist frequency {nyquist:.6g} Hz: the "
                                "record may be aliased", code="line.aliased", key="line.trace_csv",
                                values={"offset_Hz": float(p[1]), "nyquist_Hz": nyquist}, severity="invalid"))
    amp0 = float(p[0]) * math.exp(-rate * float(t[0]))
    names = [("A", "signal"), ("nu", "Hz"), ("phi", "rad"), ("R", "1/s"), ("c", "signal")]
    if cplx:
        names.append(("c_im", "signal"))
    params = tuple((nm, float(v), float(u), unit) for (nm, unit), v, u in zip(names, p, sd))
    if cplx:
        fitted = model[:n] + 1j * model[n:]
        residuals = resid[:n] + 1j * resid[n:]
        signal = z
    else:
        fitted, residuals, signal = model, resid, yr
    arrays = [np.array(a) for a in (t, signal, fitted, residuals)]
    for a in arrays:
        a.setflags(write=False)
    return LineFit(kind="fid", centre_hz=reference_hz + float(p[1]), u_centre_hz=float(sd[1]), crb_hz=crb,
                   fwhm_hz=rate / math.pi, u_fwhm_hz=float(sd[3]) / math.pi,
                   snr=abs(amp0) / noise if noise > 0 else math.inf, chi2_reduced=chi2, n_points=int(n),
                   dof=int(dof), noise_rms=noise, reference_hz=reference_hz, complex_fid=cplx, parameters=params,
                   covariance=tuple(tuple(float(v) for v in row) for row in cov), path=trace.path,
                   digest=trace.digest, warnings=tuple(warnings), x=arrays[0], signal=arrays[1], fitted=arrays[2],
                   residuals=arrays[3])


# --- the budget input -------------------------------------------------------------------


def line_centre_input(fit: LineFit, *, stated_u_hz: float | None = None, source: str = "",
                      symbol: str = "d_line"):
    """The line-centre input of an NMR budget from a fitted trace: estimate 0, u from the fit.

    ``stated_u_hz`` is a stated part that the trace cannot show (a lock
    servo's offset); it is added in quadrature.  The degrees of freedom are
    those of the fit (m - p) when no stated part is added.  The source names
    the trace and its SHA-256 digest, so the record says which data it came
    from.
    """
    from ..engine import InputQuantity, Normal

    u = fit.u_centre_hz
    text = source or fit.source_text()
    dof = float(fit.dof)
    if stated_u_hz:
        u = math.hypot(u, float(stated_u_hz))
        text += f"; with a stated part {float(stated_u_hz):g} Hz"
        dof = math.inf
    prov = {"report": f"{Path(fit.path).name if fit.path else 'trace'} {fit.digest}".strip()}
    return InputQuantity(symbol, 0.0, Normal(u=u, dof=dof), unit="Hz", source=text,
                         description="correction for locating the line centre (fitted from the recorded trace)",
                         role="measured" if not stated_u_hz else "lab_characterisation",
                         provenance=prov if stated_u_hz else {})
