"""One NMR field measurement -> an ordinary engine Budget with an explicit model.

:class:`NMRMeasurement` is the measurement description (the JSON file a lab
archives, documented in ``docs/nmr-measurement-file.md``); :meth:`to_budget`
writes the model equation and every correction as a named input with its
estimate, distribution, degrees of freedom, unit and source, so nothing is
applied in code that the budget does not list.  :meth:`evaluate` gives an
:class:`NMRResult`: the engine's result plus plain-word physics warnings.

Written by hand because no library knows this model.  The equation
(assembled from the sources cited in
``fieldbudget.nmr.physics``)::

    B0 = (f_read + d_res + d_line) (1 + y_tb + y_age) (1 + y_drift)
         / (gamma 1e6 [g_s/(-g_e)] [1 - sigma_s] [1 - alpha_T (t_s - t_ref)]
            [1 + chi (1 + c_chi (t_s - t_chi)) (1/3 - N_d)] [1 + d_probe])
         - (G_x x_off + G_y y_off + G_z z_off) - 0.5 B2 q_curv

with only the terms the description asks for.  Sign conventions:
f_true = f_read (1 + y) for a timebase running fast by y; the frequency falls
as the water warms (Petley & Donaldson 1984); B_nuc = B0 [1 + chi (1/3 - N)];
the probe's materials change the field at the sample to B0 (1 + d_probe);
``offset_m`` is the sample centre minus the reference point, so the field at
the reference point is the sample's field minus G . offset; the curvature term
removes the sample average (B''/2) <q> of the field about the sample centre.
"""

from __future__ import annotations

import csv
import io
import json
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType

import numpy as np

from .. import _display as D
from .._io import read_json_file, read_named_text
from .. import constants
from ..engine import (
    Budget,
    InputQuantity,
    Measurand,
    Model,
    Normal,
    Rectangular,
    evaluate,
)
from ..errors import BudgetFileError, FieldbudgetError, InputError
from . import physics
from .nuclei import DEFAULT_NUCLEUS, Nucleus, nucleus

__all__ = ["FILE_FORMAT", "LIMITING_SHARE", "NMRMeasurement", "NMRResult"]

FILE_FORMAT = "fieldbudget-nmr/1"

#: Share of u_c^2 above which the counter resolution and line-centre terms
#: together are said to limit the measurement (the "low field" warning).
LIMITING_SHARE = 0.5

_ALPHA = "proton shielding temperature coefficient in water"
_T_REF = "shielded proton reference temperature"
_CHI = "volume magnetic susceptibility of water"
_CHI_TC = "relative temperature coefficient of the volume magnetic susceptibility of water"
_CHI_T = "reference temperature of the volume magnetic susceptibility of water"

_AXES = ("x", "y", "z")

_TOP_KEYS = {
    "format", "id", "title", "description", "metadata", "nucleus", "codata", "coverage_probability", "frequency",
    "timebase", "sample", "line", "gradient_T_per_m", "u_gradient_T_per_m", "offset_m", "u_offset_m",
    "probe_perturbation", "drift", "curvature", "probe", "g_factor", "shielding",
}
_SECTION_KEYS = {
    "frequency": {"value_Hz", "u_Hz", "dof", "readings_Hz", "readings_csv", "counter_resolution_Hz", "source"},
    "timebase": {"offset", "u", "half_width", "ageing_per_day", "days_since_calibration", "source"},
    "sample": {"temperature_C", "u_temperature_C", "susceptibility", "u_susceptibility", "shape",
               "length_over_diameter", "u_length_over_diameter", "axis", "axis_ratio", "u_axis_ratio",
               "semi_axes_m", "demagnetizing_factor", "u_demagnetizing_factor", "diameter_m", "length_m",
               "source"},
    "line": {"fwhm_Hz", "snr", "points_per_fwhm", "natural_fwhm_Hz", "max_broadening_ratio", "u_Hz",
             "amplitude_to_noise", "t2_s", "sample_interval_s", "record_s", "source"},
    "probe_perturbation": {"value", "u", "source"},
    "drift": {"readings_Hz", "method", "readings_per_interval", "stability", "distribution", "source"},
    "curvature": {"d2B_dz2_T_per_m2", "u_d2B_dz2_T_per_m2", "model", "source"},
    "probe": {"tuning_range_Hz", "name", "serial", "source"},
    "g_factor": {"value", "u", "source"},
    "shielding": {"value", "u", "source"},
}
_SHAPES = ("sphere", "cylinder", "long-cylinder", "spheroid", "ellipsoid")


# --- reading the description ------------------------------------------------------


