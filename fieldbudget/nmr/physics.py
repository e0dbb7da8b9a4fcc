"""NMR magnetometry physics as pure functions (floats in, floats out).

Written by hand because no library carries the metrology of an NMR field
reading: the Larmor relation with the uncertainty of the reference ratio, the
bulk-susceptibility shift of a non-spherical sample, the sample average of a
curved field, and the line-centre estimators.  Special functions and
quadrature come from scipy.

Every bare float carries its unit in its name (``frequency_hz``,
``gradient_t_per_m``); gyromagnetic ratios are gamma/2pi in Hz/T.  Nothing here
looks up a reference value: callers pass the ratio in (see
``fieldbudget.nmr.nuclei`` for the per-nucleus, per-edition values).

Sources of the formulas (also given in each docstring):

- Larmor relation f = (gamma/2pi) B; CODATA reference conditions (NIST SP 961).
- Bulk-susceptibility shift B_nuc = B0 [1 + chi (1/3 - N)], first order in chi
  (Lorentz cavity; the sign agrees with delta_b = (N - 1/3) chi of the muon g-2
  field papers).
- Demagnetizing factors: sphere and infinite cylinder (elementary); finite
  cylinder, magnetometric, from the shape-function integral
  N_z(g) = (1/g) int_0^inf J1(x)^2/x^2 (1 - exp(-2 g x)) dx, to be compared with
  the chi = 0 values of Chen, Brug & Goldfarb, IEEE Trans. Magn. 27, 3601
  (1991); spheroids by Osborn, Phys. Rev. 67, 351 (1945); general ellipsoids by
  the Carlson integral N_a = (abc/3) R_D(b^2, c^2, a^2) (the elliptic form of
  Osborn 1945 written with Carlson's symmetric integral, DLMF 19.16).
- Water-temperature term: Petley & Donaldson, Metrologia 20, 81 (1984).
- Curvature: a source-free field is harmonic (mean-value theorem for a sphere);
  cylinder average <z^2 - rho^2/2> = L^2/12 - R^2/4.
- Line centre of a fitted Lorentzian: sigma = Gamma (sigma_noise/H)
  sqrt(2/(pi n)), from the Fisher information of the centre (the centre
  decouples from height and width by symmetry; int x^2/(1+x^2)^4 dx = pi/16).
- FID frequency: Cramer-Rao bound of a damped complex exponential in white
  noise; the undamped limit is Rife & Boorstyn, IEEE Trans. Inf. Theory 20,
  591 (1974).
"""

from __future__ import annotations

import itertools
import math
from functools import lru_cache

import numpy as np

from ..errors import InputError

__all__ = [
    "bulk_susceptibility_shift",
    "curvature_mean_square_m2",
    "curvature_shift_t",
    "demag_cylinder",
    "demag_cylinder_axial",
    "demag_ellipsoid",
    "demag_long_cylinder",
    "demag_sphere",
    "demag_spheroid",
    "fid_frequency_crb_hz",
    "field_from_frequency",
    "frequency_from_field",
    "gradient_broadening_hz",
    "isotropic_cylinder_aspect_ratio",
    "linewidth_from_t2_hz",
    "lorentzian_centre_uncertainty_hz",
    "max_usable_gradient_t_per_m",
    "resolution_ppm",
    "water_temperature_shift",
]

_HERE = "fieldbudget.nmr.physics"


def _finite(name: str, value: float, *, positive: bool = False, nonnegative: bool = False) -> float:
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(name, value, "a number", _HERE) from None
    if not math.isfinite(x):
        raise InputError(name, value, "a finite number", _HERE)
    if positive and not x > 0:
        raise InputError(name, value, "a finite number > 0", _HERE)
    if nonnegative and not x >= 0:
        raise InputError(name, value, "a finite number >= 0", _HERE)
    return x


# --- Larmor relation ------------------------------------------------------


