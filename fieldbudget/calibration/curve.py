"""Calibration curves: polynomial fits by ordinary, weighted or generalised least squares.

A calibration curve here is a polynomial in ``(x - x0)``,

    y(x) = a_0 + a_1 (x - x0) + ... + a_d (x - x0)^d,

fitted to points ``(x_k, y_k)``.  Three ways of weighting, chosen by what is
known about the ``y_k``:

* nothing: ordinary least squares, the variance of the ``y_k`` estimated from
  the residuals, ``s^2 = sum r_k^2 / (n - p)`` and ``V(a) = s^2 (X^T X)^-1``
  (JCGM 100:2008, H.3.2-H.3.3; this is how the GUM's thermometer example is
  computed);
* standard uncertainties ``u(y_k)``: weighted least squares;
* a full covariance matrix ``V(y)``: generalised least squares,
  ``a = (X^T V^-1 X)^-1 X^T V^-1 y`` and ``V(a) = (X^T V^-1 X)^-1``
  (Aitken's estimator; the form JCGM 100:2008, H.3.6 points to for
  correlated observations).

Goodness of fit: ``chi^2 = r^T V^-1 r`` with ``n - p`` degrees of freedom and the
Birge ratio ``R_B = sqrt(chi^2 / (n - p))`` (R. T. Birge, Phys. Rev. 40 (1932) 207).

Prediction at a later ``x``: ``y(x) = g^T a`` with ``g = (1, x - x0, ...)`` and
``u^2 = g^T V(a) g`` (JCGM 100:2008, eq. (13) applied to the fitted
coefficients; H.3.4 for the straight line).  Outside the range of the fitted
``x`` the prediction is still given, with a warning, never silently.

Why hand-written: numpy and scipy do the linear algebra (Cholesky whitening
with ``scipy.linalg``, the solve with ``numpy.linalg.lstsq``), but none of
them returns a fit result that carries the coefficient covariance together
with the calibrated range, the Birge ratio, re-centring of the polynomial about
another ``x0`` and range-checked prediction, which a calibration certificate
needs.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass, field
from math import comb

import numpy as np
import scipy.linalg
import scipy.stats

from fieldbudget import _display
from fieldbudget.errors import CalibrationRangeWarning, InputError

__all__ = [
    "CalibrationRangeWarning",
    "CurveFit",
    "CurvePrediction",
    "fit_polynomial",
]

_WHERE = "calibration curve"


def _as_tuple2(a: np.ndarray) -> tuple[tuple[float, ...], ...]:
    return tuple(tuple(float(v) for v in row) for row in np.asarray(a))


def _design(x: np.ndarray, x0: float, degree: int) -> np.ndarray:
    """Vandermonde matrix in increasing powers of ``x - x0``."""
    return np.vander(np.asarray(x, dtype=float) - x0, degree + 1, increasing=True)


@dataclass(frozen=True)
class CurvePrediction:
    """The curve's value at one ``x``, with its standard uncertainty.

    ``standard_uncertainty`` combines the coefficients' covariance and, when
    given, the standard uncertainty of the new observation itself
    (``u_extra``): ``u^2 = g^T V(a) g + u_extra^2``.
    """

    x: float
    value: float
    standard_uncertainty: float
    uncertainty_from_curve: float
    uncertainty_extra: float
    dof: float | None
    inside_range: bool
    unit: str = ""
    warnings: tuple[str, ...] = ()

    def __repr__(self) -> str:
        flag = "" if self.inside_range else ", outside calibrated range"
        return (f"<CurvePrediction x = {_display.fmt(self.x)}: {_display.fmt(self.value)} {self.unit}, "
                f"u = {_display.fmt(self.standard_uncertainty, 3)} {self.unit}{flag}>")

    def to_dict(self) -> dict:
        return {
            "x": self.x,
            "value": self.value,
            "u": self.standard_uncertainty,
            "u_curve": self.uncertainty_from_curve,
            "u_extra": self.uncertainty_extra,
            "dof": None if self.dof is None or math.isinf(self.dof) else self.dof,
            "inside_range": self.inside_range,
            "unit": self.unit,
            "warnings": list(self.warnings),
        }

    def _repr_html_(self) -> str:
        rows = [
            ("x", _display.fmt(self.x)),
            ("value", f"{_display.fmt(self.value)} {self.unit}"),
            ("standard uncertainty", f"{_display.fmt(self.standard_uncertainty, 3)} {self.unit}"),
            ("from the curve", _display.fmt(self.uncertainty_from_curve, 3)),
            ("from the new observation", _display.fmt(self.uncertainty_extra, 3)),
            ("inside calibrated range", "yes" if self.inside_range else "no"),
        ]
        rows += [("warning", w) for w in self.warnings]
        return _display.html_block("Prediction from the calibration curve",
                                   _display.html_table(("item", "value"), rows))


@dataclass(frozen=True)
class CurveFit:
    """A fitted calibration polynomial ``y = sum a_j (x - x0)^j``.

    Attributes
    ----------
    degree, x0 : int, float
        Degree of the polynomial and the point it is expanded about (unit of x).
    coefficients : tuple of float
        ``a_0 ... a_d``; ``a_j`` has the unit of y per (unit of x)^j.
    covariance : tuple of tuples
        Covariance matrix of the coefficients.
    method : str
        ``"ordinary"``, ``"weighted"`` or ``"generalised"`` least squares.
    dof : int
        ``n - p``, points minus coefficients.
    chi_square, birge_ratio : float or None
        ``r^T V^-1 r`` and ``sqrt(chi^2/dof)``; ``None`` for an ordinary fit
        (no stated uncertainties) or when ``dof == 0``.
    residual_standard_deviation : float or None
        ``sqrt(sum r^2 / dof)`` (JCGM 100:2008, H.3.3, "s"); ``None`` if ``dof == 0``.
    scaled : bool
        Whether the covariance was multiplied by ``R_B^2`` (see ``scale``).
    y_dof : tuple of float or None
        Degrees of freedom of each point's standard uncertainty (``inf`` for
        a known one), used for the degrees of freedom of a prediction.
    """

    degree: int
    x0: float
    coefficients: tuple[float, ...]
    covariance: tuple[tuple[float, ...], ...]
    method: str
    dof: int
    x: tuple[float, ...]
    y: tuple[float, ...]
    y_covariance: tuple[tuple[float, ...], ...] | None
    residuals: tuple[float, ...]
    chi_square: float | None
    birge_ratio: float | None
    residual_standard_deviation: float | None
    scaled: bool = False
    x_unit: str = ""
    y_unit: str = ""
    warnings: tuple[str, ...] = ()
    y_dof: tuple[float, ...] | None = None
    _cov: np.ndarray = field(default=None, repr=False, compare=False)  # type: ignore[assignment]

    def __post_init__(self) -> None:
        object.__setattr__(self, "_cov", np.array(self.covariance, dtype=float))
        self._cov.setflags(write=False)

    # -- numbers --------------------------------------------------------------------------
    @property
    def coefficient_array(self) -> np.ndarray:
        return np.array(self.coefficients)

    @property
    def covariance_matrix(self) -> np.ndarray:
        return self._cov.copy()

    @property
    def standard_uncertainties(self) -> tuple[float, ...]:
        return tuple(float(math.sqrt(max(v, 0.0))) for v in np.diag(self._cov))

    @property
    def correlation(self) -> np.ndarray:
        s = np.sqrt(np.clip(np.diag(self._cov), 0.0, None))
        with np.errstate(invalid="ignore", divide="ignore"):
            r = self._cov / np.outer(s, s)
        return np.where(np.outer(s, s) > 0, r, 0.0)

    @property
    def x_range(self) -> tuple[float, float]:
        return (min(self.x), max(self.x))

    @property
    def p_value(self) -> float | None:
        """Probability of a chi-square at least as large as the one found (scipy.stats.chi2.sf)."""
        if self.chi_square is None or self.dof == 0:
            return None
        return float(scipy.stats.chi2.sf(self.chi_square, self.dof))

    # -- use --------------------------------------------------------------------------------
    def value_at(self, x: float) -> float:
        """The curve's value at ``x`` (no uncertainty, no range check)."""
        return float(_design(np.array([x]), self.x0, self.degree)[0] @ self.coefficient_array)

    def predict(self, x: float, *, u_extra: float = 0.0, _stacklevel: int = 2) -> CurvePrediction:
        """Value and standard uncertainty of the curve at ``x``.

        Parameters
        ----------
        x : float
            Where to evaluate (unit of x).
        u_extra : float
            Standard uncertainty (unit of y) of a new observation added in
            quadrature, e.g. the repeatability of a later reading.

        A point outside ``x_range`` gives a :class:`CalibrationRangeWarning`
        and ``inside_range=False``; the value is an extrapolation.
        """
        if not (isinstance(x, (int, float, np.floating)) and math.isfinite(x)):
            raise InputError("x", x, "a finite number", _WHERE)
        if not (math.isfinite(u_extra) and u_extra >= 0):
            raise InputError("u_extra", u_extra, "a finite number >= 0", _WHERE)
        g = _design(np.array([float(x)]), self.x0, self.degree)[0]
        value = float(g @ self.coefficient_array)
        u_curve = float(math.sqrt(max(float(g @ self._cov @ g), 0.0)))
        lo, hi = self.x_range
        inside = lo <= x <= hi
        notes: list[str] = []
        if not inside:
            msg = (f"x = {_display.fmt(float(x))} {self.x_unit} is outside the calibrated range "
                   f"[{_display.fmt(lo)}, {_display.fmt(hi)}] {self.x_unit}: the value is an extrapolation "
                   f"of the fitted curve and its uncertainty assumes the curve's form holds there")
            notes.append(msg)
            warnings.warn(msg, CalibrationRangeWarning, stacklevel=_stacklevel)
        nu_curve = self._prediction_dof(g, u_curve)
        u_tot = math.hypot(u_curve, u_extra)
        # Welch-Satterthwaite (JCGM 100:2008 G.4.1) over the curve part and the new observation (known, inf)
        dof = (math.inf if u_tot == 0 or math.isinf(nu_curve) or u_curve == 0
               else nu_curve * (u_tot / u_curve) ** 4)
        return CurvePrediction(
            x=float(x), value=value, standard_uncertainty=math.hypot(u_curve, u_extra),
            uncertainty_from_curve=u_curve, uncertainty_extra=float(u_extra), dof=dof,
            inside_range=inside, unit=self.y_unit, warnings=tuple(notes),
        )

    def _prediction_dof(self, g: np.ndarray, u_curve: float) -> float:
        """Degrees of freedom of ``u_curve = sqrt(g^T V(a) g)``.

        Ordinary fit: ``n - p`` (JCGM 100:2008 H.3).  With stated point
        uncertainties and their ``y_dof``: the prediction is ``w^T y`` with
        ``w = g^T (X^T V^-1 X)^-1 X^T V^-1``, and the Welch-Satterthwaite
        formula (JCGM 100:2008 G.4.1) is applied over the points' own
        variances, ``nu = u^4 / sum (w_k u_k)^4 / nu_k``.  With correlated points
        this is an approximation (the shared inputs are typically reference
        constants with infinite degrees of freedom).  Without ``y_dof``: infinite.
        """
        if self.method == "ordinary":
            return float(self.dof)
        if self.y_dof is None or self.y_covariance is None or u_curve == 0:
            return math.inf
        nu = np.asarray(self.y_dof, dtype=float)
        if np.all(np.isinf(nu)):
            return math.inf
        v = np.asarray(self.y_covariance, dtype=float)
        xm = _design(np.asarray(self.x), self.x0, self.degree)
        vi = np.linalg.inv(v)
        w = g @ np.linalg.inv(xm.T @ vi @ xm) @ xm.T @ vi
        terms = (w * np.sqrt(np.diag(v))) ** 4
        den = float(np.sum(np.where(np.isinf(nu), 0.0, terms / np.where(np.isinf(nu), 1.0, nu))))
        if den <= 0:
            return math.inf
        scale = self.birge_ratio ** 2 if self.scaled and self.birge_ratio else 1.0
        return float((u_curve / math.sqrt(scale)) ** 4 / den)

    def recentred(self, x0: float) -> CurveFit:
        """The same curve expanded about another point ``x0``.

        Coefficients transform by Taylor expansion, ``a' = T a`` with
        ``T_ij = C(j, i) (x0 - x0_old)^(j - i)``, and the covariance as
        ``T V T^T`` (JCGM 100:2008, eq. (13)).  About the mean ``x``, the
        ordinary straight-line fit has uncorrelated coefficients (H.3.5).
        """
        if not math.isfinite(x0):
            raise InputError("x0", x0, "a finite number", _WHERE)
        d = float(x0) - self.x0
        p = self.degree + 1
        t = np.zeros((p, p))
        for i in range(p):
            for j in range(i, p):
                t[i, j] = comb(j, i) * d ** (j - i)
        a = t @ self.coefficient_array
        v = t @ self._cov @ t.T
        return CurveFit(
            degree=self.degree, x0=float(x0), coefficients=tuple(float(c) for c in a),
            covariance=_as_tuple2(v), method=self.method, dof=self.dof, x=self.x, y=self.y,
            y_covariance=self.y_covariance, residuals=self.residuals, chi_square=self.chi_square,
            birge_ratio=self.birge_ratio, residual_standard_deviation=self.residual_standard_deviation,
            scaled=self.scaled, x_unit=self.x_unit, y_unit=self.y_unit, warnings=self.warnings, y_dof=self.y_dof,
        )

    # -- display ----------------------------------------------------------------------------
    def __repr__(self) -> str:
        coeffs = ", ".join(f"a{j} = {_display.fmt(c)}({_display.fmt(u, 2)})"
                           for j, (c, u) in enumerate(zip(self.coefficients, self.standard_uncertainties)))
        fit = f", R_B = {self.birge_ratio:.3g}" if self.birge_ratio is not None else ""
        return (f"<CurveFit degree {self.degree} about x0 = {_display.fmt(self.x0)} {self.x_unit}, "
                f"{self.method}, n = {len(self.x)}: {coeffs}{fit}>")

    def to_dict(self) -> dict:
        return {
            "degree": self.degree,
            "x0": self.x0,
            "coefficients": list(self.coefficients),
            "u": list(self.standard_uncertainties),
            "covariance": [list(r) for r in self.covariance],
            "correlation": [[float(v) for v in row] for row in self.correlation],
            "method": self.method,
            "dof": self.dof,
            "points": [{"x": x, "y": y, "residual": r} for x, y, r in zip(self.x, self.y, self.residuals)],
            "chi_square": self.chi_square,
            "birge_ratio": self.birge_ratio,
            "p_value": self.p_value,
            "residual_standard_deviation": self.residual_standard_deviation,
            "scaled": self.scaled,
            "x_range": list(self.x_range),
            "x_unit": self.x_unit,
            "y_unit": self.y_unit,
            "warnings": list(self.warnings),
        }

    def _repr_html_(self) -> str:
        r = self.correlation
        coeff_rows = [
            (f"a{j}", _display.fmt(c, 8), _display.fmt(u, 3),
             " ".join(f"{r[j, i]:+.3f}" for i in range(len(self.coefficients))))
            for j, (c, u) in enumerate(zip(self.coefficients, self.standard_uncertainties))
        ]
        point_rows = [(_display.fmt(x, 8), _display.fmt(y, 8), _display.fmt(res, 3))
                      for x, y, res in zip(self.x, self.y, self.residuals)]
        fit_rows = [("method", f"{self.method} least squares"), ("degrees of freedom", str(self.dof))]
        if self.chi_square is not None:
            fit_rows.append(("chi-square", _display.fmt(self.chi_square, 4)))
        if self.birge_ratio is not None:
            fit_rows.append(("Birge ratio", _display.fmt(self.birge_ratio, 4)))
        if self.residual_standard_deviation is not None:
            fit_rows.append(("residual standard deviation", _display.fmt(self.residual_standard_deviation, 3)))
        fit_rows += [("warning", w) for w in self.warnings]
        body = (
            _display.html_table(("coefficient", "value", "u", "correlation"), coeff_rows,
                                caption=f"polynomial in (x - {_display.fmt(self.x0)} {self.x_unit})")
            + _display.html_table(("item", "value"), fit_rows)
            + _display.html_table((f"x ({self.x_unit})", f"y ({self.y_unit})", "residual"), point_rows)
        )
        return _display.html_block(f"Calibration curve, degree {self.degree}", body)