class _Reader:
    """Typed access to one JSON object, raising BudgetFileError with the JSON pointer."""

    def __init__(self, data: Mapping, path: str, pointer: str = "#") -> None:
        self.data = data
        self.path = path
        self.pointer = pointer

    def at(self, key: str) -> str:
        return f"{self.pointer}/{key}"

    def fail(self, key: str | None, reason: str) -> BudgetFileError:
        return BudgetFileError(self.path, self.at(key) if key else self.pointer, reason)

    def has(self, key: str) -> bool:
        return key in self.data and self.data[key] is not None

    def check_keys(self, allowed: set[str]) -> None:
        unknown = sorted(set(self.data) - allowed)
        if unknown:
            raise self.fail(unknown[0], f"unknown key; allowed keys here: {', '.join(sorted(allowed))}")

    def number(self, key: str, default: float | None = None, *, required: bool = False, positive: bool = False,
               nonnegative: bool = False, lo: float | None = None, hi: float | None = None) -> float | None:
        if not self.has(key):
            if required:
                raise self.fail(key, "missing: " + ("a number > 0" if positive else "a number"))
            return default
        v = self.data[key]
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise self.fail(key, f"must be a finite number (got {v!r})")
        v = float(v)
        if positive and not v > 0:
            raise self.fail(key, f"must be a number > 0 (got {v!r})")
        if nonnegative and v < 0:
            raise self.fail(key, f"must be a number >= 0 (got {v!r})")
        if (lo is not None and v < lo) or (hi is not None and v > hi):
            raise self.fail(key, f"must lie in [{lo}, {hi}] (got {v!r})")
        return v

    def numbers(self, key: str, *, min_len: int = 1, max_len: int | None = None, nonnegative: bool = False,
                scalar_ok: bool = False) -> tuple[float, ...] | None:
        if not self.has(key):
            return None
        v = self.data[key]
        if scalar_ok and isinstance(v, (int, float)) and not isinstance(v, bool):
            v = [v]
        if not isinstance(v, (list, tuple)):
            raise self.fail(key, f"must be a list of numbers (got {v!r})")
        if len(v) < min_len or (max_len is not None and len(v) > max_len):
            span = f"{min_len} to {max_len}" if max_len is not None else f"at least {min_len}"
            raise self.fail(key, f"must hold {span} numbers (got {len(v)})")
        out = []
        for i, x in enumerate(v):
            if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x):
                raise BudgetFileError(self.path, f"{self.at(key)}/{i}", f"must be a finite number (got {x!r})")
            if nonnegative and x < 0:
                raise BudgetFileError(self.path, f"{self.at(key)}/{i}", f"must be a number >= 0 (got {x!r})")
            out.append(float(x))
        return tuple(out)

    def text(self, key: str, default: str = "") -> str:
        if not self.has(key):
            return default
        v = self.data[key]
        if not isinstance(v, str):
            raise self.fail(key, f"must be a text string (got {v!r})")
        return v

    def choice(self, key: str, choices: tuple[str, ...], default: str | None = None) -> str | None:
        if not self.has(key):
            return default
        v = self.data[key]
        if v not in choices:
            raise self.fail(key, f"must be one of {', '.join(repr(c) for c in choices)} (got {v!r})")
        return v

    def section(self, key: str) -> _Reader | None:
        if not self.has(key):
            return None
        v = self.data[key]
        if not isinstance(v, Mapping):
            raise self.fail(key, f"must be an object (got {v!r})")
        r = _Reader(v, self.path, self.at(key))
        r.check_keys(_SECTION_KEYS[key])
        return r


def _plain(obj):
    """Deep copy of JSON-like data into plain dicts/lists (what to_dict returns)."""
    if isinstance(obj, Mapping):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    return obj


def _frozen(obj):
    if isinstance(obj, Mapping):
        return MappingProxyType({str(k): _frozen(v) for k, v in obj.items()})
    if isinstance(obj, (list, tuple)):
        return tuple(_frozen(v) for v in obj)
    return obj


# --- the measurement ------------------------------------------------------------


@dataclass(frozen=True)
class NMRMeasurement:
    """A description of one NMR field measurement (checked on construction).

    Build it with :meth:`from_dict` or :meth:`from_file`; the keys are those of
    the measurement description file (``docs/nmr-measurement-file.md``).
    ``description`` keeps the validated content (read-only); ``where`` names
    the file in error messages; ``base_dir`` is where a ``readings_csv`` path
    is looked up.
    """

    description: Mapping = field(repr=False)
    where: str = "measurement"
    base_dir: str = "."

    def __post_init__(self) -> None:
        if not isinstance(self.description, Mapping):
            raise BudgetFileError(self.where, "#", "the top level must be a JSON object")
        object.__setattr__(self, "description", _frozen(self.description))
        # Building the budget checks every key and value; keep the budget.
        object.__setattr__(self, "_budget", _build(self))

    # -- constructors --------------------------------------------------------------
    @classmethod
    def from_dict(cls, d: Mapping, where: str = "measurement", base_dir: str | Path = ".") -> NMRMeasurement:
        return cls(d, where=where, base_dir=str(base_dir))

    @classmethod
    def from_file(cls, path: str | Path) -> NMRMeasurement:
        p = Path(path)
        d = read_json_file(p, what="measurement file")
        return cls(d, where=str(p), base_dir=str(p.parent))

    def to_dict(self) -> dict:
        """The description as plain JSON types (what ``from_dict`` takes back)."""
        return _plain(self.description)

    def __hash__(self) -> int:
        return hash(json.dumps(self.to_dict(), sort_keys=True))

    def __reduce__(self):
        # the read-only mapping views cannot be pickled or deep-copied; rebuild from plain data
        return (type(self).from_dict, (self.to_dict(), self.where, self.base_dir))

    # -- derived ------------------------------------------------------------------
    @property
    def nucleus(self) -> Nucleus:
        return nucleus(self.description.get("nucleus", DEFAULT_NUCLEUS))

    @property
    def codata(self) -> int:
        return int(self.description.get("codata") or constants.DEFAULT_EDITION)

    def to_budget(self) -> Budget:
        """The ordinary engine budget of this measurement (measurand B0 in T)."""
        return self._budget  # type: ignore[attr-defined]

    def evaluate(self) -> NMRResult:
        """Evaluate the budget (GUM law of propagation) and add the physics warnings."""
        budget = self.to_budget()
        result = evaluate(budget)
        extra = tuple(_warnings(self, budget, result))
        return NMRResult(measurement=self, budget=budget, result=result.with_warnings(*extra), nmr_warnings=extra)

    def __repr__(self) -> str:
        d = self.description
        f = d.get("frequency", {})
        fv = f.get("value_Hz")
        if fv is None and f.get("readings_Hz"):
            fv = float(np.mean(f["readings_Hz"]))
        ftxt = f", f = {fv:.10g} Hz" if isinstance(fv, (int, float)) else ""
        ident = f" {d['id']!r}" if d.get("id") else ""
        return f"<NMRMeasurement{ident} {self.nucleus.name}{ftxt}, CODATA {self.codata}>"

    def _repr_html_(self) -> str:
        return f"<pre>{D.escape(json.dumps(self.to_dict(), indent=2))}</pre>"


