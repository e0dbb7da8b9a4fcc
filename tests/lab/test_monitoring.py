"""Validity monitoring: control-chart tests, EWMA, drift, interval review and comparison scores.

Sources: ISO 7870-2:2013 (Shewhart charts; the eight tests for special causes and d2 for n = 2),
Lucas & Saccucci, Technometrics 32 (1990) 1-12 (EWMA limits), ISO 13528:2015 (z, zeta, E_n and
their verdicts), ILAC-G24:2022 / OIML D 10:2022 (control-chart method of interval review).
Clause numbers and the tabulated d2 are `from memory`; every number below is computed by hand in
the test, or by scipy.
"""

from __future__ import annotations

import datetime as dt
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.errors import InputError
from fieldbudget.lab.monitoring import (
    RULES,
    d2_pairs,
    drift,
    en_number,
    ewma,
    individuals_chart,
    review_interval,
    score_rounds,
    special_causes,
    z_score,
    zeta_score,
)
from fieldbudget.lab.register import Certificate, Instrument

# --- an invented series with one known violation of each test (centre 0, sigma 1) ----------------
# Neutral fillers: no run of more than 3 on one side, zeros in the differences (no trend, no
# alternation), never 15 points in zone C, never 8 outside it.
F = [0.5, 0.5, -1.5, -0.5, -0.5, 1.5]
G = [1.5, -0.5, -0.5, -1.5, 0.5, 0.5]
H = [-0.5, -0.5, 1.5, 0.5, 0.5, -1.5]
PATTERNS = {
    1: [3.5],                                               # one point beyond zone A
    2: [-0.3, -0.6, -0.3, -0.6, -0.6, -0.3, -0.3, -0.6, -0.4],  # nine below the centre line
    3: [-0.9, -0.5, -0.1, 0.2, 0.6, 0.9],                   # six steadily increasing
    4: [0.4, -0.4] * 7,                                     # fourteen alternating
    5: [2.5, 0.3, 2.5],                                     # two of three beyond 2 sigma, above
    6: [1.5, 1.5, 0.3, 1.5, 1.5],                           # four of five beyond 1 sigma, above
    7: [0.5, 0.5, -0.5, -0.5] * 3 + [0.5, 0.5, -0.5],       # fifteen in zone C
    8: [1.5, 1.5, -1.5, -1.5, 1.5, 1.5, -1.5, -1.5],        # eight outside zone C, both sides
}
LAYOUT = [F, 1, F, 2, F, 3, F, 4, G, 5, F, G, 6, H, 7, G, 8, F]


def _series():
    z, ends = [], {}
    for part in LAYOUT:
        if isinstance(part, int):
            z += PATTERNS[part]
            ends[part] = len(z) - 1
        else:
            z += part
    return z, ends


def test_each_test_fires_once_at_the_point_that_completes_its_pattern():
    # ISO 7870-2:2013, tests 1-8 for special causes (rule wording from memory)
    z, ends = _series()
    found = special_causes(z)
    assert sorted((v.rule, v.index) for v in found) == sorted((r, i) for r, i in ends.items())
    for v in found:
        assert len(v.window) == len(PATTERNS[v.rule]) if v.rule != 1 else v.window == (v.index,)
    sides = {v.rule: v.side for v in found}
    assert sides[1] == "above" and sides[2] == "below" and sides[5] == "above" and sides[6] == "above"


def test_the_chart_with_given_limits_reports_the_same():
    z, ends = _series()
    chart = individuals_chart([10 + 0.2 * v for v in z], centre=10.0, sigma=0.2, baseline=len(z))
    assert {v.rule: v.index for v in chart.violations} == ends
    assert not chart.in_control
    assert [r.number for r in RULES] == list(range(1, 9))
    for rule in range(1, 9):
        assert len(chart.violations_of(rule)) == 1


def test_each_pattern_alone_fires_only_its_own_test():
    for rule, pattern in PATTERNS.items():
        z = F + pattern + (G if rule == 4 else F)
        fired = {v.rule for v in special_causes(z)}
        assert fired == {rule}, (rule, fired)


def test_a_run_is_reported_once_and_a_boundary_point_counts_inside():
    # ten below: test 2 once (at the ninth), not again at the tenth
    assert [(v.rule, v.index) for v in special_causes([-0.5] * 10, rules=[2])] == [(2, 8)]
    # exactly 3 sigma is not beyond zone A (a point on a boundary counts in the inner zone; common practice)
    assert special_causes([3.0, -3.0], rules=[1]) == ()
    assert [v.index for v in special_causes([3.0001], rules=[1])] == [0]
    # a point on the centre line breaks a run on one side (common practice)
    assert special_causes([0.5] * 4 + [0.0] + [0.5] * 4, rules=[2]) == ()