def field_from_frequency(frequency_hz: float, gamma_hz_per_t: float, u_gamma_hz_per_t: float = 0.0,
                         u_frequency_hz: float = 0.0) -> tuple[float, float]:
    """Flux density B = f / (gamma/2pi) in T and its standard uncertainty in T.

    ``gamma_hz_per_t`` is gamma/2pi in Hz/T (its magnitude is used: the sign
    of a gyromagnetic ratio only gives the sense of precession).  The
    uncertainty is the first-order law of propagation (JCGM 100, 5.1.6) for a
    quotient: u_r(B)^2 = u_r(f)^2 + u_r(gamma)^2.
    """
    f = _finite("frequency_hz", frequency_hz)
    g = abs(_finite("gamma_hz_per_t", gamma_hz_per_t))
    if g == 0:
        raise InputError("gamma_hz_per_t", gamma_hz_per_t, "a non-zero number", _HERE)
    ug = _finite("u_gamma_hz_per_t", u_gamma_hz_per_t, nonnegative=True)
    uf = _finite("u_frequency_hz", u_frequency_hz, nonnegative=True)
    b = f / g
    return b, math.hypot(uf / g, b * ug / g)


def frequency_from_field(field_t: float, gamma_hz_per_t: float, u_gamma_hz_per_t: float = 0.0,
                         u_field_t: float = 0.0) -> tuple[float, float]:
    """Larmor frequency f = (gamma/2pi) B in Hz and its standard uncertainty in Hz.

    ``gamma_hz_per_t`` is gamma/2pi in Hz/T (magnitude used).  u_r(f)^2 =
    u_r(B)^2 + u_r(gamma)^2 (JCGM 100, 5.1.6).
    """
    b = _finite("field_t", field_t)
    g = abs(_finite("gamma_hz_per_t", gamma_hz_per_t))
    ug = _finite("u_gamma_hz_per_t", u_gamma_hz_per_t, nonnegative=True)
    ub = _finite("u_field_t", u_field_t, nonnegative=True)
    return g * b, math.hypot(g * ub, b * ug)


def resolution_ppm(fwhm_hz: float, field_t: float, gamma_hz_per_t: float) -> float:
    """A linewidth ``fwhm_hz`` (Hz) expressed in ppm of the resonance at ``field_t`` (T).

    resolution = FWHM / ((gamma/2pi) B) * 1e6.
    """
    w = _finite("fwhm_hz", fwhm_hz, nonnegative=True)
    b = abs(_finite("field_t", field_t))
    g = abs(_finite("gamma_hz_per_t", gamma_hz_per_t))
    if b == 0 or g == 0:
        raise InputError("field_t", field_t, "a non-zero field", _HERE)
    return w / (g * b) * 1e6


# --- gradients ------------------------------------------------------------


def gradient_broadening_hz(gradient_t_per_m: float, extent_m: float, gamma_hz_per_t: float) -> float:
    """Spread of Larmor frequencies (Hz) that a linear gradient causes across a sample.

    Delta f = (gamma/2pi) |G| d, with G in T/m and d the sample's extent along
    the gradient in m (a sphere: its diameter).  The line shape is a box for a
    cylinder along G and a parabola for a sphere; both have this full width.
    """
    gr = abs(_finite("gradient_t_per_m", gradient_t_per_m))
    d = _finite("extent_m", extent_m, nonnegative=True)
    g = abs(_finite("gamma_hz_per_t", gamma_hz_per_t))
    return g * gr * d


def max_usable_gradient_t_per_m(natural_fwhm_hz: float, extent_m: float, gamma_hz_per_t: float,
                                broadening_ratio: float = 1.0) -> float:
    """Largest gradient (T/m) at which the resonance is still usable.

    The limit is where the gradient spread (gamma/2pi) G d reaches
    ``broadening_ratio`` times the natural linewidth: G_max = k Gamma /
    ((gamma/2pi) d).  With k = 1 the peak of a CW absorption line has fallen
    to about half (peak ~ Gamma/(Gamma + Delta f); common practice); labs with
    a robust lock may allow a few times more.
    """
    w = _finite("natural_fwhm_hz", natural_fwhm_hz, positive=True)
    d = _finite("extent_m", extent_m, positive=True)
    g = abs(_finite("gamma_hz_per_t", gamma_hz_per_t))
    k = _finite("broadening_ratio", broadening_ratio, positive=True)
    return k * w / (g * d)


# --- demagnetizing factors --------------------------------------------------


def demag_sphere() -> float:
    """Demagnetizing factor of a sphere, 1/3 in every direction (SI, N_x + N_y + N_z = 1)."""
    return 1.0 / 3.0


