"""Charts with matplotlib (the ``jupyter`` extra): Monte Carlo histogram, variance shares, calibration curve.

The only module of fieldbudget that imports matplotlib.  Figures are built
with :class:`matplotlib.figure.Figure` directly, not pyplot, so they can be
drawn from the Monte Carlo worker thread and do not depend on a backend.

A bare ``Figure`` shows in Jupyter only when a pyplot backend has registered
a formatter for it; in a fresh kernel it prints ``<Figure size ...>``.
Importing this module registers a PNG formatter for every ``Figure`` with the
running IPython (when there is one), so each function here, and any other
function that returns a ``Figure``, displays as an image in a fresh kernel.
"""

from __future__ import annotations

import base64
import io
import itertools
import math
from typing import Any

from matplotlib.figure import Figure

from ._display import escape, fmt_si, pretty_unit

__all__ = ["control_chart", "drift_chart", "field_map_figure", "img_html", "line_fit_figure", "mc_histogram",
           "share_chart", "to_png", "to_svg", "calibration_curve",
           "register_display"]


# neutral palette of our own: slate, brick, plum, moss, grey
_COLOURS = {"mc": "#6b8bad", "symmetric": "#9c3d2e", "shortest": "#6a4c7d", "gum": "#3f6b3a", "bar": "#3b5b7a",
            "line": "#24292f", "band": "#b8c7d6", "grid": "#d0d7de"}
_DPI = 96


def register_display() -> bool:
    """Register :func:`to_png` as IPython's PNG formatter for ``Figure``; True when IPython is running."""
    try:
        from IPython import get_ipython
    except ImportError:  # pragma: no cover - IPython comes with the jupyter extra
        return False
    shell = get_ipython()
    if shell is None:
        return False
    shell.display_formatter.formatters["image/png"].for_type(Figure, to_png)
    return True


def _scale(values: list[float], unit: str) -> tuple[float, str]:
    """A factor and a prefixed unit that put the largest |value| between 1 and 1000 (T -> mT, µT)."""
    big = max((abs(v) for v in values if math.isfinite(v)), default=0.0)
    if not big or unit not in ("T", "Hz", "m", "s", "V", "A"):
        return 1.0, pretty_unit(unit)
    text = fmt_si(big, unit)
    prefixed = text.split(" ")[-1]
    factor = {"G": 1e-9, "M": 1e-6, "k": 1e-3, "m": 1e3, "\u00b5": 1e6, "n": 1e9, "p": 1e12}.get(
        prefixed[0] if len(prefixed) > len(unit) else "", 1.0)
    return factor, prefixed


def mc_histogram(mc: Any, gum: Any = None, *, ax: Any = None, title: str | None = None) -> Figure:
    """Histogram of the Monte Carlo output values with the coverage intervals drawn on it.

    Draws the probabilistically symmetric interval and the shortest interval
    of the Monte Carlo distribution (JCGM 101:2008, 7.7 and 7.8), and, when a
    GUM result is given, y ± U (JCGM 100:2008, 6.2.1).  The legend sits below
    the axes, so it never covers the histogram or the interval marks.
    """
    counts, edges = mc.histogram
    # drawn as deviations from the Monte Carlo estimate: absolute values of a narrow
    # distribution far from zero make unreadable tick labels
    y0 = mc.estimate
    unit = getattr(mc, "unit", "") or ""
    spans = [mc.interval, mc.shortest_interval]
    if gum is not None:
        spans.append((gum.estimate - gum.expanded_uncertainty, gum.estimate + gum.expanded_uncertainty))
    factor, shown_unit = _scale([e - y0 for e in edges] + [v - y0 for s in spans for v in s], unit)
    xs = [(e - y0) * factor for e in edges]
    fig = None
    if ax is None:
        fig = Figure(figsize=(7.2, 4.2), dpi=_DPI)
        ax = fig.add_subplot()
    widths = [b - a for a, b in itertools.pairwise(xs)]
    ax.bar(xs[:-1], counts, width=widths, align="edge", color=_COLOURS["mc"], alpha=0.6,
           label=f"Monte Carlo trials (M = {mc.trials:,})".replace(",", "\u2009"))
    top = max(counts) if len(counts) else 1
    p = 100 * mc.coverage_probability

    def span(lo: float, hi: float, colour: str, style: str, label: str, y: float) -> None:
        lo, hi = (lo - y0) * factor, (hi - y0) * factor
        ax.axvline(lo, color=colour, lw=1.4, ls=style)
        ax.axvline(hi, color=colour, lw=1.4, ls=style)
        ax.annotate("", xy=(lo, y), xytext=(hi, y), arrowprops={"arrowstyle": "<->", "color": colour})
        ax.plot([], [], color=colour, ls=style, label=label)

    span(*mc.interval, _COLOURS["symmetric"], "-", f"Monte Carlo, probabilistically symmetric {p:.4g} % interval",
         1.05 * top)
    span(*mc.shortest_interval, _COLOURS["shortest"], "--", f"Monte Carlo, shortest {p:.4g} % interval", 1.12 * top)
    if gum is not None:
        span(*spans[2], _COLOURS["gum"], ":", f"GUM, y \u00b1 U (k = {gum.coverage_factor:.3g})", 1.19 * top)
    name = getattr(mc, "output", "y")
    ax.set_xlabel(f"{name} \u2212 {fmt_si(y0, unit, mc.standard_uncertainty)}, in {shown_unit}".rstrip(", in"))
    ax.set_ylabel("trials per bin")
    ax.set_ylim(0, 1.3 * top)
    ax.grid(axis="y", color=_COLOURS["grid"], lw=0.6)
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=2, fontsize="small", frameon=False)
    if title:
        ax.set_title(title)
    if fig is not None:
        fig.tight_layout()
    return fig if fig is not None else ax.figure


