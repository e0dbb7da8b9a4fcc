"""Field maps fitted to the regular solid-harmonic expansion of a source-free field.

A lab scans the NMR probe over positions and writes a CSV map: ``x_m,y_m,z_m``
and ``f_Hz`` (resonance frequency; converted to B with the nucleus's CODATA
ratio) or ``B_T``, with an optional ``u_f_Hz`` or ``u_B_T`` per point.
:func:`fit_map` fits the expansion up to order N by (weighted) linear least
squares and returns a :class:`FieldMapFit`: the field, gradient and second
derivatives at the reference point with the covariance of the coefficients,
the residuals, the homogeneity over a sphere or cylinder, averages over a
sample's volume, and a flag when the map is not representable at that order.

Physics.  In a region free of currents and magnetised matter B = -grad(Phi)
with Laplace's equation for Phi, so each Cartesian component of B, and B_z in
particular, is itself harmonic.  It is expanded in the regular solid
harmonics about the reference point (Jackson, *Classical Electrodynamics*,
3rd ed., 1999, sections 3.1-3.2 and 3.6, from memory)::

    B_z(r, theta, phi) = sum_{l<=N} sum_{m<=l} r^l P_l^m(cos theta) (a_lm cos m phi + b_lm sin m phi)

which has 2l + 1 terms at order l and (N + 1)^2 in all.  Each term is a
harmonic polynomial, written out exactly here (rational coefficients) in
Cartesian or cylindrical form:

* ``basis="cartesian"``: each term is scaled so that its leading Cartesian
  monomial (x^m z^(l-m) for cos terms, x^(m-1) y z^(l-m) for sin terms) has
  coefficient 1.  Up to order 2: 1; z, x, y; z^2 - (x^2 + y^2)/2, xz, yz,
  x^2 - y^2, xy;
* ``basis="cylindrical"``: rho^m {cos, sin}(m phi) times a polynomial in z
  and rho^2 whose z^(l-m) coefficient is 1 (the sin terms are m times the
  Cartesian ones).

The m = 0 terms are r^l P_l(cos theta), equal to z^l on the axis, so
d^2B/dz^2 = 2 x (coefficient of z^2 - rho^2/2).

An NMR probe measures |B|, not B_z.  For a strong field along z,
|B| = B_z + (B_x^2 + B_y^2)/(2 B_z) + ..., and the transverse components are
of the order of the gradients times the distance, so |B| = B_z to second
order in the inhomogeneity (e.g. 1 mT/m over 50 mm in 1.5 T: 8e-10 T).  The
map is therefore fitted as B_z.

Uncertainties: with per-point u the fit is weighted (w = 1/u^2) and the
coefficients' covariance is (A^T W A)^-1 from the stated u; the map is flagged
as not representable at order N when the chi-squared of the residuals has an
upper-tail probability below :data:`FLAG_PROBABILITY` (the residuals are far
beyond the stated u).  Without per-point u the covariance is
s^2 (A^T A)^-1 with s^2 the residual variance, and representability cannot be
judged.  Every derived number (the field, a derivative, a volume average) is a
linear function w . c of the coefficients, so its variance is w C w^T
(JCGM 100:2008, eq. (13), with the sensitivity coefficients w).

Volume averages are exact: each monomial is integrated over a ball or a
cylinder in closed form (Folland, "How to integrate a polynomial over a
sphere", Amer. Math. Monthly 108, 446 (2001), from memory).  By the mean-value
theorem of harmonic functions the average over a sphere is the value at its
centre, which the tests check.  Homogeneity: peak-to-peak over the region
(the extremes of a harmonic function over a closed region lie on its boundary,
the maximum principle, so the boundary is sampled densely) and rms over the
volume (exact), both in ppm of the field at the region's centre.

Written by hand (with numpy's least squares) because no library fits
solid-harmonic field expansions with these uncertainties.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from fractions import Fraction
from functools import lru_cache
from pathlib import Path

import numpy as np

from .. import _display as D
from ..errors import BudgetFileError, Finding, InputError
from ._csvdata import read_table

__all__ = ["BASES", "FLAG_PROBABILITY", "FieldMap", "FieldMapFit", "Homogeneity", "HarmonicTerm", "MapTerms",
           "calibration_offset", "fit_map", "sample_terms",
           "harmonic_terms", "read_map"]

BASES = ("cartesian", "cylindrical")
SHAPES = ("sphere", "cylinder")

#: A map is flagged as not representable at its order when P(chi^2 >= observed) is below this.
FLAG_PROBABILITY = 1e-6

#: Singular-value ratio beyond which the map's positions cannot determine the expansion.
_RANK_LIMIT = 1e-10

Poly = tuple  # ((a, b, c), coefficient) pairs: sum coefficient x^a y^b z^c


# --- the harmonic basis -----------------------------------------------------------------


@dataclass(frozen=True)
class HarmonicTerm:
    """One regular solid harmonic: order ``l``, ``m``, ``part`` "cos" or "sin", exact polynomial ``poly``."""

    l: int  # noqa: E741 - the order's usual name
    m: int
    part: str
    label: str
    poly: Poly = field(repr=False)

    def evaluate(self, x: np.ndarray, y: np.ndarray, z: np.ndarray) -> np.ndarray:
        return _poly_eval(self.poly, x, y, z)


def _legendre(l: int) -> dict[int, Fraction]:  # noqa: E741
    """Coefficients of P_l(t) by power: 2^-l sum_k (-1)^k C(l,k) C(2l-2k,l) t^(l-2k)."""
    return {l - 2 * k: Fraction((-1) ** k * math.comb(l, k) * math.comb(2 * l - 2 * k, l), 2 ** l)
            for k in range(l // 2 + 1)}


def _poly_add(acc: dict, mono: tuple, coef) -> None:
    acc[mono] = acc.get(mono, 0) + coef


@lru_cache(maxsize=32)
def harmonic_terms(order: int, basis: str = "cartesian") -> tuple[HarmonicTerm, ...]:
    """The (order + 1)^2 regular solid harmonics up to ``order``, ordered by l, then m (cos before sin)."""
    if isinstance(order, bool) or not isinstance(order, int) or order < 0:
        raise InputError("order", order, "a whole number >= 0", "field map")
    if basis not in BASES:
        raise InputError("basis", basis, " or ".join(BASES), "field map")
    terms = []
    for l in range(order + 1):  # noqa: E741
        pl = _legendre(l)
        for m in range(l + 1):
            # r^(l-m) P_l^(m)(z/r) as a polynomial in z and rho^2: {(power of z, power of rho^2): coefficient}
            deriv = {j - m: c * math.perm(j, m) for j, c in pl.items() if j >= m}
            zr: dict = {}
            for j, c in deriv.items():
                e = (l - m - j) // 2  # r^(l-m-j) = (rho^2 + z^2)^e
                for i in range(e + 1):
                    _poly_add(zr, (j + 2 * (e - i), i), c * math.comb(e, i))
            lead = zr[(l - m, 0)]
            zr = {k: v / lead for k, v in zr.items() if v != 0}
            for part in (("cos",) if m == 0 else ("cos", "sin")):
                # (x + iy)^m: real part for cos, imaginary part for sin
                xy = {}
                for k in range(m + 1):
                    if (k % 2 == 0) == (part == "cos"):
                        sign = (-1) ** (k // 2)
                        _poly_add(xy, (m - k, k), sign * math.comb(m, k))
                scale = Fraction(1)
                if basis == "cartesian" and part == "sin":
                    scale = Fraction(1, m)  # leading x^(m-1) y coefficient of Im (x + iy)^m is m
                poly: dict = {}
                for (pz, pr), c in zr.items():
                    for i in range(pr + 1):  # rho^(2 pr) = (x^2 + y^2)^pr
                        for (ax, ay), cxy in xy.items():
                            _poly_add(poly, (ax + 2 * i, ay + 2 * (pr - i), pz), c * cxy * math.comb(pr, i) * scale)
                poly = {k: v for k, v in poly.items() if v != 0}
                label = _cart_label(poly) if basis == "cartesian" else _cyl_label(m, part, zr)
                terms.append(HarmonicTerm(l, m, part, label, tuple(sorted(poly.items(), reverse=True))))
    return tuple(terms)


def _mono(a: int, b: int, c: int) -> str:
    parts = [f"{v}^{p}" if p > 1 else v for v, p in (("x", a), ("y", b), ("z", c)) if p]
    return " ".join(parts) or "1"


def _coef_text(c: Fraction, first: bool, mono: str) -> str:
    sign = "-" if c < 0 else ("" if first else "+")
    a = abs(c)
    num = "" if a == 1 and mono != "1" else (str(a.numerator) if a.denominator == 1 else f"{a.numerator}/{a.denominator}")
    body = f"{num} {mono}".strip() if mono != "1" else (num or "1")
    return f"{sign}{body}" if first else f" {sign} {body}"


def _cart_label(poly: dict) -> str:
    items = sorted(poly.items(), key=lambda kv: (-kv[0][2], -kv[0][0], -kv[0][1]))
    return "".join(_coef_text(c, i == 0, _mono(*k)) for i, (k, c) in enumerate(items))


def _cyl_label(m: int, part: str, zr: dict) -> str:
    items = sorted(zr.items(), key=lambda kv: -kv[0][0])
    inner = "".join(_coef_text(c, i == 0, " ".join(x for x in ((f"z^{pz}" if pz > 1 else ("z" if pz else "")),
                                                                  (f"rho^{2 * pr}" if pr else "")) if x) or "1")
                    for i, ((pz, pr), c) in enumerate(items))
    if m == 0:
        return inner
    ang = f"{part}({m} phi)" if m > 1 else f"{part}(phi)"
    rho = f"rho^{m}" if m > 1 else "rho"
    return f"{rho} {ang}" + ("" if inner == "1" else f" [{inner}]")


def _poly_eval(poly: Poly, x, y, z) -> np.ndarray:
    x, y, z = (np.asarray(v, dtype=float) for v in (x, y, z))
    out = np.zeros(np.broadcast(x, y, z).shape)
    for (a, b, c), coef in poly:
        out = out + float(coef) * x ** a * y ** b * z ** c
    return out


def _poly_deriv(poly: Poly, axis: int) -> Poly:
    out = []
    for mono, coef in poly:
        p = mono[axis]
        if p:
            m = list(mono)
            m[axis] -= 1
            out.append((tuple(m), coef * p))
    return tuple(out)


def _poly_shift(poly: Poly, centre: tuple[float, float, float]) -> dict:
    """poly(centre + u) as a polynomial in u (float coefficients)."""
    out: dict = {}
    x0, y0, z0 = centre
    for (a, b, c), coef in poly:
        for i in range(a + 1):
            ci = math.comb(a, i) * x0 ** (a - i)
            for j in range(b + 1):
                cj = math.comb(b, j) * y0 ** (b - j)
                for k in range(c + 1):
                    ck = math.comb(c, k) * z0 ** (c - k)
                    _poly_add(out, (i, j, k), float(coef) * ci * cj * ck)
    return out


def _half_gamma(p: int) -> float:
    from scipy import special  # scipy is imported where it is used: importing the NMR layer stays light

    return special.gamma((p + 1) / 2)


def _monomial_mean(a: int, b: int, c: int, shape: str, dims: tuple[float, ...], axis: str) -> float:
    """Mean of x^a y^b z^c over a ball (dims = (radius,)) or cylinder ((radius, length), along ``axis``) at 0."""
    if a % 2 or b % 2 or c % 2:
        return 0.0
    from scipy import special

    if shape == "sphere":
        (r,) = dims
        s = a + b + c
        integral = 2 * _half_gamma(a) * _half_gamma(b) * _half_gamma(c) / special.gamma((s + 3) / 2) * \
            r ** (s + 3) / (s + 3)
        return integral / (4.0 / 3.0 * math.pi * r ** 3)
    r, length = dims
    # put the cylinder's axis last: the exponent along the axis and the two across it
    p_axis, (p1, p2) = {"z": (c, (a, b)), "x": (a, (b, c)), "y": (b, (a, c))}[axis]
    disk = 2 * _half_gamma(p1) * _half_gamma(p2) / special.gamma((p1 + p2 + 2) / 2) * r ** (p1 + p2 + 2) / \
        (p1 + p2 + 2)
    along = (length / 2) ** p_axis / (p_axis + 1)  # mean of t^p over [-L/2, L/2], p even
    return disk / (math.pi * r * r) * along


# --- the map ------------------------------------------------------------------------------


@dataclass(frozen=True)
class FieldMap:
    """Map points: positions ``xyz_m`` (n x 3, m), ``field_t`` (T), ``u_field_t`` (T) or None."""

    xyz_m: np.ndarray = field(repr=False)
    field_t: np.ndarray = field(repr=False)
    u_field_t: np.ndarray | None = field(default=None, repr=False)
    path: str = ""
    digest: str = ""
    quantity: str = "B_T"   # the column given: "B_T" or "f_Hz"
    nucleus: str = ""       # for an f_Hz map
    codata: int | None = None

    def __post_init__(self) -> None:
        where = self.path or "field map"
        xyz = np.array(self.xyz_m, dtype=float)
        b = np.array(self.field_t, dtype=float)
        if xyz.ndim != 2 or xyz.shape[1] != 3 or b.shape != (xyz.shape[0],):
            raise InputError("xyz_m", f"shape {xyz.shape}", "n x 3 positions with one field value each", where)
        if not (np.all(np.isfinite(xyz)) and np.all(np.isfinite(b))):
            raise InputError("field map", "a non-finite value", "finite numbers only", where)
        arrays = [xyz, b]
        if self.u_field_t is not None:
            u = np.array(self.u_field_t, dtype=float)
            if u.shape != b.shape or not np.all(np.isfinite(u)) or np.any(u <= 0):
                bad = u[~(np.isfinite(u) & (u > 0))][:1] if u.shape == b.shape else u.shape
                raise InputError("u", bad, "a standard uncertainty > 0 for every point", where)
            arrays.append(u)
        for a in arrays:
            a.setflags(write=False)
        object.__setattr__(self, "xyz_m", arrays[0])
        object.__setattr__(self, "field_t", arrays[1])
        if self.u_field_t is not None:
            object.__setattr__(self, "u_field_t", arrays[2])

    @property
    def n_points(self) -> int:
        return int(self.field_t.shape[0])

    def __repr__(self) -> str:
        src = f" from {self.path!r}" if self.path else ""
        u = "with" if self.u_field_t is not None else "without"
        return f"<FieldMap {self.n_points} points {u} per-point u{src}>"


def read_map(path: str | Path, *, nucleus: str | None = None, codata: int | None = None,
             data: bytes | None = None) -> FieldMap:
    """Read a CSV map: ``x_m,y_m,z_m`` and ``f_Hz`` or ``B_T``, optionally ``u_f_Hz`` or ``u_B_T``.

    An ``f_Hz`` map is converted to B with ``nucleus`` (default the shielded
    proton) in CODATA edition ``codata`` (default the newest): B = f/(gamma/2pi).
    The reference ratio's own uncertainty is common to every point; it scales
    the whole map and is left to the budget that uses the map.  ``data``: the
    file's bytes when already read (see :func:`~fieldbudget.nmr._csvdata.read_table`).
    """
    from .nuclei import DEFAULT_NUCLEUS
    from .nuclei import nucleus as _nucleus

    table = read_table(path, needed=(("x_m",), ("y_m",), ("z_m",), ("f_Hz", "B_T")), optional=("u_f_Hz", "u_B_T"),
                       min_rows=2, what="field map", data=data)
    xyz = np.column_stack([table.column(c) for c in ("x_m", "y_m", "z_m")])
    if table.has("B_T"):
        if table.has("u_f_Hz"):
            raise BudgetFileError(table.path, "header", "u_f_Hz goes with f_Hz; a B_T map takes u_B_T")
        return FieldMap(xyz, table.column("B_T"), table.column("u_B_T") if table.has("u_B_T") else None,
                        path=table.path, digest=table.digest, quantity="B_T")
    if table.has("u_B_T"):
        raise BudgetFileError(table.path, "header", "u_B_T goes with B_T; an f_Hz map takes u_f_Hz")
    name = nucleus or DEFAULT_NUCLEUS
    gamma = _nucleus(name).gamma_hz_per_t(codata)[0]
    u = table.column("u_f_Hz") / gamma if table.has("u_f_Hz") else None
    return FieldMap(xyz, table.column("f_Hz") / gamma, u, path=table.path, digest=table.digest, quantity="f_Hz",
                    nucleus=name, codata=codata)


# --- the result -----------------------------------------------------------------------------


@dataclass(frozen=True)
class Homogeneity:
    """Field homogeneity over a region: ``shape`` "sphere" (``size_m`` = diameter) or "cylinder" ((diameter,
    length), axis along z), peak-to-peak and rms in ppm of the field at the region's centre."""

    shape: str
    size_m: object
    peak_to_peak_ppm: float
    rms_ppm: float
    centre_m: tuple = (0.0, 0.0, 0.0)

    def to_dict(self) -> dict:
        size = list(self.size_m) if isinstance(self.size_m, tuple) else self.size_m
        return {"shape": self.shape, "size_m": size, "peak_to_peak": self.peak_to_peak_ppm, "rms": self.rms_ppm}

    def text(self) -> str:
        if self.shape == "sphere":
            where = f"sphere of diameter {self.size_m * 1e3:.4g} mm"
        else:
            where = f"cylinder {self.size_m[0] * 1e3:.4g} mm diameter x {self.size_m[1] * 1e3:.4g} mm along z"
        return f"{where}: {self.peak_to_peak_ppm:.4g} ppm peak-to-peak, {self.rms_ppm:.4g} ppm rms"


