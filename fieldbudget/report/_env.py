"""The jinja2 environments of the report templates, one per output language.

Every value a template prints is escaped for its language by default: HTML by
jinja2's autoescape, Markdown and LaTeX through ``finalize`` (so a template
cannot forget to escape user text such as a source or a remark).
"""

from __future__ import annotations

import re
from functools import cache
from pathlib import Path

import jinja2

__all__ = ["Raw", "escape_latex", "escape_markdown", "html_env", "latex_env", "markdown_env"]

_TEMPLATES = Path(__file__).with_name("templates")


class Raw(str):
    """Text already in the output language (not escaped again)."""


_MD_SPECIAL = re.compile(r"([\\`*_{}\[\]<>|~&])")


def escape_markdown(value: object) -> str:
    """Backslash-escape Markdown's punctuation; newlines become spaces (table cells are one line)."""
    if isinstance(value, Raw):
        return str(value)
    text = "" if value is None else str(value)
    text = text.replace("\r", " ").replace("\n", " ")
    return _MD_SPECIAL.sub(r"\\\1", text)


_LATEX_MAP = {
    "\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_", "{": r"\{",
    "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}", "<": r"\textless{}", ">": r"\textgreater{}",
    "±": r"\ensuremath{\pm}", "·": r"\ensuremath{\cdot}", "µ": r"\ensuremath{\mu}", "μ": r"\ensuremath{\mu}",
    "Ω": r"\ensuremath{\Omega}", "°": r"\ensuremath{^\circ}", "γ": r"\ensuremath{\gamma}",
    "σ": r"\ensuremath{\sigma}", "π": r"\ensuremath{\pi}", "×": r"\ensuremath{\times}", "−": "-", "\n": " ",
    "²": r"\ensuremath{^2}", "³": r"\ensuremath{^3}", "Δ": r"\ensuremath{\Delta}", "δ": r"\ensuremath{\delta}",
    "ν": r"\ensuremath{\nu}", "χ": r"\ensuremath{\chi}", "α": r"\ensuremath{\alpha}", "√": r"\ensuremath{\surd}",
    "≤": r"\ensuremath{\leq}", "≥": r"\ensuremath{\geq}", "′": "'", "’": "'", "‘": "`", "“": "``", "”": "''",
    "–": "--", "—": "---", "\u2009": r"\,", "\u00a0": "~", "Γ": r"\ensuremath{\Gamma}", "ρ": r"\ensuremath{\rho}",
}
_LATEX_RE = re.compile("|".join(re.escape(k) for k in _LATEX_MAP))


def escape_latex(value: object) -> str:
    """Escape LaTeX's special characters and map the few non-ASCII signs reports use."""
    if isinstance(value, Raw):
        return str(value)
    text = "" if value is None else str(value)
    return _LATEX_RE.sub(lambda m: _LATEX_MAP[m.group(0)], text)


def _finalizer(escape):
    def finalize(value):
        return escape(value)
    return finalize


@cache
def html_env() -> jinja2.Environment:
    return jinja2.Environment(loader=jinja2.FileSystemLoader(_TEMPLATES), autoescape=True,
                              undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)


@cache
def markdown_env() -> jinja2.Environment:
    return jinja2.Environment(loader=jinja2.FileSystemLoader(_TEMPLATES), autoescape=False,
                              finalize=_finalizer(escape_markdown), undefined=jinja2.StrictUndefined,
                              trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)


@cache
def latex_env() -> jinja2.Environment:
    # LaTeX-friendly delimiters, so braces in the template are plain LaTeX.
    return jinja2.Environment(loader=jinja2.FileSystemLoader(_TEMPLATES), autoescape=False,
                              finalize=_finalizer(escape_latex), undefined=jinja2.StrictUndefined,
                              block_start_string="((*", block_end_string="*))",
                              variable_start_string="(((", variable_end_string=")))",
                              comment_start_string="((#", comment_end_string="#))",
                              trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
