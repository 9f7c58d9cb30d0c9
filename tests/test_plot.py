"""`bcgen plot` and bcgen.plot: every figure from every kind of source, what they show, errors.

Figures are inspected as matplotlib Figure objects (axis labels with units, titles naming
the epoch, axis orientation, where contours lie) and written to PNG and PDF through the
command line (non-empty files of the right format, atomic, no overwrite without --force).
"""

from __future__ import annotations

import errno
import sys
from pathlib import Path

import matplotlib
import numpy as np
import pytest

matplotlib.use("Agg")  # no display in tests

from cli_checks import one_error_line  # noqa: E402
from published_tables import (  # noqa: E402
    CMIP6_PICONTROL_TSI_WM2,
    PMIP1_SPEC_HEAD,
    PMIP1_TODAY_WM2,
    PMIP4,
    PMIP_SOLAR_CONSTANT_WM2,
)

from bcgen.cli import main  # noqa: E402
from bcgen.plot import (  # noqa: E402
    anomaly_figure,
    field_pair,
    insolation_figure,
    month_lengths,
    month_lengths_figure,
    monthly_field,
    orbit_figure,
    orbit_series,
    save_figure,
    source_kind,
)

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"
PDF_MAGIC = b"%PDF-"
MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]

# The PMIP1 check conventions (Bonfils et al. 1998, "Documentation of the PMIP models",
# appendix "About insolation computations"; Bonfils et al. 1998): 1950 orbit, S0 = 1365,
# 365-day year, vernal equinox 21 March 12:00, daily values at mid-day.
PMIP1_SPEC = (
    "experiment: {name: pmip1-today}\nepoch: 0ka\n" + PMIP1_SPEC_HEAD
    + "grid: {kind: zonal, latitudes_deg: [-90, -60, -30, 0, 30, 60, 90]}\n"
    "products: [monthly_insolation_fixed_day, monthly_insolation_fixed_angle, daily_insolation]\n"
)
TRANSIENT_SPEC = """\
experiment: {name: deglacial-orbit}
transient: {start_epoch: 21ka, end_epoch: 0ka, acceleration: 500}
products: [orbit]
"""


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """The PMIP1 spec and the files `bcgen build` writes from it."""
    from bcgen import build
    from bcgen.spec import load_spec

    folder = tmp_path_factory.mktemp("built")
    spec = folder / "pmip1.yaml"
    spec.write_text(PMIP1_SPEC)
    (folder / "transient.yaml").write_text(TRANSIENT_SPEC)
    build(load_spec(spec), folder / "out")
    out = folder / "out"
    return {
        "spec": str(spec),
        "transient": str(folder / "transient.yaml"),
        "fixed_day": str(out / "pmip1-today_monthly_insolation_fixed_day.nc"),
        "fixed_angle": str(out / "pmip1-today_monthly_insolation_fixed_angle.nc"),
        "daily": str(out / "pmip1-today_daily_insolation.nc"),
    }


def run(capsys, *argv):
    try:
        status = main(["plot", *map(str, argv)])
    except SystemExit as exc:  # argparse's usage errors
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


def texts(fig) -> str:
    """Every title of the figure, joined."""
    return " ".join(ax.get_title() for ax in fig.axes)


def colorbar_label(fig) -> str:
    return fig.axes[-1].get_ylabel()


def check_field_axes(fig) -> None:
    ax = fig.axes[0]
    assert [t.get_text() for t in ax.get_xticklabels()] == MONTHS  # Jan..Dec, left to right
    assert list(ax.get_xticks()) == list(range(1, 13))
    low, high = ax.get_ylim()
    assert low < high  # south at the bottom, north at the top
    assert "latitude (degrees north" in ax.get_ylabel()
    assert "W m-2" in colorbar_label(fig)


# --- sources ---------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("text", "kind"),
    [("6ka", "epoch"), ("1850CE", "epoch"), ("800ka..0ka/1ka", "range"), ("a/b.yaml", "spec"),
     ("x.YML", "spec"), ("out/f.nc", "file")],
)
def test_source_kinds(text, kind):
    assert source_kind(text) == kind