@dataclass(frozen=True)
class FieldMapFit:
    """The solid-harmonic expansion fitted to a map (fields in T, positions in m, about ``about_m``).

    ``coefficients`` and ``covariance`` (T/m^l per term, in the order of
    ``terms``), ``b0_t``/``u_b0_t`` (the field at the reference point),
    ``gradient_t_per_m``/``u_gradient_t_per_m``, ``hessian_t_per_m2`` (the
    second derivatives d2B/dx_i dx_j), ``d2b_dz2_t_per_m2`` and its u,
    ``homogeneity``, ``residual_rms_t``, ``chi2_reduced`` (None without
    per-point u), ``n_points``, ``order``, ``basis`` and ``warnings``
    (:class:`Finding`).  Methods give the value, derivatives and volume
    averages anywhere, each with its covariance.
    """

    order: int
    basis: str
    about_m: tuple
    n_points: int
    terms: tuple
    coefficients: tuple
    covariance: tuple = field(repr=False)
    b0_t: float = 0.0
    u_b0_t: float = 0.0
    gradient_t_per_m: tuple = (0.0, 0.0, 0.0)
    u_gradient_t_per_m: tuple = (0.0, 0.0, 0.0)
    hessian_t_per_m2: tuple = field(default=(), repr=False)
    d2b_dz2_t_per_m2: float = 0.0
    u_d2b_dz2_t_per_m2: float = 0.0
    homogeneity: Homogeneity | None = None
    residual_rms_t: float = 0.0
    chi2_reduced: float | None = None
    weighted: bool = False
    representable: bool = True
    path: str = ""
    digest: str = ""
    warnings: tuple = ()
    xyz_m: np.ndarray = field(default=None, repr=False, compare=False)
    field_t: np.ndarray = field(default=None, repr=False, compare=False)
    residuals_t: np.ndarray = field(default=None, repr=False, compare=False)

    # -- linear functionals of the coefficients ------------------------------------------
    def _terms(self) -> tuple[HarmonicTerm, ...]:
        return harmonic_terms(self.order, self.basis)

    def _rel(self, point_m) -> tuple[float, float, float]:
        p = _point(point_m, "point_m", self.path or "field map")
        return (p[0] - self.about_m[0], p[1] - self.about_m[1], p[2] - self.about_m[2])

    def weights(self, what: str, point_m=None, **region) -> np.ndarray:
        """Sensitivity coefficients w (one per term) of a derived quantity q = w . c.

        ``what``: ``"value"``, ``"dx"``/``"dy"``/``"dz"`` (first derivatives),
        ``"dxdx"``, ``"dzdz"``, ... (second derivatives), at ``point_m``
        (default the reference point); or ``"average"`` over a region centred
        at ``point_m``: ``shape`` ("sphere" or "cylinder"), ``diameter_m``,
        ``length_m`` and ``axis`` ("x", "y" or "z") for a cylinder.
        """
        rel = self._rel(point_m if point_m is not None else self.about_m)
        terms = self._terms()
        if what == "average":
            shape, dims, axis = _region(region, self.path or "field map")
            out = []
            for t in terms:
                shifted = _poly_shift(t.poly, rel)
                out.append(sum(c * _monomial_mean(*mono, shape, dims, axis) for mono, c in shifted.items()))
            return np.array(out)
        axes = {"x": 0, "y": 1, "z": 2}
        if what == "value":
            order = []
        elif len(what) in (2, 4) and all(what[i] == "d" and what[i + 1] in axes for i in range(0, len(what), 2)):
            order = [axes[what[i + 1]] for i in range(0, len(what), 2)]
        else:
            raise InputError("what", what, "'value', 'dx', 'dy', 'dz', a second derivative such as 'dzdz', or "
                             "'average'", "FieldMapFit.weights")
        out = []
        for t in terms:
            p = t.poly
            for ax in order:
                p = _poly_deriv(p, ax)
            out.append(float(_poly_eval(p, *rel)))
        return np.array(out)

    def combined(self, weights: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
        """Values and covariance matrix of several derived quantities (rows of ``weights``)."""
        w = np.atleast_2d(np.asarray(weights, dtype=float))
        c = np.asarray(self.coefficients)
        cov = np.asarray(self.covariance)
        return w @ c, w @ cov @ w.T

    def value_at(self, point_m) -> tuple[float, float]:
        """(B, u) at ``point_m`` (three coordinates in m)."""
        v, cov = self.combined([self.weights("value", point_m)])
        return float(v[0]), math.sqrt(max(float(cov[0, 0]), 0.0))

    def gradient_at(self, point_m) -> tuple[np.ndarray, np.ndarray]:
        """(gradient (T/m), its 3 x 3 covariance) at ``point_m``."""
        return self.combined([self.weights(d, point_m) for d in ("dx", "dy", "dz")])

    def average(self, shape: str, diameter_m: float, length_m: float | None = None, axis: str = "z",
                centre_m=None) -> tuple[float, float]:
        """(mean of B, u) over a sphere or cylinder centred at ``centre_m`` (default the reference point)."""
        w = self.weights("average", centre_m, shape=shape, diameter_m=diameter_m, length_m=length_m, axis=axis)
        v, cov = self.combined([w])
        return float(v[0]), math.sqrt(max(float(cov[0, 0]), 0.0))

    def evaluate(self, xyz_m) -> np.ndarray:
        """The fitted field (T) at an n x 3 array of positions."""
        xyz = np.atleast_2d(np.asarray(xyz_m, dtype=float))
        rel = [xyz[:, i] - self.about_m[i] for i in range(3)]
        return sum(c * t.evaluate(*rel) for c, t in zip(self.coefficients, self._terms()))

    # -- output ---------------------------------------------------------------------------
    def to_dict(self) -> dict:
        """The ``fieldbudget map --json`` object: the issue's keys plus terms, hessian, u's, chi2 and warnings."""
        return {
            "B0_T": self.b0_t, "u_B0_T": self.u_b0_t,
            "gradient_T_per_m": list(self.gradient_t_per_m), "u_gradient_T_per_m": list(self.u_gradient_t_per_m),
            "d2B_dz2_T_per_m2": self.d2b_dz2_t_per_m2, "u_d2B_dz2_T_per_m2": self.u_d2b_dz2_t_per_m2,
            "hessian_T_per_m2": [list(r) for r in self.hessian_t_per_m2],
            "coefficients": list(self.coefficients), "terms": list(self.terms),
            "covariance": [list(r) for r in self.covariance],
            "homogeneity_ppm": self.homogeneity.to_dict() if self.homogeneity else None,
            "residual_rms_T": self.residual_rms_t, "chi2_reduced": self.chi2_reduced,
            "n_points": self.n_points, "order": self.order, "basis": self.basis, "about_m": list(self.about_m),
            "representable": self.representable, "digest": self.digest,
            "warnings": [Finding.coerce(w).to_dict() for w in self.warnings],
        }

    def text(self) -> str:
        g, ug = self.gradient_t_per_m, self.u_gradient_t_per_m
        lines = [
            f"Solid-harmonic fit ({self.basis}, order {self.order}, {len(self.terms)} terms) of "
            f"{self.path or 'field map'}: {self.n_points} points, about "
            f"({', '.join(f'{v:g}' for v in self.about_m)}) m",
            f"  B0          {self.b0_t:.10g} T, u = {self.u_b0_t:.3g} T",
            "  gradient    " + ", ".join(f"{a} {v:.4g}(u {u:.2g})" for a, v, u in zip("xyz", g, ug)) + " T/m",
            f"  d2B/dz2     {self.d2b_dz2_t_per_m2:.4g} T/m^2, u = {self.u_d2b_dz2_t_per_m2:.2g} T/m^2",
            f"  residuals   {self.residual_rms_t:.3g} T rms" + (
                f", chi2_reduced = {self.chi2_reduced:.3g}" if self.chi2_reduced is not None else ""),
        ]
        if self.homogeneity:
            lines.append(f"  homogeneity {self.homogeneity.text()}")
        lines.append("  coefficients (T/m^l):")
        cov = np.asarray(self.covariance)
        for i, (t, c) in enumerate(zip(self.terms, self.coefficients)):
            lines.append(f"    {t:<36} {c: .6e}  u = {math.sqrt(max(cov[i, i], 0.0)):.2e}")
        lines += [f"warning: {w}" for w in self.warnings]
        return "\n".join(lines)

    def __repr__(self) -> str:
        flag = "" if self.representable else ", NOT representable at this order"
        return (f"<FieldMapFit order {self.order}, {self.n_points} points: B0 = {self.b0_t:.10g} T, "
                f"gradient = ({', '.join(f'{v:.3g}' for v in self.gradient_t_per_m)}) T/m, "
                f"d2B/dz2 = {self.d2b_dz2_t_per_m2:.3g} T/m^2{flag}>")

    def _repr_html_(self) -> str:
        rows = [("B0", D.fmt_si(self.b0_t, "T", self.u_b0_t))]
        for a, v, u in zip("xyz", self.gradient_t_per_m, self.u_gradient_t_per_m):
            rows.append((f"dB/d{a}", f"{v:.4g} T/m (u = {u:.2g})"))
        rows.append(("d²B/dz²", f"{self.d2b_dz2_t_per_m2:.4g} T/m² (u = {self.u_d2b_dz2_t_per_m2:.2g})"))
        rows.append(("residual rms", f"{self.residual_rms_t:.3g} T"))
        if self.chi2_reduced is not None:
            rows.append(("reduced chi²", f"{self.chi2_reduced:.3g}"))
        if self.homogeneity:
            rows.append(("homogeneity", self.homogeneity.text()))
        body = D.html_table(("quantity", "value"), rows)
        for w in self.warnings:
            body += f'<p class="fb-warning">{D.escape(w)}</p>'
        return D.html_block(f"Field map fit, order {self.order}: {self.path or 'field map'}", body)


def _point(v, name: str, where: str) -> tuple[float, float, float]:
    try:
        p = tuple(float(x) for x in v)
    except (TypeError, ValueError):
        raise InputError(name, v, "three coordinates x, y, z in m", where) from None
    if len(p) != 3 or not all(math.isfinite(x) for x in p):
        raise InputError(name, v, "three finite coordinates x, y, z in m", where)
    return p


def _region(region: dict, where: str) -> tuple[str, tuple[float, ...], str]:
    shape = region.get("shape", "sphere")
    if shape not in SHAPES:
        raise InputError("shape", shape, "'sphere' or 'cylinder'", where)
    d = region.get("diameter_m")
    if isinstance(d, bool) or not isinstance(d, (int, float)) or not math.isfinite(d) or d <= 0:
        raise InputError("diameter_m", d, "a diameter > 0 in m", where)
    if shape == "sphere":
        return shape, (d / 2,), "z"
    length = region.get("length_m")
    if isinstance(length, bool) or not isinstance(length, (int, float)) or not math.isfinite(length) or length <= 0:
        raise InputError("length_m", length, "a cylinder length > 0 in m", where)
    axis = region.get("axis", "z") or "z"
    if axis not in ("x", "y", "z"):
        raise InputError("axis", axis, "'x', 'y' or 'z' (the cylinder's axis)", where)
    return shape, (d / 2, float(length)), axis


# --- the fit ---------------------------------------------------------------------------------


def fit_map(fmap: FieldMap, order: int = 4, *, about_m=(0.0, 0.0, 0.0), basis: str = "cartesian",
            region: dict | None = None) -> FieldMapFit:
    """Fit the regular solid-harmonic expansion up to ``order`` about ``about_m`` (see the module docstring).

    ``region`` sets where the homogeneity is given: ``{"shape": "sphere",
    "diameter_m": d}`` or ``{"shape": "cylinder", "diameter_m": d, "length_m":
    L}`` (axis along z), centred at ``about_m``.  By default it is the largest
    sphere about the reference point inside the mapped box.
    """
    where = fmap.path or "field map"
    terms = harmonic_terms(order, basis)
    about = _point(about_m, "about_m", where)
    n_terms = len(terms)
    if fmap.n_points <= n_terms:
        raise InputError("order", order, f"an order whose {n_terms} terms are fewer than the map's {fmap.n_points} "
                         "points", where)
    rel = fmap.xyz_m - np.asarray(about)
    scale = float(np.max(np.linalg.norm(rel, axis=1))) or 1.0
    u_pts = rel / scale
    ls = np.array([t.l for t in terms])
    a = np.column_stack([t.evaluate(u_pts[:, 0], u_pts[:, 1], u_pts[:, 2]) for t in terms])
    b = np.asarray(fmap.field_t)
    weighted = fmap.u_field_t is not None
    w = 1.0 / np.asarray(fmap.u_field_t) if weighted else np.ones_like(b)
    aw, bw = a * w[:, None], b * w
    # SVD least squares: the singular values show whether the positions determine every term
    uu, s, vt = np.linalg.svd(aw, full_matrices=False)
    if s[-1] <= _RANK_LIMIT * s[0]:
        weak = terms[int(np.argmax(np.abs(vt[-1])))]
        raise InputError("order", order, f"an order the map's positions can determine (they cannot tell the term "
                         f"{weak.label!r} from the others: scan over more of the volume, or lower --order)", where)
    cs = vt.T @ ((uu.T @ bw) / s)
    cov_s = (vt.T / s ** 2) @ vt
    resid = b - a @ cs
    dof = fmap.n_points - n_terms
    warnings: list[Finding] = []
    chi2_red = None
    representable = True
    if weighted:
        chi2 = float(np.sum((resid * w) ** 2))
        chi2_red = chi2 / dof
        from scipy import stats

        prob = float(stats.chi2.sf(chi2, dof))
        if prob < FLAG_PROBABILITY:
            representable = False
            warnings.append(Finding(
                f"the residuals are far beyond the stated u (chi2_reduced = {chi2_red:.3g}, P = {prob:.2g}): the map "
                f"is not representable by a source-free (harmonic) field at order {order}; a higher order, a "
                "non-harmonic field (sources or magnetised matter inside the mapped region) or understated u",
                code="map.not_representable", key="field_map", values={"chi2_reduced": chi2_red, "order": order,
                                                                       "probability": prob}, severity="invalid"))
    else:
        s2 = float(resid @ resid) / dof
        cov_s = cov_s * s2
        warnings.append(Finding("the map gives no per-point u: the covariance is scaled by the residual scatter, "
                                "and whether the order is enough cannot be judged", code="map.no_u", key="field_map"))
    factor = scale ** (-ls.astype(float))
    coef = cs * factor
    cov = cov_s * np.outer(factor, factor)
    ccov = tuple(tuple(float(v) for v in row) for row in cov)
    fit = FieldMapFit(order=order, basis=basis, about_m=about, n_points=fmap.n_points,
                      terms=tuple(t.label for t in terms), coefficients=tuple(float(v) for v in coef), covariance=ccov,
                      path=fmap.path, digest=fmap.digest)
    val_w = fit.weights("value")
    grad_w = [fit.weights(d) for d in ("dx", "dy", "dz")]
    hess_w = [fit.weights(f"d{p}d{q}") for p in "xyz" for q in "xyz"]
    vals, vcov = fit.combined([val_w, *grad_w, *hess_w])
    sd = np.sqrt(np.clip(np.diag(vcov), 0.0, None))
    hess = tuple(tuple(float(vals[4 + 3 * i + j]) for j in range(3)) for i in range(3))
    if region is None:
        lo = np.min(fmap.xyz_m, axis=0) - np.asarray(about)
        hi = np.max(fmap.xyz_m, axis=0) - np.asarray(about)
        radius = float(min(np.min(-lo), np.min(hi)))
        region = {"shape": "sphere", "diameter_m": 2 * radius} if radius > 0 else None
    homog = _homogeneity(fit, region, float(vals[0]), where) if region else None
    arrays = [np.array(x) for x in (fmap.xyz_m, b, resid)]
    for x in arrays:
        x.setflags(write=False)
    return FieldMapFit(
        order=order, basis=basis, about_m=about, n_points=fmap.n_points, terms=fit.terms,
        coefficients=fit.coefficients, covariance=ccov, b0_t=float(vals[0]), u_b0_t=float(sd[0]),
        gradient_t_per_m=tuple(float(v) for v in vals[1:4]), u_gradient_t_per_m=tuple(float(v) for v in sd[1:4]),
        hessian_t_per_m2=hess, d2b_dz2_t_per_m2=hess[2][2], u_d2b_dz2_t_per_m2=float(sd[4 + 8]),
        homogeneity=homog, residual_rms_t=float(np.sqrt(np.mean(resid ** 2))), chi2_reduced=chi2_red,
        weighted=weighted, representable=representable, path=fmap.path, digest=fmap.digest,
        warnings=tuple(warnings), xyz_m=arrays[0], field_t=arrays[1], residuals_t=arrays[2])


def _fibonacci_sphere(n: int) -> np.ndarray:
    """n nearly uniform unit vectors (the golden-angle spiral; common practice)."""
    i = np.arange(n) + 0.5
    z = 1 - 2 * i / n
    r = np.sqrt(1 - z * z)
    phi = np.pi * (1 + 5 ** 0.5) * i
    return np.column_stack([r * np.cos(phi), r * np.sin(phi), z])


def _homogeneity(fit: FieldMapFit, region: dict, b_centre: float, where: str) -> Homogeneity:
    shape, dims, axis = _region(region, where)
    if shape == "cylinder" and axis != "z":
        raise InputError("axis", axis, "'z' (the homogeneity cylinder lies along the field)", where)
    c = np.asarray(fit.about_m)
    if shape == "sphere":
        boundary = c + dims[0] * _fibonacci_sphere(4000)
        size: object = 2 * dims[0]
    else:
        r, length = dims
        phi = np.linspace(0, 2 * np.pi, 120, endpoint=False)
        zs = np.linspace(-length / 2, length / 2, 41)
        side = [(r * np.cos(p), r * np.sin(p), z) for p in phi for z in zs]
        rr = np.linspace(0, r, 21)
        caps = [(q * np.cos(p), q * np.sin(p), z) for p in phi for q in rr for z in (-length / 2, length / 2)]
        boundary = c + np.array(side + caps)
        size = (2 * r, length)
    vals = fit.evaluate(boundary)
    p2p = float(vals.max() - vals.min()) / abs(b_centre) * 1e6 if b_centre else math.inf
    # rms over the volume, exactly: <B^2> - <B>^2 with B the fitted polynomial about the region's centre
    poly: dict = {}
    for coef, t in zip(fit.coefficients, harmonic_terms(fit.order, fit.basis)):
        for mono, k in t.poly:
            _poly_add(poly, mono, coef * float(k))
    poly.pop((0, 0, 0), None)  # B - B(centre): no cancellation against the large constant term
    items = list(poly.items())
    mean = sum(k * _monomial_mean(*mono, shape, dims, "z") for mono, k in items)
    sq = 0.0
    for m1, k1 in items:
        for m2, k2 in items:
            sq += k1 * k2 * _monomial_mean(m1[0] + m2[0], m1[1] + m2[1], m1[2] + m2[2], shape, dims, "z")
    var = max(sq - mean * mean, 0.0)
    rms = math.sqrt(var) / abs(b_centre) * 1e6 if b_centre else math.inf
    return Homogeneity(shape=shape, size_m=size, peak_to_peak_ppm=p2p, rms_ppm=rms, centre_m=fit.about_m)


# --- maps feeding budgets ------------------------------------------------------------------


@dataclass(frozen=True)
class MapTerms:
    """Inputs, their correlations and the subtracted model term that a field map gives an NMR budget.

    ``expression`` is what the budget subtracts from the sample's field to
    get the field at the reference point, e.g.
    ``"(G_x * x_off + G_y * y_off + G_z * z_off + d_vol)"``; ``correlations``
    are ``(symbol_a, symbol_b, r)`` from the coefficients' covariance.
    """

    inputs: tuple
    correlations: tuple
    expression: str
    second_order: bool = False


def _source(fit: FieldMapFit) -> tuple[str, dict]:
    name = Path(fit.path).name if fit.path else "(not from a file)"
    digest = f" ({fit.digest})" if fit.digest else ""
    return (f"field map {name}{digest}, order-{fit.order} solid-harmonic fit",
            {"report": f"{name}{digest}"})


def sample_terms(fit: FieldMapFit, sample_position_m, *, reference_point_m=(0.0, 0.0, 0.0),
                 u_sample_position_m=(0.0, 0.0, 0.0), sample: dict | None = None) -> MapTerms:
    """The gradient and sample-volume terms of an NMR budget taken from a fitted map.

    With s the sample centre and r the reference point (map coordinates, m):

    * ``G_x, G_y, G_z``: the fitted gradient at the midpoint (s + r)/2, so
      that G . (s - r) = B(s) - B(r) exactly for a field of up to second
      order (the mean-value theorem for a quadratic along the segment);
    * ``x_off, y_off, z_off`` = s - r with ``u_sample_position_m``;
    * ``d_vol`` = <B> over the sample volume - B(s), from the expansion
      (``sample``: ``{"shape": "sphere"|"cylinder", "diameter_m", "length_m",
      "axis"}``; 0 by the mean-value theorem for a sphere, but its u is kept);
      left out without ``sample``.

    The budget's model then reads ``B0 = B_NMR - (G . offset) - d_vol``.  The
    covariance of the G's and d_vol comes from the coefficients' covariance
    (they are linear in the coefficients).  The reference ratio that
    converted an f_Hz map scales the whole map by 1 + 4e-9 at most (CODATA
    2022), which changes these differences negligibly and is not carried.
    """
    from ..engine import InputQuantity, Normal

    where = fit.path or "field map"
    s = _point(sample_position_m, "sample_position_m", where)
    r = _point(reference_point_m, "reference_point_m", where)
    us = _point(u_sample_position_m, "u_sample_position_m", where)
    if min(us) < 0:
        raise InputError("u_sample_position_m", list(us), "three standard uncertainties >= 0 in m", where)
    mid = tuple((a + b) / 2 for a, b in zip(s, r))
    text, prov = _source(fit)
    rows = [fit.weights(d, mid) for d in ("dx", "dy", "dz")]
    names = ["G_x", "G_y", "G_z"]
    if sample is not None:
        region = dict(sample)
        rows.append(fit.weights("average", s, **region) - fit.weights("value", s))
        names.append("d_vol")
    vals, cov = fit.combined(rows)
    sd = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    inputs, terms, keep = [], [], []
    second = False
    for i, ax in enumerate("xyz"):
        inputs.append(InputQuantity(
            f"G_{ax}", float(vals[i]), Normal(u=float(sd[i])), unit="T/m", role="lab_characterisation",
            provenance=prov, source=f"{text}: dB/d{ax} at the midpoint of sample and reference point",
            description=f"field gradient dB/d{ax} between the reference point and the sample"))
        inputs.append(InputQuantity(
            f"{ax}_off", s[i] - r[i], Normal(u=us[i]), unit="m", role="measured", source="probe positioning",
            description=f"{ax} of the sample centre minus the reference point"))
        terms.append(f"G_{ax} * {ax}_off")
        keep.append(i)
        second = second or (sd[i] > 0 and us[i] > 0)
    if sample is not None:
        shape = region.get("shape", "sphere")
        dims = f"{region['diameter_m'] * 1e3:g} mm" + (
            f" x {region['length_m'] * 1e3:g} mm along {region.get('axis', 'z')}" if shape == "cylinder" else "")
        inputs.append(InputQuantity(
            "d_vol", float(vals[3]), Normal(u=float(sd[3])), unit="T", role="lab_characterisation", provenance=prov,
            source=f"{text}: mean over the {shape} {dims} minus the value at its centre (exact integration)",
            description="field averaged over the sample volume minus the field at the sample centre"))
        terms.append("d_vol")
        keep.append(3)
    expr = f"({' + '.join(terms)})"
    corr = []
    for a in range(len(keep)):
        for b in range(a + 1, len(keep)):
            i, j = keep[a], keep[b]
            if sd[i] > 0 and sd[j] > 0:
                rho = float(cov[i, j] / (sd[i] * sd[j]))
                if abs(rho) > 1e-12:
                    corr.append((names[i], names[j], max(-1.0, min(1.0, rho))))
    return MapTerms(inputs=tuple(inputs), correlations=tuple(corr), expression=expr, second_order=second)


def calibration_offset(fit: FieldMapFit, nmr_position_m, hall_position_m, *, nmr_sample: dict | None = None,
                       hall_volume: dict | None = None) -> dict:
    """Keyword arguments for a calibration point with the Hall sensor beside the NMR sample, from a map.

    Returns ``{"gradient_t_per_m", "u_gradient_t_per_m", "position_offset_m"}``
    for :class:`~fieldbudget.calibration.CalibrationPoint` and
    :class:`~fieldbudget.calibration.CalibrationSet`: the offset d = |h - n|
    (Hall minus NMR position) and the effective gradient
    G = (<B>_Hall - <B>_NMR)/d, so that G d is the field difference between
    the Hall sensor's active volume and the NMR sample's volume (each average
    from the expansion; a point when its region is None).  The u of G is that
    of the difference from the coefficients' covariance, divided by d.
    """
    where = fit.path or "field map"
    n = np.asarray(_point(nmr_position_m, "nmr_position_m", where))
    h = np.asarray(_point(hall_position_m, "hall_position_m", where))
    d = float(np.linalg.norm(h - n))
    if d == 0:
        raise InputError("hall_position_m", list(h), "a position other than the NMR sample's", where)
    w_h = fit.weights("average", h, **hall_volume) if hall_volume else fit.weights("value", h)
    w_n = fit.weights("average", n, **nmr_sample) if nmr_sample else fit.weights("value", n)
    v, cov = fit.combined([w_h - w_n])
    return {"gradient_t_per_m": float(v[0]) / d, "u_gradient_t_per_m": math.sqrt(max(float(cov[0, 0]), 0.0)) / d,
            "position_offset_m": d}