def demag_long_cylinder(axis: str) -> float:
    """Demagnetizing factor of an infinitely long cylinder: 0 along its axis, 1/2 across.

    ``axis`` is ``"parallel"`` (cylinder axis along B0) or ``"perpendicular"``.
    """
    if axis == "parallel":
        return 0.0
    if axis == "perpendicular":
        return 0.5
    raise InputError("axis", axis, "'parallel' or 'perpendicular'", _HERE)


# int_0^inf J1(x)^2 / x^2 dx = 4/(3 pi) (from the g -> inf limit of the
# shape-function integral; checked by quadrature in the tests).
_J1SQ_OVER_X2 = 4.0 / (3.0 * math.pi)


def demag_cylinder_axial(length_over_diameter: float) -> float:
    """Axial magnetometric demagnetizing factor N_z of a right circular cylinder (chi -> 0).

    N_z(g) = (1/g) int_0^inf J1(x)^2/x^2 (1 - exp(-2 g x)) dx with g = L/D
    (shape-function form; compare the chi = 0 magnetometric table of Chen,
    Brug & Goldfarb, IEEE Trans. Magn. 27, 3601 (1991)).  For g >= 0.1 the
    form (4/(3 pi) - int J1^2/x^2 exp(-2 g x) dx)/g is used, whose integrand is
    damped; for flatter cylinders the integral is summed over intervals of pi (the period of
    J1^2) and closed with its asymptotic tail 1/(pi x^3).
    Accuracy about 1e-7.
    """
    return _demag_cylinder_axial(_finite("length_over_diameter", length_over_diameter, positive=True))


@lru_cache(maxsize=512)  # forms re-evaluate the same ratio on every keystroke; a quadrature is 1-60 ms
def _demag_cylinder_axial(g: float) -> float:
    from scipy import integrate, special  # imported where used: importing the NMR layer stays light

    def j1sq_over_x2(x):
        return special.j1(x) ** 2 / x**2

    if g >= 0.1:
        damped, _ = integrate.quad(lambda x: j1sq_over_x2(x) * math.exp(-2.0 * g * x), 0.0, np.inf, limit=200)
        return (_J1SQ_OVER_X2 - damped) / g

    def f(x):
        return j1sq_over_x2(x) * -math.expm1(-2.0 * g * x)

    edges = np.arange(0.0, 3000.0, math.pi)
    total = sum(integrate.quad(f, a, b)[0] for a, b in itertools.pairwise(edges))
    # Tail: J1(x)^2 averages to 1/(pi x); int_X^inf (1 - e^{-ax})/x^3 dx = (1/2 - E_3(aX))/X^2.
    x_end = edges[-1]
    tail = (0.5 - special.expn(3, 2.0 * g * x_end)) / (math.pi * x_end**2)
    return (total + tail) / g


def demag_cylinder(length_over_diameter: float) -> tuple[float, float]:
    """(N_axial, N_transverse) of a finite cylinder, magnetometric, chi -> 0.

    N_transverse = (1 - N_axial)/2 (the trace of the demagnetizing tensor of
    any body is 1).  See :func:`demag_cylinder_axial` for the source.
    """
    nz = demag_cylinder_axial(length_over_diameter)
    return nz, (1.0 - nz) / 2.0


def isotropic_cylinder_aspect_ratio() -> float:
    """The length/diameter ratio at which a cylinder has N = 1/3 along every axis (about 0.9065)."""
    from scipy import optimize

    return float(optimize.brentq(lambda g: demag_cylinder_axial(g) - 1.0 / 3.0, 0.5, 1.5, xtol=1e-12))


def demag_spheroid(axis_ratio: float) -> tuple[float, float]:
    """(N_axial, N_transverse) of a spheroid with semi-axes (a, a, c) and m = c/a.

    Closed forms of Osborn, Phys. Rev. 67, 351 (1945): prolate (m > 1),
    e = sqrt(1 - 1/m^2), N_z = (1 - e^2)/e^2 (artanh(e)/e - 1); oblate (m < 1),
    e = sqrt(1 - m^2), N_z = (1/e^2) [1 - sqrt(1 - e^2) arcsin(e)/e].  Near
    m = 1 (|e| < 1e-4) the series N_z = 1/3 - (2/15) e^2 (prolate) or
    1/3 + (2/15) e^2 (oblate) avoids cancellation.
    """
    m = _finite("axis_ratio", axis_ratio, positive=True)
    if m > 1.0:
        e2 = 1.0 - 1.0 / m**2
        e = math.sqrt(e2)
        nz = 1.0 / 3.0 - 2.0 / 15.0 * e2 if e < 1e-4 else (1.0 - e2) / e2 * (math.atanh(e) / e - 1.0)
    elif m < 1.0:
        e2 = 1.0 - m**2
        e = math.sqrt(e2)
        nz = 1.0 / 3.0 + 2.0 / 15.0 * e2 if e < 1e-4 else (1.0 - math.sqrt(1.0 - e2) * math.asin(e) / e) / e2
    else:
        nz = 1.0 / 3.0
    return nz, (1.0 - nz) / 2.0


