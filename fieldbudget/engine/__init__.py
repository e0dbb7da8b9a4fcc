"""The budget engine: inputs, models, the GUM law of propagation and its results.

Knows nothing of NMR; the domain layers build ordinary :class:`Budget` objects.
"""

from . import montecarlo, second_order, validation
from .budget import Budget, Measurand
from .coverage import coverage_factor
from .distributions import (
    Arcsine,
    CurvilinearTrapezoid,
    Normal,
    Rectangular,
    Triangular,
    TypeA,
    dof_from_reliability,
)
from .expression import Expression
from .gum import evaluate, rebase, sensitivities
from .model import Model
from .quantities import ROLES, InputQuantity
from .results import BudgetResult, Contribution, VectorResult
from .rounding import RoundedResult, round_result

__all__ = [
    "Arcsine", "Budget", "BudgetResult", "Contribution", "CurvilinearTrapezoid", "Expression", "InputQuantity",
    "Measurand", "Model", "Normal", "ROLES", "Rectangular", "RoundedResult", "Triangular", "TypeA", "VectorResult",
    "coverage_factor", "dof_from_reliability", "evaluate", "montecarlo", "rebase", "round_result",
    "second_order", "sensitivities", "validation",
]
