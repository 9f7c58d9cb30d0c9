"""The data behind the figures, from an epoch, a range of epochs, a spec or a built file.

A *source* is written on the command line as one string:

=========================  ========================================================
source                     what it gives
=========================  ========================================================
``6ka``, ``1850CE``        an epoch: Berger (1978) orbit, ``noleap`` calendar with the
                           March equinox at 21 March 12:00 (the PMIP protocols),
                           S0 = 1360.747 W m-2 (CMIP6 piControl), unless stated
``800ka..0ka/1ka``         a range of epochs (orbit figures)
``SPEC.yaml``              an experiment spec: its orbit, calendar and anchor, solar
                           constant, reference epoch of fixed-angle months and daily
                           method (a transient spec gives the orbit of each model year)
``FILE.nc``                a file written by ``bcgen build``: the ``insolation``
                           variable on its climatological time axis (12 months)
=========================  ========================================================

Fields computed from an epoch or a spec are evaluated on 1° latitudes from
90° S to 90° N unless latitudes are given; a file keeps its own latitudes
(averaged over longitude, since daily and monthly means do not depend on it).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Literal

import numpy as np

from bcgen.cf.reader import bounds_variable, find_coordinates, time_unit_days
from bcgen.epochs import count_epochs, epoch_labels, parse_epoch, parse_epochs
from bcgen.errors import BcgenError, EpochError, InputFileError
from bcgen.insolation import CMIP6_PICONTROL_SOLAR_CONSTANT_WM2, monthly_insolation
from bcgen.orbit import OrbitalElements, solve
from bcgen.solar_calendar.calendars import (
    ModelCalendar,
    anchor_from_words,
    canonical_calendar,
)
from bcgen.spec.schema import DEFAULT_REFERENCE_EPOCH  # also when no spec names one

SourceKind = Literal["epoch", "range", "spec", "file"]
Months = Literal["fixed_day", "fixed_angle"]

#: Latitudes of fields computed from an epoch or a spec when none are given, degrees north.
DEFAULT_LATITUDES_DEG = np.linspace(-90.0, 90.0, 181)

SPEC_SUFFIXES = (".yaml", ".yml")
FILE_SUFFIXES = (".nc", ".nc4", ".netcdf")
_MONTH_WORDS = {"fixed_day": "fixed-day months", "fixed_angle": "fixed-angle months"}


class SourceError(BcgenError, ValueError):
    """A source that cannot give the data a figure needs."""


# --- what a source is --------------------------------------------------------------------
def source_kind(source: str) -> SourceKind:
    """Classify a source string: a spec, a built file, a range of epochs or one epoch.

    Raises
    ------
    SourceError
        When the string is none of these (the message lists the accepted forms).
    """
    text = str(source)
    suffix = Path(text).suffix.lower()
    if suffix in SPEC_SUFFIXES:
        return "spec"
    if suffix in FILE_SUFFIXES:
        return "file"
    try:
        count_epochs(text)  # checks the text without making the epochs
    except EpochError:
        raise SourceError(
            f"source {text!r} is not an epoch (6ka, 1850CE), a range (800ka..0ka/1ka), a spec "
            f"({' or '.join(SPEC_SUFFIXES)}) or a built file ({', '.join(FILE_SUFFIXES)})"
        ) from None
    return "range" if ".." in text else "epoch"


# --- how a field was computed ------------------------------------------------------------
@dataclass(frozen=True)
class Settings:
    """The conventions a field was computed with (to compute a reference the same way).

    Attributes
    ----------
    calendar : ModelCalendar
        Calendar with its anchor.
    solar_constant_wm2 : float
        S0, W m-2.
    reference_epoch : str
        Epoch of the reference orbit of fixed-angle months.
    daily_method : {"midday", "day_average"}
        Daily values averaged into fixed-day months.
    year : int
        Model year.
    assumed : bool
        True when the values were not stated by the source (a file without its spec).
    """

    calendar: ModelCalendar = field(default_factory=ModelCalendar)
    solar_constant_wm2: float = CMIP6_PICONTROL_SOLAR_CONSTANT_WM2
    reference_epoch: str = DEFAULT_REFERENCE_EPOCH
    daily_method: str = "midday"
    year: int = 1
    assumed: bool = False

    @property
    def calendar_text(self) -> str:
        """E.g. ``noleap, March equinox 03-21 12:00``."""
        a = self.calendar.anchor
        what = "March equinox" if a.kind == "march_equinox" else "perihelion"
        return f"{self.calendar.name}, {what} {a.label}"


def _settings_from_experiment(experiment) -> Settings:
    return Settings(
        calendar=experiment.calendar,
        solar_constant_wm2=experiment.solar_constant_wm2,
        reference_epoch=experiment.spec.insolation.reference_epoch,
        daily_method=experiment.daily_method,
        year=experiment.year,
    )


def _epoch_settings(calendar: str | None) -> Settings:
    if calendar is None:
        return Settings()
    return Settings(calendar=ModelCalendar(canonical_calendar(calendar, source="--calendar")))


def _load_spec(path: str):
    from bcgen.spec import load_spec

    return load_spec(path)


def _experiment(spec):
    """Resolve the spec once (:class:`bcgen.experiment.Experiment`)."""
    from bcgen.experiment import Experiment

    return Experiment(spec)


_KIND_WORDS = {"epoch": "one epoch", "range": "a range of epochs", "spec": "a spec",
               "file": "a built file"}
_OPTION_SOURCES = {"--lat": ("epochs and specs", "latitudes"),
                   "--calendar": ("epochs", "calendar")}


def _refuse_option(option: str, value, kind: SourceKind, source: str) -> None:
    if value is not None:
        applies, what = _OPTION_SOURCES[option]
        raise SourceError(f"{option} applies to {applies}; {source} is {_KIND_WORDS[kind]} "
                          f"with its own {what}")


# --- monthly fields ----------------------------------------------------------------------
@dataclass(frozen=True)
class MonthlyField:
    """Monthly-mean TOA insolation by latitude and month, with what it holds.

    Attributes
    ----------
    insolation_wm2 : numpy.ndarray
        W m-2, shape (n_lat, 12), months January to December.
    latitude_deg : numpy.ndarray
        Latitudes, degrees north, increasing.
    months : {"fixed_day", "fixed_angle"}
        Month definition.
    label : str
        The epoch or experiment, e.g. ``6ka`` or ``midHolocene (6ka)``.
    settings : Settings
        Calendar, solar constant, reference epoch and daily method used.
    origin : str
        Where the numbers come from (``Berger 1978`` or a file name).
    """

    insolation_wm2: np.ndarray
    latitude_deg: np.ndarray
    months: Months
    label: str
    settings: Settings
    origin: str

    def __post_init__(self) -> None:
        values = np.asarray(self.insolation_wm2, dtype=float)
        lat = np.asarray(self.latitude_deg, dtype=float)
        if values.shape != (lat.size, 12):
            raise SourceError(
                f"{self.label}: insolation of shape {values.shape} does not match "
                f"{lat.size} latitudes x 12 months"
            )
        if lat.size < 2 or np.any(np.diff(lat) <= 0):
            raise SourceError(f"{self.label}: a field needs at least 2 increasing latitudes")
        object.__setattr__(self, "insolation_wm2", values)
        object.__setattr__(self, "latitude_deg", lat)

    @property
    def month_text(self) -> str:
        """E.g. ``fixed-angle months (1950CE arcs)``."""
        words = _MONTH_WORDS[self.months]
        if self.months == "fixed_angle":
            words += f" (arcs of the {self.settings.reference_epoch} calendar months)"
        return words

    @property
    def conventions(self) -> str:
        """One line for a figure title: months, calendar, S0."""
        s = self.settings
        assumed = ", assumed" if s.assumed else ""
        return (
            f"{self.month_text}; {s.calendar_text}; "
            f"S0 = {s.solar_constant_wm2:.10g} W m-2{assumed}"
        )


def monthly_field(
    source: str,
    months: Months | None = None,
    latitude_deg=None,
    calendar: str | None = None,
    like: MonthlyField | None = None,
) -> MonthlyField:
    """Monthly-mean insolation by latitude and month from a source.

    Parameters
    ----------
    source : str
        An epoch, a time-slice spec (``.yaml``) or a built monthly file (``.nc``).
    months : {"fixed_day", "fixed_angle"}, optional
        Month definition (default: fixed-day; a file holds its own and
        refuses a different one).
    latitude_deg : array_like, optional
        Latitudes of a computed field (default every 1°; refused for a file).
    calendar : str, optional
        CF calendar of an epoch source (default ``noleap``).
    like : MonthlyField, optional
        A field to match (used for a reference experiment): an epoch is then
        computed with its calendar, solar constant, reference epoch, daily
        method, latitudes and months.

    Raises
    ------
    SourceError, EpochError, SpecError, InputFileError
        One line naming the source and what is expected.
    """
    kind = source_kind(source)
    if kind == "range":
        raise SourceError(
            f"source {source!r} is a range of epochs; insolation figures need one epoch, a "
            "time-slice spec or a built file (ranges are for the orbit figure)"
        )
    if like is not None and months is None:
        months = like.months
    if kind == "file":
        _refuse_option("--lat", latitude_deg, kind, source)
        _refuse_option("--calendar", calendar, kind, source)
        result = _field_from_file(Path(source))
        if months is not None and months != result.months:
            raise SourceError(
                f"{source} holds {_MONTH_WORDS[result.months]}, not "
                f"{_MONTH_WORDS[months]}; give the file built with the other month definition"
            )
        return result
    months = months or "fixed_day"
    if latitude_deg is None:
        latitude_deg = like.latitude_deg if like is not None else DEFAULT_LATITUDES_DEG
    lat = np.sort(np.unique(np.asarray(latitude_deg, dtype=float)))
    if kind == "spec":
        _refuse_option("--calendar", calendar, kind, source)
        spec = _load_spec(source)
        if spec.is_transient:
            raise SourceError(
                f"{source} is a transient spec; insolation figures need a time slice "
                "('epoch:'), an epoch or a built file"
            )
        experiment = _experiment(spec)
        settings = _settings_from_experiment(experiment)
        orbit = experiment.orbit
        label = f"{spec.experiment.name} ({spec.epoch})"
    else:
        if like is not None and calendar is None:
            settings = like.settings
        else:
            settings = _epoch_settings(calendar)
        orbit = solve(parse_epoch(source))
        label = source
    return compute_field(orbit, settings, months, lat, label)


def field_pair(
    source: str,
    reference: str,
    months: Months | None = None,
    latitude_deg=None,
    calendar: str | None = None,
) -> tuple[MonthlyField, MonthlyField]:
    """Load a field and the reference experiment it is compared with, made comparable.

    A built file fixes the latitudes, months and (through the spec it carries)
    the conventions; an epoch on the other side is computed to match it. With
    two epochs or specs, the reference epoch takes the source's conventions.

    Returns
    -------
    (MonthlyField, MonthlyField)
        The source's field and the reference's.
    """
    if source_kind(reference) == "file" and source_kind(source) != "file":
        ref = monthly_field(reference, months)
        _refuse_option("--lat", latitude_deg, "file", reference)
        return monthly_field(source, calendar=calendar, like=ref), ref
    field = monthly_field(source, months, latitude_deg, calendar)
    return field, monthly_field(reference, like=field)


def compute_field(
    orbit: OrbitalElements, settings: Settings, months: Months, latitude_deg, label: str
) -> MonthlyField:
    """Monthly insolation of one orbit with the given conventions (see :func:`monthly_field`)."""
    reference = solve(parse_epoch(settings.reference_epoch))
    result = monthly_insolation(
        orbit,
        settings.calendar,
        latitude_deg,
        settings.solar_constant_wm2,
        months=months,
        reference=reference,
        year=settings.year,
        daily_method=settings.daily_method,
    )
    origin = "Berger (1978)" if orbit.solution == "berger1978" else f"{orbit.solution} orbit"
    return MonthlyField(
        result.insolation_wm2, result.latitude_deg, months, label, settings, origin
    )


# --- built files -------------------------------------------------------------------------


@dataclass(frozen=True)
class BuiltFile:
    """The monthly insolation of a file written by ``bcgen build``, as read."""

    path: Path
    insolation_wm2: np.ndarray  # (n_lat, 12)
    latitude_deg: np.ndarray
    bounds_days: np.ndarray  # (12, 2), days in the file's time units' reference
    months: Months
    label: str
    settings: Settings


def read_built_file(path: Path) -> BuiltFile:
    """Read the ``insolation`` variable, its latitudes and month bounds from a built file.

    Raises
    ------
    InputFileError
        A missing or unreadable file, no ``insolation`` variable, no latitude,
        a time axis without 12 months or without bounds.
    """
    import xarray as xr

    path = Path(path)
    if not path.is_file():
        raise InputFileError(f"{path}: no such file")
    try:
        ds = xr.open_dataset(path, decode_times=False, engine="netcdf4")
    except (OSError, ValueError, RuntimeError) as exc:
        raise InputFileError(f"{path}: cannot open as NetCDF ({' '.join(str(exc).split())})") \
            from None
    with ds:
        if "insolation" not in ds.variables:
            raise InputFileError(
                f"{path}: no variable 'insolation'; expected a monthly insolation file written "
                "by 'bcgen build' (product monthly_insolation_fixed_day or _fixed_angle)"
            )
        da = ds["insolation"]
        time_dim = next((d for d in da.dims if d == "time" or (
            d in ds.variables and ds[d].attrs.get("axis") == "T")), None)
        if time_dim is None:
            raise InputFileError(f"{path}: 'insolation' has no time axis")
        if da.sizes[time_dim] != 12:
            raise InputFileError(
                f"{path}: 'insolation' has {da.sizes[time_dim]} time steps; figures need the "
                "12 monthly means of a monthly_insolation_* file"
            )
        bounds = _time_bounds_days(ds, time_dim, path)
        lat = _latitude(ds, da, time_dim, path)
        values = np.moveaxis(np.asarray(da.values, dtype=float), da.dims.index(time_dim), -1)
        flat_lat = lat.reshape(-1)
        flat = values.reshape(-1, 12)
        # Daily and monthly means do not depend on longitude: average the points of each
        # latitude (a zonal, regular or curvilinear grid alike).
        unique, inverse = np.unique(np.round(flat_lat, 9), return_inverse=True)
        sums = np.zeros((unique.size, 12))
        np.add.at(sums, inverse, flat)
        field_values = sums / np.bincount(inverse, minlength=unique.size)[:, None]
        definition = da.attrs.get("month_definition")
        if definition not in _MONTH_WORDS:
            raise InputFileError(
                f"{path}: 'insolation' has no month_definition attribute (fixed_day or "
                "fixed_angle); expected a monthly file written by 'bcgen build'"
            )
        settings = _settings_from_file(ds, path)
        if definition == "fixed_angle" and "reference_orbit_epoch" in da.attrs:
            settings = replace(settings, reference_epoch=str(da.attrs["reference_orbit_epoch"]))
        experiment = ds.attrs.get("experiment")
        epoch = ds.attrs.get("epoch")
        label = (f"{experiment} ({epoch})" if experiment and epoch
                 else str(epoch or experiment or path.name))
    return BuiltFile(path, field_values, unique, bounds, definition, label, settings)


def _field_from_file(path: Path) -> MonthlyField:
    f = read_built_file(path)
    return MonthlyField(f.insolation_wm2, f.latitude_deg, f.months, f.label, f.settings,
                        f.path.name)


def _time_bounds_days(ds, time_dim: str, path: Path) -> np.ndarray:
    time = ds[time_dim]
    name = bounds_variable(time)
    if not name or name not in ds.variables:
        raise InputFileError(
            f"{path}: time axis '{time_dim}' has no 'climatology' or 'bounds' variable; "
            "expected month bounds (CF sections 7.1, 7.4)"
        )
    scale = time_unit_days(time.attrs.get("units"), str(path))
    bounds = np.asarray(ds[name].values, dtype=float) * scale
    if bounds.shape != (12, 2) or np.any(bounds[:, 1] <= bounds[:, 0]):
        raise InputFileError(f"{path}: {name} must hold 12 increasing (start, end) pairs")
    return bounds  # only the lengths are used, so the units' reference date does not matter


def _latitude(ds, da, time_dim: str, path: Path) -> np.ndarray:
    """Latitude of every point of ``da`` without its time axis (dims in ``da``'s order)."""
    names = [n for n in find_coordinates(ds, "latitude", da.dims) if n != "insolation"]
    if not names:
        raise InputFileError(f"{path}: no latitude coordinate for 'insolation' (standard_name "
                             "latitude or units degrees_north)")
    one_time = da.isel({time_dim: 0}, drop=True)
    lat = ds[names[0]].broadcast_like(one_time).transpose(*one_time.dims)
    return np.asarray(lat.values, dtype=float)


def _settings_from_file(ds, path: Path) -> Settings:
    """Read the conventions of a built file: from the spec it carries, else its attributes."""
    text = ds.attrs.get("bcgen_spec")
    if text:
        from bcgen.spec import parse_spec_text

        try:
            return _settings_from_experiment(
                _experiment(parse_spec_text(str(text), f"{path.name}:bcgen_spec")))
        except BcgenError:
            pass  # e.g. a grid or table file the spec names is not here: use the attributes
    time = ds["time"] if "time" in ds.variables else None
    name = str(time.attrs.get("calendar", "standard")) if time is not None else "noleap"
    calendar = ModelCalendar(canonical_calendar(name, source=f"{path}: time calendar"))
    anchor = anchor_from_words(str(ds.attrs.get("calendar_anchor", "")))
    if anchor is not None:
        calendar = ModelCalendar(calendar.name, anchor)
    return Settings(calendar=calendar, assumed=True)


# --- month lengths -----------------------------------------------------------------------
@dataclass(frozen=True)
class MonthLengths:
    """Fixed-day and fixed-angle month lengths of one model year.

    Attributes
    ----------
    fixed_day_days, fixed_angle_days : numpy.ndarray
        Lengths of the 12 months, days.
    label : str
        Epoch or experiment.
    settings : Settings
        Calendar (named in the figure) and the reference epoch of the fixed-angle months.
    origin : str
        Where the numbers come from.
    """

    fixed_day_days: np.ndarray
    fixed_angle_days: np.ndarray
    label: str
    settings: Settings
    origin: str


def month_lengths(source: str, reference: str | None = None,
                  calendar: str | None = None) -> MonthLengths:
    """Fixed-day and fixed-angle month lengths from an epoch, a spec or a fixed-angle file.

    Parameters
    ----------
    source : str
        An epoch, a time-slice spec or a built ``monthly_insolation_fixed_angle`` file.
    reference : str, optional
        Epoch of the reference orbit of the fixed-angle months (default: the
        spec's ``insolation.reference_epoch`` or 1950CE; refused for a file,
        whose months are already made).
    calendar : str, optional
        CF calendar of an epoch source (default ``noleap``).
    """
    from bcgen.solar_calendar.months import fixed_angle_months

    kind = source_kind(source)
    if reference is not None:
        try:
            parse_epoch(reference)
        except EpochError as exc:
            raise SourceError(f"--reference: the reference orbit of fixed-angle months must be "
                              f"an epoch: {exc}") from None
    if kind == "range":
        raise SourceError(f"source {source!r} is a range; month lengths need one epoch, a "
                          "time-slice spec or a built fixed-angle file")
    if kind == "file":
        _refuse_option("--calendar", calendar, kind, source)
        if reference is not None:
            raise SourceError(f"--reference: {source} already holds fixed-angle months made "
                              "with its own reference orbit")
        f = read_built_file(Path(source))
        if f.months != "fixed_angle":
            raise SourceError(
                f"{source} holds fixed-day months; month lengths need the fixed-angle file "
                "(monthly_insolation_fixed_angle), the spec or an epoch"
            )
        fixed_day = f.settings.calendar.month_lengths_days(f.settings.year)
        return MonthLengths(np.asarray(fixed_day, float), np.diff(f.bounds_days, axis=1)[:, 0],
                            f.label, f.settings, f.path.name)
    if kind == "spec":
        _refuse_option("--calendar", calendar, kind, source)
        spec = _load_spec(source)
        if spec.is_transient:
            raise SourceError(f"{source} is a transient spec; month lengths need a time slice")
        experiment = _experiment(spec)
        settings = _settings_from_experiment(experiment)
        orbit = experiment.orbit
        label = f"{spec.experiment.name} ({spec.epoch})"
    else:
        settings = _epoch_settings(calendar)
        orbit = solve(parse_epoch(source))
        label = source
    if reference is not None:
        settings = replace(settings, reference_epoch=reference)
    table = fixed_angle_months(orbit, settings.calendar,
                               reference=solve(parse_epoch(settings.reference_epoch)),
                               year=settings.year)
    return MonthLengths(np.asarray(table.fixed_day_length_days, float),
                        np.asarray(table.length_days, float), label, settings, "Berger (1978)")


# --- orbit through time ------------------------------------------------------------------
@dataclass(frozen=True)
class OrbitsThroughTime:
    """Orbital elements at a series of epochs.

    Attributes
    ----------
    orbit : OrbitalElements
        One element set per epoch, with ``years_from_1950``.
    label : str
        The range or experiment, e.g. ``800ka to 0ka every 1ka``.
    solar_constant_wm2 : float
        S0 for the insolation panel, W m-2.
    """

    orbit: OrbitalElements
    label: str
    solar_constant_wm2: float = CMIP6_PICONTROL_SOLAR_CONSTANT_WM2

    def __post_init__(self) -> None:
        if self.orbit.years_from_1950 is None or self.orbit.shape[:1] == () \
                or self.orbit.eccentricity.size < 2:
            raise SourceError(f"{self.label}: an orbit series needs at least 2 dated epochs")

    @property
    def ages_ka(self) -> np.ndarray:
        """Age of each epoch in thousands of years before 1950 CE (negative after 1950)."""
        return -np.asarray(self.orbit.years_from_1950, dtype=float) / 1000.0


#: Most epochs an orbit figure takes, and the memory each needs (float64 elements,
#: insolation and plotting arrays, measured order of magnitude).
MAX_PLOT_EPOCHS = 1_000_000
BYTES_PER_PLOT_EPOCH = 400


def orbit_series(source: str) -> OrbitsThroughTime:
    """Orbital elements through time from a range of epochs or a transient spec."""
    kind = source_kind(source)
    if kind == "range":
        n = count_epochs(source)
        if n > MAX_PLOT_EPOCHS:  # refused before anything is computed (bounded memory)
            raise SourceError(
                f"source {source} has {n:,} epochs, which would need about "
                f"{n * BYTES_PER_PLOT_EPOCH / 1e9:.1f} GB to plot; the limit is "
                f"{MAX_PLOT_EPOCHS:,} epochs (a figure shows far fewer points): use a "
                f"larger step, or 'bcgen orbit {source} --format csv' for every epoch")
        years = parse_epochs(source)
        labels = epoch_labels(source)
        step = source.partition("/")[2].strip()
        label = f"{labels[0]} to {labels[-1]} every {step}"
        return OrbitsThroughTime(solve(years), label)
    if kind == "spec":
        spec = _load_spec(source)
        if spec.is_transient:
            t = spec.transient
            label = (f"{spec.experiment.name} (transient {t.start_epoch} to {t.end_epoch}, "
                     f"{t.acceleration} yr per model year)")
            experiment = _experiment(spec)
            return OrbitsThroughTime(experiment.orbit, label, experiment.solar_constant_wm2)
    what = "a time-slice spec" if kind == "spec" else _KIND_WORDS[kind]
    raise SourceError(
        f"source {source} is {what}; the orbit figure needs a range of epochs such as "
        "800ka..0ka/1ka or a transient spec"
    )