@dataclass(frozen=True)
class NMRResult:
    """The evaluated NMR budget: the engine's result plus plain-word physics warnings.

    ``warnings`` holds the engine's warnings followed by the NMR ones
    (``nmr_warnings``); ``to_dict()`` is the engine's dict (the object
    ``evaluate --json`` prints) with the same ``warnings`` list.
    """

    measurement: NMRMeasurement = field(repr=False)
    budget: Budget = field(repr=False)
    result: object = field(repr=False)
    nmr_warnings: tuple[str, ...] = ()

    @property
    def warnings(self) -> tuple[str, ...]:
        return tuple(self.result.warnings)

    def __getattr__(self, name: str):
        # estimate, standard_uncertainty, effective_dof, coverage_factor, ... of the BudgetResult
        if name.startswith("_") or name in ("measurement", "budget", "result", "nmr_warnings"):
            raise AttributeError(name)
        return getattr(self.result, name)

    def to_dict(self) -> dict:
        d = self.result.to_dict()
        d["warnings"] = list(self.warnings)
        return d

    def report(self) -> str:
        return self.result.report()

    def __repr__(self) -> str:
        r = self.result
        w = f", {len(self.warnings)} warning(s)" if self.warnings else ""
        return (f"<NMRResult B0 = {r.estimate:.10g} T, u = {r.standard_uncertainty:.3g} T, "
                f"k = {r.coverage_factor:.2f}, U = {r.expanded_uncertainty:.3g} T{w}>")

    def _repr_html_(self) -> str:
        return self.result._repr_html_()


# --- building the budget ----------------------------------------------------------


def _other(name: str):
    return constants.lookup_other(name)


