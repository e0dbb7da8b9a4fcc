"""Starting a procedure run with the operator's authorisation checked (ISO/IEC 17025:2017 6.2.6).

:func:`start_run` asks the laboratory's competence records
(:class:`fieldbudget.lab.competence.Competence`) whether the operator is
authorised for the procedure; an operator who is not is refused, or the run
is marked supervised and names the supervisor, as ``settings.toml``
``[competence] unauthorised`` chooses.  The run keeps the check, and its
record keeps the flag.
"""

from __future__ import annotations

from typing import Any

from .procedure import Procedure
from .run import ProcedureRun

__all__ = ["start_run"]


def start_run(procedure: Procedure, *, operator: str, lab: Any, supervisor: str = "", day: Any = None,
              training: bool = False) -> ProcedureRun:
    """A :class:`ProcedureRun` for ``operator``, checked against the competence records of ``lab``.

    Raises
    ------
    InputError
        The operator is not authorised and the run cannot go on (the
        laboratory refuses unauthorised operators, or no authorised
        supervisor is named); ``field`` is ``"operator"``.
    """
    from ..lab.competence import Competence

    check = Competence(lab).require(operator, procedure.id, supervisor=supervisor, day=day)
    entered = {}
    if any(c.target == "record.operator" and not c.fixed and c.id == "operator" for c in procedure.components):
        entered["operator"] = check.operator
    return ProcedureRun(procedure, training=training, entered=entered, authorisation=check)
