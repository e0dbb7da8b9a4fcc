"""Options shared by the laboratory commands (``archive``, ``register``, ``monitor``)."""

from __future__ import annotations

import argparse
import datetime as _dt

from ..errors import InputError
from ..lab.folder import LAB_ENV, LabFolder, lab_folder

__all__ = ["add_lab_option", "lab_of", "date_of"]


def add_lab_option(p: argparse.ArgumentParser) -> None:
    p.add_argument("--lab", metavar="DIR", default=None,
                   help=f"the laboratory folder (default: the {LAB_ENV} environment variable)")


def lab_of(args: argparse.Namespace, *, must_exist: bool = True) -> LabFolder:
    return lab_folder(getattr(args, "lab", None), must_exist=must_exist)


def date_of(text: str | None, option: str = "--date") -> _dt.date:
    """``text`` as a date (today when None); a bad one names the option."""
    if text is None:
        return _dt.date.today()
    try:
        return _dt.date.fromisoformat(text)
    except ValueError:
        raise InputError(option, text, "a date YYYY-MM-DD", "fieldbudget") from None


def add_register_options(p: argparse.ArgumentParser) -> None:
    """``--lab`` and ``--accept-expired`` for commands that read a measurement file naming instruments."""
    add_lab_option(p)
    p.add_argument("--accept-expired", action="append", default=[], metavar="ID=REASON",
                   help="use instrument ID although its certificate has expired, for the reason given "
                        "(kept in the budget's metadata and the record); may be repeated")


def accept_expired_of(args: argparse.Namespace) -> dict[str, str]:
    out = {}
    for item in getattr(args, "accept_expired", None) or []:
        ident, sep, reason = item.partition("=")
        if not sep or not ident.strip() or not reason.strip():
            raise InputError("--accept-expired", item, "ID=REASON (an instrument id and a reason in words)",
                             "fieldbudget")
        out[ident.strip()] = reason.strip()
    return out


def resolve_measurement(args: argparse.Namespace, description: dict, where: str):
    """Resolve the instrument references of a measurement description against the lab's register.

    Returns ``(description, notes)``; a description naming no instrument is
    returned as it is and needs no laboratory folder.
    """
    from ..lab.register import load_register, referring_sections, resolve_instruments

    if not referring_sections(description):
        if accept_expired_of(args):
            raise InputError("--accept-expired", args.accept_expired, "used only with a measurement that names "
                             "instruments of the register", where)
        return description, ()
    lab = lab_folder(getattr(args, "lab", None))
    return resolve_instruments(description, load_register(lab), accept_expired=accept_expired_of(args), where=where)