def test_sigma_from_the_mean_moving_range_by_hand():
    # ISO 7870-2:2013, individuals chart: sigma = MR-bar / d2, d2 = 1.128 for n = 2 (from memory)
    xs = [10.2, 9.8, 10.1, 10.4, 9.9, 10.0]
    chart = individuals_chart(xs, baseline=5)
    mr = [0.4, 0.3, 0.3, 0.5]                 # |9.8-10.2|, |10.1-9.8|, |10.4-10.1|, |9.9-10.4|
    sigma = (sum(mr) / 4) / 1.1283791670955126
    assert chart.centre == pytest.approx((10.2 + 9.8 + 10.1 + 10.4 + 9.9) / 5, rel=1e-15)
    assert chart.sigma == pytest.approx(sigma, rel=1e-12)
    assert chart.upper_limit == pytest.approx(chart.centre + 3 * sigma, rel=1e-15)
    assert chart.baseline == 5


def test_d2_for_pairs_against_scipy_and_the_table():
    # d2(2) = E|X1 - X2| for independent standard normals, by numerical integration (scipy)
    from scipy import integrate, stats

    mean_range, _ = integrate.quad(lambda d: abs(d) * stats.norm(scale=math.sqrt(2)).pdf(d), -math.inf, math.inf)
    assert d2_pairs() == pytest.approx(mean_range, rel=1e-9)
    assert round(d2_pairs(), 3) == 1.128      # ISO 7870-2 table of control-chart factors (from memory)


def test_ewma_by_hand():
    # z_t = lam x_t + (1 - lam) z_(t-1); limits mu0 +- L sigma sqrt(lam/(2-lam) (1 - (1-lam)^(2t)))
    # (Lucas & Saccucci 1990)
    e = ewma([1.0, 2.0, 0.0], centre=0.0, sigma=1.0, lam=0.2, L=3.0)
    assert e.z == pytest.approx((0.2, 0.2 * 2 + 0.8 * 0.2, 0.8 * 0.56))
    assert e.upper[0] == pytest.approx(3 * math.sqrt(0.2 / 1.8 * (1 - 0.8 ** 2)))
    assert e.upper[2] == pytest.approx(3 * math.sqrt(0.2 / 1.8 * (1 - 0.8 ** 6)))
    assert e.signals == ()
    assert ewma([4.0, 4.0], 0.0, 1.0, 0.2, 3.0).signals == (0, 1)   # z = 0.8 > 0.6, then 1.44 > 0.768
    with pytest.raises(InputError):
        ewma([1.0], 0.0, 1.0, lam=0.0)


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(-5, 5, allow_nan=False), min_size=2, max_size=40), st.floats(0.05, 1.0))
def test_ewma_limits_grow_towards_the_asymptote(xs, lam):
    e = ewma(xs, 0.0, 1.0, lam, 3.0)
    asym = 3 * math.sqrt(lam / (2 - lam))
    assert all(a <= b + 1e-12 for a, b in zip(e.upper, e.upper[1:]))
    assert all(u <= asym + 1e-12 for u in e.upper)


def test_en_zeta_and_z_by_hand():
    # ISO 13528:2015: E_n = (x - X)/sqrt(U_x^2 + U_X^2), zeta = (x - X)/sqrt(u_x^2 + u_X^2), z = (x - X)/sigma_pt
    x, X = 1.00000950, 1.00000880
    en = en_number(x, 0.40e-6, X, 0.30e-6)
    assert en.value == pytest.approx(0.70e-6 / 0.50e-6, rel=1e-6)      # 3-4-5 triangle: sqrt(0.4^2 + 0.3^2) = 0.5
    assert en.verdict == "unsatisfactory"                             # |E_n| > 1
    zeta = zeta_score(x, 0.20e-6, X, 0.15e-6)
    assert zeta.value == pytest.approx(0.70e-6 / 0.25e-6, rel=1e-6)    # 2.8
    assert zeta.verdict == "questionable"                             # 2 < |zeta| < 3
    z = z_score(x, X, 0.8e-6)
    assert z.value == pytest.approx(0.875, rel=1e-6) and z.verdict == "satisfactory"
    assert en_number(1.0, 1.0, 0.0, 0.0).verdict == "satisfactory"    # |E_n| = 1 is satisfactory
    assert zeta_score(2.0, 1.0, 0.0, 0.0).verdict == "satisfactory"   # |zeta| = 2 is satisfactory
    assert zeta_score(3.0, 1.0, 0.0, 0.0).verdict == "unsatisfactory"  # |zeta| = 3 is unsatisfactory
    assert z_score(-2.5, 0.0, 1.0).verdict == "questionable"
    with pytest.raises(InputError):
        en_number(1.0, 0.0, 0.0, 0.0)


