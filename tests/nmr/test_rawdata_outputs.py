"""The line and map commands on the demo examples, their JSON keys, bad inputs, plots and SVG charts."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from fieldbudget.cli import main
from fieldbudget.nmr.fieldmap import fit_map, read_map
from fieldbudget.nmr.linefit import fit_trace, read_trace

DATA = Path(__file__).resolve().parents[2] / "examples" / "data"
LINE = DATA / "line-absorption-2026-11-18.csv"
FID = DATA / "fid-2026-11-18.csv"
MAP = DATA / "fieldmap-EM-0417-2026-11-17.csv"

LINE_KEYS = {"centre_Hz", "u_centre_Hz", "crb_Hz", "fwhm_Hz", "snr", "chi2_reduced", "n_points", "kind"}
MAP_KEYS = {"B0_T", "u_B0_T", "gradient_T_per_m", "u_gradient_T_per_m", "d2B_dz2_T_per_m2", "coefficients",
            "covariance", "homogeneity_ppm", "residual_rms_T", "n_points", "order"}


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out = capsys.readouterr()
    return code, out.out, out.err


def test_line_command_on_the_swept_example(capsys):
    code, out, _ = run(capsys, "line", LINE, "--json")
    d = json.loads(out)
    assert code == 0 and LINE_KEYS <= set(d)
    assert d["kind"] == "absorption" and d["n_points"] == 2001
    # the generator's true centre 42576412.21 Hz (make_rawdata_examples.py), within 4 u
    assert abs(d["centre_Hz"] - 42576412.21) < 4 * d["u_centre_Hz"]
    assert d["fwhm_Hz"] == pytest.approx(8.0, rel=0.02) and d["snr"] == pytest.approx(60, rel=0.05)
    assert d["u_centre_Hz"] / d["crb_Hz"] == pytest.approx(1.0, rel=0.05)
    assert d["warnings"] == []


def test_line_command_on_the_fid_example(capsys, tmp_path):
    svg = tmp_path / "fid.svg"
    code, out, _ = run(capsys, "line", FID, "--kind", "fid", "--reference-Hz", "42576000", "--json", "--svg", svg)
    d = json.loads(out)
    assert code == 0 and d["kind"] == "fid" and d["n_points"] == 8192
    assert abs(d["centre_Hz"] - 42576412.21) < 4 * d["u_centre_Hz"]
    assert svg.read_text().startswith("<svg") and "residuals" in svg.read_text()


def test_line_text_output(capsys):
    code, out, _ = run(capsys, "line", LINE)
    assert code == 0 and "Cramer-Rao bound" in out and "u/CRB" in out


def test_map_command_on_the_example(capsys, tmp_path):
    svg = tmp_path / "map.svg"
    code, out, _ = run(capsys, "map", MAP, "--order", "4", "--json", "--svg", svg)
    d = json.loads(out)
    assert code == 0 and MAP_KEYS <= set(d)
    assert d["order"] == 4 and d["n_points"] == 441 and len(d["coefficients"]) == 25
    assert len(d["covariance"]) == 25 and len(d["covariance"][0]) == 25
    assert set(d["homogeneity_ppm"]) == {"shape", "size_m", "peak_to_peak", "rms"}
    assert d["representable"] is True and d["warnings"] == []
    # the generator's coefficients (make_rawdata_examples.py): gradient and d2B/dz2 = 2 x 0.45 T/m^2
    for got, u, true in zip(d["gradient_T_per_m"], d["u_gradient_T_per_m"], (1.2e-5, -0.8e-5, 2.0e-4)):
        assert abs(got - true) < 4 * u
    assert d["d2B_dz2_T_per_m2"] == pytest.approx(0.9, abs=4 * d["u_d2B_dz2_T_per_m2"])
    assert "<svg" in svg.read_text()


def test_map_at_too_low_an_order_is_flagged(capsys):
    code, out, _ = run(capsys, "map", MAP, "--order", "3", "--json")
    d = json.loads(out)
    assert code == 0 and d["representable"] is False
    assert d["warnings"][0]["code"] == "map.not_representable"


def test_map_options(capsys):
    code, out, _ = run(capsys, "map", MAP, "--order", "2", "--about", "0,0,0.005", "--cylinder", "0.02,0.02",
                       "--basis", "cylindrical", "--json")
    d = json.loads(out)
    assert code == 0 and d["homogeneity_ppm"]["shape"] == "cylinder" and d["homogeneity_ppm"]["size_m"] == [0.02, 0.02]
    assert d["terms"][4] == "z^2 - 1/2 rho^2"


@pytest.mark.parametrize("argv, where", [
    (("line", LINE, "--kind", "gauss"), "--kind"),
    (("line", LINE, "--reference-Hz", "42576000"), "--reference-Hz"),
    (("line", FID, "--reference-Hz", "abc"), "--reference-Hz"),
    (("line", FID, "--kind", "absorption"), "kind"),
    (("line", "missing.csv"), "missing.csv"),
    (("line", MAP), "signal"),
    (("map", MAP, "--order", "x"), "--order"),
    (("map", MAP, "--order", "-1"), "--order"),
    (("map", MAP, "--about", "0,0"), "--about"),
    (("map", MAP, "--sphere", "-1"), "--sphere"),
    (("map", MAP, "--cylinder", "0.01"), "--cylinder"),
    (("map", MAP, "--nucleus", "unobtainium"), "--nucleus"),
    (("map", MAP, "--codata", "1999"), "--codata"),
    (("map", MAP, "--basis", "polar"), "--basis"),
    (("map", LINE), "x_m"),
])
def test_bad_inputs_end_in_one_line_and_exit_2(capsys, argv, where):
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and where in err


def test_svg_never_overwrites_the_input(capsys, tmp_path):
    copy = tmp_path / "t.csv"
    copy.write_bytes(LINE.read_bytes())
    code, _, err = run(capsys, "line", copy, "--svg", copy)
    assert code == 2 and "--svg" in err and copy.read_bytes() == LINE.read_bytes()


def test_matplotlib_figures():
    pytest.importorskip("matplotlib")
    from matplotlib.figure import Figure

    from fieldbudget.plots import field_map_figure, line_fit_figure

    for fit in (fit_trace(read_trace(LINE)), fit_trace(read_trace(FID), reference_hz=42576000.0)):
        fig = line_fit_figure(fit)
        assert isinstance(fig, Figure) and len(fig.axes) == 2
    fig = field_map_figure(fit_map(read_map(MAP), 4), plane="yz")
    assert isinstance(fig, Figure) and len(fig.axes) == 4  # two panels, two colour bars
    with pytest.raises(ValueError, match="plane"):
        field_map_figure(fit_map(read_map(MAP), 2), plane="zz")
