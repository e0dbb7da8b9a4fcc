"""SVG charts of a line fit (data, fit, residuals) and of a field-map fit (field and residuals at the map points).

Plain SVG drawn by ``templates/fit_charts.svg.j2`` (the report layer does not
import matplotlib); only coordinates are computed here.  Long traces are
thinned to at most :data:`MAX_POINTS` drawn points (every k-th point; the fit
is unaffected).
"""

from __future__ import annotations

import math

import numpy as np

from .._display import fmt
from ._env import html_env

__all__ = ["MAX_POINTS", "field_map_svg", "line_fit_svg"]

MAX_POINTS = 1500

# a diverging ramp of our own: slate blue (low) through pale grey to brick red (high)
_LOW, _MID, _HIGH = (59, 110, 143), (236, 236, 232), (179, 74, 42)


def _thin(n: int) -> np.ndarray:
    step = max(1, math.ceil(n / MAX_POINTS))
    return np.arange(0, n, step)


def _scale(values: np.ndarray, lo_px: float, hi_px: float) -> tuple[np.ndarray, float, float]:
    lo, hi = float(np.min(values)), float(np.max(values))
    if hi == lo:
        hi, lo = hi + 1.0, lo - 1.0
    pad = 0.05 * (hi - lo)
    lo, hi = lo - pad, hi + pad
    return lo_px + (values - lo) / (hi - lo) * (hi_px - lo_px), lo, hi


def _path(xs: np.ndarray, ys: np.ndarray) -> str:
    return " ".join(f"{'M' if i == 0 else 'L'}{x:.1f},{y:.1f}" for i, (x, y) in enumerate(zip(xs, ys)))


def line_fit_svg(fit, width: float = 640.0) -> str:
    """SVG of a :class:`~fieldbudget.nmr.linefit.LineFit`: the data and the fit above, the residuals below."""
    x = np.asarray(fit.x, dtype=float)
    sig, fitted, resid = (np.asarray(a) for a in (fit.signal, fit.fitted, fit.residuals))
    if np.iscomplexobj(sig):  # I + iQ: the real part (I) is drawn
        sig, fitted, resid = sig.real, fitted.real, resid.real
    idx = _thin(x.size)
    left, right = 70.0, width - 15.0
    top_h, res_h = 220.0, 90.0
    xs, x_lo, x_hi = _scale(x, left, right)
    ys_all = np.concatenate([sig, fitted])
    y_data, y_lo, y_hi = _scale(ys_all, 20.0 + top_h, 20.0)  # SVG y grows downwards
    n = sig.size
    y_r, r_lo, r_hi = _scale(resid, 40.0 + top_h + res_h, 40.0 + top_h)
    chart = {
        "width": width, "height": 40.0 + top_h + res_h + 40.0, "left": left, "right": right,
        "top": 20.0, "top_bottom": 20.0 + top_h, "res_top": 40.0 + top_h, "res_bottom": 40.0 + top_h + res_h,
        "points": [{"x": float(xs[i]), "y": float(y_data[i])} for i in idx],
        "fit_path": _path(xs[idx], y_data[n:][idx]),
        "res_path": _path(xs[idx], y_r[idx]),
        "x_lo": fmt(x_lo, 8), "x_hi": fmt(x_hi, 8),
        "y_lo": fmt(y_lo, 4), "y_hi": fmt(y_hi, 4), "r_lo": fmt(r_lo, 3), "r_hi": fmt(r_hi, 3),
        "axis": "t / s" if fit.kind == "fid" else "f / Hz",
        "title": f"{fit.label}: centre {fit.centre_hz:.12g} Hz, u = {fit.u_centre_hz:.3g} Hz "
                 f"(CRB {fit.crb_hz:.3g} Hz), {fit.n_points} points",
    }
    return html_env().get_template("fit_charts.svg.j2").module.line_fit(chart)


def _colour(t: float) -> str:
    """t in [-1, 1] to a colour of the ramp."""
    t = max(-1.0, min(1.0, t))
    a, b = (_MID, _HIGH) if t >= 0 else (_MID, _LOW)
    s = abs(t)
    return "#" + "".join(f"{round(p + (q - p) * s):02x}" for p, q in zip(a, b))


def field_map_svg(fit, width: float = 640.0, plane: str = "xz") -> str:
    """SVG of a :class:`~fieldbudget.nmr.fieldmap.FieldMapFit`: the map points in ``plane``, coloured by the
    field (ppm of B0 about B0) on the left and by the residual (in units of the rms residual) on the right."""
    axes = {"x": 0, "y": 1, "z": 2}
    i, j = axes[plane[0]], axes[plane[1]]
    xyz = np.asarray(fit.xyz_m)
    b = np.asarray(fit.field_t)
    r = np.asarray(fit.residuals_t)
    panel = (width - 60.0) / 2
    size = panel - 30.0
    out_panels = []
    ppm = (b - fit.b0_t) / abs(fit.b0_t) * 1e6 if fit.b0_t else b * 0
    rscale = fit.residual_rms_t or 1.0
    for k, (values, span, label) in enumerate((
            (ppm, float(np.max(np.abs(ppm))) or 1.0, "field - B0 / ppm"),
            (r / rscale, 3.0, "residual / rms residual"))):
        x0 = 30.0 + k * (panel + 30.0)
        px, lo_a, hi_a = _scale(xyz[:, i], x0, x0 + size)
        py, lo_b, hi_b = _scale(xyz[:, j], 40.0 + size, 40.0)
        order = np.argsort(np.abs(values))  # the strongest colours drawn last
        dots = [{"x": float(px[n]), "y": float(py[n]), "c": _colour(float(values[n]) / span)} for n in order]
        out_panels.append({"x0": x0, "size": size, "dots": dots, "label": label,
                           "range": f"\u00b1{fmt(span, 3)}", "a_lo": fmt(lo_a, 3), "a_hi": fmt(hi_a, 3),
                           "b_lo": fmt(lo_b, 3), "b_hi": fmt(hi_b, 3)})
    chart = {"width": width, "height": size + 90.0, "panels": out_panels, "a": plane[0], "b": plane[1],
             "title": f"Field map, order {fit.order} fit: B0 = {fit.b0_t:.10g} T, residual rms "
                      f"{fit.residual_rms_t:.3g} T ({fit.n_points} points, projected on {plane})"}
    return html_env().get_template("fit_charts.svg.j2").module.field_map(chart)