def demag_ellipsoid(a_m: float, b_m: float, c_m: float) -> tuple[float, float, float]:
    """(N_a, N_b, N_c) of an ellipsoid with semi-axes a, b, c (any length unit).

    N_a = (abc/3) R_D(b^2, c^2, a^2), Carlson's symmetric elliptic integral
    (DLMF 19.16.5), which is Osborn's (1945) elliptic-integral form; the three
    add up to 1.  Semi-axes are scaled to the largest first.
    """
    axes = [_finite(n, v, positive=True) for n, v in (("a_m", a_m), ("b_m", b_m), ("c_m", c_m))]
    s = max(axes)
    a, b, c = (x / s for x in axes)
    k = a * b * c / 3.0
    from scipy import special

    return (float(k * special.elliprd(b * b, c * c, a * a)),
            float(k * special.elliprd(c * c, a * a, b * b)),
            float(k * special.elliprd(a * a, b * b, c * c)))


# --- shifts -------------------------------------------------------------------


def bulk_susceptibility_shift(susceptibility: float, demagnetizing_factor: float) -> float:
    """Fractional shift (B_nuc - B0)/B0 = (1/3 - N) chi of the field at the nuclei.

    ``susceptibility`` is the SI volume susceptibility chi (water about
    -9.05e-6) and N the magnetometric demagnetizing factor along B0.  First
    order in chi, Lorentz-cavity local field: B_nuc = B0 [1 + chi (1/3 - N)].
    A sphere (N = 1/3) has no shift; a long cylinder along B0 (N = 0) of water
    reads low by |chi|/3.
    """
    chi = _finite("susceptibility", susceptibility)
    n = _finite("demagnetizing_factor", demagnetizing_factor)
    if not 0.0 <= n <= 1.0:
        raise InputError("demagnetizing_factor", demagnetizing_factor, "a number in [0, 1]", _HERE)
    return (1.0 / 3.0 - n) * chi


def water_temperature_shift(temperature_c: float, coefficient_per_k: float, reference_c: float) -> float:
    """Fractional shift of the proton frequency in a water sphere, f(t)/f(t_ref) - 1.

    f(t) = f(t_ref) [1 - alpha (t - t_ref)] with alpha = +10.36(30)e-9 /K the
    temperature coefficient of the shielding (Petley & Donaldson, Metrologia
    20, 81 (1984)); the frequency falls as the water warms.  ``temperature_c``
    and ``reference_c`` in degrees Celsius, ``coefficient_per_k`` in 1/K.
    """
    t = _finite("temperature_c", temperature_c)
    a = _finite("coefficient_per_k", coefficient_per_k)
    t0 = _finite("reference_c", reference_c)
    return -a * (t - t0)