def share_chart(result: Any, *, ax: Any = None, label: Any = None) -> Figure:
    """Horizontal bars of each input's share of the variance of the result, largest on top.

    ``label(contribution)`` gives the text of a bar (the symbol by default).
    """
    contribs = sorted(result.contributions, key=lambda c: c.variance_share or 0.0, reverse=True)
    fig = None
    if ax is None:
        fig = Figure(figsize=(6.4, 0.26 * len(contribs) + 0.9), dpi=_DPI)
        ax = fig.add_subplot()
    names = [label(c) if label else c.symbol for c in contribs][::-1]
    shares = [100 * max(0.0, c.variance_share or 0.0) for c in contribs][::-1]
    bars = ax.barh(range(len(names)), shares, color=_COLOURS["bar"], height=0.7)
    ax.set_yticks(range(len(names)), names, fontsize="small")
    for bar, s in zip(bars, shares):
        ax.text(bar.get_width() + 1, bar.get_y() + bar.get_height() / 2, f"{s:.1f} %", va="center",
                fontsize="x-small")
    ax.set_xlabel("share of the variance of the result / %")
    ax.set_xlim(0, 110)
    ax.set_ylim(-0.6, len(names) - 0.4)
    ax.grid(axis="x", color=_COLOURS["grid"], lw=0.6)
    ax.set_axisbelow(True)
    if fig is not None:
        fig.tight_layout()
    return fig if fig is not None else ax.figure


def calibration_curve(points: Any, curve: Any = None, *, title: str | None = None) -> Figure:
    """The instrument's error at each point with its expanded uncertainty as error bars, the fitted
    curve, and below it the residuals of the fit.

    ``points`` are calibration point results (``indication``, ``error``, ``expanded_uncertainty``);
    ``curve`` a calibration curve (or its ``CurveFit``) in error form, or ``None``.
    The error bars are y ± U(E) as reported (JCGM 100:2008, 6.2.1).
    """
    pts = list(points)
    x = [p.indication for p in pts]
    y = [p.error for p in pts]
    big_u = [p.expanded_uncertainty for p in pts]
    yfac, yunit = _scale([abs(a) + b for a, b in zip(y, big_u)], "T")
    fit = getattr(curve, "fit", curve)
    fig = Figure(figsize=(7.2, 4.8), dpi=_DPI)
    grid = fig.add_gridspec(2, 1, height_ratios=(3, 1.3), hspace=0.08)
    ax = fig.add_subplot(grid[0])
    ax.errorbar(x, [v * yfac for v in y], yerr=[u * yfac for u in big_u], fmt="o", color=_COLOURS["bar"],
                ecolor=_COLOURS["bar"], capsize=4, label="error E at each point, with U(E)")
    ax.axhline(0, color=_COLOURS["grid"], lw=0.8)
    if fit is not None:
        lo, hi = min(x), max(x)
        xs = [lo + (hi - lo) * i / 100 for i in range(101)]
        ax.plot(xs, [fit.value_at(v) * yfac for v in xs], color=_COLOURS["line"], lw=1.2,
                label=f"fitted curve, degree {fit.degree}")
    ax.set_ylabel(f"error E / {yunit}")
    ax.tick_params(labelbottom=False)
    ax.grid(color=_COLOURS["grid"], lw=0.5)
    ax.legend(loc="upper left", fontsize="small", frameon=False)
    if title:
        ax.set_title(title, fontsize="medium")
    res_ax = fig.add_subplot(grid[1], sharex=ax)
    if fit is not None:
        res = list(fit.residuals)
        rfac, runit = _scale(res + big_u, "T")
        res_ax.errorbar(list(fit.x), [r * rfac for r in res], yerr=[u * rfac for u in big_u[:len(res)]], fmt="s",
                        ms=4, color=_COLOURS["symmetric"], ecolor=_COLOURS["symmetric"], capsize=3)
        res_ax.set_ylabel(f"residual / {runit}", fontsize="small")
    res_ax.axhline(0, color=_COLOURS["line"], lw=0.8)
    res_ax.grid(color=_COLOURS["grid"], lw=0.5)
    res_ax.set_xlabel("indication / T")
    fig.subplots_adjust(left=0.12, right=0.97, top=0.93 if title else 0.97, bottom=0.12)
    return fig