def test_a_built_file_reproduces_the_pmip1_table(built):
    # The file's values as the figure gets them: PMIP1 table to its printed 0.01 W m-2
    # (+ float32 storage).
    field = monthly_field(built["fixed_day"])
    assert field.months == "fixed_day" and field.label == "pmip1-today (0ka)"
    # read back from the spec in the file (PMIP1_SPEC_HEAD: S0 = 1365)
    assert field.settings.solar_constant_wm2 == PMIP_SOLAR_CONSTANT_WM2
    for lat, row in PMIP1_TODAY_WM2.items():
        i = int(np.flatnonzero(field.latitude_deg == lat)[0])
        np.testing.assert_allclose(field.insolation_wm2[i], row, atol=0.011)


def test_a_spec_reproduces_the_pmip1_table(built):
    field = monthly_field(built["spec"], latitude_deg=[-90, -60, 0, 60, 90])
    for lat, row in PMIP1_TODAY_WM2.items():
        i = int(np.flatnonzero(field.latitude_deg == lat)[0])
        np.testing.assert_allclose(field.insolation_wm2[i], row, atol=0.01)  # as printed


def test_a_reference_epoch_takes_the_conventions_of_a_file(built):
    # 1950CE computed "like" the PMIP1 file (S0 1365, noleap, 21 March noon, Berger 1978,
    # whose 1950 orbit is the table's within its digits): the anomaly is near zero.
    field, ref = field_pair("0ka", built["fixed_day"])
    assert (ref.settings.solar_constant_wm2 == field.settings.solar_constant_wm2
            == PMIP_SOLAR_CONSTANT_WM2)
    np.testing.assert_array_equal(field.latitude_deg, ref.latitude_deg)
    assert np.max(np.abs(field.insolation_wm2 - ref.insolation_wm2)) < 0.2


def test_a_file_on_a_longitude_grid_and_without_its_spec(built, tmp_path):
    import xarray as xr

    zonal = monthly_field(built["fixed_day"])
    with xr.open_dataset(built["fixed_day"], decode_times=False) as ds:
        grid = ds.drop_vars("insolation")
        grid["insolation"] = ds["insolation"].expand_dims(lon=[0.0, 90.0, 180.0, 270.0], axis=-1)
        del grid.attrs["bcgen_spec"]
        grid.to_netcdf(tmp_path / "regular.nc")
    field = monthly_field(str(tmp_path / "regular.nc"))
    np.testing.assert_allclose(field.insolation_wm2, zonal.insolation_wm2, rtol=1e-6)
    # Without the spec the calendar and anchor come from the attributes; S0 is assumed.
    assert field.settings.calendar == zonal.settings.calendar and field.settings.assumed
    assert "assumed" in field.conventions


