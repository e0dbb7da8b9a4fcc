"""``fieldbudget larmor VALUE UNIT``: a Larmor frequency to B, or B to the frequency.

The uncertainty printed is that of the reference gyromagnetic ratio alone
(the value converted is taken as exact).  Units go through
``fieldbudget.units``: a frequency unit (Hz, kHz, MHz, GHz) gives the field
in T, a flux-density unit (T, mT, uT, G) gives the frequency in Hz.
"""

from __future__ import annotations

import argparse
import json

from .. import constants
from ..errors import InputError
from ..nmr.nuclei import DEFAULT_NUCLEUS, NUCLEUS_NAMES, larmor_field, larmor_frequency
from ..units import convert, normalise_unit, unit_kind

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("larmor", help="convert a Larmor frequency to the field, or a field to the frequency",
                       description="Convert a resonance frequency (Hz, kHz, MHz, GHz) to the flux density B, or "
                                   "a flux density (T, mT, uT, G) to the resonance frequency, with the "
                                   "uncertainty of the reference gyromagnetic ratio alone.")
    p.add_argument("value", type=float, help="the number to convert")
    p.add_argument("unit", help="its unit: Hz, kHz, MHz, GHz (frequency) or T, mT, uT, G (field)")
    p.add_argument("--nucleus", default=DEFAULT_NUCLEUS,
                   help=f"probe nucleus: {', '.join(NUCLEUS_NAMES)} or an IUPAC 2001 isotope such as 7Li "
                        f"(default {DEFAULT_NUCLEUS})")
    p.add_argument("--codata", type=int, default=None, metavar="YEAR",
                   help=f"CODATA edition (default {constants.DEFAULT_EDITION})")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    return p


def run(args: argparse.Namespace) -> int:
    unit = normalise_unit(args.unit, "UNIT", "")
    kind = unit_kind(unit)
    if kind in ("frequency", "flux density") and not args.value > 0:  # nan fails this too
        what = "frequency" if kind == "frequency" else "flux density (the magnitude of B)"
        raise InputError("VALUE", args.value, f"a {what} > 0 {unit}, finite")
    if kind == "frequency":
        out = larmor_field(convert(args.value, unit, "Hz"), args.nucleus, args.codata)
    elif kind == "flux density":
        out = larmor_frequency(convert(args.value, unit, "T"), args.nucleus, args.codata)
    else:
        raise InputError("UNIT", args.unit, "a frequency unit (Hz, kHz, MHz, GHz) or a flux-density unit "
                         "(T, mT, uT, G)")
    if args.json:
        print(json.dumps(out.to_dict(), indent=2, ensure_ascii=False))
    else:
        print(out.text())
    return 0
