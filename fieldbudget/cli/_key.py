"""``fieldbudget key new --name NAME --role ROLE -o NAME.key``: a signing key pair (Ed25519)."""

from __future__ import annotations

import argparse

from ..files.signing import SIGNER_ROLES, new_key
from ._passphrase import add_passphrase_option, passphrase_from

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("key", help="make a key pair for signing records",
                       description="Key pairs for signing records (Ed25519). `key new` writes the private key "
                                   "(file mode 0600, protected by a passphrase when one is given) and NAME.pub "
                                   "(name, role, public key, fingerprint, created). Put the .pub files of the people "
                                   "you trust in one folder and pass it to `fieldbudget verify --trusted`.")
    ks = p.add_subparsers(dest="key_command", metavar="ACTION")
    ks.required = True
    n = ks.add_parser("new", help="make a new key pair")
    n.add_argument("--name", required=True, help="the key owner's name, as signatures will show it")
    n.add_argument("--role", required=True, choices=SIGNER_ROLES, help="the owner's role when signing")
    n.add_argument("-o", "--output", required=True, metavar="NAME.key", help="private key file to write")
    add_passphrase_option(n)
    return p


def run(args: argparse.Namespace) -> int:
    key = new_key(args.name, args.role, args.output, passphrase=passphrase_from(args, confirm=True, needed=True))
    from pathlib import Path

    pub = Path(args.output).with_suffix(".pub")
    print(f"{args.output}: private key of {key.name} ({key.role}); keep it to yourself (mode 0600)")
    print(f"{pub}: public key, fingerprint {key.fingerprint}")
    return 0