def _build(m: NMRMeasurement) -> Budget:
    top = _Reader(m.description, m.where)
    top.check_keys(_TOP_KEYS)
    if top.has("format") and m.description["format"] != FILE_FORMAT:
        raise top.fail("format", f"must be {FILE_FORMAT!r} (got {m.description['format']!r})")
    name = top.text("nucleus", DEFAULT_NUCLEUS)
    try:
        nuc = nucleus(name)
    except InputError as err:
        raise top.fail("nucleus", f"must be {err.allowed} (got {name!r})") from None
    codata = m.description.get("codata", constants.DEFAULT_EDITION)
    if isinstance(codata, bool) or not isinstance(codata, int) or codata not in constants.editions():
        raise top.fail("codata", f"must be one of the CODATA editions {list(constants.editions())}, a whole number "
                                 f"(got {codata!r})")
    p_cov = top.number("coverage_probability", 0.9545)
    if not 0 < p_cov < 1:
        raise top.fail("coverage_probability", f"must lie between 0 and 1 (got {p_cov!r})")

    inputs: list[InputQuantity] = []

    def add(q: InputQuantity) -> str:
        inputs.append(q)
        return q.symbol

    # 1. reference gyromagnetic ratio
    rv = nuc.gyromagnetic_ratio(codata)
    # The current CODATA name (not an older edition's spelling), so that engine.rebase can re-look it up.
    ref_name = nuc.reference if nuc.kind in ("codata", "electron") else None
    gamma = add(InputQuantity(
        nuc.symbol, abs(rv.value), Normal(u=rv.uncertainty), unit="MHz/T", reference=ref_name,
        source=f"{_edition_label(rv)}: {rv.name}" + ("" if ref_name else f" ({rv.source})"),
        description=f"gamma/2pi, {nuc.condition}",
        note="; ".join(x for x in (nuc.note, _sign_note(rv)) if x)))
    den = [f"{gamma} * 1e6"]

    if nuc.kind == "electron" and top.has("g_factor"):
        g = top.section("g_factor")
        gs = g.number("value", required=True, positive=True)
        add(InputQuantity("g_s", gs, Normal(u=g.number("u", 0.0, nonnegative=True)), unit="",
                          source=g.text("source", "stated sample g-factor"), description="g-factor of the ESR sample"))
        ge = constants.lookup("electron g factor", edition=codata)
        add(InputQuantity("g_e", ge.value, Normal(u=ge.uncertainty), unit="", reference="electron g factor",
                          source=f"{_edition_label(ge)}: {ge.name}", description="free-electron g-factor",
                          note="CODATA gives g_e < 0; the model uses -g_e"))
        den.append("(g_s / " + ("(-g_e)" if ge.value < 0 else "g_e") + ")")
    elif top.has("g_factor"):
        raise top.fail("g_factor", "is only for nucleus 'electron' (an ESR sample)")

    if top.has("shielding"):
        s = top.section("shielding")
        add(InputQuantity("sigma_s", s.number("value", required=True), Normal(u=s.number("u", 0.0, nonnegative=True)),
                          unit="", source=s.text("source", "stated shielding of the probe's compound"),
                          description="shielding of the probe nucleus in its compound, relative to the reference "
                                      "value used"))
        den.append("(1 - sigma_s)")

    # 2. measured frequency and counter resolution
    fr = top.section("frequency")
    if fr is None:
        raise top.fail("frequency", "missing: give value_Hz with u_Hz, readings_Hz or readings_csv")
    f_read, _f_mean = _frequency_input(fr, m)
    add(f_read)
    num_f = ["f_read"]
    res = fr.number("counter_resolution_Hz", positive=True)
    if res is not None:
        num_f.append(add(InputQuantity("d_res", 0.0, Rectangular(half_width=res / 2), unit="Hz",
                                       source=f"counter resolution {res:g} Hz: rectangular, half the last digit",
                                       description="correction for the counter's resolution")))

    # 4. line centre
    ln = top.section("line")
    if ln is not None:
        q = _line_input(ln)
        if q is not None:
            num_f.append(add(q))

    # 3. frequency standard
    num_y: list[str] = []
    tb = top.section("timebase")
    if tb is not None:
        off = tb.number("offset", 0.0)
        src = tb.text("source", "timebase calibration certificate")
        if tb.has("half_width") and tb.has("u"):
            raise tb.fail("u", "give either 'u' (standard uncertainty) or 'half_width' (a specification bound)")
        if tb.has("half_width"):
            dist = Rectangular(half_width=tb.number("half_width", nonnegative=True))
        else:
            dist = Normal(u=tb.number("u", 0.0, nonnegative=True))
        num_y.append(add(InputQuantity("y_tb", off, dist, unit="", source=src,
                                       description="fractional offset of the timebase, f_true = f_read (1 + y)")))
        if tb.has("ageing_per_day") or tb.has("days_since_calibration"):
            rate = tb.number("ageing_per_day", required=True)
            days = tb.number("days_since_calibration", required=True, nonnegative=True)
            num_y.append(add(InputQuantity(
                "y_age", 0.0, Rectangular(half_width=abs(rate) * days), unit="",
                source=f"ageing {rate:g}/day x {days:g} days since calibration: rectangular bound",
                description="timebase ageing since its calibration")))

    # 10. drift
    num_drift = None
    dr = top.section("drift")
    if dr is not None:
        num_drift = add(_drift_input(dr))

    # 5. sample temperature (water only), 6. shape and susceptibility
    sm = top.section("sample")
    sample = _Reader({}, m.where, "#/sample") if sm is None else sm
    t_sym = None
    alpha_rv = None
    if nuc.water and sample.has("temperature_C"):
        alpha_rv = _other(_ALPHA)
        t_ref_rv = _other(_T_REF)
        t = sample.number("temperature_C")
        ut = sample.number("u_temperature_C", 0.0, nonnegative=True)
        add(InputQuantity("alpha_T", alpha_rv.value, Normal(u=alpha_rv.uncertainty), unit="1/K",
                          source=f"{alpha_rv.edition}: {alpha_rv.source}",
                          description="temperature coefficient of the proton shielding in a water sphere",
                          note=f"valid {alpha_rv.valid_from:g} to {alpha_rv.valid_to:g} degC", reference=_ALPHA))
        t_sym = add(InputQuantity("t_s", t, Normal(u=ut), unit="degC",
                                  source=sample.text("source", "sample thermometer"),
                                  description="temperature of the water sample"))
        add(InputQuantity("t_ref", t_ref_rv.value, Normal(u=0.0), unit="degC", source=t_ref_rv.source,
                          description="reference temperature of gamma'_p (exact by convention)", reference=_T_REF))
        den.append("(1 - alpha_T * (t_s - t_ref))")
    elif sample.has("u_temperature_C") and not sample.has("temperature_C"):
        raise sample.fail("temperature_C", "missing: give the sample temperature with its uncertainty")
    elif sample.has("temperature_C"):
        sample.number("temperature_C")
        # Say so in the budget rather than drop the value silently.
        inputs[0] = inputs[0].replace(note="; ".join(x for x in (
            inputs[0].note, (f"sample temperature {sample.number('temperature_C'):g} degC recorded; no temperature "
            "term: the water shielding coefficient applies to the shielded proton only")) if x))

    shape_terms = _shape_inputs(sample, nuc, t_sym)
    if shape_terms is not None:
        qs, factor = shape_terms
        for q in qs:
            add(q)
        den.append(factor)

    # 7. probe perturbation
    pp = top.section("probe_perturbation")
    if pp is not None:
        add(InputQuantity("d_probe", pp.number("value", 0.0), Normal(u=pp.number("u", required=True, nonnegative=True)),
                          unit="", source=pp.text("source", "lab's characterisation of the probe"),
                          description="fractional field change at the sample caused by the probe's materials"))
        den.append("(1 + d_probe)")

    # 8. position and gradient
    sub: list[str] = []
    pos = _position_inputs(top)
    for gq, xq in pos:
        add(gq)
        add(xq)
        sub.append(f"{gq.symbol} * {xq.symbol}")

    # 9. curvature
    cv = top.section("curvature")
    if cv is not None:
        for q in _curvature_inputs(cv, sample):
            add(q)
        curv = "0.5 * B2 * q_curv"
    else:
        curv = None

    # the equation
    num = f"({' + '.join(num_f)})"
    if num_y:
        num += f" * (1 + {' + '.join(num_y)})"
    if num_drift:
        num += f" * (1 + {num_drift})"
    expr = f"{num} / ({' * '.join(den)})"
    if sub:
        expr += f" - ({' + '.join(sub)})" if len(sub) > 1 else f" - {sub[0]}"
    if curv:
        expr += f" - {curv}"

    meta = {"kind": "nmr-field", "nucleus": nuc.name, "codata": codata, "reference_condition": nuc.condition,
            "measurement_format": FILE_FORMAT}
    for key in ("id", "title"):
        if top.has(key):
            meta[key] = top.text(key)
    if top.has("metadata"):
        md = m.description["metadata"]
        if not isinstance(md, Mapping):
            raise top.fail("metadata", "must be an object")
        meta["measurement_metadata"] = _plain(md)
    probe = top.section("probe")
    if probe is not None:
        rng = probe.numbers("tuning_range_Hz", min_len=2, max_len=2, nonnegative=True)
        if rng is not None and rng[0] >= rng[1]:
            raise probe.fail("tuning_range_Hz", f"must be [low, high] with low < high (got {list(rng)})")
        for key in ("name", "serial"):
            if probe.has(key):
                meta[f"probe_{key}"] = probe.text(key)
    try:
        return Budget(model=Model.from_expression(expr), inputs=tuple(inputs),
                      measurand=Measurand("B0", "T", "flux density at the reference point, before the probe is "
                                                     "inserted"),
                      coverage_probability=p_cov, title=top.text("title", "NMR field measurement"), metadata=meta,
                      # G * offset with both uncertain: u(G) u(x) is a second-order term that first-order
                      # propagation drops (all of it when the offset estimate is 0), JCGM 100:2008 5.1.2 note
                      second_order=any(g.standard_uncertainty > 0 and x.standard_uncertainty > 0 for g, x in pos))
    except InputError as err:  # pragma: no cover - the description was checked above
        raise BudgetFileError(m.where, "#", f"{err.field} must be {err.allowed} (got {err.value!r})") from None


