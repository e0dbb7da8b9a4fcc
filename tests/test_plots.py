"""The figures: sorted shares, the calibration curve with error bars and residuals, the Monte Carlo
histogram with a legend outside the axes, and display in IPython."""

from __future__ import annotations

import pytest

pytest.importorskip("matplotlib")

from fieldbudget import plots  # noqa: E402
from fieldbudget.engine import Budget, InputQuantity, Measurand, evaluate, montecarlo  # noqa: E402


@pytest.fixture(scope="module")
def gum_and_mc():
    b = Budget(model="a + b + c", measurand=Measurand("y", "T"),
               inputs=(InputQuantity.normal("a", 1.0, 1e-6, unit="T"), InputQuantity.normal("b", 0.0, 3e-6, unit="T"),
                       InputQuantity.rectangular("c", 0.0, 2e-6, unit="T")))
    return evaluate(b), montecarlo.run(b, trials=20_000, seed=5)


def test_share_chart_largest_on_top(gum_and_mc):
    gum, _ = gum_and_mc
    fig = plots.share_chart(gum)
    labels = [t.get_text() for t in fig.axes[0].get_yticklabels()]
    shares = {c.symbol: c.variance_share for c in gum.contributions}
    assert labels[::-1] == sorted(shares, key=shares.get, reverse=True)   # barh draws bottom-up


def test_histogram_legend_does_not_cover_the_axes(gum_and_mc):
    gum, mc = gum_and_mc
    fig = plots.mc_histogram(mc, gum)
    fig.canvas.draw()
    ax = fig.axes[0]
    legend = ax.get_legend().get_window_extent()
    assert legend.y1 <= ax.get_window_extent().y0        # below the axes, over no bar or interval
    assert len(ax.get_legend().get_texts()) == 4         # trials, two MC intervals, GUM interval


def test_calibration_curve_has_error_bars_and_residuals():
    from fieldbudget.procedure import ProcedureRun, load_procedure

    run = ProcedureRun(load_procedure("templates/teslameter-calibration.toml"))
    o = run.outcome
    fig = plots.calibration_curve(o.calibration.points, o.curve)
    main, residuals = fig.axes
    assert main.containers and len(main.containers[0].lines[0].get_xdata()) == len(o.calibration.points)
    assert residuals.containers and "residual" in residuals.get_ylabel()
    assert plots.to_png(fig).startswith(b"\x89PNG")


def test_register_display_makes_figures_png_in_ipython():
    IPython = pytest.importorskip("IPython")
    from matplotlib.figure import Figure

    shell = IPython.core.interactiveshell.InteractiveShell.instance()
    try:
        assert plots.register_display()
        fig = Figure(figsize=(2, 1))
        fig.add_subplot().plot([0, 1])
        data, _ = shell.display_formatter.format(fig)
        assert data["image/png"].startswith(b"\x89PNG")
    finally:
        IPython.core.interactiveshell.InteractiveShell.clear_instance()
