"""Calibration of field instruments against the NMR reference.

Per-point budgets and their correlation (:mod:`.point`), calibration curves
(:mod:`.curve`), the CMC table of the accreditation scope (:mod:`.cmc`) and
conformity statements (:mod:`.conformity`).  Everything here builds ordinary
engine budgets or works on plain numbers; nothing imports widgets or plots.
"""

from __future__ import annotations

from .cmc import CMC_FORMS, P14_EDITION, BestMeasurement, CMCEntry, CMCTable, build_cmc_table, round_up
from .conformity import DECISION_RULES, ConformityResult, Tolerance, assess_conformity, probability_of_conformity
from .curve import CalibrationRangeWarning, CurveFit, CurvePrediction, fit_polynomial
from .point import (
    PROPAGATIONS,
    CalibrationCurve,
    CalibrationPoint,
    CalibrationResult,
    CalibrationSet,
    FieldPrediction,
    PointResult,
)

__all__ = [
    "CMC_FORMS",
    "DECISION_RULES",
    "P14_EDITION",
    "PROPAGATIONS",
    "BestMeasurement",
    "CMCEntry",
    "CMCTable",
    "CalibrationCurve",
    "CalibrationPoint",
    "CalibrationRangeWarning",
    "CalibrationResult",
    "CalibrationSet",
    "ConformityResult",
    "CurveFit",
    "CurvePrediction",
    "FieldPrediction",
    "PointResult",
    "Tolerance",
    "assess_conformity",
    "build_cmc_table",
    "fit_polynomial",
    "probability_of_conformity",
    "round_up",
]
