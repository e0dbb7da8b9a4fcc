"""Reference data of fieldbudget: CODATA recommended values by edition, and
non-CODATA data (IUPAC 2001 nuclear spin table, water shielding and
susceptibility data), all kept as data files in ``fieldbudget/constants/data/``.

>>> from fieldbudget.constants import lookup
>>> lookup("shielded proton gyromag. ratio in MHz/T", edition=2022)
<ReferenceValue 'shielded proton gyromag. ratio in MHz/T' = 42.57638543(17) MHz T^-1, CODATA 2022>

Values are looked up by CODATA's own names.  ``edition=None`` means
DEFAULT_EDITION (the newest).  The layer knows nothing of NMR; it imports only
the standard library (no scipy), and reads each file once, on first use.
"""

from __future__ import annotations

from fieldbudget.constants._tables import (
    DEFAULT_EDITION,
    DERIVED_NAMES,
    check_edition,
    deuteron_gyromagnetic_ratio,
    editions,
    iupac_isotopes,
    lookup,
    lookup_other,
    names,
    nuclear_spin_data,
    other_names,
    search,
)
from fieldbudget.constants._value import NuclearSpinData, ReferenceValue, concise

__all__ = [
    "DEFAULT_EDITION",
    "DERIVED_NAMES",
    "ReferenceValue",
    "NuclearSpinData",
    "editions",
    "check_edition",
    "lookup",
    "names",
    "search",
    "lookup_other",
    "other_names",
    "nuclear_spin_data",
    "iupac_isotopes",
    "deuteron_gyromagnetic_ratio",
    "concise",
]
