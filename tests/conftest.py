"""Shared fixtures: small budgets used across the engine tests."""

from __future__ import annotations

import pytest

from fieldbudget.engine import Budget, InputQuantity, Measurand, Model


@pytest.fixture
def power_budget() -> Budget:
    """P = V^2 / R with a normal V and a rectangular R (invented numbers)."""
    return Budget(
        model=Model.from_expression("V**2 / R"),
        measurand=Measurand("P", "W"),
        inputs=(
            InputQuantity.normal("V", 10.0, 0.01, unit="V", source="voltmeter cert. FB-V-001"),
            InputQuantity.rectangular("R", 100.0, 0.2, unit="ohm", source="resistor spec."),
        ),
    )
