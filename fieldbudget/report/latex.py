"""LaTeX report: a complete document that compiles, or (``fragment=True``) the budget table alone.

The document is an A4 landscape ``article`` using only packages of every TeX
distribution (geometry, fontenc, inputenc, lmodern, booktabs, longtable,
array); the fragment is a ``table`` float needing only ``booktabs``.  The
source column is a paragraph column, so long sources wrap.  User text is
escaped by the template environment.
"""

from __future__ import annotations

from .. import __version__
from .._display import fmt, fmt_dof
from ._env import Raw, latex_env
from .tables import ReportData

__all__ = ["render_latex"]

_HEADS = ("Input", "$x_i$", "Unit", "Stated as (distribution)", "$u(x_i)$", "$\\nu_i$", "$c_i$ (unit)",
          "$|u_i(y)|$", "Share / \\%", "Source")


def render_latex(data: ReportData, fragment: bool = False) -> str:
    unit = f" {data.unit}" if data.unit else ""
    template = "table.tex.j2" if fragment else "report.tex.j2"
    return latex_env().get_template(template).render(
        d=data, Raw=Raw, version=__version__, heads=[Raw(h) for h in _HEADS], fragment=fragment,
        u=f"{fmt(data.u, 4)}{unit}", k=fmt(data.k, 4), U=f"{fmt(data.U, 4)}{unit}", nu=fmt_dof(data.nu_eff))