def to_png(fig: Figure) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", bbox_inches="tight")
    return buf.getvalue()


def to_svg(fig: Figure) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight")
    return buf.getvalue()


def img_html(fig: Figure, css_class: str = "fb-figure", alt: str = "chart") -> str:
    """An ``<img>`` tag with the figure as an inline PNG."""
    data = base64.b64encode(to_png(fig)).decode("ascii")
    return f'<img class="{escape(css_class)}" src="data:image/png;base64,{data}" alt="{escape(alt)}"/>'




# --- raw data: line fits and field maps -------------------------------------------------------
# Self-contained figure builders (each returns a Figure), so any display wrapper applies to them.

_FIT = {"data": "#8aa9bf", "fit": "#b34a2a", "imag": "#7d9a5b", "resid": "#3b6e8f"}


def line_fit_figure(fit: Any, *, title: str | None = None) -> Figure:
    """Data and fitted line above, residuals below, of a :class:`fieldbudget.nmr.linefit.LineFit`.

    A swept line is drawn against f - f0 (Hz); an FID against time (s), with
    I and Q for a complex record.
    """
    import numpy as np

    fig = Figure(figsize=(6.6, 4.6), dpi=90)
    top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (3, 1.2)})
    x = np.asarray(fit.x, dtype=float)
    sig, fitted, resid = (np.asarray(a) for a in (fit.signal, fit.fitted, fit.residuals))
    if fit.kind == "fid":
        xlabel = "t / s"
    else:
        x = x - fit.centre_hz
        xlabel = f"f \u2212 {fit.centre_hz:.12g} Hz   (in Hz)"
    if np.iscomplexobj(sig):
        top.plot(x, sig.real, ".", ms=2, color=_FIT["data"], label="I (data)")
        top.plot(x, sig.imag, ".", ms=2, color=_FIT["imag"], alpha=0.6, label="Q (data)")
        top.plot(x, fitted.real, color=_FIT["fit"], lw=1.2, label="fit")
        top.plot(x, fitted.imag, color=_FIT["fit"], lw=1.0, ls="--")
        bottom.plot(x, resid.real, lw=0.6, color=_FIT["resid"])
        bottom.plot(x, resid.imag, lw=0.6, color=_FIT["imag"], alpha=0.7)
    else:
        top.plot(x, sig, ".", ms=2, color=_FIT["data"], label="data")
        top.plot(x, fitted, color=_FIT["fit"], lw=1.2, label="fit")
        bottom.plot(x, resid, lw=0.6, color=_FIT["resid"])
    bottom.axhline(0.0, color="#555", lw=0.6)
    top.set_ylabel("signal")
    bottom.set_ylabel("residual")
    bottom.set_xlabel(xlabel)
    top.legend(loc="upper right", fontsize="x-small", frameon=False)
    top.set_title(title or (f"{fit.label}: centre u = {fit.u_centre_hz:.3g} Hz, CRB = {fit.crb_hz:.3g} Hz, "
                            f"\u03c7\u00b2\u1d63 = {fit.chi2_reduced:.3g}"), fontsize="small")
    fig.tight_layout()
    return fig


