"""The products of a transient run, one model-year chunk at a time.

Each product is a :class:`Series`: it says how many time steps a model year
has and where they lie (:meth:`Series.year_bounds`), defines its variables in
a :class:`~bcgen.io.SeriesFile`, and computes its values for a
chunk of model years (:meth:`Series.compute`). Nothing here decides which
files to write; :func:`bcgen.transient.build_transient` does.

Model years and epochs (:class:`bcgen.spec.TransientSpec`): model year
``first_model_year + k`` has the orbit (and gases) of the epoch
``start_epoch + k × acceleration`` years.

Time axis: one axis for the whole run, ``days since <first_model_year>-01-01``
on the model calendar, each step with its bounds (:func:`bcgen.cf.time_axis`).
In calendars with leap years each model year has its own days (365 or 366
daily steps, its own month lengths), and its insolation is computed for that
year of the calendar, exactly as a time slice dated in that year would be.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import cftime
import numpy as np

from bcgen import __version__
from bcgen.cf import PRECESSION_INDEX_ATTRS, variable_attrs
from bcgen.errors import InputFileError
from bcgen.experiment import Experiment
from bcgen.grids import Grid
from bcgen.insolation import daily_insolation, monthly_insolation
from bcgen.insolation.daily import DAILY_METHODS, DAY_AVERAGE_NODES
from bcgen.insolation.monthly import MONTHLY_AVERAGING, time_mean_over_months_wm2
from bcgen.io import SeriesFile
from bcgen.orbit import OrbitalElements
from bcgen.solar_calendar.calendars import FIXED_YEAR_DAYS
from bcgen.solar_calendar.months import MonthTable, fixed_angle_months, fixed_day_months
from bcgen.transient.gases import INTERPOLATION_METHODS, GasTable, load_gas_table, output_units

#: Bytes of float64 work arrays one insolation chunk may use (sets the model years per
#: chunk; the peak memory of a build is a small multiple of it, whatever the run's length).
COMPUTE_BUDGET_BYTES = 32 * 1024 * 1024
#: Bytes of one slab of gridded values handed to the NetCDF library in one write.
WRITE_BUDGET_BYTES = 16 * 1024 * 1024
#: Model years per chunk of the yearly series (orbit, greenhouse gases).
YEARLY_CHUNK_YEARS = 10_000
#: Rough count of float64 temporaries per value inside the daily-insolation engine.
_TEMPORARIES = 4

EPOCH_ATTRS = {
    "long_name": "epoch whose orbit (and greenhouse gases) the model year has, years before "
    "1950 CE",
    "units": "year",
    "comment": "model year first_model_year + k has the epoch start_epoch + k * acceleration "
    "years (see the global attributes)",
}
_YEARLY = "held constant through each model year: the value at the epoch of the model year"
#: The solar constant of each time step, when the spec scales it to the epoch.
SOLAR_IRRADIANCE_ATTRS = {
    **variable_attrs("solar_irradiance"),
    "comment": f"the solar constant the insolation was computed with; {_YEARLY}",
}


# --- the resolved run -------------------------------------------------------------------------
@dataclass(eq=False)
class RunContext(Experiment):
    """The experiment of a transient run, with its gas table and model-year arithmetic.

    Everything resolved from the spec comes from :class:`~bcgen.experiment.Experiment`.
    """

    def __post_init__(self) -> None:
        if self.spec.transient is None:
            raise ValueError("RunContext needs a transient spec")
        self.transient = self.spec.transient
        self.reference_year = self.transient.first_model_year
        self._year_length: dict[int, int] = {}

    @cached_property
    def gas_table(self) -> GasTable | None:
        """The greenhouse-gas table, checked to cover every model year (None without one)."""
        path = self.transient.greenhouse_gas_table
        if path is None:
            return None
        table = load_gas_table(path)
        tr = self.transient
        ends = np.array([tr.first_model_year, tr.last_model_year])
        try:  # the epochs run linearly from the first to the last model year
            table.check_covers(tr.epochs_of_model_years(ends))
        except InputFileError:  # name the first model year outside the table
            years = tr.model_years()
            table.check_covers(tr.epochs_of_model_years(years), years)
        return table

    def prepare(self, gases: bool = False) -> None:
        """Read every input file now (grid, orbit table, gas table if ``gases``).

        The compute thread of :mod:`bcgen.transient.pipeline` must not call the
        netCDF library, which reads grid files and NetCDF orbit tables.
        """
        _ = self.calendar
        if self.spec.grid is not None:
            _ = self.unique_latitudes_deg
        if gases:
            _ = self.gas_table
        _ = self.orbit_table

    # --- years and epochs --------------------------------------------------------------------
    def epochs(self, years: np.ndarray) -> np.ndarray:
        """Epochs (years from 1950 CE) of model years."""
        return self.transient.epochs_of_model_years(years)

    def orbit_of_years(self, years: np.ndarray) -> OrbitalElements:
        """Orbital elements of model years (one set per year)."""
        return self.orbit_at(self.epochs(years))

    def year_length(self, year: int) -> int:
        """Days in a model year of the calendar (cached)."""
        fixed = FIXED_YEAR_DAYS.get(self.calendar.name)
        if fixed is not None:
            return fixed
        if year not in self._year_length:
            if len(self._year_length) > 4096:
                self._year_length.clear()
            self._year_length[year] = int(round(self.calendar.year_length_days(int(year))))
        return self._year_length[year]

    def year_start_days(self, years: np.ndarray) -> np.ndarray:
        """Days from 1 January of the first model year to 1 January of each of ``years``."""
        years = np.asarray(years, dtype=np.int64)
        fixed = FIXED_YEAR_DAYS.get(self.calendar.name)
        if fixed is not None:
            return (years - self.reference_year).astype(float) * fixed
        cal = self.calendar
        ref = cftime.datetime(
            self.reference_year, 1, 1, calendar=cal.name, has_year_zero=cal.has_year_zero
        )
        return np.array(
            [
                (
                    cftime.datetime(
                        int(y), 1, 1, calendar=cal.name, has_year_zero=cal.has_year_zero
                    )
                    - ref
                ).days
                for y in years
            ],
            dtype=float,
        )

    def year_key(self, year: int) -> tuple:
        """Years with equal keys have the same insolation for the same orbit.

        The Sun's position in model year y depends on the calendar only through the
        anchors of the years y-3 … y+4 (:class:`~bcgen.solar_calendar.position.SolarYear`)
        and the days and months of y, i.e. through the lengths of the years y-4 … y+4.
        Calendars without leap years have one key.
        """
        if self.calendar.name in FIXED_YEAR_DAYS:
            return ()
        cal = self.calendar
        key = tuple(self.year_length(cal.shift_year(int(year), k)) for k in range(-4, 5))
        if cal.name == "standard" and 1577 <= year <= 1587:  # the Gregorian reform of 1582
            key += (int(year),)
        return key

    # --- metadata ----------------------------------------------------------------------------
    def attributes(self, title: str, first: int, last: int) -> dict[str, object]:
        """Global attributes of one file of model years ``first`` … ``last``."""
        spec, tr = self.spec, self.transient
        attrs = self.provenance(title, time_slice=False)
        e0, e1 = self.epochs(np.array([first, last]))
        attrs.update(
            {
                "experiment": spec.experiment.name,
                "experiment_description": spec.experiment.description or None,
                "transient_start_epoch": tr.start_epoch,
                "transient_end_epoch": tr.end_epoch,
                "orbital_acceleration": np.int32(tr.acceleration),
                "model_year_mapping": (
                    f"model year {tr.first_model_year} + k has the orbit of the epoch "
                    f"{tr.start_epoch} + k * {tr.acceleration} years (towards {tr.end_epoch}), "
                    f"k = 0 ... {tr.n_model_years - 1}"
                ),
                "first_model_year": np.int32(first),
                "last_model_year": np.int32(last),
                "first_epoch_years_bp": float(-e0),
                "last_epoch_years_bp": float(-e1),
                "calendar_anchor": self.anchor_in_words,
                "bcgen_spec_sha256": spec.sha256,
                "bcgen_version": __version__,
            }
        )
        return attrs


# --- products ---------------------------------------------------------------------------------
class Series:
    """One product of a transient run (subclasses: orbit, gases, daily and monthly insolation)."""

    product: str = ""
    gridded: bool = False

    def __init__(self, ctx: RunContext) -> None:
        self.ctx = ctx
        self._bounds_cache: dict[tuple, np.ndarray] = {}

    @property
    def description(self) -> str:
        """What the files hold, one line."""
        raise NotImplementedError

    @property
    def title(self) -> str:
        """The files' title."""
        raise NotImplementedError

    def year_bounds(self, year: int) -> np.ndarray:
        """(n, 2) bounds of the model year's time steps, days after its 1 January (cached)."""
        key = self.ctx.year_key(int(year))
        bounds = self._bounds_cache.get(key)
        if bounds is None:
            bounds = self._year_bounds(int(year))
            bounds.flags.writeable = False
            self._bounds_cache[key] = bounds
        return bounds

    def _year_bounds(self, year: int) -> np.ndarray:
        return np.array([[0.0, float(self.ctx.year_length(year))]])

    def steps(self, first: int, last: int) -> int:
        """Count the time steps of model years ``first`` … ``last``."""
        if not self.ctx.year_key(first):  # a calendar without leap years
            return (last - first + 1) * len(self.year_bounds(first))
        return sum(len(self.year_bounds(y)) for y in range(first, last + 1))

    def chunk_years(self) -> int:
        """Model years computed at once."""
        return YEARLY_CHUNK_YEARS

    def bounds(self, years: np.ndarray) -> np.ndarray:
        """(T, 2) bounds of the time steps of ``years``, days since the first model year."""
        starts = self.ctx.year_start_days(years)
        return np.concatenate(
            [self.year_bounds(int(y)) + s for y, s in zip(years, starts, strict=True)]
        )

    def define(self, sf: SeriesFile) -> list[str]:
        """Define the data variables; return their names."""
        raise NotImplementedError

    def compute(self, years: np.ndarray) -> dict[str, np.ndarray]:
        """Values of the data variables for ``years``, time steps first."""
        raise NotImplementedError

    def write(self, sf: SeriesFile, name: str, values: np.ndarray) -> None:
        """Append one chunk of a data variable to the file."""
        sf.append(name, values)