def test_scores_of_a_comparison_file_use_u_from_U_over_k():
    rounds = score_rounds({"rounds": [{"id": "r1", "lab_value": 1.3, "lab_U": 0.4, "lab_k": 2.0,
                                       "reference_value": 1.0, "reference_U": 0.3, "reference_k": 2.0}]})
    en, zeta = rounds[0].scores
    assert en.value == pytest.approx(0.3 / 0.5) and zeta.value == pytest.approx(0.3 / 0.25)
    with pytest.raises(InputError, match="lab_U"):
        score_rounds({"rounds": [{"id": "r1", "lab_value": 1.0, "reference_value": 1.0, "reference_U": 0.1}]})


def _instrument(values, u=None, interval_days=365, review=None):
    certs = []
    start = dt.date(2020, 1, 1)
    for i, v in enumerate(values):
        d = start + dt.timedelta(days=365 * i)
        vals = {"offset": v}
        if u is not None:
            vals["u"] = u
        certs.append(Certificate(f"C{i}", "issuer", d, d + dt.timedelta(days=interval_days), vals))
    return Instrument("X-1", "oscillator", "s1", "in service", tuple(certs), review=review)


def test_drift_matches_an_ordinary_least_squares_line_from_scipy():
    from scipy import stats

    values = [1.0e-9, 1.5e-9, 1.7e-9, 2.4e-9, 2.6e-9]
    fit = drift(_instrument(values), "offset")
    t = [365 * i for i in range(5)]
    ref = stats.linregress(t, values)
    assert fit.slope_per_day == pytest.approx(ref.slope, rel=1e-10)
    assert fit.intercept == pytest.approx(ref.intercept, rel=1e-10)
    assert fit.u_slope == pytest.approx(ref.stderr, rel=1e-8)
    v, _ = fit.predict(dt.date(2020, 1, 1) + dt.timedelta(days=730))
    assert v == pytest.approx(ref.intercept + ref.slope * 730, rel=1e-10)


def test_weighted_drift_by_hand():
    # equal u: slope as OLS, u(slope) = u / sqrt(sum (t - tbar)^2) (weighted least squares, common practice)
    values = [0.0, 1.0e-9, 2.0e-9]
    fit = drift(_instrument(values, u=5e-10), "offset")
    assert fit.slope_per_day == pytest.approx(1e-9 / 365, rel=1e-10)
    assert fit.u_slope == pytest.approx(5e-10 / math.sqrt(2 * 365 ** 2), rel=1e-10)
    assert fit.birge_ratio == pytest.approx(0.0, abs=1e-6)


def test_interval_review_by_hand():
    # ILAC-G24:2022 control-chart method: the interval T where |b| T + k sqrt((u_b T)^2 + u_cal^2) = limit
    ins = _instrument([0.0, 1.0e-9, 2.0e-9], u=5e-10, interval_days=365, review={"quantity": "offset", "limit": 3e-9})
    r = review_interval(ins)
    b, ub, ucal = 1e-9 / 365, 5e-10 / math.sqrt(2 * 365 ** 2), 5e-10
    T = r.supported_days
    assert b * T + 2 * math.sqrt((ub * T) ** 2 + ucal ** 2) == pytest.approx(3e-9, rel=1e-9)
    # by hand: with b = 2.74e-12/day, ub = 9.69e-13/day, the root of the quadratic
    a2 = b * b - 4 * ub * ub
    a1 = -2 * 3e-9 * b
    a0 = 9e-18 - 4 * ucal * ucal
    root = (-a1 - math.sqrt(a1 * a1 - 4 * a2 * a0)) / (2 * a2)
    assert T == pytest.approx(root, rel=1e-9)
    assert r.current_days == 365 and "supported" in r.verdict and T > 365
    tight = review_interval(ins, limit=1.5e-9)
    assert tight.supported_days < 365 and tight.verdict.startswith("shorten the interval to")
    assert review_interval(ins, limit=0.9e-9).supported_days is None   # 2 u_cal alone exceeds the limit