def curvature_mean_square_m2(shape: str, diameter_m: float, length_m: float | None = None,
                             axis: str = "parallel", model: str = "harmonic") -> float:
    """Sample average (m^2) that multiplies B''/2 in the curvature shift of the line centre.

    The field along the axis z of B0 is B_z = B(0) + G z + (B''/2) q, averaged
    over the sample volume.  ``model="harmonic"`` uses the axisymmetric
    second-order solution of Laplace's equation, q = z^2 - rho^2/2: the average
    is 0 for a sphere (mean-value theorem), L^2/12 - R^2/4 for a cylinder along
    z and R^2/8 - L^2/24 for a cylinder across z.  ``model="one-axis"`` takes
    q = z^2 alone (a field that varies along z only, which a source-free field
    cannot do): a^2/5 for a sphere of radius a, L^2/12 (along) or R^2/4
    (across) for a cylinder.  ``length_m`` None means a sphere of
    ``diameter_m``.
    """
    d = _finite("diameter_m", diameter_m, nonnegative=True)
    r = d / 2.0
    if model not in ("harmonic", "one-axis"):
        raise InputError("model", model, "'harmonic' or 'one-axis'", _HERE)
    if shape == "sphere":
        return 0.0 if model == "harmonic" else r * r / 5.0
    if shape != "cylinder":
        raise InputError("shape", shape, "'sphere' or 'cylinder'", _HERE)
    if length_m is None:
        raise InputError("length_m", length_m, "a length in m for a cylinder", _HERE)
    length = _finite("length_m", length_m, nonnegative=True)
    if axis == "parallel":
        return length**2 / 12.0 - r * r / 4.0 if model == "harmonic" else length**2 / 12.0
    if axis == "perpendicular":
        return r * r / 8.0 - length**2 / 24.0 if model == "harmonic" else r * r / 4.0
    raise InputError("axis", axis, "'parallel' or 'perpendicular'", _HERE)


def curvature_shift_t(second_derivative_t_per_m2: float, mean_square_m2: float) -> float:
    """Shift (T) of the sample-averaged field from the field at the sample centre: (B''/2) <q>.

    ``second_derivative_t_per_m2`` is d^2B/dz^2 at the centre (T/m^2) and
    ``mean_square_m2`` the average from :func:`curvature_mean_square_m2`.
    """
    return 0.5 * _finite("second_derivative_t_per_m2", second_derivative_t_per_m2) * _finite(
        "mean_square_m2", mean_square_m2)


# --- line centre ------------------------------------------------------------


def lorentzian_centre_uncertainty_hz(fwhm_hz: float, snr: float, points_per_fwhm: float) -> float:
    """Standard uncertainty (Hz) of the centre of a least-squares fitted Lorentzian line.

    sigma_centre = Gamma (sigma/H) sqrt(2/(pi n)), with Gamma the FWHM in Hz,
    ``snr`` = H/sigma the peak height over the rms noise per point, and n the
    number of spectral points per FWHM.  Derived from the Fisher information
    of the centre of H/[1 + ((nu - nu0)/(Gamma/2))^2] in white noise (the
    centre decouples from H and Gamma by symmetry, int x^2/(1+x^2)^4 dx =
    pi/16), i.e. the Cramer-Rao bound that a least-squares fit reaches.  White
    noise and a known baseline assumed; correlated noise, a fitted baseline or
    an asymmetric line make it larger.  The rule of thumb FWHM/(2 SNR) is only
    an order of magnitude.
    """
    w = _finite("fwhm_hz", fwhm_hz, positive=True)
    s = _finite("snr", snr, positive=True)
    n = _finite("points_per_fwhm", points_per_fwhm, positive=True)
    return w / s * math.sqrt(2.0 / (math.pi * n))


def fid_frequency_crb_hz(amplitude_to_noise: float, t2_s: float, sample_interval_s: float,
                         record_s: float | None = None) -> float:
    """Cramer-Rao lower bound (Hz) on the frequency of a free-induction decay.

    Model: complex (quadrature) samples A exp(-t/T2) exp(i(2 pi f t + phi)) +
    w_n at t_n = n dt, complex white noise with E|w|^2 = sigma^2, all of A,
    phi, f, T2 unknown.  With S_k = sum t_n^k exp(-2 t_n/T2):
    var(omega) >= sigma^2/(2 A^2) S0/(S0 S2 - S1^2).  For ``record_s`` None
    the long-record limit sigma_f = (1/pi)(sigma/A) sqrt(dt/T2^3) is used; for
    T2 = inf and a finite record this is the bound of Rife & Boorstyn, IEEE
    Trans. Inf. Theory 20, 591 (1974).  A real (not quadrature) record with
    noise sigma_r per sample behaves like sigma = 2 sigma_r.
    ``amplitude_to_noise`` is A/sigma per sample.
    """
    snr = _finite("amplitude_to_noise", amplitude_to_noise, positive=True)
    t2 = float(t2_s)
    if not t2 > 0:
        raise InputError("t2_s", t2_s, "a number > 0 (inf for no decay)", _HERE)
    dt = _finite("sample_interval_s", sample_interval_s, positive=True)
    if record_s is None:
        if not math.isfinite(t2):
            raise InputError("record_s", record_s, "a record length in s when T2 is infinite", _HERE)
        return math.sqrt(dt / t2**3) / (math.pi * snr)
    rec = _finite("record_s", record_s, positive=True)
    n = round(rec / dt)  # number of samples in the record
    if n < 3:
        raise InputError("record_s", record_s, "at least three sample intervals long", _HERE)
    # Work in units of dt so the sums stay well scaled.
    k = np.arange(n, dtype=float)
    w = np.exp(-2.0 * k * dt / t2)
    s0, s1, s2 = w.sum(), (k * w).sum(), (k * k * w).sum()
    var_omega = 1.0 / (2.0 * snr**2) * s0 / (s0 * s2 - s1 * s1) / dt**2
    return math.sqrt(var_omega) / (2.0 * math.pi)


