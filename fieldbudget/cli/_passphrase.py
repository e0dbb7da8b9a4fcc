"""Where a key's passphrase comes from on the command line (never from argv, which other users can see)."""

from __future__ import annotations

import argparse
import os
import sys

from ..errors import InputError

__all__ = ["add_passphrase_option", "passphrase_from"]


def add_passphrase_option(p: argparse.ArgumentParser) -> None:
    p.add_argument("--passphrase-env", metavar="VAR", default=None,
                   help="name of an environment variable holding the key's passphrase "
                        "(without it, a protected key asks for it on a terminal)")


def passphrase_from(args: argparse.Namespace, *, confirm: bool = False, needed: bool = False) -> str | None:
    """The passphrase named by ``--passphrase-env``; asked on a terminal when ``needed`` and none was named."""
    var = getattr(args, "passphrase_env", None)
    if var is not None:
        value = os.environ.get(var)
        if value is None or value == "":
            raise InputError("--passphrase-env", var, "the name of a set, non-empty environment variable")
        return value
    if needed and sys.stdin.isatty():  # pragma: no cover - interactive only
        import getpass

        first = getpass.getpass("passphrase: ")
        if confirm and getpass.getpass("again: ") != first:
            raise InputError("passphrase", "(hidden)", "the same text typed twice")
        return first or None
    return None


def load_key(args: argparse.Namespace, path: str):
    """Load a signing key, taking its passphrase from ``--passphrase-env`` or, when it needs one, a terminal."""
    from ..errors import BudgetFileError
    from ..files.signing import load_signing_key

    try:
        return load_signing_key(path, passphrase_from(args))
    except BudgetFileError as err:
        if "protected by a passphrase" not in err.reason or getattr(args, "passphrase_env", None):
            raise
        pw = passphrase_from(args, needed=True)
        if pw is None:
            raise
        return load_signing_key(path, pw)
