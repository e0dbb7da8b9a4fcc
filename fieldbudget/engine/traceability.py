"""The traceability chain of a budget, built from the inputs' roles (never from their free text).

Each input of a :class:`~fieldbudget.engine.Budget` is one link.  Its role is
the one the layer that built the budget stated (``InputQuantity.role``, one of
:data:`~fieldbudget.engine.ROLES`); where none was stated it is derived from
data only:

- readings (Type A) -> ``measured``;
- ``reference`` naming a CODATA value (the constants lookup gives a CODATA
  year as its edition) -> ``reference_constant`` with its CODATA name and
  edition;
- ``reference`` naming other reference data (the water data, the IUPAC
  table) -> ``published_data`` with the data file's citation, or
  ``convention`` when the data file marks the value as a defined condition;
- anything else -> no role: the report lists it as "role not stated".

The ``source`` and ``description`` texts are printed beside a link but never
read to decide what it is, so a drift input whose source mentions the
frequency standard stays what its role says (ISO/IEC 17025:2017 6.5 and
7.8.4.1 ask for the traceability of each result; the wording here is ours).

Written by hand: the roles are fieldbudget's own data model.
"""

from __future__ import annotations

from dataclasses import dataclass

from .budget import Budget
from .distributions import TypeA
from .quantities import ROLES, InputQuantity

__all__ = ["ROLE_TITLES", "TraceLink", "Traceability", "derive_role", "traceability"]

#: Headings of the roles in reports (our own wording).
ROLE_TITLES = {
    "reference_constant": "reference constant (CODATA)",
    "published_data": "published data",
    "calibrated": "calibrated (certificate)",
    "lab_characterisation": "laboratory characterisation",
    "convention": "defined value (convention)",
    "measured": "measured",
    "specification": "specification",
    "": "role not stated",
}


@dataclass(frozen=True)
class TraceLink:
    """One input's place in the traceability chain.

    ``role`` is one of :data:`ROLES` or ``""`` (not stated); ``stated`` is True
    when the budget stated the role and False when it was derived here;
    ``facts`` are the provenance pairs (stated, or derived: CODATA name and
    edition, citation, definition); ``reference`` is the reference-data name
    the estimate came from; ``verification`` the data file's remark on how far
    that datum was checked against its publication.
    """

    symbol: str
    role: str
    stated: bool
    facts: tuple[tuple[str, str], ...] = ()
    source: str = ""
    reference: str = ""
    verification: str = ""
    readings: int = 0

    @property
    def title(self) -> str:
        return ROLE_TITLES.get(self.role, self.role)

    @property
    def fact(self) -> dict[str, str]:
        return dict(self.facts)

    @property
    def text(self) -> str:
        """How this input is traceable, in words built from the role and its facts; where the fact that
        identifies the document behind the role is missing, the source text given with the input follows,
        marked as such."""
        words, identified = self._role_words()
        if not identified and self.source and self.role:
            return f"{words}; source given: {self.source}"
        return words

    def _role_words(self) -> tuple[str, bool]:
        """(words, whether the facts identify what the value is traceable to)."""
        f = self.fact
        if self.role == "reference_constant":
            name = f.get("codata_name", self.reference)
            ed = f.get("edition", "")
            return f"CODATA {ed} recommended value '{name}'".replace("CODATA  ", "CODATA "), True
        if self.role == "published_data":
            if f.get("citation"):
                return f"published data: {f['citation']}", True
            return "published data (citation not given)", False
        if self.role == "calibrated":
            parts = [f"certificate {f['certificate']}" if f.get("certificate") else "certificate not identified"]
            if f.get("issuer"):
                parts.append(f"issued by {f['issuer']}")
            if f.get("date"):
                parts.append(f"dated {f['date']}")
            return "calibration: " + ", ".join(parts), bool(f.get("certificate"))
        if self.role == "lab_characterisation":
            if f.get("report"):
                return f"laboratory characterisation, report {f['report']}", True
            return "laboratory characterisation (report not identified)", False
        if self.role == "convention":
            return (f"defined value: {f['definition']}", True) if f.get("definition") else ("defined value", False)
        if self.role == "measured":
            if self.readings:
                return f"measured in this measurement (Type A from {self.readings} readings)", True
            return "measured in this measurement (one value; its uncertainty as stated)", False
        if self.role == "specification":
            if f.get("document"):
                return f"specification: {f['document']}", True
            return "specification (document not named)", False
        return "role not stated" + (f"; source given: {self.source}" if self.source else ""), True

    def to_dict(self) -> dict:
        return {"symbol": self.symbol, "role": self.role, "stated": self.stated, "facts": dict(self.facts),
                "source": self.source, "reference": self.reference, "verification": self.verification,
                "text": self.text}

    def __repr__(self) -> str:
        how = "stated" if self.stated else "derived"
        return f"<TraceLink {self.symbol}: {self.role or 'role not stated'} ({how})>"