def _check_vector(name: str, values: Sequence[float]) -> np.ndarray:
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise InputError(name, values, "a sequence of finite numbers", _WHERE) from None
    if arr.ndim != 1 or not np.all(np.isfinite(arr)):
        raise InputError(name, values, "a one-dimensional sequence of finite numbers", _WHERE)
    return arr


def fit_polynomial(
    x: Sequence[float],
    y: Sequence[float],
    degree: int = 1,
    *,
    u_y: Sequence[float] | None = None,
    covariance: Sequence[Sequence[float]] | np.ndarray | None = None,
    x0: float | str = 0.0,
    scale: str = "never",
    allow_repeated_x: bool = False,
    x_unit: str = "",
    y_unit: str = "",
    y_dof: Sequence[float] | None = None,
) -> CurveFit:
    """Fit ``y = sum_j a_j (x - x0)^j`` by least squares.

    Parameters
    ----------
    x, y : sequences of float
        The points (x in ``x_unit``, y in ``y_unit``).  ``x`` is taken as exact;
        put the uncertainty of the points into ``u_y`` or ``covariance``.
    degree : int
        Degree of the polynomial, >= 0.  ``degree + 1`` coefficients need at
        least as many points at distinct ``x``.
    u_y : sequence of float, optional
        Standard uncertainties of the ``y_k`` (weighted least squares).
    covariance : (n, n) array, optional
        Covariance matrix of the ``y_k`` (generalised least squares).  Give
        either ``u_y`` or ``covariance``, or neither (ordinary least squares
        with the variance from the residuals, JCGM 100:2008 H.3).
    x0 : float or ``"mean"``
        Expansion point.  ``"mean"`` uses the mean of ``x`` (H.3.5: the
        straight-line coefficients are then uncorrelated in the ordinary fit).
    scale : ``"never"``, ``"birge"`` or ``"always"``
        With stated uncertainties, multiply the coefficient covariance by
        ``R_B^2``: never (default; the stated uncertainties are trusted),
        only when ``R_B > 1`` (``"birge"``), or always.
    allow_repeated_x : bool
        Calibration points at the same ``x`` are refused unless this is true.
    y_dof : sequence of float, optional
        Degrees of freedom of each ``u(y_k)`` (``inf`` allowed), for the
        degrees of freedom of :meth:`CurveFit.predict`.

    Returns
    -------
    CurveFit
    """
    where = _WHERE
    if isinstance(degree, bool) or not isinstance(degree, (int, np.integer)) or degree < 0:
        raise InputError("degree", degree, "an integer >= 0", where)
    degree = int(degree)
    xa = _check_vector("x", x)
    ya = _check_vector("y", y)
    n, p = len(xa), degree + 1
    if len(ya) != n:
        raise InputError("y", f"{len(ya)} values", f"as many values as x ({n})", where)
    if n < p:
        raise InputError("points", n, f"at least {p} (the number of coefficients of a degree-{degree} "
                         f"polynomial)", where)
    uniq, counts = np.unique(xa, return_counts=True)
    if not allow_repeated_x and np.any(counts > 1):
        dup = float(uniq[np.argmax(counts > 1)])
        idx = [int(i) for i in np.flatnonzero(xa == dup)]
        raise InputError("x", dup, f"distinct for each calibration point (points {idx} share it; "
                         f"merge them or pass allow_repeated_x=True)", where)
    if len(uniq) < p:
        raise InputError("points", f"{len(uniq)} distinct x", f"at least {p} distinct x values", where)
    ydof = None
    if y_dof is not None:
        ydof = tuple(float(v) for v in y_dof)
        if len(ydof) != n or not all(v > 0 for v in ydof):
            raise InputError("y_dof", list(ydof), f"{n} numbers > 0 (inf allowed)", where)
    if scale not in ("never", "birge", "always"):
        raise InputError("scale", scale, "one of 'never', 'birge', 'always'", where)
    if u_y is not None and covariance is not None:
        raise InputError("u_y", "u_y and covariance", "only one of u_y and covariance", where)
    if isinstance(x0, str):
        if x0 != "mean":
            raise InputError("x0", x0, "a finite number or 'mean'", where)
        x0v = float(np.mean(xa))
    else:
        x0v = float(x0)
        if not math.isfinite(x0v):
            raise InputError("x0", x0, "a finite number or 'mean'", where)

    if covariance is not None:
        v = np.asarray(covariance, dtype=float)
        if v.shape != (n, n) or not np.all(np.isfinite(v)):
            raise InputError("covariance", f"shape {v.shape}", f"a finite {n} x {n} matrix", where)
        if not np.allclose(v, v.T, rtol=1e-10, atol=0.0):
            raise InputError("covariance", "not symmetric", "a symmetric matrix", where)
        method = "generalised"
    elif u_y is not None:
        u = _check_vector("u_y", u_y)
        if len(u) != n:
            raise InputError("u_y", f"{len(u)} values", f"as many values as x ({n})", where)
        if np.any(u <= 0):
            raise InputError("u_y", float(u[np.argmax(u <= 0)]), "finite numbers > 0", where)
        v = np.diag(u**2)
        method = "weighted"
    else:
        v = None
        method = "ordinary"
    if v is not None:
        try:
            chol = scipy.linalg.cholesky(v, lower=True)
        except np.linalg.LinAlgError:
            raise InputError("covariance", "not positive definite",
                             "a positive definite matrix (each point needs some uncertainty of its own)",
                             where) from None
    dof = n - p
    if method == "ordinary" and dof == 0:
        raise InputError("points", n, f"more than {p} when no uncertainties are given (the variance is "
                         "estimated from the residuals and needs n - p > 0); give u_y or covariance", where)

    xmat = _design(xa, x0v, degree)
    # Condition the columns before solving: powers of (x - x0) can differ by many decades.
    col = np.max(np.abs(xmat), axis=0)
    col[col == 0] = 1.0
    xs = xmat / col
    if v is None:
        xw, yw = xs, ya
    else:
        xw = scipy.linalg.solve_triangular(chol, xs, lower=True)
        yw = scipy.linalg.solve_triangular(chol, ya, lower=True)
    coef_s, _, rank, _ = np.linalg.lstsq(xw, yw, rcond=None)
    if rank < p:
        raise InputError("points", n, f"enough distinct x to determine {p} coefficients", where)
    _, r_mat = np.linalg.qr(xw)
    r_inv = scipy.linalg.solve_triangular(r_mat, np.eye(p))
    cov_s = r_inv @ r_inv.T
    coef = coef_s / col
    cov = cov_s / np.outer(col, col)
    resid = ya - xmat @ coef
    wres = yw - xw @ coef_s
    notes: list[str] = []
    chi2 = birge = s_res = None
    scaled = False
    if dof > 0:
        s_res = float(math.sqrt(float(resid @ resid) / dof))
    if method == "ordinary":
        cov = cov * (s_res**2)
    elif dof > 0:
        chi2 = float(wres @ wres)
        birge = float(math.sqrt(chi2 / dof))
        pv = float(scipy.stats.chi2.sf(chi2, dof))
        if pv < 0.05:
            notes.append(f"chi-square {chi2:.3g} with {dof} degrees of freedom (Birge ratio {birge:.3g}, "
                         f"p = {pv:.2g}): the points scatter more than their uncertainties allow; check the "
                         "budgets or the degree of the curve")
        if scale == "always" or (scale == "birge" and birge > 1):
            cov = cov * birge**2
            scaled = True
            notes.append(f"coefficient covariance multiplied by R_B^2 = {birge**2:.3g}")
    else:
        notes.append("as many points as coefficients: the curve passes through every point and there is "
                     "no goodness-of-fit figure")
    cov = 0.5 * (cov + cov.T)
    return CurveFit(
        degree=degree, x0=x0v, coefficients=tuple(float(c) for c in coef), covariance=_as_tuple2(cov),
        method=method, dof=dof, x=tuple(float(t) for t in xa), y=tuple(float(t) for t in ya),
        y_covariance=None if v is None else _as_tuple2(v), residuals=tuple(float(t) for t in resid),
        chi_square=chi2, birge_ratio=birge, residual_standard_deviation=s_res, scaled=scaled,
        x_unit=x_unit, y_unit=y_unit, warnings=tuple(notes), y_dof=ydof,
    )
