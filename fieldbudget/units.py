"""The one boundary between fieldbudget and the units library (pint).

Every unit a user types goes through here.  Only a closed list of spellings is
accepted (frequency, flux density, fractional ratios, gradients, lengths and
frequency-per-field ratios), each mapped to a pint expression; pint does the
conversion and the dimension check.  The list is closed on purpose:

- pint's ``gauss`` is the Gaussian-CGS unit and does not convert to tesla, so
  ``G`` here is our own SI-defined unit, 1 G = 1e-4 T exactly;
- pint treats the radian as dimensionless, so ``rad s^-1 T^-1`` would convert
  to ``Hz/T`` without the factor 2 pi; angular units are therefore not offered;
- ``MT`` (megatesla) and ``mT`` differ only in case: spellings are
  case-sensitive.

pint is imported inside the functions (the registry is built once, on first
use), so importing this module stays cheap.  Building pint's registry costs
about 0.2 s, most of a command's start-up beyond numpy and scipy, so the
dimensions and factors of the spellings budgets commonly use are kept in
``units-table.json``, written from pint by ``python -m fieldbudget.units
--write-table`` (``TABLE_SPELLINGS`` lists them).  A test recomputes every
entry with pint and fails when the file differs, so the table is a cache of
pint's answers, not a second units library; any other spelling is parsed by
pint as before.
"""

from __future__ import annotations

import json
import math
import re
from decimal import Decimal
from fractions import Fraction
from functools import cache
from pathlib import Path

from fieldbudget.errors import InputError

__all__ = ["to_si", "convert", "parse_quantity", "normalise_unit", "unit_kind", "allowed_units", "SI_UNITS",
           "UnitInfo", "parse_unit", "unit_factor", "unprefixed"]

# accepted spelling -> (kind, pint expression)
_UNITS: dict[str, tuple[str, str]] = {
    "Hz": ("frequency", "hertz"),
    "kHz": ("frequency", "kilohertz"),
    "MHz": ("frequency", "megahertz"),
    "GHz": ("frequency", "gigahertz"),
    "mHz": ("frequency", "millihertz"),
    "T": ("flux density", "tesla"),
    "mT": ("flux density", "millitesla"),
    "uT": ("flux density", "microtesla"),
    "nT": ("flux density", "nanotesla"),
    "G": ("flux density", "si_gauss"),
    "mG": ("flux density", "millisi_gauss"),
    "kG": ("flux density", "kilosi_gauss"),
    "1": ("ratio", "dimensionless"),
    "%": ("ratio", "percent"),
    "ppm": ("ratio", "ppm"),
    "ppb": ("ratio", "ppb"),
    "T/m": ("gradient", "tesla / meter"),
    "mT/m": ("gradient", "millitesla / meter"),
    "uT/m": ("gradient", "microtesla / meter"),
    "G/cm": ("gradient", "si_gauss / centimeter"),
    "m": ("length", "meter"),
    "cm": ("length", "centimeter"),
    "mm": ("length", "millimeter"),
    "um": ("length", "micrometer"),
    "Hz/T": ("frequency per flux density", "hertz / tesla"),
    "kHz/T": ("frequency per flux density", "kilohertz / tesla"),
    "MHz/T": ("frequency per flux density", "megahertz / tesla"),
    "GHz/T": ("frequency per flux density", "gigahertz / tesla"),
}

#: The SI unit each kind converts to in :func:`to_si`.
SI_UNITS: dict[str, str] = {
    "frequency": "Hz",
    "flux density": "T",
    "ratio": "1",
    "gradient": "T/m",
    "length": "m",
    "frequency per flux density": "Hz/T",
}

# other spellings users type -> accepted spelling
_SYNONYMS = {
    "hertz": "Hz", "tesla": "T", "gauss": "G", "Gs": "G", "kGs": "kG",
    "T m^-1": "T/m", "mT m^-1": "mT/m", "uT m^-1": "uT/m", "G cm^-1": "G/cm",
    "Hz T^-1": "Hz/T", "kHz T^-1": "kHz/T", "MHz T^-1": "MHz/T", "GHz T^-1": "GHz/T",
    "": "1",
}


