"""Coverage factors from the t-distribution (JCGM 100:2008 G.3, G.4, Table G.2).

k = t_p(nu) is the (1 + p)/2 quantile of Student's t with nu degrees of
freedom (scipy.stats.t); for infinite nu it is the normal quantile.  The
conventional probabilities 68.27 %, 95.45 % and 99.73 % are read as the exact
normal probabilities erf(k / sqrt 2) for k = 1, 2, 3, as Table G.2 uses them, so
that p = 0.9545 gives k = 2 exactly for infinite degrees of freedom.
"""

from __future__ import annotations

import math

from ..errors import InputError

__all__ = ["coverage_factor", "exact_probability"]

_CONVENTIONAL = {0.6827: math.erf(1 / math.sqrt(2)), 0.9545: math.erf(2 / math.sqrt(2)),
                 0.9973: math.erf(3 / math.sqrt(2))}


def exact_probability(p: float) -> float:
    """Map 0.6827 / 0.9545 / 0.9973 to erf(k/sqrt 2), k = 1, 2, 3; other p unchanged."""
    for key, exact in _CONVENTIONAL.items():
        if abs(p - key) < 5e-5:
            return exact
    return p


def coverage_factor(p: float, nu: float = math.inf, dof_rounding: str = "truncate") -> float:
    """k = t_p(nu) for coverage probability ``p`` and ``nu`` degrees of freedom.

    ``dof_rounding='truncate'`` uses the next lower integer of nu (JCGM 100:2008
    G.4.1 note 1, as in H.1.6, minimum 1); ``'interpolate'`` uses the
    fractional nu directly in the t quantile.
    """
    if not (0 < p < 1):
        raise InputError("coverage_probability", p, "a number between 0 and 1")
    if nu is None or math.isnan(nu) or nu <= 0:
        raise InputError("degrees of freedom", nu, "a number > 0 or infinite")
    q = (1 + exact_probability(p)) / 2
    from scipy import stats  # imported here: keeps `import fieldbudget` light

    if math.isinf(nu):
        k = float(stats.norm.ppf(q))
        # erf(2/sqrt 2) -> 2.0000000000000004 by float round-off: report the conventional 2 exactly
        return float(round(k)) if abs(k - round(k)) < 1e-12 else k
    if dof_rounding == "truncate":
        nu = max(1.0, float(math.floor(nu)))
    return float(stats.t.ppf(q, nu))
