"""The record types of the reference-data layer: ReferenceValue, NuclearSpinData.

Written by hand: a reference value here is a small immutable record (value,
absolute standard uncertainty, unit, edition, source) with a display; no
library models "a published number and where it came from" the way a lab's
uncertainty budget needs it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import ROUND_HALF_UP, Decimal
from fractions import Fraction

from fieldbudget import _display
from fieldbudget.errors import InputError

__all__ = ["ReferenceValue", "NuclearSpinData", "concise"]


def _is_number(x: object) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _plain(x: float) -> str:
    """Shortest round-trip text of a float, without a trailing '.0' on integers."""
    text = repr(float(x))
    return text[:-2] if text.endswith(".0") else text


def concise(value: float, uncertainty: float) -> str:
    """Value with its standard uncertainty in CODATA's concise notation.

    ``concise(42.57638543, 1.7e-7) == "42.57638543(17)"`` and
    ``concise(2.675153194e8, 1.1) == "2.675153194(11)e8"``: the uncertainty is
    shown to two significant digits in units of the value's last digit, as
    the CODATA tables print it.  An exact value (u = 0) is printed in full.
    """
    if uncertainty == 0:
        return _plain(value)
    dv = Decimal(repr(float(value)))
    du = Decimal(repr(float(uncertainty)))
    exp_v = dv.adjusted() if value != 0 else du.adjusted()
    scientific = exp_v > 5 or exp_v < -2
    shift = exp_v if scientific else 0
    q = du.adjusted() - 1  # decimal place of the uncertainty's second digit
    digits = du.scaleb(-q).to_integral_value(ROUND_HALF_UP)
    if digits >= 100:  # 9.96 -> 10(0): one place coarser
        q += 1
        digits = du.scaleb(-q).to_integral_value(ROUND_HALF_UP)
    if q - shift > 0:  # u's digits lie left of the units place: scale so they end at the first decimal
        scientific, shift = True, q + 1
    mantissa = dv.scaleb(-shift).quantize(Decimal(1).scaleb(q - shift), rounding=ROUND_HALF_UP)
    text = f"{mantissa:f}({digits:f})"
    return f"{text}e{shift}" if scientific else text


@dataclass(frozen=True)
class ReferenceValue:
    """A published reference value: value, absolute standard uncertainty, unit and provenance.

    Attributes
    ----------
    name : str
        The name as the edition's own table spells it (CODATA's names for
        CODATA values).
    value : float
        The value, in ``unit``.
    uncertainty : float
        Absolute standard uncertainty, in ``unit``; 0 for an exact value.
    unit : str
        The unit as the source writes it (``"MHz T^-1"``); ``""`` for a pure
        number.
    edition : int or str
        The CODATA year (``2022``) for CODATA values; a label such as
        ``"IUPAC 2001"`` for other data.  Required.
    source : str
        Where the number comes from (table, paper).  Required.
    note : str
        Reference conditions, sign conventions, how it was derived.
    valid_from, valid_to, valid_unit
        Validity range (for example 5 to 45 ``"degC"``), or ``None``.
    aka : str
        The name the current CODATA tables use, when the edition's own table
        spells it differently (CODATA 2014 ``"... over 2 pi"``).
    verification : str
        How far the kit's copy was checked against the original publication
        (``""`` when nothing is to be said); kept apart from ``source``, which
        is the citation reports print.
    defined : bool
        A defined reference condition (exact by definition, e.g. the 25 degC
        of the shielded-proton ratio), not a measured datum.
    """

    name: str
    value: float
    uncertainty: float
    unit: str
    edition: int | str
    source: str
    note: str = ""
    valid_from: float | None = None
    valid_to: float | None = None
    valid_unit: str = ""
    aka: str = ""
    verification: str = ""
    defined: bool = False

    def __post_init__(self) -> None:
        where = f"reference value {self.name!r}" if isinstance(self.name, str) else "reference value"
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError("name", self.name, "a non-empty string", where)
        if not _is_number(self.value) or not math.isfinite(self.value):
            raise InputError("value", self.value, "a finite number", where)
        if not _is_number(self.uncertainty) or not math.isfinite(self.uncertainty) or self.uncertainty < 0:
            raise InputError("uncertainty", self.uncertainty, "a finite number >= 0", where)
        if not isinstance(self.unit, str):
            raise InputError("unit", self.unit, "a string ('' for a pure number)", where)
        ok_edition = (isinstance(self.edition, int) and not isinstance(self.edition, bool) and self.edition > 0) or (
            isinstance(self.edition, str) and self.edition.strip() != "")
        if not ok_edition:
            raise InputError("edition", self.edition, "a CODATA year or a non-empty edition label", where)
        if not isinstance(self.source, str) or not self.source.strip():
            raise InputError("source", self.source, "a non-empty text naming where the value comes from", where)
        for attr in ("note", "valid_unit", "aka", "verification"):
            if not isinstance(getattr(self, attr), str):
                raise InputError(attr, getattr(self, attr), "a string", where)
        rng = (self.valid_from, self.valid_to)
        if rng != (None, None):
            if not all(_is_number(x) and math.isfinite(x) for x in rng) or self.valid_from > self.valid_to:
                raise InputError("valid_from/valid_to", rng, "two finite numbers with valid_from <= valid_to", where)
            if not self.valid_unit:
                raise InputError("valid_unit", self.valid_unit, "the unit of the validity range", where)
            object.__setattr__(self, "valid_from", float(self.valid_from))
            object.__setattr__(self, "valid_to", float(self.valid_to))
        object.__setattr__(self, "value", float(self.value))
        object.__setattr__(self, "uncertainty", float(self.uncertainty))

    @property
    def relative_uncertainty(self) -> float:
        """u / |value| (0 for an exact value; inf for an uncertain zero)."""
        if self.uncertainty == 0:
            return 0.0
        return self.uncertainty / abs(self.value) if self.value != 0 else math.inf

    @property
    def is_exact(self) -> bool:
        """True when the value is exact (u = 0), e.g. the SI defining constants since 2019."""
        return self.uncertainty == 0

    @property
    def is_dimensionless(self) -> bool:
        """True for a pure number (CODATA prints no unit)."""
        return self.unit == ""

    @property
    def edition_label(self) -> str:
        """``"CODATA 2022"`` for a CODATA year, otherwise the edition label itself."""
        return f"CODATA {self.edition}" if isinstance(self.edition, int) else self.edition

    def within_validity(self, x: float) -> bool:
        """True when ``x`` (in ``valid_unit``) lies in the validity range, or there is none."""
        if self.valid_from is None:
            return True
        return self.valid_from <= x <= self.valid_to

    def concise(self) -> str:
        """Value and uncertainty in concise notation, with ``(exact)`` for an exact value."""
        text = concise(self.value, self.uncertainty)
        return f"{text} (exact)" if self.is_exact else text

    def to_dict(self) -> dict:
        """Plain JSON types; an infinite relative uncertainty becomes ``None``."""
        ur = self.relative_uncertainty
        return {
            "name": self.name,
            "value": self.value,
            "uncertainty": self.uncertainty,
            "relative_uncertainty": None if math.isinf(ur) else ur,
            "unit": self.unit,
            "edition": self.edition,
            "edition_label": self.edition_label,
            "source": self.source,
            "note": self.note,
            "valid_from": self.valid_from,
            "valid_to": self.valid_to,
            "valid_unit": self.valid_unit,
            "aka": self.aka,
            "verification": self.verification,
            "defined": self.defined,
        }

    def __repr__(self) -> str:
        number = concise(self.value, self.uncertainty)
        unit = f" {self.unit}" if self.unit else ""
        exact = " (exact)" if self.is_exact else ""
        return f"<ReferenceValue {self.name!r} = {number}{unit}{exact}, {self.edition_label}>"

    def _repr_html_(self) -> str:
        rows = [
            ("value", self.concise()),
            ("unit", self.unit or "(dimensionless)"),
            ("relative standard uncertainty", "exact" if self.is_exact else _display.fmt(self.relative_uncertainty, 2)),
            ("edition", self.edition_label),
            ("source", self.source),
        ]
        if self.aka:
            rows.append(("current CODATA name", self.aka))
        if self.valid_from is not None:
            rows.append(("valid", f"{_plain(self.valid_from)} to {_plain(self.valid_to)} {self.valid_unit}"))
        if self.note:
            rows.append(("note", self.note))
        return _display.html_block(self.name, _display.html_table(("", ""), rows))


def _spin_label(spin: float) -> str:
    frac = Fraction(spin).limit_denominator(2)
    return str(frac.numerator) if frac.denominator == 1 else f"{frac.numerator}/{frac.denominator}"


@dataclass(frozen=True)
class NuclearSpinData:
    """Spin and gyromagnetic ratio of one isotope from a nuclear spin table.

    ``gyromagnetic_ratio`` is in rad s^-1 T^-1 and ``gyromagnetic_ratio_over_2pi``
    in MHz T^-1 (f = (gamma/2 pi) B).  Values are for the bare nucleus.
    """

    isotope: str
    spin: float
    gyromagnetic_ratio: ReferenceValue
    gyromagnetic_ratio_over_2pi: ReferenceValue

    def __post_init__(self) -> None:
        where = f"nuclear spin data {self.isotope!r}"
        if not isinstance(self.isotope, str) or not self.isotope:
            raise InputError("isotope", self.isotope, "an isotope label such as '7Li'", "nuclear spin data")
        if not _is_number(self.spin) or self.spin < 0 or (2 * self.spin) != int(2 * self.spin):
            raise InputError("spin", self.spin, "a non-negative integer or half-integer", where)
        for attr in ("gyromagnetic_ratio", "gyromagnetic_ratio_over_2pi"):
            if not isinstance(getattr(self, attr), ReferenceValue):
                raise InputError(attr, getattr(self, attr), "a ReferenceValue", where)
        object.__setattr__(self, "spin", float(self.spin))

    @property
    def spin_label(self) -> str:
        """The spin as a fraction, ``"3/2"``."""
        return _spin_label(self.spin)

    def to_dict(self) -> dict:
        return {
            "isotope": self.isotope,
            "spin": self.spin,
            "spin_label": self.spin_label,
            "gyromagnetic_ratio": self.gyromagnetic_ratio.to_dict(),
            "gyromagnetic_ratio_over_2pi": self.gyromagnetic_ratio_over_2pi.to_dict(),
        }

    def __repr__(self) -> str:
        g = self.gyromagnetic_ratio_over_2pi
        return (f"<NuclearSpinData {self.isotope} spin {self.spin_label}, "
                f"gamma/2pi = {concise(g.value, g.uncertainty)} {g.unit}, {g.edition_label}>")

    def _repr_html_(self) -> str:
        g, f = self.gyromagnetic_ratio, self.gyromagnetic_ratio_over_2pi
        rows = [
            ("spin I", self.spin_label),
            ("gamma", f"{g.concise()} {g.unit}"),
            ("gamma/2pi", f"{f.concise()} {f.unit}"),
            ("edition", g.edition_label),
            ("source", g.source),
            ("note", g.note),
        ]
        return _display.html_block(self.isotope, _display.html_table(("", ""), rows))