def test_month_lengths_of_126ka_match_the_cf_example():
    # CF Conventions Example 4.6, calendar "126 kyr B.P.": month_lengths 34, 31, 32, 30, 29,
    # 27, 28, 28, 28, 32, 32, 34 (whole days; orbit and reference unstated, so 1 day).
    lengths = month_lengths("126ka")
    np.testing.assert_allclose(lengths.fixed_angle_days,
                               [34, 31, 32, 30, 29, 27, 28, 28, 28, 32, 32, 34], atol=1.0)
    # In a calendar without leap years fixed-angle months tile the 365-day year exactly
    # (the definition of fixed-angle months; common practice).
    assert lengths.fixed_angle_days.sum() == pytest.approx(365.0, abs=1e-6)
    np.testing.assert_array_equal(lengths.fixed_day_days,
                                  [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


# --- the figures as objects -------------------------------------------------------------
def test_insolation_figure_from_an_epoch():
    fig = insolation_figure(monthly_field("6ka"))
    check_field_axes(fig)
    title = texts(fig)
    assert "6ka" in title and "fixed-day months" in title and "noleap" in title
    assert f"S0 = {CMIP6_PICONTROL_TSI_WM2} W m-2" in title  # CMIP6 piControl (Matthes 2017)
    assert fig.axes[0].get_ylim() == (-90.0, 90.0)


def _crossing(month: int, a: float, b: float, level: float) -> float:
    """Where linear interpolation between month ``month`` (value a) and the next (b) hits level."""
    return month + (a - level) / (a - b)


def test_insolation_contours_sit_where_the_pmip1_table_puts_them(built):
    # The 500 W m-2 contour along the poles, from the PMIP1 table by linear interpolation
    # between month centres (x = 1 for January): at 90N between May 428.89 and June 518.14
    # and between June and July 478.16; at 90S between November 438.09 and December 550.37
    # and between January 500.27 and February 313.10. A figure with months or latitudes the
    # wrong way round puts them elsewhere.
    fig = insolation_figure(monthly_field(built["spec"]))
    lines = [c for c in fig.axes[0].collections if hasattr(c, "levels")][1]
    vertices = lines.get_paths()[list(lines.levels).index(500.0)].vertices
    north = np.sort(vertices[vertices[:, 1] == 90.0, 0])
    south = np.sort(vertices[vertices[:, 1] == -90.0, 0])
    np.testing.assert_allclose(north, [_crossing(5, 428.89, 518.14, 500),
                                       _crossing(6, 518.14, 478.16, 500)], atol=0.005)
    np.testing.assert_allclose(south, [_crossing(1, 500.27, 313.10, 500),
                                       _crossing(11, 438.09, 550.37, 500)], atol=0.005)


def test_fixed_angle_insolation_names_its_reference():
    field = monthly_field("127ka", "fixed_angle", latitude_deg=np.arange(-90, 91, 10))
    fig = insolation_figure(field)
    check_field_axes(fig)
    assert "127ka" in texts(fig) and "fixed-angle months" in texts(fig)
    assert "1950CE" in fig.axes[0].get_xlabel()


def test_anomaly_figure_has_a_zero_line_and_signs():
    field, ref = field_pair("6ka", "0ka", latitude_deg=np.arange(-90, 91, 5))
    fig = anomaly_figure(field, ref)
    check_field_axes(fig)
    assert "6ka minus 0ka" in texts(fig)
    assert "anomaly" in colorbar_label(fig)
    contour_sets = [c for c in fig.axes[0].collections if hasattr(c, "levels")]
    assert any(list(c.levels) == [0.0] for c in contour_sets)  # the zero line
    labels = [t.get_text() for t in fig.axes[0].texts]
    assert any(t.startswith("+") for t in labels) and any(t.startswith("\u2212") for t in labels)
    # Northern summer insolation was higher at 6 ka (Berger 1978; the PMIP 6 ka rationale,
    # from memory): positive at 65N in July, negative in January at the Equator.
    j65 = int(np.flatnonzero(field.latitude_deg == 65)[0])
    j0 = int(np.flatnonzero(field.latitude_deg == 0)[0])
    diff = field.insolation_wm2 - ref.insolation_wm2
    assert diff[j65, 6] > 20 and diff[j0, 0] < 0


def test_month_lengths_figure():
    fig = month_lengths_figure(month_lengths("127ka", reference="1850CE", calendar="360_day"))
    top, bottom = fig.axes
    assert "days" in top.get_ylabel() and "days" in bottom.get_ylabel()
    assert "127ka" in texts(fig) and "360_day" in texts(fig) and "1850CE" in texts(fig)
    assert [t.get_text() for t in bottom.get_xticklabels()] == MONTHS
    styles = {line.get_linestyle() for line in top.lines} | {line.get_marker()
                                                            for line in top.lines}
    assert {"--", "-", "s", "o"} <= styles  # told apart without colour


def test_orbit_figure_from_a_range():
    series = orbit_series("30ka..0ka/1ka")
    fig = orbit_figure(series, latitudes_deg=(65.0, 30.0))
    axes = fig.axes
    assert len(axes) == 4
    assert "(dimensionless)" in axes[0].get_ylabel() and "(degrees)" in axes[1].get_ylabel()
    assert "e sin ϖ" in axes[2].get_ylabel() and "W m-2" in axes[3].get_ylabel()
    assert "ka BP" in axes[-1].get_xlabel()
    assert "30ka to 0ka every 1ka" in texts(fig)
    left, right = axes[-1].get_xlim()
    assert left > right  # the past on the left, the present on the right
    # The plotted eccentricity at 6 ka and obliquity at 21 ka are the protocols' (PMIP3/PMIP4
    # 6 ka and lgm design pages: 0.018682 and 22.949 deg; Otto-Bliesner et al. 2017).
    ecc, obl = axes[0].lines[0], axes[1].lines[0]
    assert np.interp(6.0, ecc.get_xdata()[::-1], ecc.get_ydata()[::-1]) == pytest.approx(
        float(PMIP4["midHolocene"].eccentricity), abs=5e-6)
    assert np.interp(21.0, obl.get_xdata()[::-1], obl.get_ydata()[::-1]) == pytest.approx(
        float(PMIP4["lgm"].obliquity_deg), abs=5e-4)
    q = axes[3].lines
    assert len(q) == 2 and q[0].get_linestyle() != q[1].get_linestyle()
    assert q[0].get_marker() != q[1].get_marker()


def test_orbit_series_from_a_transient_spec(built):
    series = orbit_series(built["transient"])
    assert series.ages_ka[0] == 21.0 and series.ages_ka[-1] == 0.0
    fig = orbit_figure(series, latitudes_deg=None)
    assert len(fig.axes) == 3 and "deglacial-orbit" in texts(fig)


# --- the command: every kind from every kind of source ------------------------------------
def _cases(built):
    return [
        ("insolation", ["6ka"], ".png"),
        ("insolation", [built["spec"], "--months", "fixed-angle"], ".pdf"),
        ("insolation", [built["fixed_day"]], ".png"),
        ("insolation", [built["fixed_angle"]], ".pdf"),
        ("anomaly", ["6ka", "--reference", "0ka", "--lat", "-90", "-45", "0", "45", "90"], ".png"),
        ("anomaly", [built["spec"], "--reference", "6ka"], ".pdf"),
        ("anomaly", [built["fixed_angle"], "--reference", "1850CE"], ".png"),
        ("anomaly", ["6ka", "--reference", built["fixed_day"]], ".png"),
        ("month-lengths", ["6ka", "--calendar", "360_day"], ".png"),
        ("month-lengths", [built["spec"], "--reference", "1850CE"], ".pdf"),
        ("month-lengths", [built["fixed_angle"]], ".png"),
        ("orbit", ["200ka..0ka/1ka", "--lat", "65", "-65"], ".pdf"),
        ("orbit", [built["transient"]], ".png"),
    ]


def test_every_kind_from_every_source_writes_a_figure(built, tmp_path, capsys):
    for k, (kind, args, suffix) in enumerate(_cases(built)):
        path = tmp_path / f"figure{k}{suffix}"
        status, out, err = run(capsys, kind, *args, "-o", path, "--dpi", "40")
        assert status == 0, err
        assert out.startswith(f"wrote {path} ({kind}: ") and err == ""
        data = path.read_bytes()
        assert data.startswith(PNG_MAGIC if suffix == ".png" else PDF_MAGIC)
        assert len(data) > 5000
    assert not list(tmp_path.glob(".*.tmp"))  # no temporary file left behind


def test_default_name_json_report_and_force(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    status, out, _ = run(capsys, "anomaly", "6ka", "--reference", "0ka", "--lat", "-90", "0",
                         "90", "--dpi", "30", "--format", "json")
    assert status == 0
    assert '"file": "anomaly_6ka_minus_0ka.png"' in out
    first = (tmp_path / "anomaly_6ka_minus_0ka.png").read_bytes()
    status, _, err = run(capsys, "anomaly", "6ka", "--reference", "0ka", "--lat", "-90", "0",
                         "90", "--dpi", "30")
    assert status == 2 and "already exists; use --force" in one_error_line(err)
    assert (tmp_path / "anomaly_6ka_minus_0ka.png").read_bytes() == first  # untouched
    status, _, _ = run(capsys, "anomaly", "6ka", "--reference", "0ka", "--lat", "-90", "0",
                       "90", "--dpi", "60", "--force")
    assert status == 0 and (tmp_path / "anomaly_6ka_minus_0ka.png").read_bytes() != first


def test_help_shows_examples(capsys):
    with pytest.raises(SystemExit) as exit_info:
        main(["plot", "--help"])
    assert exit_info.value.code == 0
    out = capsys.readouterr().out
    assert "examples:" in out and "bcgen plot anomaly 6ka --reference 0ka" in out
    for kind in ("insolation", "anomaly", "month-lengths", "orbit"):
        assert kind in out


# --- errors: one line, exit status 2, no output --------------------------------------------
def bad_cases(built):
    return [
        (["nonsense", "6ka"], "invalid choice: 'nonsense'"),
        (["insolation", "6ka", "-o", "x.jpg"], "unknown figure format '.jpg'"),
        (["insolation", "6ka", "-o", "x"], "unknown figure format '(no suffix)'"),
        (["insolation", "6kb", "-o", "x.png"], "source '6kb' is not an epoch"),
        (["insolation", "800ka..0ka/1ka", "-o", "x.png"], "is a range of epochs"),
        (["orbit", "6ka", "-o", "x.png"], "is one epoch; the orbit figure needs a range"),
        (["orbit", built["spec"], "-o", "x.png"], "is a time-slice spec"),
        (["anomaly", "6ka", "-o", "x.png"], "needs --reference SOURCE"),
        (["orbit", "10ka..0ka/1ka", "--reference", "0ka", "-o", "x.png"],
         "--reference does not apply to 'bcgen plot orbit'"),
        (["orbit", "10ka..0ka/1ka", "--months", "fixed-day", "-o", "x.png"],
         "--months does not apply"),
        (["insolation", "6ka", "--lat", "95", "0", "-o", "x.png"], "--lat: latitudes must be in"),
        (["insolation", "6ka", "--lat", "45", "-o", "x.png"], "at least 2 latitudes"),
        (["insolation", built["fixed_day"], "--lat", "0", "10", "-o", "x.png"],
         "--lat applies to epochs and specs"),
        (["insolation", built["fixed_day"], "--months", "fixed-angle", "-o", "x.png"],
         "holds fixed-day months, not fixed-angle months"),
        (["insolation", built["daily"], "-o", "x.png"], "has 365 time steps"),
        (["month-lengths", built["fixed_day"], "-o", "x.png"], "holds fixed-day months"),
        (["month-lengths", "6ka", "--reference", "later", "-o", "x.png"],
         "--reference: the reference orbit of fixed-angle months must be an epoch"),
        (["insolation", "missing.nc", "-o", "x.png"], "missing.nc: no such file"),
        (["insolation", "6ka", "--calendar", "noleep", "-o", "x.png"], "unknown calendar"),
        (["insolation", "6ka", "--dpi", "0", "-o", "x.png"], "--dpi: expected a whole number"),
        (["insolation", "6ka", "-o", "no-such-folder/x.png"], "folder no-such-folder does not"),
    ]


def test_bad_inputs_give_one_line(built, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    for argv, expected in bad_cases(built):
        status, out, err = run(capsys, *argv)
        assert status == 2, (argv, err)
        assert expected in one_error_line(err), (argv, err)
        assert out == ""
    assert list(tmp_path.iterdir()) == []  # nothing written, not even a temporary file


def test_corrupt_and_unsuitable_files(built, tmp_path, capsys):
    truncated = tmp_path / "truncated.nc"
    truncated.write_bytes(Path(built["fixed_day"]).read_bytes()[:2000])
    status, _, err = run(capsys, "insolation", truncated, "-o", tmp_path / "a.png")
    assert status == 2 and "cannot open as NetCDF" in one_error_line(err)
    import xarray as xr

    with xr.open_dataset(built["fixed_day"], decode_times=False) as ds:
        ds.isel(lat=slice(0, None, 2)).to_netcdf(tmp_path / "coarse.nc")
    status, _, err = run(capsys, "anomaly", tmp_path / "coarse.nc", "--reference",
                         built["fixed_day"], "-o", tmp_path / "b.png")
    assert status == 2 and "their latitudes differ" in one_error_line(err)
    assert not (tmp_path / "a.png").exists() and not (tmp_path / "b.png").exists()


def test_missing_matplotlib_is_one_line(tmp_path, capsys, monkeypatch):
    monkeypatch.setitem(sys.modules, "matplotlib", None)  # `import matplotlib` now fails
    status, out, err = run(capsys, "insolation", "6ka", "-o", tmp_path / "x.png")
    assert status == 2
    assert one_error_line(err) == ("bcgen: error: figures need matplotlib, an optional extra: "
                                   "pip install 'bcgen[plot]'")
    assert list(tmp_path.iterdir()) == []


def test_a_full_disk_leaves_nothing(tmp_path, monkeypatch):
    from matplotlib.figure import Figure

    from bcgen.errors import OutputError

    def full(self, fname, **kwargs):
        Path(fname).write_bytes(b"partial")
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(Figure, "savefig", full)
    fig = Figure()
    with pytest.raises(OutputError, match="no space left on the device"):
        save_figure(fig, tmp_path / "x.png")
    assert list(tmp_path.iterdir()) == []