def _edition_label(rv) -> str:
    return getattr(rv, "edition_label", None) or str(rv.edition)


def _sign_note(rv) -> str:
    return "the magnitude of a negative tabulated ratio is used" if rv.value < 0 else ""


def _frequency_input(fr: _Reader, m: NMRMeasurement) -> tuple[InputQuantity, float]:
    given = [k for k in ("value_Hz", "readings_Hz", "readings_csv") if fr.has(k)]
    if len(given) != 1:
        raise fr.fail(given[1] if len(given) > 1 else "value_Hz",
                      "give exactly one of value_Hz (with u_Hz), readings_Hz or readings_csv")
    src = fr.text("source", "")
    desc = "counter reading of the resonance frequency"
    if given[0] == "value_Hz":
        v = fr.number("value_Hz", positive=True)
        u = fr.number("u_Hz", required=True, nonnegative=True)
        dof = fr.number("dof", positive=True)
        q = InputQuantity("f_read", v, Normal(u=u, dof=math.inf if dof is None else dof), unit="Hz",
                          source=src or "single counter reading", description=desc)
        return q, v
    if fr.has("u_Hz") or fr.has("dof"):
        raise fr.fail("u_Hz" if fr.has("u_Hz") else "dof", "left out with readings (Type A: s/sqrt(n), n - 1)")
    if given[0] == "readings_Hz":
        readings = fr.numbers("readings_Hz", min_len=2, nonnegative=True)
        where = "readings_Hz"
    else:
        readings = _csv_readings(fr, m)
        where = "readings_csv"
    if not all(r > 0 for r in readings):
        raise fr.fail(where, "readings must be frequencies > 0 Hz")
    q = InputQuantity.from_readings("f_read", readings, unit="Hz",
                                    source=src or f"{len(readings)} counter readings: mean, s/sqrt(n), n - 1",
                                    description=desc)
    return q, q.estimate


def _csv_readings(fr: _Reader, m: NMRMeasurement) -> tuple[float, ...]:
    spec = fr.data["readings_csv"]
    ptr = fr.at("readings_csv")
    if not isinstance(spec, Mapping) or not isinstance(spec.get("path"), str) or not isinstance(
            spec.get("column"), str):
        raise BudgetFileError(m.where, ptr, "must be an object with 'path' and 'column' (text)")
    name = spec["path"]
    text, _ = read_named_text(name, m.base_dir, m.where, f"{ptr}/path")
    rows = list(csv.DictReader(io.StringIO(text, newline="")))
    col = spec["column"]
    if not rows or col not in rows[0]:
        cols = list(rows[0]) if rows else []
        # the header is not shown: messages never print another file's contents
        raise BudgetFileError(m.where, f"{ptr}/column", f"must name a column of {name!r} by its header (it has "
                              f"{len(cols)} column{'s' if len(cols) != 1 else ''}, none named {col!r})")
    out = []
    for i, row in enumerate(rows, start=2):
        cell = (row[col] or "").strip()
        if not cell:
            continue
        try:
            out.append(float(cell))
        except ValueError:
            raise BudgetFileError(m.where, f"{ptr}/column", f"row {i} of {name!r} is not a number in column "
                                  f"{col!r}") from None
    if len(out) < 2:
        raise BudgetFileError(m.where, ptr, f"needs at least 2 readings (got {len(out)})")
    return tuple(out)