def allowed_units(kind: str | None = None) -> tuple[str, ...]:
    """The accepted unit spellings, all or those of one kind (``"flux density"``, ...)."""
    return tuple(u for u, (k, _) in _UNITS.items() if kind is None or k == kind)


def _allowed_text(kind: str | None = None) -> str:
    units = allowed_units(kind)
    if kind is None:
        groups = {}
        for u, (k, _) in _UNITS.items():
            groups.setdefault(k, []).append(u)
        return "one of " + "; ".join(f"{k}: {', '.join(v)}" for k, v in groups.items()) + " (uT may be written µT)"
    return f"a {kind} unit: one of {', '.join(units)}"


def normalise_unit(unit: str, field: str = "unit", where: str = "units") -> str:
    """The accepted spelling of ``unit`` (``"µT"`` -> ``"uT"``, ``"gauss"`` -> ``"G"``); InputError otherwise."""
    if not isinstance(unit, str):
        raise InputError(field, unit, _allowed_text(), where)
    text = unit.strip().replace("\u00b5", "u").replace("\u03bc", "u")
    text = _SYNONYMS.get(text, text)
    if text not in _UNITS:
        raise InputError(field, unit, _allowed_text(), where)
    return text


def unit_kind(unit: str) -> str:
    """The kind of quantity ``unit`` measures: ``"frequency"``, ``"flux density"``, ``"ratio"``, ..."""
    return _UNITS[normalise_unit(unit)][0]


@cache
def _registry():
    import pint  # lazily: the only place fieldbudget imports the units library

    ureg = pint.UnitRegistry()
    ureg.define("si_gauss = 1e-4 * tesla")  # the SI-defined gauss (pint's gauss is Gaussian-CGS)
    if "ppb" not in ureg:  # not in pint's default definitions (0.25)
        ureg.define("ppb = 1e-9")
    return ureg


@cache
def _factor(src: str, dst: str) -> Fraction:
    """The exact conversion factor from ``src`` to ``dst``.

    Every unit offered is a power of ten (or 1e-4) times an SI unit, so the
    ratio of the two SI factors (pint's, see :func:`parse_unit`) is snapped to 12 significant digits and kept as a fraction;
    the value is then converted with one rounding (10 uT -> exactly 1e-05 T).
    """
    a, b = parse_unit(src), parse_unit(dst)
    return Fraction(Decimal(f"{a.factor / b.factor:.12g}"))


