"""Command line of fieldbudget: ``fieldbudget <command> ...``.

Each sub-command lives in its own module ``fieldbudget/cli/_<name>.py`` with
``add_parser(subparsers)`` and ``run(args) -> int``.  A user mistake
(``FieldbudgetError``) prints one line on stderr and exits 2; anything else is
a bug and keeps its traceback.

Start-up stays short by importing only the module of the command being run
(the first word of argv that names one); ``fieldbudget --help``, a missing or
unknown command import them all, so argparse lists every choice.  Command
modules keep their heavy imports inside ``run``.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from ..errors import FieldbudgetError

__all__ = ["main", "COMMANDS"]

# Order is the order of `fieldbudget --help`.
COMMANDS = ("evaluate", "larmor", "nmr", "line", "map", "calibrate", "record", "verify", "sign", "key", "compare",
            "report", "certificate", "cmc", "demo", "register", "archive", "monitor", "competence")


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage mistake is one line on stderr (no usage block) and exit status 2."""

    def error(self, message: str):
        self.exit(2, f"{self.prog}: {message} (see {self.prog} --help)\n")


def _command_named(argv: list[str]) -> str | None:
    """The command that argv runs, when its first non-option word names one (else None: load all)."""
    for word in argv:
        if word.startswith("-"):
            if word in ("-h", "--help", "--version"):
                return None
            continue
        return word if word in COMMANDS else None
    return None


def build_parser(only: str | None = None) -> argparse.ArgumentParser:
    """The parser of every command, or of the one command ``only`` (the others are not imported)."""
    parser = _Parser(
        prog="fieldbudget",
        description="Uncertainty budgets for NMR field measurements and field-instrument calibrations.",
    )
    from .. import __version__

    parser.add_argument("--version", action="version", version=f"fieldbudget {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True
    for name in COMMANDS if only is None else (only,):
        module = importlib.import_module(f"{__name__}._{name}")
        p = module.add_parser(sub)
        p.set_defaults(_run=module.run)
    return parser


def _skip_format_grammars() -> None:
    """Keep jsonschema from building rfc3987_syntax's grammars (about 1 s) in a command's process.

    jsonschema's format module imports that optional package, when installed
    (the jupyter extra brings it), to check "iri" formats, and the package
    builds its grammars on import.  The kit never checks formats
    (validators are built without a format checker), so the command line
    marks the package as absent before jsonschema loads: a ``None`` entry in
    ``sys.modules`` makes its import fail as if it were not installed, which
    jsonschema handles by leaving those two formats out.  Only this process
    (a command) is affected, never a notebook kernel.
    """
    if "jsonschema" not in sys.modules:
        sys.modules.setdefault("rfc3987_syntax", None)


def main(argv: list[str] | None = None) -> int:
    _skip_format_grammars()
    if argv is None:
        argv = sys.argv[1:]
    parser = build_parser(_command_named(argv))
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