@dataclass(frozen=True)
class Traceability:
    """The chain of one budget: one :class:`TraceLink` per input, in the budget's order."""

    links: tuple[TraceLink, ...]

    def by_role(self) -> dict[str, tuple[TraceLink, ...]]:
        """The links grouped by role, in the order of :data:`ROLES` (not stated last)."""
        out: dict[str, tuple[TraceLink, ...]] = {}
        for role in (*ROLES, ""):
            found = tuple(link for link in self.links if link.role == role)
            if found:
                out[role] = found
        return out

    @property
    def not_stated(self) -> tuple[TraceLink, ...]:
        return tuple(link for link in self.links if not link.role)

    @property
    def reference_data(self) -> tuple[TraceLink, ...]:
        """Links whose estimate came from the kit's reference data (``reference`` set)."""
        return tuple(link for link in self.links if link.reference)

    def __getitem__(self, symbol: str) -> TraceLink:
        for link in self.links:
            if link.symbol == symbol:
                return link
        raise KeyError(symbol)

    def __repr__(self) -> str:
        roles = ", ".join(f"{ROLE_TITLES[r]} {len(v)}" for r, v in self.by_role().items())
        return f"<Traceability {len(self.links)} inputs: {roles}>"

    def to_dict(self) -> dict:
        return {"links": [link.to_dict() for link in self.links]}


def _edition_hint(budget: Budget) -> int | None:
    v = budget.metadata.get("codata") if budget.metadata else None
    if isinstance(v, int) and not isinstance(v, bool):
        return v
    return None


def _lookup_reference(q: InputQuantity, edition: int | None):
    """The reference value ``q.reference`` names: (value record, is_codata), or (None, False)."""
    from ..constants import editions, lookup, lookup_other
    from ..errors import FieldbudgetError

    order = [edition] if edition in editions() else []
    order += [e for e in sorted(editions(), reverse=True) if e not in order]
    found = None
    for ed in order:  # the edition whose value the estimate carries, else the budget's (or the newest)
        try:
            rv = lookup(q.reference, edition=ed)
        except FieldbudgetError:
            continue
        if found is None:
            found = rv
        if rv.value == q.estimate:
            found = rv
            break
    if found is not None and isinstance(found.edition, int) and not isinstance(found.edition, bool):
        return found, True
    try:
        return lookup_other(q.reference), False
    except FieldbudgetError:
        return None, False


def derive_role(q: InputQuantity, edition: int | None = None) -> TraceLink:
    """The link of one input (see the module docstring for the rules)."""
    n = len(q.distribution.readings) if isinstance(q.distribution, TypeA) else 0
    ref = q.reference or ""
    rv, is_codata = _lookup_reference(q, edition) if ref else (None, False)
    verification = rv.verification if rv is not None else ""
    if q.role:
        return TraceLink(q.symbol, q.role, True, q.provenance, q.source, ref, verification, n)
    if n:
        return TraceLink(q.symbol, "measured", False, (), q.source, ref, verification, n)
    if rv is not None and is_codata:
        facts = (("codata_name", rv.name), ("edition", str(rv.edition)))
        return TraceLink(q.symbol, "reference_constant", False, facts, q.source, ref, verification)
    if rv is not None and rv.defined:
        return TraceLink(q.symbol, "convention", False, (("definition", rv.source),), q.source, ref, verification)
    if rv is not None:
        return TraceLink(q.symbol, "published_data", False, (("citation", rv.source),), q.source, ref, verification)
    return TraceLink(q.symbol, "", False, (), q.source, ref)


def traceability(budget: Budget) -> Traceability:
    """The traceability chain of ``budget``: one link per input, roles stated or derived from data."""
    edition = _edition_hint(budget)
    return Traceability(tuple(derive_role(q, edition) for q in budget.inputs))
