"""Command line of fieldbudget: ``fieldbudget <command> ...``.

Each sub-command lives in its own module ``fieldbudget/cli/_<name>.py`` with
``add_parser(subparsers)`` and ``run(args) -> int``.  A user mistake
(``FieldbudgetError``) prints one line on stderr and exits 2; anything else is
a bug and keeps its traceback.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from ..errors import FieldbudgetError

__all__ = ["main", "COMMANDS"]

# Order is the order of `fieldbudget --help`.
COMMANDS = ("evaluate", "larmor", "nmr", "line", "map", "calibrate", "record", "verify", "sign", "key", "compare",
            "report", "certificate", "demo", "register", "archive", "monitor", "competence")


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage mistake is one line on stderr (no usage block) and exit status 2."""

    def error(self, message: str):
        self.exit(2, f"{self.prog}: {message} (see {self.prog} --help)\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="fieldbudget",
        description="Uncertainty budgets for NMR field measurements and field-instrument calibrations.",
    )
    from .. import __version__

    parser.add_argument("--version", action="version", version=f"fieldbudget {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True
    for name in COMMANDS:
        module = importlib.import_module(f"{__name__}._{name}")
        p = module.add_parser(sub)
        p.set_defaults(_run=module.run)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as stop:  # --help, --version, or a usage mistake (already printed on one line)
        return int(stop.code or 0) if not isinstance(stop.code, str) else 2
    try:
        return int(args._run(args) or 0)
    except FieldbudgetError as err:
        print(f"fieldbudget {args.command}: {err}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # e.g. `fieldbudget evaluate f.json | head`
        return 0
