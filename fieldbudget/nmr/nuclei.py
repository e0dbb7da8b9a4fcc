"""Probe nuclei and their reference gyromagnetic ratios, per CODATA edition.

A :class:`Nucleus` knows which reference value gives its gamma/2pi and under
which condition that value holds; :meth:`Nucleus.gyromagnetic_ratio` looks it
up in ``fieldbudget.constants`` (never retyped here).  :func:`larmor_field`
and :func:`larmor_frequency` convert with the uncertainty of the reference
value alone.

Names: ``shielded-proton`` (the default: protons in a spherical sample of pure
H2O at 25 degC, CODATA gamma'_p), ``proton`` (free proton, CODATA gamma_p),
``shielded-helion`` (3He gas sphere at 25 degC, CODATA gamma'_h),
``deuteron`` (bare deuteron, derived as gamma_d = mu_d / hbar for spin 1, since
CODATA lists no deuteron gyromagnetic ratio), ``electron`` (free electron,
CODATA gamma_e; an ESR sample's own g-factor is a separate budget input), and
the IUPAC 2001 isotopes by label (``7Li``, ``19F``, ...): bare-nucleus values
that are not CODATA values, so a probe of such a nucleus (or of another
liquid) needs its own shielding or a calibration against a water sphere.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .. import constants
from .._display import escape
from ..errors import InputError, UnknownConstantError
from . import physics

__all__ = [
    "DEFAULT_NUCLEUS",
    "NUCLEUS_NAMES",
    "LarmorConversion",
    "Nucleus",
    "gamma_hz_per_t",
    "larmor_field",
    "larmor_frequency",
    "nucleus",
    "nucleus_names",
]

DEFAULT_NUCLEUS = "shielded-proton"

_IUPAC_NOTE = ("IUPAC 2001 value for the bare nucleus, not a CODATA value: a probe of this nucleus in a real "
               "compound needs its own shielding (or Knight shift) or a calibration against a water sphere")


@dataclass(frozen=True)
class Nucleus:
    """A probe nucleus: its name, where its gamma/2pi comes from and the condition it holds for.

    ``kind`` is ``"codata"`` (a CODATA entry by name), ``"derived"`` (the
    deuteron, from CODATA's mu_d), ``"iupac"`` (IUPAC 2001 table) or
    ``"electron"`` (CODATA gamma_e, free electron).  ``reference`` is the
    CODATA name or the isotope label.  ``water`` marks the water-sphere
    reference of CODATA's shielded proton: only then do the water-temperature
    term and the water susceptibility apply by default.
    """

    name: str
    kind: str
    reference: str
    symbol: str
    condition: str
    note: str = ""
    water: bool = False

    def gyromagnetic_ratio(self, edition: int | None = None):
        """gamma/2pi as a ``ReferenceValue`` in MHz/T, from ``edition`` (default the newest CODATA).

        IUPAC values have their own edition ("IUPAC 2001") whatever CODATA
        edition is asked for.
        """
        if self.kind == "iupac":
            rv = constants.nuclear_spin_data(self.reference).gyromagnetic_ratio_over_2pi
        elif self.kind == "derived":
            rv = constants.deuteron_gyromagnetic_ratio(edition, in_mhz_per_t=True)
        else:
            rv = constants.lookup(self.reference, edition=edition)
        return _in_mhz_per_t(rv)

    def gamma_hz_per_t(self, edition: int | None = None) -> tuple[float, float]:
        """(|gamma/2pi|, u) in Hz/T for ``edition``."""
        rv = self.gyromagnetic_ratio(edition)
        return abs(rv.value) * 1e6, rv.uncertainty * 1e6

    @property
    def is_codata(self) -> bool:
        return self.kind != "iupac"

    def __repr__(self) -> str:
        return f"<Nucleus {self.name}: {self.reference} ({self.condition})>"

    def _repr_html_(self) -> str:
        return f"<span>{escape(self.name)}: {escape(self.reference)} ({escape(self.condition)})</span>"

    def to_dict(self) -> dict:
        return {"name": self.name, "kind": self.kind, "reference": self.reference, "condition": self.condition,
                "note": self.note}


def _in_mhz_per_t(rv):
    """The reference value itself when it is in MHz/T; a converted copy otherwise."""
    unit = (rv.unit or "").replace(" ", "")
    if unit in ("MHzT^-1", "MHz/T"):
        return rv
    factor = {"s^-1T^-1": 1e-6 / (2 * math.pi), "rads^-1T^-1": 1e-6 / (2 * math.pi),
              "HzT^-1": 1e-6, "Hz/T": 1e-6, "GHzT^-1": 1e3, "GHz/T": 1e3}.get(unit)
    if factor is None:  # pragma: no cover - a data-table change that this module does not know
        raise InputError("unit of the gyromagnetic ratio", rv.unit, "MHz/T, Hz/T or s^-1 T^-1", "fieldbudget.nmr")
    import dataclasses

    return dataclasses.replace(rv, value=rv.value * factor, uncertainty=rv.uncertainty * factor, unit="MHz T^-1")


_CODATA_NUCLEI = {
    "shielded-proton": Nucleus(
        "shielded-proton", "codata", "shielded proton gyromag. ratio in MHz/T", "gamma_p_sh",
        "protons in a spherical sample of pure H2O at 25 degC (CODATA reference condition)",
        "B0 is the flux density before the probe is inserted", water=True),
    "proton": Nucleus(
        "proton", "codata", "proton gyromag. ratio in MHz/T", "gamma_p",
        "free (bare) proton, no shielding",
        "a water probe needs the shielded proton instead, or its own shielding input"),
    "shielded-helion": Nucleus(
        "shielded-helion", "codata", "shielded helion gyromag. ratio in MHz/T", "gamma_h_sh",
        "3He in a spherical gas sample at 25 degC (CODATA reference condition)"),
    "deuteron": Nucleus(
        "deuteron", "derived", "deuteron mag. mom.", "gamma_d",
        "bare deuteron; gamma_d = mu_d / hbar (spin 1), derived from CODATA's deuteron magnetic moment",
        "no CODATA shielded-deuteron value exists: a D2O probe needs its own shielding (about 26 ppm) or a "
        "calibration against a water sphere"),
    "electron": Nucleus(
        "electron", "electron", "electron gyromag. ratio in MHz/T", "gamma_e",
        "free electron (magnitude)",
        "an ESR sample whose g-factor differs from the free electron's needs the sample g-factor input"),
}

NUCLEUS_NAMES = tuple(_CODATA_NUCLEI)


def nucleus_names() -> tuple[str, ...]:
    """Every name :func:`nucleus` accepts: the CODATA ones and the IUPAC isotope labels."""
    return NUCLEUS_NAMES + tuple(_iupac_labels())


def _iupac_labels() -> tuple[str, ...]:
    return tuple(constants.iupac_isotopes())


def nucleus(name: str | Nucleus = DEFAULT_NUCLEUS, where: str = "") -> Nucleus:
    """The :class:`Nucleus` called ``name`` (a CODATA name above or an IUPAC isotope label)."""
    if isinstance(name, Nucleus):
        return name
    if not isinstance(name, str):
        raise InputError("nucleus", name, _allowed_words(), where)
    if name in _CODATA_NUCLEI:
        return _CODATA_NUCLEI[name]
    try:
        data = constants.nuclear_spin_data(name)
    except (UnknownConstantError, KeyError, ValueError):
        raise InputError("nucleus", name, _allowed_words(), where) from None
    spin = getattr(data, "spin", "")
    cond = f"bare {name} nucleus" + (f", spin {spin}" if spin else "")
    return Nucleus(name, "iupac", name, "gamma_" + "".join(ch for ch in name if ch.isalnum()), cond, _IUPAC_NOTE)


def _allowed_words() -> str:
    iupac = _iupac_labels()
    tail = f" or an IUPAC 2001 isotope ({', '.join(iupac)})" if iupac else " or an IUPAC 2001 isotope label such as '7Li'"
    return "one of " + ", ".join(repr(n) for n in NUCLEUS_NAMES) + tail


def gamma_hz_per_t(name: str = DEFAULT_NUCLEUS, codata: int | None = None) -> tuple[float, float]:
    """(|gamma/2pi|, u) in Hz/T of nucleus ``name`` in CODATA edition ``codata``."""
    return nucleus(name).gamma_hz_per_t(codata)


@dataclass(frozen=True)
class LarmorConversion:
    """A Larmor conversion f <-> B with the uncertainty of the reference ratio alone.

    ``quantity`` is ``"field"`` (``value`` in T) or ``"frequency"`` (in Hz);
    ``given`` is the input in SI (Hz or T).  ``codata`` is the CODATA edition
    used (also recorded for IUPAC nuclei, whose ratio does not depend on it);
    ``reference_edition`` and ``reference_source`` say where gamma came from.
    """

    quantity: str
    value: float
    u: float
    given: float
    nucleus: str
    codata: int
    gamma_mhz_per_t: float
    u_gamma_mhz_per_t: float
    reference_edition: str
    reference_source: str

    @property
    def unit(self) -> str:
        return "T" if self.quantity == "field" else "Hz"

    @property
    def relative_uncertainty(self) -> float:
        return self.u / abs(self.value) if self.value else math.inf

    def __repr__(self) -> str:
        return (f"<LarmorConversion {self.quantity} = {self.value:.12g} {self.unit}, u = {self.u:.2g} {self.unit}"
                f" ({self.nucleus}, {self.reference_edition})>")

    def text(self) -> str:
        """One line for a terminal."""
        sym = "B" if self.quantity == "field" else "f"
        given_unit = "Hz" if self.quantity == "field" else "T"
        return (f"{sym} = {self.value:.12g} {self.unit}, u = {self.u:.2g} {self.unit} "
                f"(u_r = {self.relative_uncertainty:.2g}) from {self.given:.12g} {given_unit}; "
                f"{self.nucleus}, gamma/2pi = {self.gamma_mhz_per_t:.12g} MHz/T ({self.reference_edition})")

    def _repr_html_(self) -> str:
        return f"<span>{escape(self.text())}</span>"

    def to_dict(self) -> dict:
        key = "field_T" if self.quantity == "field" else "frequency_Hz"
        given = "frequency_Hz_given" if self.quantity == "field" else "field_T_given"
        return {key: self.value, "u": self.u, "unit": self.unit, given: self.given, "nucleus": self.nucleus,
                "codata": self.codata, "gamma_MHz_per_T": self.gamma_mhz_per_t,
                "u_gamma_MHz_per_T": self.u_gamma_mhz_per_t, "reference_edition": self.reference_edition,
                "reference_source": self.reference_source}


def _edition(codata: int | None, where: str) -> int:
    if codata is None:
        return constants.DEFAULT_EDITION
    if codata not in constants.editions():
        raise InputError("codata", codata, f"one of the CODATA editions {list(constants.editions())}", where)
    return codata


def _convert(quantity: str, x: float, name: str, codata: int | None) -> LarmorConversion:
    where = ""
    nuc = nucleus(name, where)
    ed = _edition(codata, where)
    rv = nuc.gyromagnetic_ratio(ed)
    g, ug = abs(rv.value) * 1e6, rv.uncertainty * 1e6
    if quantity == "field":
        value, u = physics.field_from_frequency(x, g, ug)
    else:
        value, u = physics.frequency_from_field(x, g, ug)
    return LarmorConversion(quantity, value, u, float(x), nuc.name, ed, abs(rv.value), rv.uncertainty,
                            _label(rv), str(rv.source))


def _label(rv) -> str:
    return getattr(rv, "edition_label", None) or str(rv.edition)


def larmor_field(frequency_hz: float, nucleus_name: str = DEFAULT_NUCLEUS, codata: int | None = None) -> LarmorConversion:
    """B (T) from a Larmor frequency (Hz): B = f / (gamma/2pi), u from gamma alone."""
    return _convert("field", frequency_hz, nucleus_name, codata)


def larmor_frequency(field_t: float, nucleus_name: str = DEFAULT_NUCLEUS, codata: int | None = None) -> LarmorConversion:
    """Larmor frequency (Hz) in a field (T): f = (gamma/2pi) B, u from gamma alone."""
    return _convert("frequency", field_t, nucleus_name, codata)