class OrbitSeries(Series):
    """Orbital elements of every model year (both perihelion conventions, e sin ϖ, epoch)."""

    product = "orbit"
    description = (
        "orbital elements per model year (e, obliquity, perihelion in two conventions, "
        "e sin w, epoch)"
    )

    @property
    def title(self) -> str:  # noqa: D102
        return f"Orbital elements per model year for {self.ctx.spec.experiment.name}"

    def define(self, sf: SeriesFile) -> list[str]:  # noqa: D102
        names = []
        for name in (
            "eccentricity",
            "obliquity",
            "perihelion_longitude",
            "sun_longitude_at_perihelion",
        ):
            attrs = variable_attrs(name)
            attrs["cell_methods"] = "time: mean"
            attrs["comment"] = f"{attrs.get('comment', '')}; {_YEARLY}".lstrip("; ")
            sf.define_variable(name, "f8", ("time",), attrs, compress=True)
            names.append(name)
        sf.define_variable(
            "precession_index",
            "f8",
            ("time",),
            {**PRECESSION_INDEX_ATTRS, "cell_methods": "time: mean", "comment": _YEARLY},
            compress=True,
        )
        sf.define_variable("epoch_years_bp", "f8", ("time",), EPOCH_ATTRS, compress=True)
        return [*names, "precession_index", "epoch_years_bp"]

    def compute(self, years: np.ndarray) -> dict[str, np.ndarray]:  # noqa: D102
        o = self.ctx.orbit_of_years(years)
        return {
            "eccentricity": o.eccentricity,
            "obliquity": o.obliquity_deg,
            "perihelion_longitude": o.perihelion_longitude_deg,
            "sun_longitude_at_perihelion": o.sun_longitude_at_perihelion_deg,
            "precession_index": o.precession_index,
            "epoch_years_bp": -self.ctx.epochs(years),
        }


