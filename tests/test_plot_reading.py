"""Figures read as a reader sees them: labels upright and inside the frame, the poles ticked,
one unit notation, each hemisphere at its own solstice, the reference orbit chosen.

Everything is read back from the matplotlib objects after drawing (text rotation in screen
degrees, text extents in pixels), not from the code that made them.
"""

from __future__ import annotations

import matplotlib
import numpy as np
import pytest
from published_tables import CMIP6_PICONTROL_TSI_WM2

matplotlib.use("Agg")  # no display in tests

from bcgen.insolation import monthly_insolation  # noqa: E402
from bcgen.orbit import solve  # noqa: E402
from bcgen.plot import (  # noqa: E402
    anomaly_figure,
    field_pair,
    insolation_figure,
    monthly_field,
    orbit_figure,
    orbit_series,
)
from bcgen.solar_calendar.calendars import ModelCalendar  # noqa: E402

ZONAL_10DEG = """\
experiment: {name: reading}
epoch: 127ka
grid: {kind: zonal, resolution_deg: 10}
products: [monthly_insolation_fixed_day]
"""


def drawn(fig):
    """Draw the figure and return its renderer (text extents are known only after a draw)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    return canvas.get_renderer()


def contour_labels(fig):
    return [t for t in fig.axes[0].texts if t.get_text().strip()]


def all_texts(fig) -> list[str]:
    out = []
    for ax in fig.axes:
        out += [ax.get_title(), ax.get_xlabel(), ax.get_ylabel()]
        out += [t.get_text() for t in ax.texts]
        legend = ax.get_legend()
        if legend is not None:
            out += [t.get_text() for t in legend.get_texts()]
    return out


@pytest.fixture(scope="module")
def zonal_file(tmp_path_factory):
    from bcgen import build
    from bcgen.spec import parse_spec_text

    folder = tmp_path_factory.mktemp("reading")
    result = build(parse_spec_text(ZONAL_10DEG), folder)
    return str(folder / result.files[0]["file"])


def figures_with_contour_labels(zonal_file):
    yield "insolation 6ka", insolation_figure(monthly_field("6ka"))
    yield "insolation file", insolation_figure(monthly_field(zonal_file))
    for source, reference, months in (("6ka", "0ka", None), ("127ka", "0ka", None),
                                      ("127ka", "1850CE", "fixed_angle")):
        field, ref = field_pair(source, reference, months)
        yield f"anomaly {source} - {reference}", anomaly_figure(field, ref)
    field, ref = field_pair(zonal_file, "0ka")
    yield "anomaly file - 0ka", anomaly_figure(field, ref)


def test_contour_labels_read_upright_and_lie_inside_the_frame(zonal_file):
    # Common practice in map and chart lettering: labels never read downward (a label
    # turned past the vertical, e.g. "+60" at 270 degrees, reads "09+" beside the latitude
    # axis) and are not cut by the frame.
    for name, fig in figures_with_contour_labels(zonal_file):
        renderer = drawn(fig)
        labels = contour_labels(fig)
        assert len(labels) >= 3, name
        frame = fig.axes[0].get_window_extent(renderer)
        for label in labels:
            angle = (label.get_rotation() + 180.0) % 360.0 - 180.0  # screen degrees
            assert -80.0 <= angle <= 100.0, (name, label.get_text(), angle)
            box = label.get_window_extent(renderer)
            assert (frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0
                    and box.y1 <= frame.y1), (name, label.get_text(), box, frame)


def test_a_figure_from_a_built_file_keeps_the_pole_ticks(zonal_file):
    # A 10-degree zonal file holds cell centres 85S..85N; its cells reach the poles.
    for fig in (insolation_figure(monthly_field(zonal_file)),
                anomaly_figure(*field_pair(zonal_file, "0ka"))):
        drawn(fig)
        ax = fig.axes[0]
        ticks = [t.get_text() for t in ax.get_yticklabels()]
        assert ticks[0] == "90°S" and ticks[-1] == "90°N", ticks
        assert ax.get_ylim() == (-90.0, 90.0)


def test_units_are_written_one_way():
    fig = orbit_figure(orbit_series("20ka..0ka/1ka"), (65.0,))
    figs = [fig, insolation_figure(monthly_field("6ka")), anomaly_figure(*field_pair("6ka", "0ka"))]
    for f in figs:
        words = " ".join(all_texts(f))
        assert "$" not in words and "^{" not in words  # no TeX superscripts anywhere
        assert "W m-2" in words


def _solstice_insolation(orbit, lat_deg, lam_deg, s0=CMIP6_PICONTROL_TSI_WM2):
    """Daily-mean insolation at true longitude lam (Berger 1978, eqs. for Q and H0; the
    distance from the ellipse, a/r = (1 + e cos v)/(1 - e^2), v = lam - perihelion - 180)."""
    e = np.asarray(orbit.eccentricity)
    eps = np.deg2rad(np.asarray(orbit.obliquity_deg))
    lam = np.deg2rad(lam_deg)
    v = lam - np.deg2rad(np.asarray(orbit.perihelion_longitude_deg)) - np.pi
    dist2 = ((1 + e * np.cos(v)) / (1 - e**2)) ** 2
    dec = np.arcsin(np.sin(eps) * np.sin(lam))
    phi = np.deg2rad(lat_deg)
    h0 = np.arccos(np.clip(-np.tan(phi) * np.tan(dec), -1, 1))
    return s0 / np.pi * dist2 * (h0 * np.sin(phi) * np.sin(dec)
                                 + np.cos(phi) * np.cos(dec) * np.sin(h0))


def test_orbit_figure_puts_each_hemisphere_at_its_own_summer_solstice():
    series = orbit_series("50ka..0ka/1ka")
    fig = orbit_figure(series, (65.0, -65.0))
    north, south = fig.axes[3].lines[:2]
    legend = [t.get_text() for t in fig.axes[3].get_legend().get_texts()]
    assert legend == ["65°N, June solstice (λ = 90°)", "65°S, December solstice (λ = 270°)"]
    np.testing.assert_allclose(north.get_ydata(), _solstice_insolation(series.orbit, 65, 90),
                               rtol=1e-9)
    np.testing.assert_allclose(south.get_ydata(), _solstice_insolation(series.orbit, -65, 270),
                               rtol=1e-9)
    # At its own solstice 65S gets summer sunshine, not the flat polar-night line of June.
    assert south.get_ydata().min() > 400.0
    chosen = orbit_figure(series, (65.0, -65.0), true_longitude_deg=120.0)
    legend = [t.get_text() for t in chosen.axes[3].get_legend().get_texts()]
    assert legend == ["65°N, λ = 120°", "65°S, λ = 120°"]
    np.testing.assert_allclose(chosen.axes[3].lines[1].get_ydata(),
                               _solstice_insolation(series.orbit, -65, 120), rtol=1e-9)


def test_plot_insolation_takes_the_reference_of_fixed_angle_months(run_cli, tmp_path):
    from bcgen.cli import plot

    args = plot.register(__import__("argparse").ArgumentParser().add_subparsers()).parse_args(
        ["insolation", "127ka", "--months", "fixed-angle", "--reference", "1850CE",
         "--lat", "-60", "0", "65"])
    fig, description = plot.make_figure(args)
    assert "1850CE" in description and "1850CE" in fig.axes[0].get_xlabel()
    # The plotted field is the engine's with the 1850 CE orbit as the reference, not that of
    # the default 1950 CE reference (which differs by 0.3 W m-2 at 65N in August).
    field = plot._insolation_field(args, "fixed_angle")
    calendar = ModelCalendar("noleap")
    expected = monthly_insolation(solve(-127000.0), calendar, [-60.0, 0.0, 65.0],
                                  months="fixed_angle", reference=solve(-100.0))
    default = monthly_insolation(solve(-127000.0), calendar, [-60.0, 0.0, 65.0],
                                 months="fixed_angle", reference=solve(0.0))
    np.testing.assert_allclose(field.insolation_wm2, expected.insolation_wm2, rtol=1e-12)
    assert np.max(np.abs(field.insolation_wm2 - default.insolation_wm2)) > 0.1
    status, out, err = run_cli(["plot", "insolation", "127ka", "--months", "fixed-angle",
                                "--reference", "1850CE", "-o", tmp_path / "f.png"])
    assert status == 0 and "arcs of the 1850CE calendar months" in out, err
    status, _, err = run_cli(["plot", "insolation", "127ka", "--reference", "1850CE",
                              "-o", tmp_path / "g.png"])
    assert status == 2 and "--months fixed-angle" in err
