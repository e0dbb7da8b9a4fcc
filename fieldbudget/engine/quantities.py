"""Input quantities of a measurement model.

An input has a symbol, an estimate, a unit, how its uncertainty is stated (a
:mod:`~fieldbudget.engine.distributions` object), a source / traceability text
and a free note.  ``reference`` names the reference value (a CODATA name) the
estimate was taken from, in that reference's own unit, so that a budget can be
re-evaluated under another CODATA edition (:func:`fieldbudget.engine.rebase`).

``role`` says what kind of knowledge the input is, for the traceability
statement of reports (ISO/IEC 17025:2017 6.5, 7.8.4.1), and ``provenance``
holds the facts that go with it (see :data:`ROLES`).  The layers that build
budgets set them; an input without a role has ``role == ""``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

from ..errors import InputError
from .distributions import (
    Arcsine,
    CurvilinearTrapezoid,
    Distribution,
    Normal,
    Rectangular,
    Triangular,
    TypeA,
    dof_from_reliability,
)

__all__ = ["InputQuantity", "ROLES"]

#: The roles an input may have, each with the provenance keys that describe it
#: (all optional, text values).
ROLES: dict[str, tuple[str, ...]] = {
    "reference_constant": ("codata_name", "edition"),        # a CODATA recommended value
    "published_data": ("citation",),                         # a value from the literature
    "calibrated": ("certificate", "issuer", "date"),         # from a calibration certificate
    "lab_characterisation": ("report",),                     # the lab's own characterisation
    "convention": ("definition",),                           # a defined value (e.g. 25 degC reference)
    "measured": (),                                          # measured in this measurement (readings: Type A)
    "specification": ("document",),                          # a manufacturer's or standard's specification
}

_HALF_WIDTH = {"rectangular": Rectangular, "triangular": Triangular, "arcsine": Arcsine}
_FILE_KEYS = {
    "value", "u", "expanded", "k", "half_width", "distribution", "readings", "dof", "unit", "source", "note",
    "reference", "description", "limit_uncertainty", "relative_uncertainty_of_u", "role", "provenance",
}


def _check_symbol(symbol: object, where: str = "") -> str:
    if not isinstance(symbol, str) or not symbol.isidentifier() or symbol.startswith("__"):
        raise InputError("symbol", symbol, "a name made of letters, digits and _ that does not start with a digit",
                         where)
    if symbol == "pi":
        raise InputError("symbol", symbol, "a name other than 'pi' (pi is the constant)", where)
    return symbol


def _check_role(role: object, where: str) -> None:
    if role != "" and role not in ROLES:
        raise InputError("role", role, f"one of {sorted(ROLES)} (or left out)", where)


def _check_provenance(role: str, provenance: object, where: str) -> tuple[tuple[str, str], ...]:
    """Normalise to a sorted tuple of (key, text) pairs; keys must belong to the role."""
    if isinstance(provenance, Mapping):
        items = list(provenance.items())
    elif isinstance(provenance, (tuple, list)) and all(isinstance(p, (tuple, list)) and len(p) == 2
                                                       for p in provenance):
        items = [tuple(p) for p in provenance]
    else:
        raise InputError("provenance", provenance, "an object of text values", where)
    if items and not role:
        raise InputError("provenance", dict(items), "given only with a 'role'", where)
    allowed = ROLES.get(role, ())
    for key, value in items:
        if key not in allowed:
            raise InputError(f"provenance.{key}", value,
                             f"one of the keys {list(allowed)} for role {role!r}" if allowed
                             else f"left out for role {role!r} (it has no provenance keys)", where)
        if not isinstance(value, str):
            raise InputError(f"provenance.{key}", value, "a text string", where)
    return tuple(sorted(items))


@dataclass(frozen=True)
class InputQuantity:
    """One input X_i: estimate x_i and how its standard uncertainty u(x_i) is stated."""

    symbol: str
    estimate: float
    distribution: Distribution
    unit: str = ""
    source: str = ""
    note: str = ""
    reference: str | None = None
    description: str = ""
    where: str = field(default="", repr=False, compare=False)
    role: str = ""
    provenance: tuple[tuple[str, str], ...] = ()

    def __post_init__(self) -> None:
        where = self.where or f"input {self.symbol!r}"
        _check_symbol(self.symbol, where)
        _check_role(self.role, where)
        object.__setattr__(self, "provenance", _check_provenance(self.role, self.provenance, where))
        try:
            if isinstance(self.estimate, (str, bytes)):  # "2.0" is a text, not a number
                raise TypeError
            x = float(self.estimate)
        except (TypeError, ValueError, OverflowError):
            raise InputError("value", self.estimate, "a finite number", where) from None
        if isinstance(self.estimate, bool) or not math.isfinite(x):
            raise InputError("value", self.estimate, "a finite number", where)
        object.__setattr__(self, "estimate", x)
        if not isinstance(self.distribution, Distribution):
            raise InputError("distribution", self.distribution, "a Normal, Rectangular, Triangular, Arcsine, "
                             "CurvilinearTrapezoid or TypeA object", where)
        if isinstance(self.distribution, TypeA) and not math.isclose(x, self.distribution.mean, rel_tol=1e-12,
                                                                     abs_tol=1e-300):
            raise InputError("value", self.estimate,
                             f"the mean of the readings ({self.distribution.mean!r}) or left out", where)

    # -- shortcuts ----------------------------------------------------------------
    @property
    def standard_uncertainty(self) -> float:
        """u(x_i) in the input's unit."""
        return self.distribution.standard_uncertainty

    @property
    def dof(self) -> float:
        """Degrees of freedom nu_i (``math.inf`` when not stated)."""
        return self.distribution.dof

    @property
    def kind(self) -> str:
        return self.distribution.kind

    @property
    def evaluation_type(self) -> str:
        """'A' for readings, 'B' otherwise (JCGM 100:2008 2.3.2, 2.3.3)."""
        return "A" if isinstance(self.distribution, TypeA) else "B"

    @property
    def provenance_dict(self) -> dict[str, str]:
        """``provenance`` as a plain dict."""
        return dict(self.provenance)

    def replace(self, **changes) -> InputQuantity:
        """A copy with ``changes`` applied (the original is unchanged)."""
        return replace(self, **changes)

    def __repr__(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        return (f"<InputQuantity {self.symbol} = {self.estimate:.10g}{unit}, u = {self.standard_uncertainty:.3g}{unit}"
                f" ({self.distribution.describe()})>")

    # -- constructors -------------------------------------------------------------
    @classmethod
    def normal(cls, symbol: str, value: float, u: float, dof: float | None = None, **kw) -> InputQuantity:
        return cls(symbol, value, Normal(u=u, dof=math.inf if dof is None else dof, where=f"input {symbol!r}"), **kw)

    @classmethod
    def expanded(cls, symbol: str, value: float, expanded: float, k: float, dof: float | None = None,
                 **kw) -> InputQuantity:
        return cls(symbol, value, Normal.from_expanded(expanded, k, dof, where=f"input {symbol!r}"), **kw)

    @classmethod
    def rectangular(cls, symbol: str, value: float, half_width: float, dof: float | None = None,
                    **kw) -> InputQuantity:
        return cls(symbol, value, Rectangular(half_width=half_width, dof=math.inf if dof is None else dof,
                                         where=f"input {symbol!r}"), **kw)

    @classmethod
    def triangular(cls, symbol: str, value: float, half_width: float, dof: float | None = None,
                    **kw) -> InputQuantity:
        return cls(symbol, value, Triangular(half_width=half_width, dof=math.inf if dof is None else dof,
                                         where=f"input {symbol!r}"), **kw)

    @classmethod
    def arcsine(cls, symbol: str, value: float, half_width: float, dof: float | None = None,
                    **kw) -> InputQuantity:
        return cls(symbol, value, Arcsine(half_width=half_width, dof=math.inf if dof is None else dof,
                                         where=f"input {symbol!r}"), **kw)

    @classmethod
    def from_readings(cls, symbol: str, readings: Sequence[float], **kw) -> InputQuantity:
        """Type A: estimate = mean, u = s/sqrt(n), dof = n - 1 (JCGM 100:2008 4.2)."""
        if isinstance(readings, (str, bytes)):  # tuple("12345") would be five readings
            raise InputError("readings", readings, "a list of numbers", f"input {symbol!r}")
        d = TypeA(readings=tuple(readings) if readings is not None else (), where=f"input {symbol!r}")
        return cls(symbol, d.mean, d, **kw)

    # -- budget-file form ---------------------------------------------------------
    def to_dict(self) -> dict:
        """The budget-file object for this input (its symbol is the key outside)."""
        d: dict = {}
        if not isinstance(self.distribution, TypeA):
            d["value"] = self.estimate
        d.update(self.distribution.to_dict())
        for key in ("unit", "source", "note", "description"):
            if getattr(self, key):
                d[key] = getattr(self, key)
        if self.reference:
            d["reference"] = self.reference
        if self.role:
            d["role"] = self.role
        if self.provenance:
            d["provenance"] = dict(self.provenance)
        return d

    @classmethod
    def from_dict(cls, symbol: str, d: Mapping, where: str = "") -> InputQuantity:
        """Build from a budget-file object; errors name the input and key."""
        here = where or f"input {symbol!r}"
        _check_symbol(symbol, here)
        if not isinstance(d, Mapping):
            raise InputError(symbol, d, "an object with 'value' and one of 'u', 'expanded' + 'k', "
                             "'half_width' + 'distribution', or 'readings'", here)
        unknown = sorted(set(d) - _FILE_KEYS)
        if unknown:
            raise InputError(unknown[0], d[unknown[0]], f"one of the input keys {sorted(_FILE_KEYS)}", here)
        stated = [k for k in ("u", "expanded", "half_width", "readings") if k in d]
        if len(stated) != 1:
            raise InputError("uncertainty", stated or None,
                             "exactly one of 'u', 'expanded' (with 'k'), 'half_width' (with 'distribution') "
                             "or 'readings'", here)
        dof: float | None = d.get("dof")
        if "relative_uncertainty_of_u" in d:
            if dof is not None:
                raise InputError("dof", dof, "left out when 'relative_uncertainty_of_u' is given", here)
            try:
                dof = dof_from_reliability(d["relative_uncertainty_of_u"])
            except InputError as err:
                raise InputError("relative_uncertainty_of_u", err.value, err.allowed, here) from None
        dof_v = math.inf if dof is None else dof
        kind = stated[0]
        dist: Distribution
        if kind == "readings":
            readings = d["readings"]
            if not isinstance(readings, (list, tuple)):
                raise InputError("readings", readings, "a list of numbers", here)
            if "dof" in d:
                raise InputError("dof", d["dof"], "left out for readings (it is n - 1)", here)
            dist = TypeA(readings=tuple(readings), where=here)
            value = d.get("value", dist.mean)
        else:
            if "value" not in d:
                raise InputError("value", None, "given (the estimate of the input)", here)
            value = d["value"]
            if kind == "u":
                if "distribution" in d and d["distribution"] != "normal":
                    raise InputError("distribution", d["distribution"], "'normal' (or left out) with 'u'; use "
                                     "'half_width' for rectangular, triangular and arcsine", here)
                dist = Normal(u=d["u"], dof=dof_v, where=here)
            elif kind == "expanded":
                if "k" not in d:
                    raise InputError("k", None, "given with 'expanded' (the coverage factor)", here)
                dist = Normal.from_expanded(d["expanded"], d["k"], dof, where=here)
            else:
                name = d.get("distribution")
                if name == "curvilinear_trapezoid":
                    if "limit_uncertainty" not in d:
                        raise InputError("limit_uncertainty", None, "given for a curvilinear trapezoid", here)
                    dist = CurvilinearTrapezoid(half_width=d["half_width"], limit_uncertainty=d["limit_uncertainty"],
                                                dof=dof_v, where=here)
                elif name in _HALF_WIDTH:
                    dist = _HALF_WIDTH[name](half_width=d["half_width"], dof=dof_v, where=here)
                else:
                    raise InputError("distribution", name, "one of 'rectangular', 'triangular', 'arcsine', "
                                     "'curvilinear_trapezoid' with 'half_width'", here)
        for key in ("unit", "source", "note", "description", "reference"):
            if key in d and not isinstance(d[key], str):
                raise InputError(key, d[key], "a text string", here)
        for key in ("role",):
            if key in d and not isinstance(d[key], str):
                raise InputError(key, d[key], f"one of {sorted(ROLES)}", here)
        return cls(symbol, value, dist, unit=d.get("unit", ""), source=d.get("source", ""), note=d.get("note", ""),
                   reference=d.get("reference"), description=d.get("description", ""), where=here,
                   role=d.get("role", ""), provenance=d.get("provenance", ()))
