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
use), so importing this module stays cheap.
"""

from __future__ import annotations

import math
import re
from decimal import Decimal
from fractions import Fraction
from functools import cache

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

    Every unit offered is a power of ten (or 1e-4) times an SI unit, so pint's
    float factor is snapped to 12 significant digits and kept as a fraction;
    the value is then converted with one rounding (10 uT -> exactly 1e-05 T).
    """
    ureg = _registry()
    factor = ureg.Quantity(1.0, _UNITS[src][1]).to(_UNITS[dst][1]).magnitude
    return Fraction(Decimal(f"{factor:.12g}"))


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
    t = text.strip().replace("\u00b5", "u").replace("\u03bc", "u")
    if t in ("", "1", "-"):
        return UnitInfo((), 1.0, False)
    t = _SYNONYMS.get(t, t)
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