class GasSeries(Series):
    """Greenhouse-gas mole fractions of every model year (from the table, or constant)."""

    product = "greenhouse_gases"

    @property
    def gases(self) -> tuple[str, ...]:
        """Gas names, in the order of the table's columns or of the spec."""
        table = self.ctx.gas_table
        return (
            table.gases
            if table is not None
            else tuple(g.name for g in self.ctx.spec.greenhouse_gases)
        )

    @property
    def method_text(self) -> str:
        """How the values were obtained, in words."""
        table = self.ctx.gas_table
        if table is None:
            return "constant values from greenhouse_gases of the spec"
        method = self.ctx.transient.greenhouse_gas_interpolation
        return f"{INTERPOLATION_METHODS[method]} ({method}; table {table.path.name})"

    @property
    def description(self) -> str:  # noqa: D102
        return (
            f"greenhouse-gas mole fractions per model year ({', '.join(self.gases)}); "
            + self.method_text
        )

    @property
    def title(self) -> str:  # noqa: D102
        return f"Greenhouse gases per model year for {self.ctx.spec.experiment.name}"

    def define(self, sf: SeriesFile) -> list[str]:  # noqa: D102
        from bcgen.spec import schema as S

        table = self.ctx.gas_table
        for gas in self.gases:
            units = output_units(gas)
            if gas in ("co2", "ch4", "n2o"):
                attrs = variable_attrs(gas, time_kind="mean")
            else:
                attrs = {
                    "standard_name": S.GASES[gas],
                    "units": units,
                    "long_name": f"{gas} mole fraction in dry air (ppt)",
                    "cell_methods": "time: mean",
                }
            attrs["comment"] = f"{_YEARLY}; {self.method_text}"
            if table is not None:
                attrs["interpolation_method"] = self.ctx.transient.greenhouse_gas_interpolation
                attrs["units_in_table"] = table.units[gas]
            else:
                attrs["units_in_spec"] = self.ctx.spec.gas(gas).units
            sf.define_variable(gas, "f8", ("time",), attrs, compress=True)
        sf.define_variable("epoch_years_bp", "f8", ("time",), EPOCH_ATTRS, compress=True)
        if table is not None:
            sf.set_attributes(
                {
                    "greenhouse_gas_table": table.path.name,
                    "greenhouse_gas_interpolation": self.ctx.transient.greenhouse_gas_interpolation,
                    "greenhouse_gas_interpolation_method": INTERPOLATION_METHODS[
                        self.ctx.transient.greenhouse_gas_interpolation
                    ],
                }
            )
        return [*self.gases, "epoch_years_bp"]

    def compute(self, years: np.ndarray) -> dict[str, np.ndarray]:  # noqa: D102
        epochs = self.ctx.epochs(years)
        table = self.ctx.gas_table
        if table is not None:
            values = table.interpolate(epochs, self.ctx.transient.greenhouse_gas_interpolation)
        else:
            values = {}
            for gas in self.ctx.spec.greenhouse_gases:
                factor = {"1e-6": 1e6, "1e-9": 1e9, "1e-12": 1e12}[output_units(gas.name)]
                values[gas.name] = np.full(len(years), gas.mole_fraction * factor)
        return {**values, "epoch_years_bp": -epochs}