def field_map_figure(fit: Any, *, plane: str = "xz", offset_m: float | None = None, title: str | None = None) -> Figure:
    """Heatmaps of the fitted field (ppm of B0) on a plane through the reference point and of the residuals.

    ``plane`` is "xz", "yz" or "xy"; ``offset_m`` moves the plane along the
    third axis (default: through the reference point).  The residuals are the
    map points projected onto the plane, coloured by residual / rms residual.
    """
    import numpy as np

    axes = {"x": 0, "y": 1, "z": 2}
    if len(plane) != 2 or plane[0] not in axes or plane[1] not in axes or plane[0] == plane[1]:
        raise ValueError(f"plane must be 'xz', 'yz' or 'xy' (got {plane!r})")
    i, j = axes[plane[0]], axes[plane[1]]
    k = 3 - i - j
    xyz = np.asarray(fit.xyz_m)
    lo, hi = xyz.min(axis=0), xyz.max(axis=0)
    a = np.linspace(lo[i], hi[i], 121)
    b = np.linspace(lo[j], hi[j], 121)
    aa, bb = np.meshgrid(a, b)
    pts = np.zeros((aa.size, 3))
    pts[:, i], pts[:, j] = aa.ravel(), bb.ravel()
    pts[:, k] = fit.about_m[k] if offset_m is None else offset_m
    ppm = (fit.evaluate(pts) - fit.b0_t) / abs(fit.b0_t) * 1e6
    fig = Figure(figsize=(9.0, 3.8), dpi=90)
    left, right = fig.subplots(1, 2)
    mesh = left.pcolormesh(aa * 1e3, bb * 1e3, ppm.reshape(aa.shape), shading="auto", cmap="RdBu_r")
    left.contour(aa * 1e3, bb * 1e3, ppm.reshape(aa.shape), colors="k", linewidths=0.4, levels=10)
    fig.colorbar(mesh, ax=left, label="(B \u2212 B0)/B0 / ppm")
    left.set_title(f"fitted field, order {fit.order}", fontsize="small")
    r = np.asarray(fit.residuals_t) / (fit.residual_rms_t or 1.0)
    order = np.argsort(np.abs(r))
    sc = right.scatter(xyz[order, i] * 1e3, xyz[order, j] * 1e3, c=r[order], s=12, cmap="RdBu_r", vmin=-3, vmax=3)
    fig.colorbar(sc, ax=right, label="residual / rms residual")
    right.set_title(f"residuals at the map points (rms {fit.residual_rms_t:.3g} T)", fontsize="small")
    for ax in (left, right):
        ax.set_xlabel(f"{plane[0]} / mm")
        ax.set_ylabel(f"{plane[1]} / mm")
        ax.set_aspect("equal", adjustable="box")
    if title:
        fig.suptitle(title, fontsize="small")
    fig.tight_layout()
    return fig


# ----------------------------------------------------------------------------
# laboratory monitoring (fieldbudget.lab.monitoring)
# ----------------------------------------------------------------------------

_CHART = {"point": "#2c3e50", "later": "#4a7ab5", "centre": "#1e8449", "limit": "#c0392b", "zone": "#7f8c8d",
          "signal": "#d35400", "ewma": "#7d3c98"}


