"""Drawing Monte Carlo trials from the input distributions (JCGM 101:2008, 6.4).

Each engine distribution maps to the sampling procedure of JCGM 101:2008
(estimate x, half-width a, random numbers r uniform on [0, 1)):

- normal, infinite dof: x + u z, z standard normal (6.4.7);
- normal with finite dof, and Type A from n readings: the scaled and shifted
  t-distribution x + u t_nu (6.4.9.7), nu = dof (n - 1 for Type A).  The stated
  u is the *scale*, so the standard deviation is u sqrt(nu / (nu - 2)) for
  nu > 2 and infinite otherwise;
- rectangular: x + a (2 r - 1) (6.4.2.4);
- triangular (symmetric): x + a (r1 + r2 - 1) (6.4.5.4);
- arcsine (U-shaped): x + a sin(2 pi r) (6.4.6.4);
- curvilinear trapezoid, half-width a known to +-d: the half-width is drawn
  first, a_s = a + d (2 r2 - 1), then x + a_s (2 r1 - 1) (6.4.3.4);
- correlated inputs: a multivariate normal x + diag(u) L z with L the
  Cholesky factor of the correlation matrix (6.4.8.4).

A Type B dof stated on a rectangular, triangular, arcsine or trapezoid input
(GUM G.4.2) does not change how it is drawn: JCGM 101 models doubt about a
rectangular's limits with the curvilinear trapezoid instead (6.4.3).

Written by hand because these are the standard's own procedures (numpy gives
the uniform, normal and t variates; the mapping to each distribution is
JCGM 101's).  Every draw writes into a caller's array (``draw_into``) so the
Monte Carlo loop allocates nothing per block; ``draw`` is the allocating form.
The order of calls on a generator is part of the result's reproducibility:
one call sequence per input, in the budget's input order (see
``montecarlo``).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from .distributions import (
    Arcsine,
    CurvilinearTrapezoid,
    Distribution,
    Normal,
    Rectangular,
    Triangular,
    TypeA,
)

__all__ = ["SAMPLED_KINDS", "correlation_factor", "draw", "draw_into", "draw_standard"]

SAMPLED_KINDS = ("normal", "type_a", "rectangular", "triangular", "arcsine", "curvilinear_trapezoid")

_TWO_PI = 2.0 * math.pi


def _t_dof(distribution: Distribution) -> float:
    """Degrees of freedom of the t-distribution to draw from (inf -> normal)."""
    if isinstance(distribution, TypeA):
        return float(distribution.n - 1)
    return float(distribution.dof)


def draw_into(distribution: Distribution, estimate: float, rng: np.random.Generator, out: np.ndarray) -> None:
    """Fill the float64 array ``out`` with draws of one input (JCGM 101 6.4).

    ``estimate`` is the input's estimate x (the mean for Type A), in the
    input's unit; the draws are in the same unit.
    """
    x = float(estimate)
    if isinstance(distribution, (Normal, TypeA)):
        u = distribution.standard_uncertainty
        nu = _t_dof(distribution)
        if math.isinf(nu):
            rng.standard_normal(out=out)
        else:
            out[...] = rng.standard_t(nu, size=out.shape)
        out *= u
        out += x
    elif isinstance(distribution, Rectangular):
        a = distribution.half_width
        rng.random(out=out)
        out *= 2.0 * a
        out += x - a
    elif isinstance(distribution, Triangular):
        a = distribution.half_width
        rng.random(out=out)
        out += rng.random(size=out.shape)
        out -= 1.0
        out *= a
        out += x
    elif isinstance(distribution, Arcsine):
        a = distribution.half_width
        rng.random(out=out)
        out *= _TWO_PI
        np.sin(out, out=out)
        out *= a
        out += x
    elif isinstance(distribution, CurvilinearTrapezoid):
        a, d = distribution.half_width, distribution.limit_uncertainty
        rng.random(out=out)                     # r1: position within the interval
        half = rng.random(size=out.shape)       # r2: the half-width itself
        half *= 2.0 * d
        half += a - d
        out *= 2.0
        out -= 1.0
        out *= half
        out += x
    else:
        raise InputError(
            "distribution", getattr(distribution, "kind", type(distribution).__name__),
            "one of " + ", ".join(SAMPLED_KINDS), "Monte Carlo sampling",
        )


def draw(distribution: Distribution, estimate: float, rng: np.random.Generator, n: int) -> np.ndarray:
    """``n`` draws of one input with estimate ``estimate`` (JCGM 101 6.4); see the module docstring."""
    n = int(n)
    if n < 0:
        raise InputError("n", n, "an integer >= 0", "Monte Carlo sampling")
    out = np.empty(n, dtype=np.float64)
    draw_into(distribution, estimate, rng, out)
    return out


def draw_standard(rng: np.random.Generator, out: np.ndarray) -> None:
    """Standard normal draws for one correlated input (mixed later by ``correlation_factor``)."""
    rng.standard_normal(out=out)


def correlation_factor(matrix: np.ndarray) -> np.ndarray:
    """A factor L with L L^T = R for the correlation matrix R (JCGM 101 6.4.8.4).

    Cholesky when R is positive definite; a symmetric square root from the
    eigen-decomposition (negative round-off eigenvalues clipped to 0) when R is
    only positive semi-definite, e.g. with a correlation of exactly 1.
    """
    R = np.asarray(matrix, dtype=np.float64)
    try:
        return np.linalg.cholesky(R)
    except np.linalg.LinAlgError:
        w, v = np.linalg.eigh(R)
        if w.min() < -1e-10 * max(1.0, float(np.abs(w).max())):
            raise InputError(
                "correlation matrix", np.round(R, 6).tolist(), "positive semi-definite",
                "Monte Carlo sampling",
            ) from None
        return v * np.sqrt(np.clip(w, 0.0, None))
