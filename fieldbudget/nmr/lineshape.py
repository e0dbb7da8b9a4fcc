"""The distribution of the local field over a non-spherical sample, and where a line-centre method puts it.

Inside a uniformly magnetised body that is not an ellipsoid the
demagnetizing field is not uniform.  To first order in chi, with the
Lorentz-sphere local field, a nucleus at r sees

    B_nuc(r) = B0 [1 + chi (1/3 - N(r))],

with N(r) = -H_d(r)/M the local demagnetizing factor, whose volume average
is the magnetometric factor that the bulk-susceptibility term corrects
(``fieldbudget.nmr.physics``).  The line is the distribution of
delta(r) = chi (1/3 - N(r)) convolved with the sample's natural line.  A
centroid reads its mean; a lock on the peak reads its mode; a Lorentzian fit
reads something between.  :func:`local_field` computes the distribution,
:meth:`LocalField.centre` the shift of each method from the mean.

N(r) is computed numerically from the magnetic surface charge sigma = M . n:
- M along a finite cylinder: the two end discs, by their solid angles
  (:func:`_cylinder_along`);
- M along the axis of a spheroid (the check against Osborn's uniform field):
  the charge is a set of rings; the axial field of a ring of charge q and
  radius a at (rho, dz) is H_z = (q/4pi)(2/pi) dz E(m) / ([(rho - a)^2 +
  dz^2] sqrt((rho + a)^2 + dz^2)), m = 4 a rho / ((rho + a)^2 + dz^2)
  (the potential of a charged ring, in complete elliptic integrals,
  differentiated along z; checked in the tests against the uniform field of
  spheres and spheroids, Osborn 1945);
- M across a finite cylinder: the charge M cos(phi') on the side; its z'
  integral is closed, (1/s^2)[u/sqrt(s^2 + u^2)] between the ends, and the
  phi' integral is done by the trapezoidal rule (periodic integrand).
Cylinders use equal-volume cells (midpoints; ends and surface excluded).
Written by hand: no library computes the local field of a magnetised
cylinder.  The mode is the peak of the weighted histogram smoothed by a
Gaussian of 1 % of the 5-95 % span (our choice; the bare distribution has
integrable peaks).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from ..errors import InputError

__all__ = ["DETECTIONS", "LocalField", "local_field", "ring_field_z"]

_HERE = "fieldbudget.nmr.lineshape"
DETECTIONS = ("centroid", "peak", "fit")


def ring_field_z(q: float, a: float, rho: np.ndarray, dz: np.ndarray) -> np.ndarray:
    """Axial field H_z (charge units / length^2) of a ring of charge ``q``, radius ``a``, at (rho, dz).

    H_z = (q/4pi)(2/pi) dz E(m) / ([(rho - a)^2 + dz^2] sqrt((rho + a)^2 + dz^2)), m = 4 a rho / ((rho + a)^2 +
    dz^2); on the axis it is q dz / (4 pi (a^2 + dz^2)^(3/2)).
    """
    rho = np.asarray(rho, dtype=float)
    dz = np.asarray(dz, dtype=float)
    plus = (rho + a) ** 2 + dz**2
    m = 4.0 * a * rho / plus
    from scipy import special  # scipy is imported where it is used: importing the NMR layer stays light

    return q / (4.0 * math.pi) * (2.0 / math.pi) * dz * special.ellipe(m) / (((rho - a) ** 2 + dz**2) * np.sqrt(plus))


def _gauss(n: int, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
    x, w = np.polynomial.legendre.leggauss(n)
    return 0.5 * (hi - lo) * x + 0.5 * (hi + lo), 0.5 * (hi - lo) * w


@dataclass(frozen=True)
class LocalField:
    """Local demagnetizing factors N(r) over a sample (``n_local``) with volume weights (``weights``, sum 1).

    ``body`` names the sample (``"cylinder L/D = 2 parallel"``).  The shifts are
    delta = chi (1/3 - N) in fractions of B0.
    """

    body: str
    n_local: np.ndarray
    weights: np.ndarray
    # centres already computed, by (chi, detection, natural width): a form re-builds the budget on every
    # entry, and each centre is a histogram, two convolutions and possibly a fit
    _centres: dict = field(default_factory=dict, repr=False, compare=False)

    def __repr__(self) -> str:
        return f"<LocalField {self.body}: mean N = {self.mean_n:.6f}, {len(self.n_local)} points>"

    @property
    def mean_n(self) -> float:
        """Volume mean of N(r): the magnetometric demagnetizing factor."""
        return float(np.sum(self.n_local * self.weights))

    def shifts(self, chi: float) -> np.ndarray:
        """delta(r) = chi (1/3 - N(r)) at every point (fractions of B0)."""
        return chi * (1.0 / 3.0 - self.n_local)

    def quantile(self, chi: float, p: float) -> float:
        d = self.shifts(chi)
        i = np.argsort(d)
        c = np.cumsum(self.weights[i])
        return float(np.interp(p, c - 0.5 * self.weights[i], d[i]))

    def stats(self, chi: float) -> dict:
        """mean, median, mode, 5 % and 95 % quantiles of delta, each relative to B0 (not to the mean)."""
        d = self.shifts(chi)
        return {"mean": float(np.sum(d * self.weights)), "median": self.quantile(chi, 0.5),
                "mode": self.centre(chi, "peak", 0.0) + float(np.sum(d * self.weights)),
                "p05": self.quantile(chi, 0.05), "p95": self.quantile(chi, 0.95)}

    def span(self, chi: float) -> float:
        """The 5-95 % span of delta (fraction of B0)."""
        return abs(self.quantile(chi, 0.95) - self.quantile(chi, 0.05))

    def line(self, chi: float, natural_fwhm: float, bins: int = 4000) -> tuple[np.ndarray, np.ndarray]:
        """(x, line) on a grid of delta: the histogram convolved with a Lorentzian of FWHM ``natural_fwhm``
        (fraction of B0), or for 0 smoothed by a Gaussian of 1 % of the 5-95 % span."""
        d = self.shifts(chi)
        span = max(self.span(chi), 1e-30)
        width = max(natural_fwhm, 0.0)
        # the line's maximum lies within the range of delta (a convolution with a symmetric unimodal kernel);
        # the kernel spans the whole grid, so its tails beyond the grid never matter
        pad = 0.25 * span
        x = np.linspace(d.min() - pad, d.max() + pad, bins)
        h, _ = np.histogram(d, bins=len(x), range=(x[0] - (x[1] - x[0]) / 2, x[-1] + (x[1] - x[0]) / 2),
                            weights=self.weights)
        dx = x[1] - x[0]
        k = np.arange(-bins, bins + 1) * dx
        kernel = np.exp(-0.5 * (k / (0.01 * span)) ** 2)
        if width > 0:
            kernel = _fftconvolve(kernel / kernel.sum(), 1.0 / (1.0 + (2 * k / width) ** 2), mode="same")
        return x, _fftconvolve(h, kernel / kernel.sum(), mode="same")

    def centre(self, chi: float, detection: str, natural_fwhm: float) -> float:
        """Shift (fraction of B0) of the centre a method reads from the volume mean of delta.

        ``centroid``: 0 (the mean); ``peak``: the maximum of the line; ``fit``:
        the centre of a least-squares Lorentzian fitted to the part of the line
        above half its height.  ``natural_fwhm`` is the natural linewidth as a
        fraction of the resonance frequency.
        """
        if detection not in DETECTIONS:
            raise InputError("detection", detection, f"one of {list(DETECTIONS)}", _HERE)
        if detection == "centroid" or chi == 0:
            return 0.0
        key = (float(chi), detection, float(natural_fwhm))
        if key not in self._centres:
            self._centres[key] = self._centre(chi, detection, natural_fwhm)
        return self._centres[key]

    def _centre(self, chi: float, detection: str, natural_fwhm: float) -> float:
        mean = float(np.sum(self.shifts(chi) * self.weights))
        x, y = self.line(chi, natural_fwhm)
        i = int(np.argmax(y))
        if 0 < i < len(x) - 1:  # parabola through the top three points
            den = y[i - 1] - 2 * y[i] + y[i + 1]
            top = x[i] + (0.5 * (y[i - 1] - y[i + 1]) / den * (x[1] - x[0]) if den else 0.0)
        else:
            top = x[i]
        if detection == "peak":
            return float(top - mean)
        sel = y > 0.5 * y[i]
        xs, ys = x[sel], y[sel]
        half = max(float(xs.max() - xs.min()) / 2, x[1] - x[0])

        def lorentz(v, h, c, g):
            return h / (1.0 + ((v - c) / g) ** 2)

        from scipy import optimize

        (h, c, g), _ = optimize.curve_fit(lorentz, xs, ys, p0=(y[i], top, half), maxfev=20000)
        return float(c - mean)


@lru_cache(maxsize=64)
def _axisymmetric(kind: str, ratio: float, n: int) -> LocalField:
    """M along the symmetry axis of a spheroid (ratio c/a, a = 1), Gauss-Legendre volume nodes."""
    if kind == "spheroid":
        c_ax = ratio
        th, wt = _gauss(100 * n, 0.0, math.pi)  # fine: volume nodes come within ~1/n^2 of the surface
        # surface z' = c cos t, R = sin t; projected-area charge dq = M 2 pi R dR-signed = M 2 pi sin t cos t dt
        rings = [(math.sin(t), c_ax * math.cos(t), 2 * math.pi * math.sin(t) * math.cos(t) * w)
                 for t, w in zip(th, wt)]
        z, wz = _gauss(n, -c_ax, c_ax)
        pts, wts = [], []
        for zi, wzi in zip(z, wz):
            r_z = math.sqrt(max(1.0 - (zi / c_ax) ** 2, 0.0))
            rho, wr = _gauss(n, 0.0, r_z)
            pts += [(r, zi) for r in rho]
            wts += list(2 * math.pi * rho * wr * wzi)
    else:  # pragma: no cover - internal
        raise ValueError(kind)
    p = np.asarray(pts)
    h = np.zeros(len(p))
    for a, zq, q in rings:
        h += ring_field_z(q, a, p[:, 0], p[:, 1] - zq)
    w = np.asarray(wts)
    return LocalField(f"{kind} ratio {ratio:g} along its axis", -h, w / w.sum())


def _cells(n: int, top: float) -> np.ndarray:
    """Midpoints of n equal cells on [0, top]."""
    return (np.arange(n) + 0.5) * (top / n)


@lru_cache(maxsize=64)
def _cylinder_along(ratio: float, n: int) -> LocalField:
    """M along a finite cylinder's axis, radius 1, L/2 = ratio: N = (Omega_top + Omega_bottom)/(4 pi).

    A uniformly charged disc gives a normal field sigma Omega/(4 pi), Omega the solid angle it subtends;
    seen from height h above a foot at rho < R, Omega = int_0^2pi [1 - h/sqrt(h^2 + r(phi)^2)] dphi with
    r(phi) = -rho cos(phi) + sqrt(R^2 - rho^2 sin^2(phi)) (the distance from the foot to the rim).
    Points: equal-volume cells (uniform in rho^2 and z), so every point has the same weight.
    """
    half = ratio
    z = _cells(n, half)                 # N is even in z
    rho = np.sqrt(_cells(n, 1.0))       # uniform in rho^2: equal areas
    phi = (np.arange(1024) + 0.5) * (2 * math.pi / 1024)
    r_rim2 = (-rho[:, None] * np.cos(phi) + np.sqrt(1.0 - (rho[:, None] * np.sin(phi)) ** 2)) ** 2
    total = np.zeros((n, n))
    for i, zi in enumerate(z):  # row by row: the (rho, phi) array of one z stays small
        for h in (half - zi, half + zi):
            total[i] += np.mean(1.0 - h / np.sqrt(h * h + r_rim2), axis=-1) * 2 * math.pi
    w = np.full(total.size, 1.0 / total.size)
    return LocalField(f"cylinder L/D = {ratio:g} along B0", (total / (4 * math.pi)).ravel(), w)


@lru_cache(maxsize=64)
def _cylinder_across(ratio: float, n: int) -> LocalField:
    """M across a finite cylinder (axis z, M along x), radius 1, L/2 = ratio; equal-volume cells."""
    half = ratio
    nphi = 2048  # the charge angles (trapezoid, periodic) must resolve the cells nearest the side
    phq = (np.arange(nphi) + 0.5) * (2 * math.pi / nphi)
    z = _cells(n, half)                      # N is even in z
    rho = np.sqrt(_cells(n, 1.0))
    ph = _cells(max(n // 2, 4), math.pi / 2)  # and symmetric in each quadrant
    Z, R, P = np.meshgrid(z, rho, ph, indexing="ij")
    x, y = (R * np.cos(P)).ravel(), (R * np.sin(P)).ravel()
    zz = Z.ravel()
    u1, u2 = half - zz, half + zz
    hx = np.zeros(x.size)
    for p0 in phq:
        dx, dy = x - math.cos(p0), y - math.sin(p0)
        s2 = dx * dx + dy * dy
        hx += math.cos(p0) * dx * (u1 / np.sqrt(s2 + u1 * u1) + u2 / np.sqrt(s2 + u2 * u2)) / s2
    hx *= 1.0 / (4 * math.pi) * (2 * math.pi / nphi)   # (R/4pi) sum over the side, R = 1
    w = np.full(x.size, 1.0 / x.size)
    return LocalField(f"cylinder L/D = {ratio:g} across B0", -hx, w)


def local_field(shape: str, ratio: float, axis: str = "parallel", points: int | None = None) -> LocalField:
    """The local demagnetizing factors over a finite ``cylinder`` (ratio L/D) or a ``spheroid`` (ratio c/a).

    ``axis`` is the body's axis relative to B0 (``parallel``; ``perpendicular``
    for cylinders).  ``points`` sets the cells per coordinate (default 120
    along, 40 across; 24 Gauss nodes for a spheroid); the defaults give the
    volume mean of N to about 1e-4 (checked in the tests against the
    magnetometric factor).
    """
    try:
        g = float(ratio)
    except (TypeError, ValueError):
        raise InputError("ratio", ratio, "a number > 0", _HERE) from None
    if not (math.isfinite(g) and g > 0):
        raise InputError("ratio", ratio, "a number > 0", _HERE)
    if shape == "cylinder" and axis == "parallel":
        return _cylinder_along(g, int(points or 120))
    if shape == "cylinder" and axis == "perpendicular":
        return _cylinder_across(g, int(points or 40))
    if shape == "spheroid" and axis == "parallel":
        return _axisymmetric("spheroid", g, int(points or 24))
    raise InputError("shape/axis", f"{shape}/{axis}", "cylinder parallel or perpendicular, or spheroid parallel",
                     _HERE)


def _fftconvolve(*args, **kwargs):
    """scipy.signal.fftconvolve, imported on first use: scipy.signal costs about 0.4 s at start-up."""
    from scipy.signal import fftconvolve

    return fftconvolve(*args, **kwargs)
