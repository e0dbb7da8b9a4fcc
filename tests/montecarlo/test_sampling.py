"""Sampling of each input distribution (JCGM 101:2008, 6.4) against scipy.stats.

Each sampler is checked with a Kolmogorov-Smirnov test against the
distribution as scipy.stats defines it (an independent reference library),
with a fixed seed.  The rejection threshold is a p-value of 1e-4: under a
correct sampler the statistic exceeds it with probability 1e-4, and the
fixed seed makes the outcome deterministic.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from fieldbudget.engine import (
    Arcsine,
    Budget,
    CurvilinearTrapezoid,
    InputQuantity,
    Normal,
    Rectangular,
    Triangular,
    TypeA,
    montecarlo,
    sampling,
)
from fieldbudget.errors import InputError

N = 200_000
P_MIN = 1e-4


def _rng(seed: int = 20261202) -> np.random.Generator:
    return np.random.Generator(np.random.PCG64(seed))


def _ks(x: np.ndarray, cdf) -> float:
    return stats.kstest(x, cdf).pvalue


@pytest.mark.parametrize(
    ("dist", "reference"),
    [
        # JCGM 101 6.4.7: normal
        (Normal(u=0.3), stats.norm(loc=2.0, scale=0.3)),
        # JCGM 101 6.4.9.7: scaled and shifted t with the stated u as scale
        (Normal(u=0.3, dof=5), stats.t(df=5, loc=2.0, scale=0.3)),
        # JCGM 101 6.4.2: rectangular on [x - a, x + a]
        (Rectangular(half_width=0.5), stats.uniform(loc=1.5, scale=1.0)),
        # JCGM 101 6.4.5: symmetric triangular on [x - a, x + a]
        (Triangular(half_width=0.5), stats.triang(c=0.5, loc=1.5, scale=1.0)),
        # JCGM 101 6.4.6: arcsine on [x - a, x + a]
        (Arcsine(half_width=0.5), stats.arcsine(loc=1.5, scale=1.0)),
    ],
    ids=["normal", "t5", "rectangular", "triangular", "arcsine"],
)
def test_sampler_matches_scipy(dist, reference):
    x = sampling.draw(dist, 2.0, _rng(), N)
    assert x.shape == (N,)
    assert _ks(x, reference.cdf) > P_MIN


def test_type_a_is_t_with_n_minus_1_dof():
    readings = (10.1, 10.3, 9.9, 10.0, 10.2, 10.4)
    d = TypeA(readings=readings)
    s = np.std(readings, ddof=1)
    ref = stats.t(df=len(readings) - 1, loc=np.mean(readings), scale=s / math.sqrt(len(readings)))  # JCGM 101 6.4.9.7
    x = sampling.draw(d, d.mean, _rng(7), N)
    assert _ks(x, ref.cdf) > P_MIN


def test_curvilinear_trapezoid_cdf():
    # JCGM 101 6.4.3: rectangular on [x - w, x + w] with w uniform on [a - d, a + d].  Its CDF is the
    # average over w of the rectangular CDF, integrated here with scipy.integrate.quad.
    a, d, x0 = 1.0, 0.4, 5.0
    dist = CurvilinearTrapezoid(half_width=a, limit_uncertainty=d)

    def cdf_scalar(y: float) -> float:
        f = lambda w: min(1.0, max(0.0, (y - x0 + w) / (2 * w)))
        return integrate.quad(f, a - d, a + d, points=[abs(y - x0)], limit=200)[0] / (2 * d)

    x = sampling.draw(dist, x0, _rng(11), 50_000)
    assert _ks(x, np.vectorize(cdf_scalar)) > P_MIN
    # support [x - a - d, x + a + d] and variance a^2/3 + d^2/9 (JCGM 101 6.4.3.3)
    assert x.min() >= x0 - a - d and x.max() <= x0 + a + d
    assert dist.standard_uncertainty == pytest.approx(math.sqrt(a * a / 3 + d * d / 9), rel=1e-15)


def test_draw_into_fills_given_array_and_draw_rejects_negative_n():
    out = np.zeros(1000)
    sampling.draw_into(Rectangular(half_width=1.0), 0.0, _rng(), out)
    assert np.all(np.abs(out) <= 1.0) and np.count_nonzero(out) == 1000
    with pytest.raises(InputError, match="n must be"):
        sampling.draw(Normal(u=1.0), 0.0, _rng(), -1)


def test_correlated_normal_inputs_have_the_stated_correlation():
    # JCGM 101 6.4.8: multivariate normal.  The standard error of a sample correlation coefficient
    # is about (1 - r^2) / sqrt(M) (Fisher); the check allows 4 of them.
    r, m = 0.9, 200_000
    b = Budget(model="a + b", inputs=(InputQuantity.normal("a", 1.0, 0.1), InputQuantity.normal("b", -2.0, 3.0)),
               correlations=(("a", "b", r),))
    plan = montecarlo._plan(b)
    x = np.empty((2, m))
    montecarlo._fill_chunk(plan, 5, 0, m // montecarlo.BLOCK_SIZE, m, x)
    assert np.corrcoef(x)[0, 1] == pytest.approx(r, abs=4 * (1 - r * r) / math.sqrt(m))
    assert x[0].std() == pytest.approx(0.1, rel=4 / math.sqrt(2 * m))  # SE of a normal s: s / sqrt(2M)
    assert x[1].mean() == pytest.approx(-2.0, abs=4 * 3.0 / math.sqrt(m))


def test_correlation_factor_handles_a_singular_matrix():
    L = sampling.correlation_factor(np.array([[1.0, 1.0], [1.0, 1.0]]))
    assert np.allclose(L @ L.T, [[1.0, 1.0], [1.0, 1.0]])


def test_correlated_rectangular_input_is_refused():
    b = Budget(model="a + b", inputs=(InputQuantity.normal("a", 1.0, 0.1), InputQuantity.rectangular("b", 0.0, 1.0)),
               correlations=(("a", "b", 0.5),))
    with pytest.raises(InputError) as err:
        montecarlo.run(b, 10_000, seed=1)
    assert "input 'b'" in str(err.value) and "multivariate normal" in str(err.value)


def test_correlated_inputs_with_different_dof_are_refused():
    b = Budget(model="a + b", inputs=(InputQuantity.normal("a", 1.0, 0.1, dof=5),
                                      InputQuantity.normal("b", 0.0, 1.0)),
               correlations=(("a", "b", 0.5),))
    with pytest.raises(InputError, match="degrees of freedom"):
        montecarlo.run(b, 10_000, seed=1)


def test_readings_taken_together_are_drawn_as_a_multivariate_t():
    # Inputs observed simultaneously (JCGM 100:2008 5.2.3, H.2) are correlated with the readings' sample
    # correlation and keep the t marginals of JCGM 101 6.4.9 (n - 1 dof, scale s / sqrt(n)): one chi-square
    # draw shared by the group.  Standard errors (M draws, nu = 7 so that fourth moments exist):
    #   s.d. of a t marginal: sigma = scale sqrt(nu / (nu - 2)), SE = sigma sqrt((kappa - 1) / (4 M)) with the
    #   kurtosis kappa = 3 + 6 / (nu - 4);  correlation coefficient of an elliptical pair: SE = sqrt(1 + k)
    #   (1 - r^2) / sqrt(M) with the kurtosis parameter k = 2 / (nu - 4) (Muirhead 1982, ch. 5; from memory).
    va = [5.007, 4.994, 5.005, 4.990, 4.999, 5.002, 4.996, 5.010]
    vb = [19.663, 19.639, 19.640, 19.685, 19.678, 19.660, 19.651, 19.690]
    b = Budget(model="a / b", inputs=(InputQuantity.from_readings("a", va), InputQuantity.from_readings("b", vb)),
               simultaneous=(("a", "b"),))
    m = 400_000
    plan = montecarlo._plan(b)
    x = np.empty((2, m))
    montecarlo._fill_chunk(plan, 8, 0, m // montecarlo.BLOCK_SIZE, m, x)
    nu = len(va) - 1
    r = np.corrcoef(va, vb)[0, 1]
    k = 2 / (nu - 4)
    assert np.corrcoef(x)[0, 1] == pytest.approx(r, abs=4 * math.sqrt(1 + k) * (1 - r * r) / math.sqrt(m))
    kappa = 3 + 6 / (nu - 4)
    for row, v in zip(x, (va, vb)):
        sigma = np.std(v, ddof=1) / math.sqrt(len(v)) * math.sqrt(nu / (nu - 2))
        assert row.mean() == pytest.approx(np.mean(v), abs=4 * sigma / math.sqrt(m))
        assert row.std() == pytest.approx(sigma, abs=4 * sigma * math.sqrt((kappa - 1) / (4 * m)))
