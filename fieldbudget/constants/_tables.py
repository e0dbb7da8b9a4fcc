"""Loading and looking up the reference data in ``fieldbudget/constants/data/``.

Written by hand because the tables are ours (TOML, one file per CODATA
edition plus the non-CODATA files); parsing uses only the standard library
(``tomllib``) so that importing the constants layer stays fast and never
imports scipy.  Every file is parsed on first use and kept (``functools.cache``),
which is the only module-level cache of this layer.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from decimal import Decimal
from fractions import Fraction
from functools import cache
from pathlib import Path

from fieldbudget.constants._value import NuclearSpinData, ReferenceValue
from fieldbudget.errors import InputError, UnknownConstantError

DATA = Path(__file__).parent / "data"

DEFAULT_EDITION = 2022
_EDITIONS = (2014, 2018, 2022)

#: Names of the values derived here (not CODATA entries); lookup() accepts them.
DEUTERON_GAMMA = "deuteron gyromag. ratio"
DEUTERON_GAMMA_MHZ = "deuteron gyromag. ratio in MHz/T"
DERIVED_NAMES = frozenset({DEUTERON_GAMMA, DEUTERON_GAMMA_MHZ})

# Exact values whose table entry is printed truncated ("..."): computed from
# their definition.  Keys are the data files' ``defined_as`` strings.
_DEFINITIONS = {
    "Planck constant / (2 pi)": lambda table: table["Planck constant"]["value"] / (2 * math.pi),
    "4 pi 1e-7": lambda table: 4e-7 * math.pi,
}


def editions() -> tuple[int, ...]:
    """The CODATA editions carried: ``(2014, 2018, 2022)``."""
    return _EDITIONS


def check_edition(edition: object = None, where: str = "CODATA lookup") -> int:
    """The CODATA year for ``edition`` (``None`` -> DEFAULT_EDITION; ``"2018"`` and
    ``"CODATA 2018"`` accepted); InputError naming the allowed editions otherwise."""
    if edition is None:
        return DEFAULT_EDITION
    year = None
    if isinstance(edition, int) and not isinstance(edition, bool):
        year = edition
    elif isinstance(edition, str):
        text = edition.strip()
        if text.upper().startswith("CODATA"):
            text = text[6:].strip()
        if text.isdigit():
            year = int(text)
    if year not in _EDITIONS:
        allowed = ", ".join(str(e) for e in _EDITIONS[:-1]) + f" or {_EDITIONS[-1]}"
        raise InputError("edition", edition, f"a CODATA edition: {allowed}", where)
    return year


def _load(name: str) -> dict:
    with open(DATA / name, "rb") as fh:
        return tomllib.load(fh)


def _record(name: str, entry: dict, edition: int | str, source: str, filename: str, aka: str = "",
            verification: str = "") -> ReferenceValue:
    """One data-file entry -> ReferenceValue, with the load-time checks of the file format."""
    where = f"{filename}: {name!r}"
    for key in ("value", "uncertainty", "unit"):
        if key not in entry:
            raise InputError(key, None, "present in every entry", where)
    if entry["unit"] == "" and entry.get("dimensionless") is not True:
        raise InputError("unit", "", "a unit, or '' together with dimensionless = true", where)
    note = entry.get("note", "")
    if aka:
        extra = f"The current CODATA tables name it {aka!r}."
        note = f"{note}. {extra}" if note else extra
    return ReferenceValue(
        name=name,
        value=entry["value"],
        uncertainty=entry["uncertainty"],
        unit=entry["unit"],
        edition=entry.get("edition", edition),
        source=entry.get("source", source),
        note=note,
        valid_from=entry.get("valid_from"),
        valid_to=entry.get("valid_to"),
        valid_unit=entry.get("valid_unit", ""),
        aka=aka,
        verification=entry.get("verification", verification),
        defined=entry.get("defined", False) is True,
    )


@cache
def _aliases() -> dict[str, dict[int, str]]:
    """Current CODATA name -> {edition: that edition's own name}."""
    raw = _load("codata_aliases.toml")
    return {cur: {int(year): old for year, old in by_year.items()} for cur, by_year in raw.items()}


@cache
def _old_to_current() -> dict[str, str]:
    return {old: cur for cur, by_year in _aliases().items() for old in by_year.values()}


@cache
def _codata_table(year: int) -> dict[str, ReferenceValue]:
    filename = f"codata_{year}.toml"
    raw = _load(filename)
    meta = raw["meta"]
    if meta.get("edition") != year:
        raise InputError("meta.edition", meta.get("edition"), f"{year}", filename)
    values = dict(raw["values"])
    for name, entry in values.items():
        if "defined_as" in entry:
            exact = _DEFINITIONS[entry["defined_as"]](values)
            printed = entry["value"]
            # the printed truncated digits must agree with the definition (as scipy checks)
            if not math.isclose(exact, printed, rel_tol=1e-9):
                raise InputError("value", printed, f"the truncated digits of {entry['defined_as']} = {exact!r}",
                                 f"{filename}: {name!r}")
            values[name] = {**entry, "value": exact}
    old_to_current = _old_to_current()
    return {
        name: _record(name, entry, year, meta["source"], filename, aka=old_to_current.get(name, ""),
                      verification=meta.get("verification", ""))
        for name, entry in values.items()
    }


def names(edition: object = None) -> tuple[str, ...]:
    """The constant names of one CODATA edition, as that edition's table spells them."""
    return tuple(sorted(_codata_table(check_edition(edition, "CODATA names")), key=str.lower))


def _suggest(name: str, candidates: list[str]) -> tuple[str, ...]:
    folded = {c.lower(): c for c in candidates}
    out = [folded[name.lower()]] if isinstance(name, str) and name.lower() in folded else []
    for c in difflib.get_close_matches(str(name).lower(), list(folded), n=3, cutoff=0.6):
        if folded[c] not in out:
            out.append(folded[c])
    words = str(name).lower().replace(".", " ").split()
    for low, c in sorted(folded.items()):  # every word of the name appears in the candidate
        if words and all(w in low for w in words) and c not in out:
            out.append(c)
    return tuple(out[:3])


def lookup(name: str, edition: object = None) -> ReferenceValue:
    """A CODATA recommended value by its CODATA name.

    Parameters
    ----------
    name : str
        CODATA's own name (``"shielded proton gyromag. ratio in MHz/T"``).  The
        current (2018+) name works in every edition and returns the record
        under that edition's own name (``rv.name``, with ``rv.aka`` the current
        one); an older spelling works in the newer editions too.  The derived
        ``"deuteron gyromag. ratio"`` and ``"deuteron gyromag. ratio in MHz/T"``
        are accepted (see :func:`deuteron_gyromagnetic_ratio`).
    edition : int, optional
        CODATA year, 2014, 2018 or 2022; ``None`` means DEFAULT_EDITION.

    Raises
    ------
    UnknownConstantError
        the name is not in the edition (with close matches).
    InputError
        the edition is not one of the editions carried.
    """
    year = check_edition(edition)
    table = _codata_table(year)
    if isinstance(name, str):
        if name in table:
            return table[name]
        own = _aliases().get(name, {}).get(year)
        if own in table:
            return table[own]
        current = _old_to_current().get(name)
        if current in table:
            return table[current]
        if name in (DEUTERON_GAMMA, DEUTERON_GAMMA_MHZ):
            return deuteron_gyromagnetic_ratio(year, in_mhz_per_t=name == DEUTERON_GAMMA_MHZ)
    candidates = [*table, *(cur for cur, by in _aliases().items() if by.get(year) in table),
                  DEUTERON_GAMMA, DEUTERON_GAMMA_MHZ]
    raise UnknownConstantError(str(name), year, _suggest(name, candidates))


def search(text: str, edition: object = None) -> tuple[ReferenceValue, ...]:
    """The values of one CODATA edition whose name (or current name) contains every word of ``text``.

    Case-insensitive; ``search("proton gyromag")`` finds the four proton
    gyromagnetic ratios.  Returns ReferenceValue records sorted by name.
    """
    year = check_edition(edition, "CODATA search")
    words = str(text).lower().split()
    found = [rv for rv in _codata_table(year).values()
             if all(w in f"{rv.name} {rv.aka}".lower() for w in words)]
    return tuple(sorted(found, key=lambda rv: rv.name.lower()))


def deuteron_gyromagnetic_ratio(edition: object = None, *, in_mhz_per_t: bool = False) -> ReferenceValue:
    """The deuteron gyromagnetic ratio derived from CODATA's deuteron magnetic moment.

    gamma_d = mu_d / (I hbar) with spin I = 1, so gamma_d = 2 pi mu_d / h in
    s^-1 T^-1, and gamma_d / 2 pi = mu_d / h in MHz T^-1 (``in_mhz_per_t=True``).
    CODATA has no deuteron gyromagnetic ratio entry (checked in the 2014, 2018
    and 2022 tables).  Relative uncertainty: u_r(mu_d) combined in quadrature
    with u_r(h); h is exact from 2018 on.  For 2014 the covariance of mu_d and h
    in that adjustment is not published in the table and is ignored; being
    positive it would lower u, so the result is conservative.  Bare deuteron:
    a D2O probe needs its own shielding on top.
    """
    year = check_edition(edition, "deuteron gyromagnetic ratio")
    mu = lookup("deuteron mag. mom.", year)
    h = lookup("Planck constant", year)
    ratio = mu.value / h.value  # Hz T^-1
    if in_mhz_per_t:
        name, value, unit, formula = DEUTERON_GAMMA_MHZ, ratio / 1e6, "MHz T^-1", "gamma_d/2pi = mu_d/h"
    else:
        name, value, unit, formula = DEUTERON_GAMMA, 2 * math.pi * ratio, "s^-1 T^-1", "gamma_d = mu_d/hbar = 2 pi mu_d/h"
    u_r = math.hypot(mu.relative_uncertainty, h.relative_uncertainty)
    how = "h exact" if h.is_exact else "u(h) included, covariance of mu_d and h ignored (conservative)"
    return ReferenceValue(
        name=name, value=value, uncertainty=u_r * abs(value), unit=unit, edition=year,
        source=(f"derived here, not a CODATA entry: {formula} (deuteron spin I = 1) from the CODATA {year} "
                f"values of 'deuteron mag. mom.' and 'Planck constant'"),
        note=f"bare deuteron; {how}",
    )


# ----- non-CODATA reference data -------------------------------------------------

@cache
def _iupac() -> dict[str, NuclearSpinData]:
    filename = "iupac_2001_nuclear_spins.toml"
    raw = _load(filename)
    meta = raw["meta"]
    if meta["unit"] != "10^7 rad s^-1 T^-1":
        raise InputError("meta.unit", meta["unit"], "'10^7 rad s^-1 T^-1'", filename)
    rel = meta["relative_uncertainty"]
    note = ("bare nucleus, not a CODATA value; uncertainty is our conservative assignment "
            f"(the larger of {rel:g} relative and half the last published digit), not published")
    out = {}
    for iso, entry in raw["isotopes"].items():
        printed = Decimal(entry["gamma"])  # kept as text: its last digit sets the rounding term
        u = abs(printed) * Decimal(repr(rel))
        if meta.get("include_rounding"):
            u = max(u, Decimal(5).scaleb(printed.as_tuple().exponent - 1))
        si, u_si = float(printed.scaleb(7)), float(u.scaleb(7))
        gamma = ReferenceValue(
            name=f"{iso} gyromag. ratio", value=si, uncertainty=u_si, unit="rad s^-1 T^-1",
            edition=meta["edition"], source=meta["source"], verification=meta.get("verification", ""),
            note=f"published as {entry['gamma']} x 10^7 rad s^-1 T^-1; {note}")
        over_2pi = ReferenceValue(
            name=f"{iso} gyromag. ratio in MHz/T", value=si / (2 * math.pi) / 1e6,
            uncertainty=u_si / (2 * math.pi) / 1e6, unit="MHz T^-1",
            edition=meta["edition"], source=meta["source"], verification=meta.get("verification", ""),
            note=f"gamma/2pi computed here from gamma = {entry['gamma']} x 10^7 rad s^-1 T^-1; {note}")
        out[iso] = NuclearSpinData(isotope=iso, spin=float(Fraction(entry["spin"])),
                                   gyromagnetic_ratio=gamma, gyromagnetic_ratio_over_2pi=over_2pi)
    return out


def iupac_isotopes() -> tuple[str, ...]:
    """Isotopes in the IUPAC 2001 table carried here, lightest first: ``("1H", "2H", ...)``."""
    return tuple(_iupac())


def _normalise_isotope(text: str) -> str:
    """'7Li', 'Li7', 'Li-7', '7li' -> '7Li'."""
    t = text.strip().replace("-", "").replace(" ", "")
    digits = "".join(ch for ch in t if ch.isdigit())
    letters = "".join(ch for ch in t if ch.isalpha())
    if not digits or not letters or len(digits) + len(letters) != len(t):
        return text
    return f"{digits}{letters.capitalize()}"


def nuclear_spin_data(isotope: str) -> NuclearSpinData:
    """Spin and gyromagnetic ratio of ``isotope`` from the IUPAC 2001 table (bare nucleus)."""
    table = _iupac()
    key = _normalise_isotope(isotope) if isinstance(isotope, str) else isotope
    if key not in table:
        raise InputError("isotope", isotope, "one of " + ", ".join(table), "IUPAC 2001 nuclear spin table")
    return table[key]


@cache
def _other() -> dict[str, ReferenceValue]:
    filename = "water.toml"
    raw = _load(filename)
    out = {}
    for name, entry in raw["values"].items():
        for key in ("edition", "source"):
            if key not in entry:
                raise InputError(key, None, "present in every entry", f"{filename}: {name!r}")
        out[name] = _record(name, entry, entry["edition"], entry["source"], filename)
    for data in _iupac().values():
        for rv in (data.gyromagnetic_ratio, data.gyromagnetic_ratio_over_2pi):
            out[rv.name] = rv
    return out


def other_names() -> tuple[str, ...]:
    """Names accepted by :func:`lookup_other`."""
    return tuple(_other())


def lookup_other(name: str) -> ReferenceValue:
    """A non-CODATA reference value by its stable name.

    Names: ``"proton shielding temperature coefficient in water"``,
    ``"volume magnetic susceptibility of water"``,
    ``"relative temperature coefficient of the volume magnetic susceptibility of water"``,
    ``"reference temperature of the volume magnetic susceptibility of water"`` (20 degC),
    ``"mass magnetic susceptibility of water (CGS)"``,
    ``"shielded proton reference temperature"``, and for each IUPAC isotope
    ``"7Li gyromag. ratio"`` / ``"7Li gyromag. ratio in MHz/T"``.
    """
    table = _other()
    if isinstance(name, str) and name in table:
        return table[name]
    raise UnknownConstantError(str(name), "non-CODATA", _suggest(name, list(table)))
