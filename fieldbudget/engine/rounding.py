"""Rounding of the reported result (JCGM 100:2008 7.2.6; EA-4/02 M:2013 clause 6).

Rules offered (``rule=``):

- ``"gum"``: the expanded uncertainty to at most two significant digits,
  rounded to nearest (half up), the estimate to the same decimal place
  (JCGM 100:2008 7.2.6);
- ``"ea"``: as ``"gum"``, except that a rounding which lowers U by more than
  5 % is replaced by rounding up (EA-4/02 M, from memory: the rule can only
  bite when U goes to one significant digit or to a coarser fixed decimal
  place);
- ``"up"``: U always rounded up (GUM 7.2.6 allows it for a final result).

Decimal arithmetic on the shortest repr of each float avoids binary
artefacts (2.675 stays 2.675).  The decimal precision is set for each call
from the digits the result needs, so any finite u/|y| rounds (1 +- 1e-30
needs 32 digits; the default context holds 28).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import ROUND_CEILING, ROUND_HALF_UP, Decimal, localcontext

from ..errors import InputError

__all__ = ["RoundedResult", "round_result", "RULES"]

RULES = ("gum", "ea", "up")


@dataclass(frozen=True)
class RoundedResult:
    """Estimate and expanded uncertainty as reported: texts and values."""

    value_text: str
    uncertainty_text: str
    value: float
    uncertainty: float
    decimals: int
    rule: str

    def to_dict(self) -> dict:
        return {"value": self.value_text, "U": self.uncertainty_text, "decimals": self.decimals, "rule": self.rule}


def _quantum(decimals: int) -> Decimal:
    return Decimal(1).scaleb(-decimals)


def round_result(value: float, U: float, rule: str = "gum", significant_digits: int = 2,
                 decimals: int | None = None) -> RoundedResult:
    """Round U to ``significant_digits`` (or to ``decimals`` places) and the value to match (see below)."""
    if not math.isfinite(value):
        raise InputError("estimate", value, "a finite number")
    if not math.isfinite(U) or U < 0:
        raise InputError("expanded uncertainty", U, "a finite number >= 0")
    top = max(Decimal(repr(float(value))).adjusted() if value else 0, Decimal(repr(float(U))).adjusted() if U else 0)
    low = -(decimals if decimals is not None else (6 if U == 0 else 2 - Decimal(repr(float(U))).adjusted()))
    with localcontext() as ctx:
        ctx.prec = max(28, top - low + 4)
        return _round_result(value, U, rule, significant_digits, decimals)


def _round_result(value: float, U: float, rule: str, significant_digits: int,
                  decimals: int | None) -> RoundedResult:
    """Round U to ``significant_digits`` (or to ``decimals`` places) and the value to match.

    Parameters
    ----------
    value, U : float
        Estimate and expanded uncertainty, same unit.
    rule : 'gum', 'ea' or 'up'
    significant_digits : 1 or 2
    decimals : int, optional
        A fixed decimal place instead (e.g. the resolution of the report).
    """
    if rule not in RULES:
        raise InputError("rounding rule", rule, f"one of {RULES}")
    if significant_digits not in (1, 2):
        raise InputError("significant_digits", significant_digits, "1 or 2 (JCGM 100:2008 7.2.6)")
    if not math.isfinite(U) or U < 0:
        raise InputError("expanded uncertainty", U, "a finite number >= 0")
    dU = Decimal(repr(float(U)))
    fixed = decimals
    if decimals is None:
        if U == 0:
            decimals = 6
        else:
            exponent = dU.adjusted()  # power of ten of the first significant digit
            decimals = significant_digits - 1 - exponent
    q = _quantum(decimals)
    if rule == "up":
        rU = dU.quantize(q, rounding=ROUND_CEILING)
    else:
        rU = dU.quantize(q, rounding=ROUND_HALF_UP)
    if fixed is None and U > 0 and rU.adjusted() > dU.adjusted():
        # 0.0996 -> 0.10, not 0.100: the carry added a digit
        decimals -= 1
        q = _quantum(decimals)
    if rule == "up":
        rU = dU.quantize(q, rounding=ROUND_CEILING)
    else:
        rU = dU.quantize(q, rounding=ROUND_HALF_UP)
        if rule == "ea" and U > 0 and (dU - rU) / dU > Decimal("0.05"):
            rU = dU.quantize(q, rounding=ROUND_CEILING)
    rv = Decimal(repr(float(value))).quantize(q, rounding=ROUND_HALF_UP)
    fmt = f"{{:.{max(decimals, 0)}f}}"
    return RoundedResult(fmt.format(rv), fmt.format(rU), float(rv), float(rU), decimals, rule)
