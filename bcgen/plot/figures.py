"""The figures: one function per figure, each returning a :class:`matplotlib.figure.Figure`.

matplotlib is an optional extra (``pip install 'bcgen[plot]'``) and is imported
only when a figure is made. The figures use :class:`~matplotlib.figure.Figure`
directly (no ``pyplot``), so they need no display and leave no global state.

Every figure is meant to stay readable when printed in grey:

- fields use ``cividis``, a colormap whose lightness increases monotonically
  (Nuñez, Anderton & Renslow 2018, PLoS ONE 13, e0199239,
  doi:10.1371/journal.pone.0199239), with labelled contour lines drawn black
  on light colours and white on dark ones;
- anomalies use a diverging map (``RdBu_r``) whose sign is also told by the
  contour lines: solid above zero, dashed below, a thick zero line, and signed
  labels;
- lines on one axis differ by line style and marker, not by colour alone.

Months run January to December from left to right (one column per month,
wrapped at both ends so the contours continue across the year), latitudes
90° S to 90° N from bottom to top. Ages run from the past on the left to the
present on the right.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from bcgen.errors import BcgenError
from bcgen.insolation import insolation_at_true_longitude_wm2
from bcgen.labels import latitude_label
from bcgen.plot.sources import MonthLengths, MonthlyField, OrbitsThroughTime, SourceError
from bcgen.solar_calendar.calendars import MONTH_ABBREVIATIONS

#: Colormap of fields: lightness increases monotonically (readable in grey).
FIELD_CMAP = "cividis"
#: Colormap of anomalies: diverging, white at zero.
ANOMALY_CMAP = "RdBu_r"
#: Units of insolation, written as everywhere else in bcgen (UDUNITS text, as in the files).
WM2 = "W m-2"
#: Line styles and markers of successive lines on one axis.
LINE_STYLES = (("-", "o"), ("--", "s"), ("-.", "^"), (":", "D"))
#: Monthly means below this count as polar night in anomaly figures (W m-2).
_DARK_WM2 = 0.5
_SOLUTION_NAMES = {"berger1978": "Berger (1978)", "table": "a user table",
                   "fixed": "explicit values"}


class MissingExtraError(BcgenError, ImportError):
    """matplotlib, the optional extra ``bcgen[plot]``, is not installed."""


def require_matplotlib():
    """Import matplotlib and return :class:`matplotlib.figure.Figure`.

    Raises
    ------
    MissingExtraError
        One line telling the user to ``pip install 'bcgen[plot]'``.
    """
    try:
        import matplotlib  # noqa: F401
        from matplotlib.figure import Figure
    except ImportError:
        raise MissingExtraError(
            "figures need matplotlib, an optional extra: pip install 'bcgen[plot]'"
        ) from None
    return Figure


# --- shared axes -------------------------------------------------------------------------
def _months_cyclic(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Month positions 0.5, 1..12, 12.5 and values, closed across the turn of the year.

    Months are at 1..12; the edges at 0.5 and 12.5 take the mean of December and
    January (the linear interpolation between them), so the contours continue
    across the year and stay inside the axes.
    """
    x = np.concatenate([[0.5], np.arange(1.0, 13.0), [12.5]])
    turn = 0.5 * (values[:, :1] + values[:, -1:])
    return x, np.concatenate([turn, values, turn], axis=1)


def _month_axis(ax, xlabel: str) -> None:
    ax.set_xlim(0.5, 12.5)
    ax.set_xticks(np.arange(1, 13), MONTH_ABBREVIATIONS)
    ax.set_xlabel(xlabel)


