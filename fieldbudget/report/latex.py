"""LaTeX budget table (booktabs) to ``\\input`` into a procedure document; user text escaped."""

from __future__ import annotations

from .. import __version__
from .._display import fmt
from ._env import Raw, latex_env
from .tables import ReportData

__all__ = ["render_latex"]

_HEADS = ("Input", "$x_i$", "Unit", "Distribution", "$u(x_i)$", "$\\nu_i$", "$c_i$", "$|u_i(y)|$",
          "Share / \\%", "Source")


def render_latex(data: ReportData) -> str:
    unit = f" {data.unit}" if data.unit else ""
    return latex_env().get_template("table.tex.j2").render(
        d=data, Raw=Raw, version=__version__, heads=[Raw(h) for h in _HEADS],
        u=f"{fmt(data.u, 4)}{unit}", k=fmt(data.k, 4), U=f"{fmt(data.U, 4)}{unit}")
