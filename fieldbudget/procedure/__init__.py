"""A lab's procedure as data, and one operator's pass through it.

``load_procedure(path)`` reads a procedure file (TOML, format
``fieldbudget-procedure/1``, see ``docs/procedures.md``) into a frozen
:class:`Procedure`; :class:`ProcedureRun` holds the current step and the
values entered, builds the domain layer's input from fixed plus entered
values, and checks the acceptance limits.  No ipywidgets here.
"""

from __future__ import annotations

from .procedure import (
    FORMAT,
    AcceptanceLimit,
    CodataPolicy,
    Component,
    Procedure,
    SafetyCaution,
    Step,
    Training,
    load_procedure,
    procedure_from_dict,
    procedure_schema,
)
from .run import AcceptanceReport, LimitVerdict, ProcedureRun, result_quantities

__all__ = [
    "FORMAT",
    "AcceptanceLimit",
    "AcceptanceReport",
    "CodataPolicy",
    "Component",
    "LimitVerdict",
    "Procedure",
    "ProcedureRun",
    "SafetyCaution",
    "Step",
    "Training",
    "load_procedure",
    "procedure_from_dict",
    "procedure_schema",
    "result_quantities",
]