def linewidth_from_t2_hz(t2_s: float) -> float:
    """Lorentzian FWHM (Hz) of a line with transverse relaxation time T2* (s): 1/(pi T2*)."""
    return 1.0 / (math.pi * _finite("t2_s", t2_s, positive=True))


# --- drift: Allan deviation ------------------------------------------------------


def allan_deviation(fractional: np.ndarray, m: int = 1, overlapping: bool = False) -> tuple[float, int]:
    """Allan deviation of fractional-frequency data at tau = m tau0, and the number of averages used.

    ``fractional`` holds consecutive fractional frequencies y_i (one per
    logging interval tau0).  Non-overlapping: M = n // m block means ybar_k,
    sigma^2 = <(ybar_{k+1} - ybar_k)^2>/2 (IEEE Std 1139; NIST SP 1065, eq. 6);
    returns (sigma, M).  Overlapping: every start i, averages of m readings
    each, sigma^2 = sum (ybar_{i+m} - ybar_i)^2 / (2 (n - 2m + 1)) (NIST SP
    1065, eq. 10); returns (sigma, n) with n the number of readings.
    """
    y = np.asarray(fractional, dtype=float)
    m = int(m)
    if m < 1:
        raise InputError("m", m, "a whole number >= 1", _HERE)
    if not overlapping:
        blocks = len(y) // m
        if blocks < 3:
            raise InputError("m", m, f"at most {len(y) // 3} (three averaging intervals are needed)", _HERE)
        means = y[: blocks * m].reshape(blocks, m).mean(axis=1)
        return float(np.sqrt(0.5 * np.mean(np.diff(means) ** 2))), blocks
    if len(y) < 2 * m + 1:
        raise InputError("m", m, f"at most {(len(y) - 1) // 2} (2m + 1 readings are needed)", _HERE)
    c = np.concatenate(([0.0], np.cumsum(y)))
    means = (c[m:] - c[:-m]) / m              # average of m readings starting at each i
    d = means[m:] - means[:-m]
    return float(np.sqrt(0.5 * np.mean(d**2))), len(y)


def allan_edf_white_fm(count: int, m: int = 1, overlapping: bool = False) -> float:
    """Equivalent degrees of freedom of an Allan variance estimate, white frequency noise.

    Non-overlapping, M block averages: nu = 2 (M - 1)^2 / (3 M - 4), the exact
    chi-square equivalent (Lesage & Audoin, IEEE Trans. Instrum. Meas. 22, 157
    (1973); the white-FM case of the EDF table of Howe, Allan & Barnes, Proc.
    35th Frequency Control Symposium (1981)).  Gives 1.6 at M = 3, 6.2 at 10,
    19.6 at 30.  Overlapping, n readings at averaging factor m (N = n + 1
    phase points): nu = [3 (N - 1)/(2 m) - 2 (N - 2)/N] 4 m^2/(4 m^2 + 5)
    (Howe, Allan & Barnes 1981, as tabulated in NIST SP 1065, Table 5).
    """
    if not overlapping:
        big_m = int(count)
        if big_m < 3:
            raise InputError("count", count, "at least 3 averaging intervals", _HERE)
        return 2.0 * (big_m - 1) ** 2 / (3.0 * big_m - 4.0)
    n_phase = int(count) + 1
    m = int(m)
    return (3.0 * (n_phase - 1) / (2.0 * m) - 2.0 * (n_phase - 2) / n_phase) * 4.0 * m * m / (4.0 * m * m + 5.0)