def _to_the_poles(lat: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Extend a field on cell-centre latitudes to the poles, when its cells reach them.

    A built file holds values on cell centres (85°S to 85°N for 10° cells); the
    outermost cells end at the poles, so their values are drawn out to ±90° (the
    cell's value over the whole cell) and the axis keeps its 90°S and 90°N ticks.
    Latitudes that stop short of their cells' edges (a few chosen latitudes) are
    left as they are.
    """
    if lat.size < 2:
        return lat, z
    rows, values = [lat], [z]
    south_edge = lat[0] - 0.5 * (lat[1] - lat[0])
    if lat[0] > -90.0 and south_edge <= -90.0 + 1e-6:
        rows.insert(0, np.array([-90.0]))
        values.insert(0, z[:1])
    north_edge = lat[-1] + 0.5 * (lat[-1] - lat[-2])
    if lat[-1] < 90.0 and north_edge >= 90.0 - 1e-6:
        rows.append(np.array([90.0]))
        values.append(z[-1:])
    return np.concatenate(rows), np.concatenate(values, axis=0)


def _latitude_axis(ax, lat: np.ndarray) -> None:
    ax.set_ylim(lat.min(), lat.max())
    ticks = np.arange(-90, 91, 30)
    ticks = ticks[(ticks >= lat.min()) & (ticks <= lat.max())]
    ax.set_yticks(ticks, [latitude_label(t) for t in ticks])
    ax.set_ylabel("latitude (degrees north; south negative)")


def _nice_step(span: float, target: int) -> float:
    """Return a round contour interval (1, 2, 2.5 or 5 × 10^k) giving about ``target`` intervals."""
    if not np.isfinite(span) or span <= 0:
        return 1.0
    raw = span / target
    power = 10.0 ** np.floor(np.log10(raw))
    for mult in (1.0, 2.0, 2.5, 5.0, 10.0):
        if mult * power >= raw:
            return mult * power
    return 10.0 * power  # pragma: no cover


def _line_colours(cmap, norm, levels: np.ndarray) -> list[str]:
    """Black contour lines over light colours, white over dark ones (by luminance)."""
    rgba = cmap(norm(levels))
    luminance = rgba[:, :3] @ np.array([0.2126, 0.7152, 0.0722])
    return ["white" if y < 0.4 else "black" for y in luminance]


def _title(ax, headline: str, *details: str) -> None:
    """Set a headline and detail lines, wrapped to the figure's width between "; " parts."""
    width = max(60, int(ax.figure.get_figwidth() * 12.5))
    lines = [headline]
    for detail in filter(None, details):
        line = ""
        for part in detail.split("; "):
            if line and len(line) + 2 + len(part) > width:
                lines.append(line + ";")
                line = part
            else:
                line = f"{line}; {part}" if line else part
        lines.append(line)
    ax.set_title("\n".join(lines), fontsize=9.5)


def _signed(value: float, spec: str = "g") -> str:
    """Format a label with an explicit sign (a true minus sign, U+2212, reads better)."""
    if value == 0:
        return format(0.0, spec)
    return format(value, "+" + spec).replace("-", "\u2212")


#: Screen angles (degrees) of contour labels: a label turned by less than this past the
#: vertical is flipped to read upwards, as the latitude axis label does.
_UPRIGHT_MIN_DEG = -80.0
#: Margin (points) kept between a contour label and the frame of the axes.
_LABEL_MARGIN_PT = 4.0


def _label_contours(ax, lines, fmt, *, boxed: bool = False, fontsize: float = 8,
                    inline_spacing: float = 3) -> list:
    """Label contour lines where the labels read upright and lie wholly inside the frame.

    matplotlib places labels in screen space when ``clabel`` is called, so the
    figure's layout is settled first (a later resize would move and turn them).
    Each connected piece of a contour line gets one label at its point farthest
    from the frame; a piece with no point far enough from the frame for the label
    is left unlabelled rather than clipped. A label within 10° of pointing down the
    page (it would read upside down next to the latitude axis) is turned by 180°.

    Returns
    -------
    list of matplotlib.text.Text
        The labels.
    """
    fig = ax.figure
    fig.draw_without_rendering()  # run the layout engine: axes reach their final place
    fig.set_layout_engine("none")
    frame = ax.get_window_extent()
    to_screen = ax.transData.transform
    half = 0.5 * fontsize * fig.dpi / 72.0
    positions = []
    for level, path in zip(lines.levels, lines.get_paths(), strict=False):
        text = fmt(level) if callable(fmt) else (fmt % level if "%" in fmt else fmt)
        reach = half * (0.65 * len(text) + 1.0) + _LABEL_MARGIN_PT * fig.dpi / 72.0
        for piece in path.to_polygons(closed_only=False):
            if len(piece) < 2:
                continue
            xy = to_screen(piece)
            room = np.minimum.reduce([xy[:, 0] - frame.x0, frame.x1 - xy[:, 0],
                                      xy[:, 1] - frame.y0, frame.y1 - xy[:, 1]])
            best = int(np.argmax(room))
            if room[best] >= reach:
                positions.append(tuple(piece[best]))
    if not positions:
        return []
    labels = ax.clabel(lines, fmt=fmt, fontsize=fontsize, inline=True,
                       inline_spacing=inline_spacing, manual=positions)
    for label in labels:
        angle = (label.get_rotation() + 180.0) % 360.0 - 180.0  # (-180, 180]
        if angle < _UPRIGHT_MIN_DEG:
            label.set_rotation(angle + 180.0)
    if boxed:
        _boxed(labels)
    return labels


def _boxed(labels) -> None:
    """Put contour labels on a small white box so that their sign reads in any colour."""
    for text in labels:
        text.set_color("black")
        text.set_bbox({"boxstyle": "round,pad=0.12", "facecolor": "white", "alpha": 0.8,
                       "edgecolor": "none"})


def _month_words(field: MonthlyField) -> str:
    if field.months == "fixed_day":
        return f"month (fixed-day: the {field.settings.calendar.name} calendar's months)"
    return (f"month (fixed-angle: arcs of true longitude of the "
            f"{field.settings.reference_epoch} calendar months)")


# --- 1. insolation by latitude and month --------------------------------------------------
def insolation_figure(field: MonthlyField):
    """Contour-filled monthly-mean TOA insolation by latitude and month, labelled in W m-2.

    Parameters
    ----------
    field : MonthlyField
        From :func:`bcgen.plot.sources.monthly_field`.

    Returns
    -------
    matplotlib.figure.Figure
    """
    Figure = require_matplotlib()
    from matplotlib import colormaps
    from matplotlib.colors import BoundaryNorm

    lat, values = _to_the_poles(field.latitude_deg, field.insolation_wm2)
    x, z = _months_cyclic(values)
    step = 25.0
    top = step * np.ceil(max(z.max(), step) / step)
    levels = np.arange(0.0, top + step / 2, step)
    cmap = colormaps[FIELD_CMAP]
    norm = BoundaryNorm(levels, cmap.N)
    fig = Figure(figsize=(8.0, 5.6), layout="constrained")
    ax = fig.add_subplot()
    filled = ax.contourf(x, lat, z, levels=levels, cmap=cmap, norm=norm)
    # Every 100 W m-2 from 100 on: the 0 line would trace the edge of the polar night, which
    # is flat (exactly 0) and so ragged at the resolution of the latitudes.
    line_levels = levels[4::4]
    lines = ax.contour(x, lat, z, levels=line_levels,
                       colors=_line_colours(cmap, norm, line_levels), linewidths=0.8)
    bar = fig.colorbar(filled, ax=ax, ticks=levels[::4])
    bar.set_label(f"TOA insolation ({WM2}); contours every 100 {WM2}")
    _month_axis(ax, _month_words(field))
    _latitude_axis(ax, lat)
    _title(ax, f"Monthly-mean TOA insolation, {field.label}", field.conventions)
    _label_contours(ax, lines, "%d")
    return fig


# --- 2. anomaly against a reference --------------------------------------------------------
def anomaly_figure(field: MonthlyField, reference: MonthlyField):
    """Insolation anomaly (field − reference) by latitude and month, with the zero line.

    Parameters
    ----------
    field, reference : MonthlyField
        On the same latitudes and with the same month definition.

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    SourceError
        When the two fields have different latitudes or month definitions.
    """
    Figure = require_matplotlib()
    from matplotlib import colormaps
    from matplotlib.colors import BoundaryNorm

    if field.months != reference.months:
        raise SourceError(f"cannot subtract {reference.label} ({reference.month_text}) from "
                          f"{field.label} ({field.month_text}): give the same month definition")
    lat = field.latitude_deg
    if reference.latitude_deg.shape != lat.shape or not np.allclose(reference.latitude_deg, lat):
        raise SourceError(f"cannot subtract {reference.label} from {field.label}: their "
                          f"latitudes differ ({reference.latitude_deg.size} vs {lat.size} "
                          "points); give sources on the same grid")
    diff = field.insolation_wm2 - reference.insolation_wm2
    _, sunlit_values = _to_the_poles(lat, np.maximum(field.insolation_wm2,
                                                     reference.insolation_wm2))
    lat, diff_values = _to_the_poles(lat, diff)
    x, z = _months_cyclic(diff_values)
    # Where both fields are in polar night the anomaly is exactly 0 over a flat patch, whose
    # ragged edge is no sign change: lines are not drawn there and the patch is hatched,
    # bounded by a contour of the larger of the two insolations (smooth, unlike a mask).
    _, sunlit = _months_cyclic(sunlit_values)
    dark = sunlit < _DARK_WM2
    z_lines = np.ma.masked_where(dark, z)
    biggest = float(np.max(np.abs(diff)))
    step = _nice_step(2.0 * biggest, 14)
    top = step * max(1.0, np.ceil(biggest / step - 1e-9))
    levels = np.arange(-top, top + step / 2, step)
    cmap = colormaps[ANOMALY_CMAP]
    norm = BoundaryNorm(levels, cmap.N)
    fig = Figure(figsize=(8.0, 5.6), layout="constrained")
    ax = fig.add_subplot()
    filled = ax.contourf(x, lat, z, levels=levels, cmap=cmap, norm=norm)
    nonzero = levels[np.abs(levels) > step / 2][:: 1 if levels.size <= 15 else 2]
    labelled = []
    if nonzero.size:
        lines = ax.contour(x, lat, z_lines, levels=nonzero, linewidths=0.7,
                           colors=_line_colours(cmap, norm, nonzero),
                           linestyles=["--" if v < 0 else "-" for v in nonzero])
        labelled.append((lines, _signed, 2))
    if z_lines.min() < 0 < z_lines.max():
        zero = ax.contour(x, lat, z_lines, levels=[0.0], colors="black", linewidths=2.2)
        labelled.append((zero, "0", 5))
    if dark.any():
        ax.contourf(x, lat, sunlit, levels=[-1.0, _DARK_WM2], colors="none", hatches=["////"])
    bar = fig.colorbar(filled, ax=ax, ticks=levels[:: max(1, levels.size // 8)])
    bar.set_label(f"insolation anomaly ({WM2}); contours every "
                  f"{step * (1 if levels.size <= 15 else 2):g} {WM2}")
    _month_axis(ax, _month_words(field))
    _latitude_axis(ax, lat)
    same = reference.conventions == field.conventions
    _title(ax, f"TOA insolation anomaly, {field.label} minus {reference.label}",
           field.conventions, "" if same else f"reference: {reference.conventions}",
           "contours: solid positive, dashed negative, thick zero"
           + ("; hatched: polar night in both" if dark.any() else ""))
    for lines, fmt, spacing in labelled:
        _label_contours(ax, lines, fmt, boxed=True, inline_spacing=spacing)
    return fig


# --- 3. month lengths -------------------------------------------------------------------
def month_lengths_figure(lengths: MonthLengths):
    """Fixed-day against fixed-angle month lengths (days) and their difference.

    Parameters
    ----------
    lengths : MonthLengths
        From :func:`bcgen.plot.sources.month_lengths`.

    Returns
    -------
    matplotlib.figure.Figure
    """
    Figure = require_matplotlib()
    from matplotlib import colormaps

    x = np.arange(1, 13)
    fixed_day = np.asarray(lengths.fixed_day_days, dtype=float)
    fixed_angle = np.asarray(lengths.fixed_angle_days, dtype=float)
    dark = colormaps[FIELD_CMAP](0.15)
    fig = Figure(figsize=(8.0, 6.2), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 2))
    top.plot(x, fixed_day, drawstyle="steps-mid", linestyle="--", color="0.4", linewidth=1.5,
             marker="s", markersize=6, markerfacecolor="white", markeredgecolor="0.3",
             label=f"fixed-day ({lengths.settings.calendar.name} calendar months)")
    top.plot(x, fixed_angle, drawstyle="steps-mid", linestyle="-", color=dark, linewidth=1.8,
             marker="o", markersize=6, label="fixed-angle (celestial) months")
    span = max(np.ptp(np.concatenate([fixed_day, fixed_angle])), 1.0)
    low = np.floor(min(fixed_day.min(), fixed_angle.min()) - 0.25 * span)
    high = np.ceil(max(fixed_day.max(), fixed_angle.max()) + 0.25 * span)
    top.set_ylim(low, high)
    top.set_ylabel("month length (days)")
    top.legend(loc="best", fontsize=8, frameon=True)
    top.grid(axis="y", color="0.85", linewidth=0.6)

    diff = fixed_angle - fixed_day
    bars = bottom.bar(x, diff, width=0.6, color="0.6", edgecolor="black", linewidth=0.6)
    bottom.axhline(0.0, color="black", linewidth=1.0)
    bottom.bar_label(bars, labels=[_signed(round(d, 2), ".2f") for d in diff], fontsize=7,
                     padding=2)
    limit = max(np.max(np.abs(diff)), 0.05) * 1.35
    bottom.set_ylim(-limit, limit)
    bottom.set_ylabel("fixed-angle minus\nfixed-day (days)")
    bottom.grid(axis="y", color="0.85", linewidth=0.6)
    bottom.set_xticks(x, MONTH_ABBREVIATIONS)
    bottom.set_xlabel("month")
    s = lengths.settings
    _title(top, f"Month lengths, {lengths.label}: fixed-day and fixed-angle months",
           f"calendar {s.calendar_text}; fixed-angle months span the arcs of true longitude "
           f"of the {s.reference_epoch} orbit's calendar months")
    return fig


# --- 4. orbit through time -----------------------------------------------------------------
#: The solstices by the true longitude of the Sun (0 at the March equinox).
_SOLSTICES = {90.0: "June solstice", 270.0: "December solstice"}


def summer_solstice_true_longitude_deg(lat_deg: float) -> float:
    """Return the true longitude of the local summer solstice: 90° (June) north, else 270°.

    The Equator takes the June solstice, as the northern hemisphere does.
    """
    return 270.0 if lat_deg < 0 else 90.0


def solstice_words(true_longitude_deg: float) -> str:
    """``June solstice (λ = 90°)``, ``December solstice (λ = 270°)`` or ``λ = 120°``."""
    lam = float(true_longitude_deg) % 360.0
    name = _SOLSTICES.get(lam)
    return f"{name} (λ = {lam:g}°)" if name else f"λ = {lam:g}°"


def orbit_figure(series: OrbitsThroughTime, latitudes_deg: Sequence[float] | None = (65.0,),
                 true_longitude_deg: float | None = None):
    """Eccentricity, obliquity, precession index (and summer-solstice insolation) through time.

    Stacked panels with a shared axis of age in ka BP (thousands of years before
    1950 CE), the past on the left and the present on the right.

    Parameters
    ----------
    series : OrbitsThroughTime
        From :func:`bcgen.plot.sources.orbit_series`.
    latitudes_deg : sequence of float or None
        Latitudes of a fourth panel: daily-mean insolation when the Sun is at
        a given true longitude, calendar-free (Berger 1978); None or empty
        leaves the panel out.
    true_longitude_deg : float, optional
        The Sun's true longitude of that panel, degrees from the March equinox.
        By default each latitude's own summer solstice: 90° (June) in the
        north, 270° (December) in the south. The legend names it.

    Returns
    -------
    matplotlib.figure.Figure
    """
    Figure = require_matplotlib()
    from matplotlib import colormaps

    orbit = series.orbit
    age = series.ages_ka
    lats = list(latitudes_deg or ())
    n = 3 + (1 if lats else 0)
    dark = colormaps[FIELD_CMAP](0.15)
    fig = Figure(figsize=(8.0, 2.0 + 1.9 * n), layout="constrained")
    axes = fig.subplots(n, 1, sharex=True)
    panels = [
        (orbit.eccentricity, "eccentricity e\n(dimensionless)", "-"),
        (orbit.obliquity_deg, "obliquity ε\n(degrees)", "--"),
        (orbit.precession_index, "precession index\ne sin ϖ (dimensionless)", "-."),
    ]
    for ax, (values, label, style) in zip(axes, panels, strict=False):
        ax.plot(age, values, linestyle=style, color=dark, linewidth=1.0)
        ax.set_ylabel(label, fontsize=9)
        ax.grid(color="0.88", linewidth=0.6)
    axes[2].axhline(0.0, color="0.4", linewidth=0.6)
    axes[2].annotate("low: perihelion near the June solstice", xy=(0.01, 0.04),
                     xycoords="axes fraction", fontsize=7, color="0.25")
    if lats:
        ax = axes[3]
        lat_arr = np.asarray(lats, dtype=float)
        if true_longitude_deg is None:
            lam = np.array([summer_solstice_true_longitude_deg(v) for v in lats])
        else:
            lam = np.full(lat_arr.shape, float(true_longitude_deg))
        q = insolation_at_true_longitude_wm2(orbit, lat_arr, lam, series.solar_constant_wm2)
        every = max(1, age.size // 25)
        for k, lat in enumerate(lats):
            style, marker = LINE_STYLES[k % len(LINE_STYLES)]
            ax.plot(age, q[:, k], linestyle=style, marker=marker if len(lats) > 1 else None,
                    markevery=every, markersize=4, color="black" if k else dark,
                    linewidth=1.0, label=f"{latitude_label(lat)}, {solstice_words(lam[k])}")
        ax.set_ylabel(f"daily-mean insolation\n({WM2})", fontsize=9)
        ax.legend(fontsize=8, loc="upper left")
        ax.grid(color="0.88", linewidth=0.6)
    last = axes[-1]
    last.set_xlim(age.max(), age.min())  # the past on the left, the present on the right
    last.set_xlabel("age (ka BP: thousands of years before 1950 CE); past on the left, "
                    "present on the right")
    solution = _SOLUTION_NAMES.get(orbit.solution, orbit.solution)
    if not lats:
        extra = ""
    elif true_longitude_deg is None:
        extra = (f"; insolation: daily mean at each hemisphere's summer solstice, S0 = "
                 f"{series.solar_constant_wm2:.10g} {WM2}")
    else:
        extra = (f"; insolation: daily mean at {solstice_words(true_longitude_deg)}, S0 = "
                 f"{series.solar_constant_wm2:.10g} {WM2}")
    _title(axes[0], f"Earth's orbit, {series.label}",
           f"orbit from {solution}; ϖ: heliocentric longitude of perihelion from the moving "
           f"March equinox{extra}")
    return fig