def _check_value(value: object, field: str, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise InputError(field, value, "a finite number", where)
    return float(value)


def convert(value: float, from_unit: str, to_unit: str) -> float:
    """``value`` in ``from_unit`` expressed in ``to_unit`` (same kind of quantity).

    >>> convert(1.0, "G", "mT")
    0.1
    """
    where = "unit conversion"
    x = _check_value(value, "value", where)
    src = normalise_unit(from_unit, "from_unit", where)
    dst = normalise_unit(to_unit, "to_unit", where)
    kind = _UNITS[src][0]
    if _UNITS[dst][0] != kind:
        raise InputError("to_unit", to_unit, f"{_allowed_text(kind)} (to match {src!r})", where)
    if src == dst:
        return x
    return float(Fraction(x) * _factor(src, dst))


def to_si(value: float, unit: str) -> tuple[float, str]:
    """``value`` in ``unit`` converted to the SI unit of its kind: ``to_si(42.58, "MHz") == (42.58e6, "Hz")``.

    The SI units are ``SI_UNITS``: Hz, T, 1 (ratios), T/m, m, Hz/T.
    """
    canon = normalise_unit(unit, "unit", "conversion to SI")
    si = SI_UNITS[_UNITS[canon][0]]
    return convert(value, canon, si), si


_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")


def parse_quantity(text: str, where: str = "quantity") -> tuple[float, str]:
    """Split ``"42.58 MHz"`` into ``(42.58, "MHz")``: the number and the accepted unit spelling.

    The unit is returned as given (normalised: ``"10 µT"`` -> ``(10.0, "uT")``),
    not converted; use :func:`to_si` for that.  A bare number is a ratio
    (unit ``"1"``).
    """
    if not isinstance(text, str):
        raise InputError("quantity", text, "a text such as '42.58 MHz'", where)
    m = _NUMBER.match(text)
    if not m:
        raise InputError("quantity", text, "a number followed by a unit, such as '42.58 MHz' or '1.5 T'", where)
    value = float(m.group(1))
    try:
        unit = normalise_unit(m.group(2), "unit", where)
    except InputError:
        raise InputError("quantity", text, f"a number followed by a unit, the unit {_allowed_text()}", where) from None
    return value, unit


# --------------------------------------------------------------------------- any unit, for the model check
class UnitInfo(tuple):
    """(dimensions, factor, offset) of a unit: ``dimensions`` a sorted tuple of (base dimension, exponent),
    ``factor`` the value of one unit in coherent SI, ``offset`` True for degC / degF (temperature scales
    with an offset, taken here as differences)."""

    __slots__ = ()

    def __new__(cls, dimensions, factor, offset):
        return super().__new__(cls, (dimensions, factor, offset))

    dimensions = property(lambda self: self[0])
    factor = property(lambda self: self[1])
    offset = property(lambda self: self[2])


_OFFSET_NAMES = {"degree_Celsius": "delta_degree_Celsius", "degree_Fahrenheit": "delta_degree_Fahrenheit"}


@cache
def parse_unit(text: str) -> UnitInfo | None:
    """The dimensions and SI factor of any unit pint understands (``"mohm"``, ``"MHz/T"``, ``"K^-1"``, ``"%"``).

    ``""`` and ``"1"`` are pure numbers.  The spellings of :func:`normalise_unit`
    keep their meaning here (``G`` is the SI-defined gauss, not pint's CGS
    one).  Returns ``None`` for text that is not a unit.  Cached: each
    spelling is parsed once per process.
    """
    if not isinstance(text, str):
        return None
    t = _table_key(text)
    if t in ("", "1", "-"):
        return UnitInfo((), 1.0, False)
    known = _table().get(t)
    if known is not None:
        return known
    return _parse_with_pint(t)


def _table_key(text: str) -> str:
    t = text.strip().replace("\u00b5", "u").replace("\u03bc", "u")
    return _SYNONYMS.get(t, t)


def _parse_with_pint(t: str) -> UnitInfo | None:
    expr = _UNITS[t][1] if t in _UNITS else t
    ureg = _registry()
    try:
        unit = ureg.parse_units(expr)
    except Exception:  # noqa: BLE001 - pint raises several kinds for text that is not a unit
        return None
    dims = tuple(sorted((str(k), float(v)) for k, v in ureg.get_dimensionality(unit).items()))
    name = str(unit)
    offset = "delta_" not in name and any(n in name for n in _OFFSET_NAMES)
    if offset:  # an offset unit (degC): its scale is that of a temperature difference
        for n, dn in _OFFSET_NAMES.items():
            name = name.replace(n, dn)
        unit = ureg.parse_units(name)
    try:
        factor = float(ureg.Quantity(1.0, unit).to_base_units().magnitude)
    except Exception:  # noqa: BLE001
        return None
    return UnitInfo(dims, factor, offset)


def unit_factor(from_unit: str, to_unit: str) -> float:
    """The number that converts a value in ``from_unit`` to ``to_unit`` (same dimensions; no offsets)."""
    a, b = parse_unit(from_unit), parse_unit(to_unit)
    if a is None or b is None or a.dimensions != b.dimensions:
        raise InputError("unit", from_unit, f"a unit of the same dimension as {to_unit!r}", "unit conversion")
    return float(Decimal(f"{a.factor / b.factor:.12g}"))


@cache
def unprefixed(text: str) -> str | None:
    """The unit without its SI prefix (``"mK"`` -> ``"K"``, ``"mohm"`` -> ``"ohm"``); ``None`` if not a prefixed unit."""
    ureg = _registry()
    try:
        parts = ureg.parse_unit_name(text.strip())
    except Exception:  # noqa: BLE001
        return None
    if len(parts) != 1 or not parts[0][0] or parts[0][2]:
        return None
    name = parts[0][1]
    symbol = ureg.get_symbol(name)
    return symbol if symbol.isascii() else name


@cache
def quotient_unit(numerator: str, denominator: str) -> str | None:
    """The unit of numerator/denominator simplified by pint (``"T", "MHz/T"`` -> ``"T²/MHz"``), or None.

    Used for the unit of a sensitivity coefficient c_i = dy/dx_i; None when
    pint does not know one of the units (the caller then writes the quotient
    as text).
    """
    try:
        ureg = _registry()
        q = ureg.parse_units(numerator or "dimensionless") / ureg.parse_units(denominator or "dimensionless")
    except Exception:  # pint raises many kinds of errors for a unit it cannot parse or divide
        return None
    text = format(q, "~P")
    return text or "1"


# --------------------------------------------------------------------------- the table of common spellings
_TABLE_FILE = Path(__file__).with_name("units-table.json")
_PREFIXES = ("G", "M", "k", "", "m", "u", "n", "p")
_SYMBOLS = ("s", "m", "g", "A", "K", "mol", "Hz", "T", "V", "W", "ohm", "Pa", "N", "J", "C", "F", "H", "Wb", "S")

#: The spellings whose pint answers are kept in units-table.json.
TABLE_SPELLINGS: tuple[str, ...] = tuple(dict.fromkeys([
    *_UNITS, *(k for k in _SYNONYMS if k),
    *(p + u for u in _SYMBOLS for p in _PREFIXES), "cm", "cm^3", "cm^2", "L", "mL",
    "min", "h", "d", "day", "degC", "1/degC", "degC^-1", "°C", "deg", "rad", "mrad", "urad", "percent",
    *(f(u) for u in ("K", "degC", "T", "mT", "s", "Hz", "A", "V", "m", "mm", "day", "h", "d")
      for f in (lambda u: "1/" + u, lambda u: u + "^-1")),
    "ppm/K", "ppb/K", "%/K", "ppm/degC", "%/degC", "T/A", "mT/A", "uT/A", "T/V", "mT/V", "V/T", "mV/T", "V/mT",
    "mV/mT", "uV/mT", "ohm/K", "mohm/K", "T/m^2", "mT/m^2", "T/mm", "mT/mm", "uT/mm", "Hz/s", "Hz/h", "T/s",
    "T/h", "nT/h", "uT/h", "m^2", "m^3", "m s^-1", "J T^-1", "J Hz^-1", "J s", "N A^-2", "s^-1 T^-1",
    "MHz T^-1", "kHz T^-1", "Hz T^-1", "Hz/K", "Hz/degC", "cm^3 g^-1", "cm^3/mol", "kg", "g/mol", "kg/m^3",
]))


@cache
def _table() -> dict[str, UnitInfo]:
    raw = json.loads(_TABLE_FILE.read_text(encoding="utf-8"))
    return {k: UnitInfo(tuple((d, float(e)) for d, e in v["dimensions"]), float(v["factor"]), bool(v["offset"]))
            for k, v in raw["units"].items()}


def table_from_pint() -> dict:
    """The content of units-table.json, computed with pint now (the table's test compares the two)."""
    import pint

    units = {}
    for spelling in TABLE_SPELLINGS:
        key = _table_key(spelling)
        info = _parse_with_pint(key) if key not in ("", "1", "-") else None
        if info is not None:
            units[key] = {"dimensions": [list(d) for d in info.dimensions], "factor": info.factor,
                          "offset": info.offset}
    return {"about": "dimensions and SI factors of common unit spellings, as pint computes them; written by "
                     "`python -m fieldbudget.units --write-table`, checked against pint by the tests",
            "pint": pint.__version__, "units": units}


def _main(argv: list[str] | None = None) -> int:
    import argparse

    ap = argparse.ArgumentParser(prog="python -m fieldbudget.units", description="write units-table.json from pint")
    ap.add_argument("--write-table", action="store_true", help=f"write {_TABLE_FILE.name} beside this module")
    args = ap.parse_args(argv)
    if not args.write_table:
        ap.print_help()
        return 2
    table = table_from_pint()
    rows = ",\n".join(f"  {json.dumps(k, ensure_ascii=False)}: {json.dumps(v)}" for k, v in table.pop("units").items())
    head = json.dumps(table, indent=1, ensure_ascii=False)[:-2]  # one unit per line keeps diffs readable
    _TABLE_FILE.write_text(f'{head},\n "units": {{\n{rows}\n }}\n}}\n', encoding="utf-8")
    print(f"wrote {_TABLE_FILE}")
    return 0


if __name__ == "__main__":
    raise SystemExit(_main())
