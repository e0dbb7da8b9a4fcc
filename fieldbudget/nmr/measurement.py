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
            [1 + chi (1 + c_chi (t_s - t_chi)) (1/3 - N_d)] [1 + d_det] [1 + d_probe])
         - (G_x x_off + G_y y_off + G_z z_off [+ d_vol]) - 0.5 B2 q_curv

with only the terms the description asks for.  Each term is declared, with
its keys, by one component of ``fieldbudget.nmr.components``; this module
holds the measurement and result values and the warnings that need the
evaluated result.  Sign conventions:
f_true = f_read (1 + y) for a timebase running fast by y; the frequency falls
as the water warms (Petley & Donaldson 1984); B_nuc = B0 [1 + chi (1/3 - N)];
the probe's materials change the field at the sample to B0 (1 + d_probe);
``offset_m`` is the sample centre minus the reference point, so the field at
the reference point is the sample's field minus G . offset; the curvature term
removes the sample average (B''/2) <q> of the field about the sample centre.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType

import numpy as np

from .. import _display as D
from .. import constants
from .._io import read_json_file
from ..engine import Budget, evaluate
from ..errors import BudgetFileError, FieldbudgetError, Finding
from . import components, physics
from .components.header import FILE_FORMAT, plain
from .nuclei import DEFAULT_NUCLEUS, Nucleus, nucleus

__all__ = ["FILE_FORMAT", "LIMITING_SHARE", "NMRMeasurement", "NMRResult"]

#: Share of u_c^2 above which the counter resolution and line-centre terms
#: together are said to limit the measurement (the "low field" warning; our choice: more than half).
LIMITING_SHARE = 0.5

_ALPHA = "proton shielding temperature coefficient in water"


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
        # Building the budget checks every key and value; keep the budget and the build findings.
        budget, findings = components.build_budget(self)
        object.__setattr__(self, "_budget", budget)
        object.__setattr__(self, "_findings", findings)

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
        return plain(self.description)

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
        extra = tuple(self._findings) + tuple(_warnings(self, budget, result))  # type: ignore[attr-defined]
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

    @property
    def findings(self) -> tuple[Finding, ...]:
        """The NMR warnings as structured findings (each names the file key it concerns)."""
        return tuple(w for w in self.nmr_warnings if isinstance(w, Finding))

    def __getattr__(self, name: str):
        # estimate, standard_uncertainty, effective_dof, coverage_factor, ... of the BudgetResult
        if name.startswith("_") or name in ("measurement", "budget", "result", "nmr_warnings", "findings"):
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


# --- warnings ---------------------------------------------------------------------


def _warnings(m: NMRMeasurement, budget: Budget, result) -> list[Finding]:
    d = m.description
    nuc = m.nucleus
    out: list[Finding] = []
    f = budget.input("f_read").estimate
    gamma_hz = budget.input(nuc.symbol).estimate * 1e6
    b = result.estimate
    sample = d.get("sample") or {}
    line = d.get("line") or {}

    # temperature outside the validity of the shielding coefficient
    if nuc.water and "temperature_C" in sample:
        rv = constants.lookup_other(_ALPHA)
        t = float(sample["temperature_C"])
        if not rv.within_validity(t):
            out.append(Finding(f"the sample temperature {t:g} degC is outside {rv.valid_from:g} to {rv.valid_to:g} "
                               "degC, the range in which the water shielding temperature coefficient was measured: "
                               "the temperature correction is extrapolated and may be wrong",
                               code="nmr.temperature_outside_validity", key="sample.temperature_C",
                               values={"temperature_C": t, "valid_from_C": rv.valid_from, "valid_to_C": rv.valid_to}))

    # frequency outside the probe's tuning range
    rng = (d.get("probe") or {}).get("tuning_range_Hz")
    if rng:
        lo, hi = float(rng[0]), float(rng[1])
        if not lo <= f <= hi:
            out.append(Finding(f"the frequency {f:.9g} Hz is outside the probe's tuning range {lo:g} to {hi:g} Hz: "
                               "check that the right probe was used and that the lock is on the resonance",
                               code="nmr.outside_tuning_range", key="probe.tuning_range_Hz",
                               values={"frequency_Hz": f, "low_Hz": lo, "high_Hz": hi}))

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
            out.append(Finding(f"the gradient {gmag:.3g} T/m spreads the resonance over {spread:.3g} Hz across "
                               f"the {extent * 1e3:.3g} mm sample, more than {k:g} x the {float(width):.3g} Hz "
                               f"linewidth (usable up to {g_max:.3g} T/m): the line is broadened beyond the usable "
                               "limit and the reading may be invalid", code="nmr.gradient_invalid",
                               key="gradient_T_per_m", severity="invalid",
                               values={"gradient_T_per_m": gmag, "spread_Hz": spread, "max_T_per_m": g_max}))

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
            out.append(Finding(f"at {abs(b):.4g} T the counter resolution and the line centre give "
                               f"{100 * limiting:.0f} % of the variance{res_txt}: the field is low enough that the "
                               "resolution or the signal-to-noise ratio limits this measurement",
                               code="nmr.low_field", key="frequency.counter_resolution_Hz",
                               values={"field_T": abs(b), "share": limiting}))
    return out