def _line_input(ln: _Reader) -> InputQuantity | None:
    src = ln.text("source", "")
    desc = "correction for locating the line centre"
    if ln.has("u_Hz"):
        u = ln.number("u_Hz", nonnegative=True)
        return InputQuantity("d_line", 0.0, Normal(u=u), unit="Hz", source=src or "lock servo specification",
                             description=desc)
    if ln.has("amplitude_to_noise") or ln.has("t2_s"):
        a = ln.number("amplitude_to_noise", required=True, positive=True)
        t2 = ln.number("t2_s", required=True, positive=True)
        dt = ln.number("sample_interval_s", required=True, positive=True)
        rec = ln.number("record_s", positive=True)
        u = physics.fid_frequency_crb_hz(a, t2, dt, rec)
        how = f"record {rec:g} s" if rec is not None else "long record"
        return InputQuantity("d_line", 0.0, Normal(u=u), unit="Hz", description=desc,
                             source=src or (f"FID Cramer-Rao bound, A/sigma = {a:g}, T2* = {t2:g} s, "
                                            f"dt = {dt:g} s, {how} (complex exponential in white noise)"))
    if ln.has("snr") or ln.has("points_per_fwhm"):
        w = ln.number("fwhm_Hz", required=True, positive=True)
        snr = ln.number("snr", required=True, positive=True)
        n = ln.number("points_per_fwhm", required=True, positive=True)
        u = physics.lorentzian_centre_uncertainty_hz(w, snr, n)
        return InputQuantity("d_line", 0.0, Normal(u=u), unit="Hz", description=desc,
                             source=src or (f"Lorentzian fit: Gamma (sigma/H) sqrt(2/(pi n)) with Gamma = {w:g} Hz, "
                                            f"H/sigma = {snr:g}, n = {n:g} points per FWHM"))
    ln.number("fwhm_Hz", positive=True)  # checked; used by the warnings only
    return None


def _drift_input(dr: _Reader) -> InputQuantity:
    src = dr.text("source", "")
    desc = "fractional field drift during the measurement"
    if dr.has("readings_Hz") == dr.has("stability"):
        raise dr.fail("readings_Hz", "give exactly one of readings_Hz (a drift log) or stability (a stated value)")
    if dr.has("readings_Hz"):
        y = np.asarray(dr.numbers("readings_Hz", min_len=3, nonnegative=True))
        mean = float(np.mean(y))
        if mean <= 0:
            raise dr.fail("readings_Hz", "must be frequencies > 0 Hz")
        method = dr.choice("method", ("std", "allan"), "std")
        if method == "std":
            u = float(np.std(y, ddof=1)) / mean
            dof = len(y) - 1
            how = f"standard deviation of {len(y)} logged readings / their mean, n - 1 dof"
        else:
            # Non-overlapping Allan deviation at tau = m tau0 (m = readings_per_interval, the measurement
            # interval in logging intervals): sqrt(<(ybar_{k+1} - ybar_k)^2> / 2) of the block means.
            m = dr.number("readings_per_interval", 1.0, positive=True)
            if m != int(m):
                raise dr.fail("readings_per_interval", f"must be a whole number >= 1 (got {m!r})")
            m = int(m)
            blocks = len(y) // m
            if blocks < 3:
                raise dr.fail("readings_per_interval", f"leaves {blocks} averaging intervals; at least 3 are needed")
            frac = y[: blocks * m].reshape(blocks, m).mean(axis=1) / mean
            u = float(np.sqrt(0.5 * np.mean(np.diff(frac) ** 2)))
            dof = blocks - 2
            how = (f"Allan deviation at {m} logging interval(s) from {len(y)} readings, {blocks} intervals - 2 dof "
                   "(first differences minus one; white frequency noise, from memory)")
        return InputQuantity("y_drift", 0.0, Normal(u=u, dof=max(dof, 1)), unit="", source=src or how,
                             description=desc)
    s = dr.number("stability", nonnegative=True)
    kind = dr.choice("distribution", ("normal", "rectangular"), "normal")
    dist = Normal(u=s) if kind == "normal" else Rectangular(half_width=s)
    return InputQuantity("y_drift", 0.0, dist, unit="", description=desc,
                         source=src or f"stated field stability {s:g} ({kind})")


def _shape_inputs(sample: _Reader, nuc: Nucleus, t_sym: str | None):
    """(inputs, denominator factor) of the bulk-susceptibility term, or None for a sphere left implicit."""
    shape = sample.choice("shape", _SHAPES)
    has_n = sample.has("demagnetizing_factor")
    if shape and has_n:
        raise sample.fail("demagnetizing_factor", "give either 'shape' or 'demagnetizing_factor', not both")
    if shape is None and not has_n:
        for k in ("length_over_diameter", "axis", "axis_ratio", "semi_axes_m", "u_demagnetizing_factor"):
            if sample.has(k):
                raise sample.fail("shape", f"missing: {k!r} needs a shape")
        return None  # a sphere: no bulk shift, nothing to list
    n, u_n, how = _demag(sample, shape)
    qs = [InputQuantity("N_d", n, Normal(u=u_n), unit="", source=how,
                        description="magnetometric demagnetizing factor of the sample along B0")]
    src_chi = "stated sample susceptibility"
    if sample.has("susceptibility"):
        chi = sample.number("susceptibility", lo=-1.0, hi=1.0)
        u_chi = sample.number("u_susceptibility", 0.0, nonnegative=True)
        water = False
    elif nuc.water:
        rv = _other(_CHI)
        chi, u_chi, src_chi, water = rv.value, rv.uncertainty, f"{rv.edition}: {rv.source}", True
        if sample.has("u_susceptibility"):
            u_chi = sample.number("u_susceptibility", nonnegative=True)
    else:
        if abs(n - 1.0 / 3.0) > 0:
            raise sample.fail("susceptibility", f"missing: nucleus {nuc.name!r} has no default sample "
                              "susceptibility; give the SI volume susceptibility of the sample")
        chi, u_chi, water = 0.0, 0.0, False
    qs.append(InputQuantity("chi", chi, Normal(u=u_chi), unit="", source=src_chi,
                            description="SI volume magnetic susceptibility of the sample",
                            reference=_CHI if water and u_chi == rv.uncertainty else None))
    factor = "(1 + chi * (1/3 - N_d))"
    if water and t_sym is not None:
        # the water susceptibility's own temperature dependence (a bound with estimate 0 in the data)
        tc, t_chi = _other(_CHI_TC), _other(_CHI_T)
        qs.append(InputQuantity("c_chi", tc.value, Normal(u=tc.uncertainty), unit="1/K",
                                source=f"{tc.edition}: {tc.source}",
                                description="relative temperature coefficient of the water susceptibility",
                                note="the data state a rectangular bound; carried by its standard uncertainty",
                                reference=_CHI_TC))
        qs.append(InputQuantity("t_chi", t_chi.value, Normal(u=0.0), unit="degC", source=t_chi.source,
                                description="temperature at which the water susceptibility is given",
                                reference=_CHI_T))
        factor = f"(1 + chi * (1 + c_chi * ({t_sym} - t_chi)) * (1/3 - N_d))"
    return qs, factor