class InsolationSeries(Series):
    """Insolation on the grid, computed on its distinct latitudes and spread over it."""

    gridded = True
    definition = ""

    @property
    def method(self) -> str:
        """The daily method of the spec."""
        return self.ctx.spec.insolation.daily_method

    def chunk_years(self) -> int:  # noqa: D102
        n_unique = self.ctx.unique_latitudes_deg[0].size
        nodes = DAY_AVERAGE_NODES if self.method == "day_average" else 1
        per_year = n_unique * 366 * nodes * 8 * _TEMPORARIES
        return max(1, COMPUTE_BUDGET_BYTES // per_year)

    def define(self, sf: SeriesFile) -> list[str]:  # noqa: D102
        attrs = variable_attrs("insolation", time_kind="mean")
        attrs["comment"] = self.description
        attrs.update(self.extra_attrs())
        dims = ("time", *self.ctx.grid.dims)
        sf.define_variable("insolation", "f4", dims, attrs, compress=True)
        if not self.ctx.solar_constant_scaled:
            return ["insolation"]
        attrs = {**SOLAR_IRRADIANCE_ATTRS, "references": self.ctx.solar_constant_record.get(
            "reference", ""), "solar_constant_scaling": self.ctx.spec.solar_constant_scaling}
        sf.define_variable("solar_irradiance", "f8", ("time",), attrs, compress=True)
        return ["insolation", "solar_irradiance"]

    def extra_attrs(self) -> dict[str, str]:
        """Attributes particular to the product."""
        return {}

    def compute(self, years: np.ndarray) -> dict[str, np.ndarray]:
        """Compute (T, n_unique_latitudes) float64 rows, grouping years of one calendar kind."""
        ctx = self.ctx
        lat, _ = ctx.unique_latitudes_deg
        orbit = ctx.orbit_of_years(years)
        counts = np.array([len(self.year_bounds(int(y))) for y in years])
        offsets = np.concatenate([[0], np.cumsum(counts)])
        rows = np.empty((offsets[-1], lat.size))
        for idx in _groups_of_equal_years(ctx, years):
            values = self.by_latitude(orbit[idx], lat, int(years[idx[0]]))  # (n, nlat, steps)
            for j, i in enumerate(idx):
                rows[offsets[i] : offsets[i + 1]] = values[j].T
            del values
        return self.scaled(years, counts, rows)

    def scaled(self, years: np.ndarray, counts, rows: np.ndarray) -> dict[str, np.ndarray]:
        """Scale rows (``counts`` time steps per year) to the solar constant of each year."""
        ctx = self.ctx
        if not ctx.solar_constant_scaled:
            return {"insolation": rows}
        # Insolation is proportional to S: each model year takes the S of its own epoch.
        s = np.repeat(ctx.solar_constant_at(ctx.epochs(years)), counts)
        rows *= (s / ctx.spec.solar_constant_wm2)[:, np.newaxis]
        return {"insolation": rows, "solar_irradiance": s}

    def by_latitude(self, orbit: OrbitalElements, lat: np.ndarray, year: int) -> np.ndarray:
        """Insolation for orbits (1-D) of one calendar-year kind: (n, nlat, steps)."""
        raise NotImplementedError

    def write(self, sf: SeriesFile, name: str, values: np.ndarray) -> None:
        """Spread rows over the grid and append them in slabs of at most WRITE_BUDGET_BYTES."""
        grid = self.ctx.grid
        _, index = self.ctx.unique_latitudes_deg
        per_step = 4 * int(np.prod(grid.shape))
        slab = max(1, WRITE_BUDGET_BYTES // per_step)
        if name != "insolation":  # a series along time only
            sf.append(name, values)
            return
        for lo in range(0, values.shape[0], slab):
            block = spread_to_grid(values[lo : lo + slab], index, grid)
            sf.append(name, block)
            del block


class DailyInsolationSeries(InsolationSeries):
    """Daily-mean insolation for every day of every model year."""

    product = "daily_insolation"

    @property
    def description(self) -> str:  # noqa: D102
        return f"daily mean TOA insolation; {DAILY_METHODS[self.method]}"

    @property
    def title(self) -> str:  # noqa: D102
        return f"Daily TOA insolation for {self.ctx.spec.experiment.name}"

    def extra_attrs(self) -> dict[str, str]:  # noqa: D102
        return {"daily_method": self.method}

    def _year_bounds(self, year: int) -> np.ndarray:
        day = np.arange(self.ctx.year_length(year), dtype=float)
        return np.stack([day, day + 1.0], axis=-1)

    def by_latitude(self, orbit, lat, year):  # noqa: D102
        s0 = self.ctx.spec.solar_constant_wm2
        return daily_insolation(
            orbit, self.ctx.calendar, lat, s0, year=year, method=self.method
        ).insolation_wm2


class MonthlyFixedDaySeries(InsolationSeries):
    """Monthly-mean insolation over the calendar's (fixed-day) months of every model year."""

    product = "monthly_insolation_fixed_day"

    @property
    def description(self) -> str:  # noqa: D102
        return (
            f"monthly mean TOA insolation over fixed-day (calendar) months; "
            f"{MONTHLY_AVERAGING['fixed_day']}; daily values: {DAILY_METHODS[self.method]}"
        )

    @property
    def title(self) -> str:  # noqa: D102
        return (
            f"Monthly TOA insolation (fixed-day (calendar) months) for "
            f"{self.ctx.spec.experiment.name}"
        )

    def extra_attrs(self) -> dict[str, str]:  # noqa: D102
        return {"month_definition": "fixed_day", "daily_method": self.method}

    def _year_bounds(self, year: int) -> np.ndarray:
        starts = self.ctx.calendar.month_starts_days(int(year))
        return np.stack([starts[:-1], starts[1:]], axis=-1)

    def by_latitude(self, orbit, lat, year):  # noqa: D102
        s0 = self.ctx.spec.solar_constant_wm2
        return monthly_insolation(
            orbit,
            self.ctx.calendar,
            lat,
            s0,
            months="fixed_day",
            year=year,
            daily_method=self.method,
        ).insolation_wm2


class MonthlyFixedAngleSeries(MonthlyFixedDaySeries):
    """Monthly-mean insolation over the fixed-angle months of every model year.

    Model year y has the months of its own orbit: each spans the arc of true longitude
    that the calendar month spans in the spec's reference orbit
    (:func:`bcgen.solar_calendar.months.fixed_angle_months`, ``year=y``), so its time
    bounds change from year to year with the orbit. Within a model year the months
    join without gap; from one model year to the next the orbit changes, and the
    January of year y + 1 starts where the orbit of y + 1 puts it, which differs from
    the end of December of year y by the change of the January boundary over one
    model year's step of the orbit (at most 0.018 day at an acceleration of 10 and 0.18
    day at 100 over the Berger 1978 orbits of 0 to 130 ka, noleap, reference 1950 CE).
    """

    product = "monthly_insolation_fixed_angle"

    @property
    def description(self) -> str:  # noqa: D102
        return (
            "monthly mean TOA insolation over fixed-angle (celestial) months of each model "
            f"year's orbit; {MONTHLY_AVERAGING['fixed_angle']}"
        )

    @property
    def title(self) -> str:  # noqa: D102
        return (
            f"Monthly TOA insolation (fixed-angle (celestial) months) for "
            f"{self.ctx.spec.experiment.name}"
        )

    def extra_attrs(self) -> dict[str, str]:  # noqa: D102
        return {
            "month_definition": "fixed_angle",
            "reference_orbit_epoch": self.ctx.spec.insolation.reference_epoch,
        }

    def define(self, sf: SeriesFile) -> list[str]:  # noqa: D102
        names = super().define(sf)
        sf.define_variable(
            "month_start_true_longitude",
            "f8",
            ("time",),
            {"long_name": "true longitude of the Sun at the start of each month",
             "units": "degree"},
            compress=True,
        )
        return [*names, "month_start_true_longitude"]

    def chunk_years(self) -> int:  # noqa: D102
        # 12 months of at most two arcs per model year instead of a year of daily values
        n_unique = self.ctx.unique_latitudes_deg[0].size
        return max(1, COMPUTE_BUDGET_BYTES // (n_unique * 24 * 8 * _TEMPORARIES))

    def months(self, years: np.ndarray) -> tuple[OrbitalElements, MonthTable]:
        """Orbits and fixed-angle months of model years (each its own orbit and calendar year).

        The last result is kept: the time bounds and the values of a chunk share it.
        """
        years = np.asarray(years)
        key = years.tobytes()
        if getattr(self, "_months_of", (None,))[0] == key:
            return self._months_of[1]
        ctx = self.ctx
        orbit = ctx.orbit_of_years(years)
        start = np.empty((years.size, 12))
        length = np.empty((years.size, 12))
        lam = np.empty((years.size, 12))
        for idx in _groups_of_equal_years(ctx, years):
            table = fixed_angle_months(orbit[idx], ctx.calendar, reference=ctx.reference_orbit,
                                       year=int(years[idx[0]]))
            start[idx], length[idx] = table.start_day, table.length_days
            lam[idx] = table.start_true_longitude_deg
        fixed = np.broadcast_to(np.diff(ctx.calendar.month_starts_days(int(years[0]))),
                                (years.size, 12))
        table = MonthTable(start, length, lam, np.zeros_like(start), fixed, "fixed_angle")
        self._months_of = (key, (orbit, table))
        return orbit, table

    def bounds(self, years: np.ndarray) -> np.ndarray:
        """(12 T, 2) bounds of the fixed-angle months of ``years``, days since the first year."""
        table = self.months(years)[1]
        starts = self.ctx.year_start_days(years)[:, np.newaxis]
        return np.stack([table.start_day + starts, table.end_day + starts], axis=-1).reshape(-1, 2)

    def compute(self, years: np.ndarray) -> dict[str, np.ndarray]:
        """Rows (12 T, n_unique_latitudes) of exact time means over each year's own months."""
        ctx = self.ctx
        lat, _ = ctx.unique_latitudes_deg
        orbit, table = self.months(years)
        values = np.empty((years.size, 12, lat.size))
        end = table.end_day
        for idx in _groups_of_equal_years(ctx, years):
            means = time_mean_over_months_wm2(orbit[idx], ctx.calendar, lat,
                                              table.start_day[idx], end[idx],
                                              ctx.spec.solar_constant_wm2,
                                              year=int(years[idx[0]]))
            values[idx] = means.transpose(0, 2, 1)
        return {**self.scaled(years, 12, values.reshape(-1, lat.size)),
                "month_start_true_longitude": table.start_true_longitude_deg.ravel()}


#: The month table of every model year: variable name -> (MonthTable field, attributes).
MONTH_TABLE_VARIABLES = {
    "fixed_day_start_day": ("fixed_day", "start_day", {
        "long_name": "start of the calendar (fixed-day) month, days after 1 January 00:00 of "
                     "the model year", "units": "day"}),
    "fixed_day_length_days": ("fixed_day", "length_days", {
        "long_name": "length of the calendar (fixed-day) month", "units": "day"}),
    "fixed_day_start_true_longitude_deg": ("fixed_day", "start_true_longitude_deg", {
        "long_name": "true longitude of the Sun at the start of the calendar month on the "
                     "model year's orbit", "units": "degree"}),
    "fixed_angle_start_day": ("fixed_angle", "start_day", {
        "long_name": "start of the fixed-angle month, days after 1 January 00:00 of the model "
                     "year (negative before it)", "units": "day"}),
    "fixed_angle_length_days": ("fixed_angle", "length_days", {
        "long_name": "length of the fixed-angle month", "units": "day"}),
    "fixed_angle_start_true_longitude_deg": ("fixed_angle", "start_true_longitude_deg", {
        "long_name": "true longitude of the Sun at the start of the fixed-angle month (that of "
                     "the calendar month in the reference orbit)", "units": "degree"}),
}


class MonthTableSeries(Series):
    """Fixed-day and fixed-angle month boundaries of every model year.

    One time step per calendar month (its bounds are the fixed-day month), each with
    the fixed-angle month of the same name on the model year's own orbit.
    """

    product = "month_table"

    @property
    def description(self) -> str:  # noqa: D102
        return (
            "fixed-day and fixed-angle month boundaries of every model year (its own orbit; "
            f"arcs of the reference orbit of {self.ctx.spec.insolation.reference_epoch})"
        )

    @property
    def title(self) -> str:  # noqa: D102
        return f"Month boundaries per model year for {self.ctx.spec.experiment.name}"

    def _year_bounds(self, year: int) -> np.ndarray:
        starts = self.ctx.calendar.month_starts_days(int(year))
        return np.stack([starts[:-1], starts[1:]], axis=-1)

    def define(self, sf: SeriesFile) -> list[str]:  # noqa: D102
        sf.define_variable("month", "i4", ("time",),
                           {"long_name": "month of the model year (1 = January)", "units": "1"},
                           compress=True)
        for name, (_, _, attrs) in MONTH_TABLE_VARIABLES.items():
            sf.define_variable(name, "f8", ("time",), attrs, compress=True)
        sf.set_attributes({
            "reference_orbit_epoch": self.ctx.spec.insolation.reference_epoch,
            "calendar_anchor": self.ctx.anchor_in_words,
        })
        return ["month", *MONTH_TABLE_VARIABLES]

    def compute(self, years: np.ndarray) -> dict[str, np.ndarray]:  # noqa: D102
        ctx = self.ctx
        orbit = ctx.orbit_of_years(years)
        out = {name: np.empty((years.size, 12)) for name in MONTH_TABLE_VARIABLES}
        for idx in _groups_of_equal_years(ctx, years):
            year = int(years[idx[0]])
            tables = {
                "fixed_day": fixed_day_months(orbit[idx], ctx.calendar, year=year),
                "fixed_angle": fixed_angle_months(orbit[idx], ctx.calendar,
                                                  reference=ctx.reference_orbit, year=year),
            }
            for name, (which, field_name, _) in MONTH_TABLE_VARIABLES.items():
                out[name][idx] = getattr(tables[which], field_name)
        values = {name: v.reshape(-1) for name, v in out.items()}
        values["month"] = np.tile(np.arange(1, 13, dtype=np.int32), years.size)
        return values


def _groups_of_equal_years(ctx: RunContext, years: np.ndarray) -> list[np.ndarray]:
    """Return the indices of ``years`` grouped by :meth:`RunContext.year_key`."""
    groups: dict[tuple, list[int]] = {}
    for i, y in enumerate(years):
        groups.setdefault(ctx.year_key(int(y)), []).append(i)
    return [np.array(members) for members in groups.values()]


def spread_to_grid(rows: np.ndarray, index: np.ndarray, grid: Grid) -> np.ndarray:
    """Values on distinct latitudes (T, n_unique) → float32 values on the grid (T, *grid.shape)."""
    column = rows[:, index]  # (T, nlat) or (T, ny, nx) for a curvilinear grid
    if grid.is_zonal or grid.is_curvilinear:
        return column.astype(np.float32)
    out = np.empty(column.shape + (grid.shape[1],), dtype=np.float32)
    out[...] = column[:, :, np.newaxis]
    return out


#: Products of a transient run: spec name -> Series class.
SERIES: dict[str, type[Series]] = {
    "orbit": OrbitSeries,
    "greenhouse_gases": GasSeries,
    "daily_insolation": DailyInsolationSeries,
    "monthly_insolation_fixed_day": MonthlyFixedDaySeries,
    "monthly_insolation_fixed_angle": MonthlyFixedAngleSeries,
    "month_table": MonthTableSeries,
}