def control_chart(chart: Any, *, ax: Any = None, title: str | None = None) -> Figure:
    """An individuals chart: the points with their expanded-uncertainty bars, centre line, zones and limits.

    The points that set the limits (the baseline) are drawn filled, later ones
    open; a point where a test for special causes fired (ISO 7870-2) is ringed
    and labelled with the test's number.  With an EWMA (``chart.ewma``) a
    second panel shows it with its limits.
    """
    fig = None
    with_ewma = getattr(chart, "ewma", None) is not None
    if ax is None:
        fig = Figure(figsize=(7.2, 5.2 if with_ewma else 3.6), dpi=90)
        axes = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (3, 1.4)}) if with_ewma \
            else (fig.add_subplot(),)
        ax = axes[0]
    else:
        axes = (ax,)
    n = len(chart.values)
    xs = list(range(1, n + 1))
    y0, s = chart.centre, chart.sigma
    dev = [v - y0 for v in chart.values]
    bars = [u if u is not None else 0.0 for u in chart.U] if chart.U else None
    for k, style in ((1, ":"), (2, "--")):
        for sign in (1, -1):
            ax.axhline(sign * k * s, color=_CHART["zone"], lw=0.8, ls=style)
    ax.axhline(0.0, color=_CHART["centre"], lw=1.4, label="centre line (baseline mean)")
    ax.axhline(3 * s, color=_CHART["limit"], lw=1.4, label="limits, centre \u00b1 3\u03c3")
    ax.axhline(-3 * s, color=_CHART["limit"], lw=1.4)
    b = chart.baseline
    ax.axvspan(0.5, b + 0.5, color=_CHART["zone"], alpha=0.08, lw=0, label=f"baseline ({b} points)")
    ax.errorbar(xs[:b], dev[:b], yerr=bars[:b] if bars else None, fmt="o", color=_CHART["point"], ms=4,
                capsize=2, lw=0.9, label="value \u00b1 U")
    if n > b:
        ax.errorbar(xs[b:], dev[b:], yerr=bars[b:] if bars else None, fmt="o", mfc="white", color=_CHART["later"],
                    ms=4, capsize=2, lw=0.9)
    ax.plot(xs, dev, color=_CHART["point"], lw=0.5, alpha=0.6)
    done: dict[int, list[int]] = {}
    for v in chart.violations:
        done.setdefault(v.index, []).append(v.rule)
    for i, rules in done.items():
        ax.plot([i + 1], [dev[i]], "o", ms=11, mfc="none", mec=_CHART["signal"], mew=1.5)
        ax.annotate("test " + ",".join(map(str, sorted(rules))), (i + 1, dev[i]), textcoords="offset points",
                    xytext=(6, 8), fontsize="x-small", color=_CHART["signal"])
    unit = chart.unit or ""
    ax.set_ylabel(f"value \u2212 {y0:.10g} {unit}".rstrip())
    ax.legend(loc="upper left", fontsize="x-small", frameon=False, ncol=2)
    ax.set_title(title or chart.title or "individuals chart", fontsize="small")
    if with_ewma and len(axes) > 1:
        e = chart.ewma
        ax2 = axes[1]
        ax2.plot(xs, [z - y0 for z in e.z], "-o", ms=3, color=_CHART["ewma"], label=f"EWMA, \u03bb = {e.lam:g}")
        ax2.plot(xs, [u - y0 for u in e.upper], color=_CHART["limit"], lw=1)
        ax2.plot(xs, [lo - y0 for lo in e.lower], color=_CHART["limit"], lw=1)
        ax2.axhline(0.0, color=_CHART["centre"], lw=1)
        for i in e.signals:
            ax2.plot([i + 1], [e.z[i] - y0], "o", ms=9, mfc="none", mec=_CHART["signal"])
        ax2.legend(loc="upper left", fontsize="x-small", frameon=False)
        ax2.set_xlabel("point")
    else:
        ax.set_xlabel("point")
    if chart.labels:
        step = max(1, n // 8)
        target = axes[-1]
        target.set_xticks(xs[::step])
        target.set_xticklabels([chart.labels[i] for i in range(0, n, step)], rotation=30, ha="right",
                               fontsize="x-small")
    if fig is not None:
        fig.tight_layout()
    return fig if fig is not None else ax.figure


def drift_chart(fit: Any, review: Any = None, *, ax: Any = None) -> Figure:
    """An instrument's certified values against time with the fitted drift line (and the reviewed limit)."""
    import datetime as _dt

    fig = None
    if ax is None:
        fig = Figure(figsize=(6.4, 3.2), dpi=90)
        ax = fig.add_subplot()
    t0 = _dt.date.fromisoformat(fit.t0)
    days = [(_dt.date.fromisoformat(d) - t0).days for d in fit.dates]
    ax.errorbar(days, fit.values, yerr=[2 * u for u in fit.u] if any(fit.u) else None, fmt="o",
                color=_CHART["point"], capsize=2, label="certified value \u00b1 2u")
    span = [min(days), max(days) + (review.current_days if review else 0)]
    ax.plot(span, [fit.intercept + fit.slope_per_day * t for t in span], color=_CHART["ewma"],
            label=f"drift {fit.slope_per_day * 365.25:.3g} per year")
    if review is not None:
        last = fit.values[-1]
        for sign in (1, -1):
            ax.axhline(last + sign * review.limit, color=_CHART["limit"], lw=1, ls="--")
        ax.plot([], [], color=_CHART["limit"], ls="--", label="allowed change since the last calibration")
    ax.set_xlabel(f"days since {fit.t0}")
    ax.set_ylabel(fit.quantity)
    ax.set_title(f"{fit.instrument}: {fit.quantity} over its certificates", fontsize="small")
    ax.legend(loc="best", fontsize="x-small", frameon=False)
    if fig is not None:
        fig.tight_layout()
    return fig if fig is not None else ax.figure


register_display()