def _demag(sample: _Reader, shape: str | None) -> tuple[float, float, str]:
    """(N, u(N), how) along B0."""
    if shape is None:
        n = sample.number("demagnetizing_factor", lo=0.0, hi=1.0)
        return n, sample.number("u_demagnetizing_factor", 0.0, nonnegative=True), "stated demagnetizing factor"
    u_given = sample.number("u_demagnetizing_factor", nonnegative=True)
    if shape == "sphere":
        return physics.demag_sphere(), u_given or 0.0, "sphere: N = 1/3"
    axis = sample.choice("axis", ("parallel", "perpendicular"))
    if shape == "ellipsoid":
        axes = sample.numbers("semi_axes_m", min_len=3, max_len=3)
        if axes is None or min(axes) <= 0:
            raise sample.fail("semi_axes_m", "must be three semi-axes > 0 in m, the first along B0")
        n = physics.demag_ellipsoid(*axes)[0]
        return n, u_given or 0.0, "ellipsoid, semi-axes " + ", ".join(f"{a:g}" for a in axes) + \
            " m (first along B0): Osborn 1945 / Carlson R_D"
    if axis is None:
        raise sample.fail("axis", "missing: 'parallel' or 'perpendicular' (the sample's axis relative to B0)")
    idx = 0 if axis == "parallel" else 1
    if shape == "long-cylinder":
        return physics.demag_long_cylinder(axis), u_given or 0.0, f"long cylinder {axis} to B0"
    if shape == "cylinder":
        g = sample.number("length_over_diameter", positive=True)
        if g is None:
            d, length = sample.number("diameter_m", positive=True), sample.number("length_m", positive=True)
            if d is None or length is None:
                raise sample.fail("length_over_diameter", "missing: give it, or diameter_m and length_m")
            g = length / d
        ug = sample.number("u_length_over_diameter", 0.0, nonnegative=True)

        def fn(x):
            return physics.demag_cylinder(x)[idx]
        how = (f"finite cylinder L/D = {g:g} {axis} to B0: magnetometric N by the shape-function integral "
               "(chi = 0; Chen, Brug & Goldfarb 1991)")
        key = "length_over_diameter"
    else:  # spheroid
        g = sample.number("axis_ratio", required=True, positive=True)
        ug = sample.number("u_axis_ratio", 0.0, nonnegative=True)

        def fn(x):
            return physics.demag_spheroid(x)[idx]
        how = f"spheroid, axis ratio c/a = {g:g}, symmetry axis {axis} to B0: Osborn 1945"
        key = "axis_ratio"
    n = fn(g)
    if u_given is not None:
        return n, u_given, how
    if ug > 0:
        h = min(ug, g / 10) * 1e-2
        if g - h <= 0:
            raise sample.fail(f"u_{key}", "is too large for this ratio")
        slope = (fn(g + h) - fn(g - h)) / (2 * h)
        return n, abs(slope) * ug, how + f"; u(N) = |dN/d(ratio)| u(ratio), u(ratio) = {ug:g}"
    return n, 0.0, how


def _position_inputs(top: _Reader) -> list[tuple[InputQuantity, InputQuantity]]:
    g = top.numbers("gradient_T_per_m", max_len=3, scalar_ok=True)
    x = top.numbers("offset_m", max_len=3, scalar_ok=True)
    ug = top.numbers("u_gradient_T_per_m", max_len=3, nonnegative=True, scalar_ok=True)
    ux = top.numbers("u_offset_m", max_len=3, nonnegative=True, scalar_ok=True)
    if g is None and x is None:
        for key, v in (("u_gradient_T_per_m", ug), ("u_offset_m", ux)):
            if v is not None:
                raise top.fail(key, "needs gradient_T_per_m and offset_m")
        return []
    if g is None or x is None:
        raise top.fail("gradient_T_per_m" if g is None else "offset_m",
                       "missing: the gradient and the offset go together (one number, or one per axis)")
    n = len(g)
    for key, v in (("offset_m", x), ("u_gradient_T_per_m", ug), ("u_offset_m", ux)):
        if v is not None and len(v) != n:
            raise top.fail(key, f"must have as many entries as gradient_T_per_m ({n})")
    ug = ug or (0.0,) * n
    ux = ux or (0.0,) * n
    axes = ("z",) if n == 1 else _AXES[:n]
    out = []
    for i, ax in enumerate(axes):
        if g[i] == 0 and ug[i] == 0:
            continue  # no gradient along this axis: the offset cannot matter, and the engine would flag it
        out.append((
            InputQuantity(f"G_{ax}", g[i], Normal(u=ug[i]), unit="T/m", source="stated field gradient",
                          description=f"field gradient dB/d{ax} at the sample"),
            InputQuantity(f"{ax}_off", x[i], Normal(u=ux[i]), unit="m", source="probe positioning",
                          description=f"{ax} of the sample centre minus the reference point"),
        ))
    return out


