"""How an input's uncertainty is stated: the distribution and its parameters.

Each class is a frozen description; it knows its standard uncertainty and
degrees of freedom (for the GUM law of propagation) but does not draw samples
(that is ``engine.sampling``, used by Monte Carlo).

Standard uncertainties (JCGM 100:2008 and EA-4/02 M):

- normal: u as stated, or U/k for an expanded uncertainty with coverage factor k (GUM 4.3.4);
- rectangular of half-width a: u = a / sqrt(3) (GUM 4.3.7, eq. 7);
- triangular of half-width a: u = a / sqrt(6) (GUM 4.3.9);
- arcsine (U-shaped) of half-width a: u = a / sqrt(2) (EA-4/02 M, Annex; JCGM 101 6.4.6);
- curvilinear trapezoid, half-width a known to +-d: u^2 = a^2/3 + d^2/9 (JCGM 101:2008, 6.4.3);
- Type A from n readings: u = s / sqrt(n), dof = n - 1 (GUM 4.2.3, 4.2.6).

Type B degrees of freedom from the relative uncertainty of the uncertainty:
dof = 1/2 * (Delta u / u)^-2 (GUM G.4.2, eq. G.3); infinite by default.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field
from typing import ClassVar

from ..errors import InputError

__all__ = [
    "Distribution",
    "Normal",
    "Rectangular",
    "Triangular",
    "Arcsine",
    "CurvilinearTrapezoid",
    "TypeA",
    "dof_from_reliability",
    "KINDS",
]

INF = math.inf


def _is_number(value: object) -> bool:
    """A real number: int, float or a numpy scalar; never a bool or a text (``"2e-7"`` is not a number)."""
    if isinstance(value, (bool, str, bytes)):
        return False
    return isinstance(value, numbers.Real)


def _finite_nonneg(name: str, value: object, where: str) -> float:
    try:
        if not _is_number(value):
            raise TypeError
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError, OverflowError):
        raise InputError(name, value, "a finite number >= 0", where) from None
    if isinstance(value, bool) or not math.isfinite(x) or x < 0:
        raise InputError(name, value, "a finite number >= 0", where)
    return x


def _check_dof(dof: object, where: str) -> float:
    if dof is None:
        return INF
    try:
        if not _is_number(dof):
            raise TypeError
        x = float(dof)  # type: ignore[arg-type]
    except (TypeError, ValueError, OverflowError):
        raise InputError("dof", dof, "a number > 0 or infinite", where) from None
    if math.isnan(x) or x <= 0:
        raise InputError("dof", dof, "a number > 0 or infinite", where)
    return x


def dof_from_reliability(relative_uncertainty_of_u: float) -> float:
    """Degrees of freedom of a Type B value judged reliable to ``Delta u / u``.

    JCGM 100:2008 G.4.2, eq. (G.3): nu = (1/2) (Delta u / u)^-2.  For example
    25 % gives 8, 10 % gives 50, 50 % gives 2 (the values used in H.1).
    """
    r = float(relative_uncertainty_of_u) if _is_number(relative_uncertainty_of_u) else math.nan
    if not math.isfinite(r) or r <= 0:
        raise InputError("relative uncertainty of the uncertainty", relative_uncertainty_of_u, "a finite number > 0")
    return 0.5 / (r * r)


@dataclass(frozen=True)
class Distribution:
    """Base class; subclasses define ``standard_uncertainty`` and ``kind``."""

    kind: ClassVar[str] = ""
    where: str = field(default="", repr=False, compare=False, kw_only=True)

    @property
    def standard_uncertainty(self) -> float:  # pragma: no cover - abstract
        raise NotImplementedError

    @property
    def dof(self) -> float:  # pragma: no cover - overridden
        raise NotImplementedError

    def to_dict(self) -> dict:
        """The budget-file keys that state this uncertainty (``value`` excluded)."""
        raise NotImplementedError  # pragma: no cover

    def describe(self) -> str:
        """Short words for tables, e.g. 'rectangular, a = 0.5'."""
        return self.kind


@dataclass(frozen=True)
class Normal(Distribution):
    """Normal distribution with standard uncertainty ``u``.

    ``expanded`` and ``k`` keep how the value was stated when it came as an
    expanded uncertainty (u = U / k).  A finite ``dof`` makes Monte Carlo use
    a scaled and shifted t-distribution (JCGM 101 6.4.9).
    """

    kind: ClassVar[str] = "normal"
    u: float = 0.0
    dof: float = INF
    expanded: float | None = None
    k: float | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "u", _finite_nonneg("u", self.u, self.where))
        object.__setattr__(self, "dof", _check_dof(self.dof, self.where))

    @classmethod
    def from_expanded(cls, expanded: float, k: float, dof: float | None = None, where: str = "") -> Normal:
        """u = U / k (JCGM 100:2008 4.3.4)."""
        U = _finite_nonneg("expanded", expanded, where)
        try:
            if not _is_number(k):
                raise TypeError
            kk = float(k)
        except (TypeError, ValueError, OverflowError):
            raise InputError("k", k, "a finite number > 0", where) from None
        if not math.isfinite(kk) or kk <= 0:
            raise InputError("k", k, "a finite number > 0", where)
        return cls(where=where, u=U / kk, dof=INF if dof is None else dof, expanded=U, k=kk)

    @property
    def standard_uncertainty(self) -> float:
        return self.u

    def to_dict(self) -> dict:
        d: dict = {"expanded": self.expanded, "k": self.k} if self.expanded is not None else {"u": self.u}
        if not math.isinf(self.dof):
            d["dof"] = self.dof
        return d

    def describe(self) -> str:
        if self.expanded is not None:
            return f"normal, U = {self.expanded:.4g}, k = {self.k:g}"
        return "normal"


@dataclass(frozen=True)
class _HalfWidth(Distribution):
    half_width: float = 0.0
    dof: float = INF
    divisor: ClassVar[float] = 1.0

    def __post_init__(self) -> None:
        object.__setattr__(self, "half_width", _finite_nonneg("half_width", self.half_width, self.where))
        object.__setattr__(self, "dof", _check_dof(self.dof, self.where))

    @property
    def standard_uncertainty(self) -> float:
        return self.half_width / self.divisor

    def to_dict(self) -> dict:
        d: dict = {"distribution": self.kind, "half_width": self.half_width}
        if not math.isinf(self.dof):
            d["dof"] = self.dof
        return d

    def describe(self) -> str:
        return f"{self.kind}, a = {self.half_width:.4g}"


@dataclass(frozen=True)
class Rectangular(_HalfWidth):
    """Rectangular of half-width a: u = a / sqrt(3) (JCGM 100:2008 4.3.7)."""

    kind: ClassVar[str] = "rectangular"
    divisor: ClassVar[float] = math.sqrt(3.0)


@dataclass(frozen=True)
class Triangular(_HalfWidth):
    """Symmetric triangular of half-width a: u = a / sqrt(6) (JCGM 100:2008 4.3.9)."""

    kind: ClassVar[str] = "triangular"
    divisor: ClassVar[float] = math.sqrt(6.0)


@dataclass(frozen=True)
class Arcsine(_HalfWidth):
    """Arcsine (U-shaped) of half-width a: u = a / sqrt(2) (EA-4/02 M; JCGM 101:2008 6.4.6)."""

    kind: ClassVar[str] = "arcsine"
    divisor: ClassVar[float] = math.sqrt(2.0)


@dataclass(frozen=True)
class CurvilinearTrapezoid(Distribution):
    """Rectangular whose half-width a is itself known only to within +-d.

    u^2 = a^2/3 + d^2/9 (JCGM 101:2008, 6.4.3).  Requires d <= a.
    """

    kind: ClassVar[str] = "curvilinear_trapezoid"
    half_width: float = 0.0
    limit_uncertainty: float = 0.0
    dof: float = INF

    def __post_init__(self) -> None:
        a = _finite_nonneg("half_width", self.half_width, self.where)
        d = _finite_nonneg("limit_uncertainty", self.limit_uncertainty, self.where)
        if d > a:
            raise InputError("limit_uncertainty", self.limit_uncertainty, f"<= half_width ({a:g})", self.where)
        object.__setattr__(self, "half_width", a)
        object.__setattr__(self, "limit_uncertainty", d)
        object.__setattr__(self, "dof", _check_dof(self.dof, self.where))

    @property
    def standard_uncertainty(self) -> float:
        a, d = self.half_width, self.limit_uncertainty
        return math.sqrt(a * a / 3.0 + d * d / 9.0)

    def to_dict(self) -> dict:
        d: dict = {"distribution": self.kind, "half_width": self.half_width, "limit_uncertainty": self.limit_uncertainty}
        if not math.isinf(self.dof):
            d["dof"] = self.dof
        return d

    def describe(self) -> str:
        return f"curvilinear trapezoid, a = {self.half_width:.4g}, d = {self.limit_uncertainty:.4g}"


@dataclass(frozen=True)
class TypeA(Distribution):
    """Type A evaluation from repeated readings (JCGM 100:2008 4.2).

    Mean q-bar (4.2.1), experimental standard deviation of the mean
    s(q-bar) = s(q) / sqrt(n) (4.2.2, 4.2.3), dof = n - 1 (4.2.6).
    Monte Carlo draws a scaled and shifted t with n - 1 dof (JCGM 101 6.4.9).
    """

    kind: ClassVar[str] = "type_a"
    readings: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        if isinstance(self.readings, (str, bytes)) or not all(_is_number(v) for v in self.readings):
            raise InputError("readings", self.readings, "a list of numbers", self.where)
        try:
            vals = tuple(float(v) for v in self.readings)
        except (TypeError, ValueError, OverflowError):
            raise InputError("readings", self.readings, "a list of numbers", self.where) from None
        if len(vals) == 0:
            raise InputError("readings", list(self.readings), "a list of at least 2 readings", self.where)
        if len(vals) == 1:
            raise InputError(
                "readings", list(vals),
                "at least 2 readings (one reading gives no standard deviation; state its uncertainty as 'u' instead)",
                self.where,
            )
        if not all(math.isfinite(v) for v in vals):
            raise InputError("readings", list(vals), "finite numbers", self.where)
        object.__setattr__(self, "readings", vals)
        try:
            s = self.experimental_standard_deviation
        except OverflowError:
            s = math.inf
        if not math.isfinite(s) or not math.isfinite(self.mean):
            raise InputError("readings", f"{len(vals)} readings up to {max(map(abs, vals)):.3g}",
                             "numbers whose mean and standard deviation fit in a double (these overflow)", self.where)

    @property
    def n(self) -> int:
        return len(self.readings)

    @property
    def mean(self) -> float:
        return math.fsum(self.readings) / self.n

    @property
    def experimental_standard_deviation(self) -> float:
        """s(q), GUM eq. (4)."""
        m = self.mean
        return math.sqrt(math.fsum((v - m) ** 2 for v in self.readings) / (self.n - 1))

    @property
    def standard_uncertainty(self) -> float:
        return self.experimental_standard_deviation / math.sqrt(self.n)

    @property
    def dof(self) -> float:
        return float(self.n - 1)

    def to_dict(self) -> dict:
        return {"readings": list(self.readings)}

    def describe(self) -> str:
        return f"Type A, n = {self.n}"


KINDS = ("normal", "rectangular", "triangular", "arcsine", "curvilinear_trapezoid", "type_a")