def _curvature_inputs(cv: _Reader, sample: _Reader) -> list[InputQuantity]:
    b2 = cv.number("d2B_dz2_T_per_m2", 0.0)
    ub2 = cv.number("u_d2B_dz2_T_per_m2", 0.0, nonnegative=True)
    model = cv.choice("model", ("harmonic", "one-axis"), "harmonic")
    shape = sample.choice("shape", _SHAPES) or "sphere"
    if shape not in ("sphere", "cylinder"):
        raise cv.fail(None, f"a curvature term needs a sphere or a finite cylinder (sample shape is {shape!r})")
    d = sample.number("diameter_m", positive=True)
    if d is None:
        raise sample.fail("diameter_m", "missing: the sample diameter in m is needed for the curvature term")
    length = sample.number("length_m", positive=True) if shape == "cylinder" else None
    if shape == "cylinder" and length is None:
        g = sample.number("length_over_diameter", positive=True)
        if g is None:
            raise sample.fail("length_m", "missing: the cylinder length in m is needed for the curvature term")
        length = g * d
    axis = sample.choice("axis", ("parallel", "perpendicular"), "parallel")
    q = physics.curvature_mean_square_m2(shape, d, length, axis, model)
    if model == "harmonic":
        how = ("harmonic field, axisymmetric second order: q = z^2 - rho^2/2; sphere 0 (mean-value theorem), "
               "cylinder L^2/12 - R^2/4 along B0, R^2/8 - L^2/24 across")
    else:
        how = "one-axis estimate q = z^2: sphere a^2/5, cylinder L^2/12 along B0, R^2/4 across"
    dims = f"D = {d:g} m" + (f", L = {length:g} m, {axis}" if length is not None else "")
    return [
        InputQuantity("B2", b2, Normal(u=ub2), unit="T/m^2", source=cv.text("source", "field map"),
                      description="second derivative d2B/dz2 of the field at the sample centre"),
        InputQuantity("q_curv", q, Normal(u=0.0), unit="m^2", source=f"{how}; {shape} {dims}",
                      description=f"sample average <q> ({model} model)"),
    ]


# --- warnings ---------------------------------------------------------------------


def _warnings(m: NMRMeasurement, budget: Budget, result) -> list[str]:
    d = m.description
    nuc = m.nucleus
    out: list[str] = []
    f = budget.input("f_read").estimate
    gamma_hz = budget.input(nuc.symbol).estimate * 1e6
    b = result.estimate
    sample = d.get("sample") or {}
    line = d.get("line") or {}

    # temperature outside the validity of the shielding coefficient
    if nuc.water and "temperature_C" in sample:
        rv = _other(_ALPHA)
        t = float(sample["temperature_C"])
        if not rv.within_validity(t):
            out.append(f"the sample temperature {t:g} degC is outside {rv.valid_from:g} to {rv.valid_to:g} degC, "
                       "the range in which the water shielding temperature coefficient was measured: the "
                       "temperature correction is extrapolated and may be wrong")

    # frequency outside the probe's tuning range
    rng = (d.get("probe") or {}).get("tuning_range_Hz")
    if rng:
        lo, hi = float(rng[0]), float(rng[1])
        if not lo <= f <= hi:
            out.append(f"the frequency {f:.9g} Hz is outside the probe's tuning range {lo:g} to {hi:g} Hz: "
                       "check that the right probe was used and that the lock is on the resonance")

    # gradient broadening beyond the usable limit
    g = d.get("gradient_T_per_m")
    width = line.get("natural_fwhm_Hz", line.get("fwhm_Hz"))
    dims = [float(sample[k]) for k in ("diameter_m", "length_m") if k in sample]
    if g is not None and width and dims:
        gvec = [g] if isinstance(g, (int, float)) else list(g)
        gmag = math.sqrt(sum(float(x) ** 2 for x in gvec))
        extent = max(dims)
        k = float(line.get("max_broadening_ratio", 1.0))
        spread = physics.gradient_broadening_hz(gmag, extent, gamma_hz)
        g_max = physics.max_usable_gradient_t_per_m(float(width), extent, gamma_hz, k)
        if spread > k * float(width) * (1 + 1e-12):  # a gradient computed as exactly the limit passes
            out.append(f"the gradient {gmag:.3g} T/m spreads the resonance over {spread:.3g} Hz across the "
                       f"{extent * 1e3:.3g} mm sample, more than {k:g} x the {float(width):.3g} Hz linewidth "
                       f"(usable up to {g_max:.3g} T/m): the line is broadened beyond the usable limit and the "
                       "reading may be invalid")

    # low field: resolution or signal limits
    u_c = result.standard_uncertainty
    if u_c > 0 and b != 0:
        limiting = 0.0
        for sym in ("d_res", "d_line"):
            try:
                limiting += result.contribution(sym).variance_share
            except (FieldbudgetError, KeyError, ValueError):
                pass
        if limiting > LIMITING_SHARE:
            res_txt = ""
            if width:
                res_txt = (f"; the {float(width):.3g} Hz line is "
                           f"{physics.resolution_ppm(float(width), b, gamma_hz):.3g} ppm of the resonance")
            out.append(f"at {abs(b):.4g} T the counter resolution and the line centre give "
                       f"{100 * limiting:.0f} % of the variance{res_txt}: the field is low enough that the "
                       "resolution or the signal-to-noise ratio limits this measurement")
    return out
