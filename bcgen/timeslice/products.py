"""The products of a time-slice build: one function per product, each returning outputs.

A product function takes a :class:`~bcgen.timeslice.context.BuildContext` and
returns a list of :class:`Output` (a CF dataset or a text, with the file name
and a description); :mod:`bcgen.timeslice` writes them. Nothing here touches the
file system.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import xarray as xr

from bcgen.cf import PRECESSION_INDEX_ATTRS, variable_attrs
from bcgen.cf.time_axes import climatology_time_axis, time_axis
from bcgen.errors import SpecError
from bcgen.insolation import daily_insolation, instantaneous_insolation, monthly_insolation
from bcgen.orbit import SOLUTIONS
from bcgen.render import bundled_template_path, render_file, rendered_file_name
from bcgen.solar_calendar.months import fixed_angle_months, fixed_day_months
from bcgen.solar_calendar.position import SolarYear
from bcgen.timeslice.context import BuildContext
from bcgen.timeslice.values import in_units, template_values

#: Size of the slabs in which latitude-longitude fields are spread and written.
_SLAB_BYTES = 16 * 2**20


@dataclass(frozen=True)
class Output:
    """One file of a build: a CF dataset or a text, its name and what it holds."""

    product: str
    file_name: str
    description: str
    dataset: xr.Dataset | None = None
    text: str | None = None


def _nc_name(ctx: BuildContext, product: str) -> str:
    return ctx.spec.file_name(product)


def _text_name(ctx: BuildContext, product: str, suffix: str) -> str:
    return str(Path(_nc_name(ctx, product)).with_suffix(suffix))


def _finish(ctx: BuildContext, ds: xr.Dataset, title: str) -> xr.Dataset:
    """Give a dataset its title; the other global attributes come in :func:`make_outputs`."""
    ds.attrs["title"] = title
    return ds


# --- scalar products ---------------------------------------------------------------------
def orbit_product(ctx: BuildContext) -> list[Output]:
    """Orbital elements of the time slice, every perihelion convention labelled."""
    o = ctx.orbit
    ds = xr.Dataset(
        {
            "eccentricity": ((), float(o.eccentricity), variable_attrs("eccentricity")),
            "obliquity": ((), float(o.obliquity_deg), variable_attrs("obliquity")),
            "perihelion_longitude": (
                (), float(o.perihelion_longitude_deg), variable_attrs("perihelion_longitude")),
            "sun_longitude_at_perihelion": (
                (), float(o.sun_longitude_at_perihelion_deg),
                variable_attrs("sun_longitude_at_perihelion")),
            "precession_index": ((), float(o.precession_index), dict(PRECESSION_INDEX_ATTRS)),
        }
    )
    ds.attrs["orbital_solution_reference"] = SOLUTIONS[o.solution].REFERENCE
    return [Output("orbit", _nc_name(ctx, "orbit"),
                   "orbital elements (e, obliquity, perihelion in two conventions, e sin w)",
                   _finish(ctx, ds, f"Orbital elements for {ctx.spec.experiment.name}"))]


def solar_constant_product(ctx: BuildContext) -> list[Output]:
    """Write the solar constant as a scalar ``solar_irradiance``."""
    ds = xr.Dataset({"solar_irradiance": ((), float(ctx.spec.solar_constant_wm2),
                                          variable_attrs("solar_irradiance"))})
    return [Output("solar_constant", _nc_name(ctx, "solar_constant"),
                   "total solar irradiance at 1 au (W m-2)",
                   _finish(ctx, ds, f"Solar constant for {ctx.spec.experiment.name}"))]


_GAS_UNITS = {"co2": ("1e-6", 1e6), "ch4": ("1e-9", 1e9), "n2o": ("1e-9", 1e9)}


def greenhouse_gas_product(ctx: BuildContext) -> list[Output]:
    """Greenhouse-gas mole fractions as scalars with CF standard names."""
    ds = xr.Dataset()
    for gas in ctx.spec.greenhouse_gases:
        units, factor = _GAS_UNITS.get(gas.name, ("1e-12", 1e12))
        if gas.name in _GAS_UNITS:
            attrs = variable_attrs(gas.name)
            attrs.pop("cell_methods", None)
        else:
            attrs = {"standard_name": gas.standard_name,
                     "long_name": f"{gas.name} mole fraction in dry air (ppt)", "units": units}
            if not gas.standard_name:
                attrs.pop("standard_name")
        attrs["units_in_spec"] = gas.units
        ds[gas.name] = ((), in_units(gas.mole_fraction, factor), attrs)
    names = ", ".join(g.name for g in ctx.spec.greenhouse_gases)
    return [Output("greenhouse_gases", _nc_name(ctx, "greenhouse_gases"),
                   f"greenhouse-gas mole fractions ({names})",
                   _finish(ctx, ds, f"Greenhouse gases for {ctx.spec.experiment.name}"))]


# --- insolation --------------------------------------------------------------------------
def _on_grid(ctx: BuildContext, values_by_lat: np.ndarray) -> tuple[tuple, np.ndarray]:
    """Spread values over (unique latitude, time) to the grid: dims and (time, *grid) array."""
    unique, index = ctx.unique_latitudes_deg
    grid = ctx.grid
    per_time = np.moveaxis(values_by_lat, -1, 0)  # (time, n_unique)
    if grid.is_curvilinear:
        return ("time", *grid.dims), per_time[:, index]
    column = per_time[:, index]  # (time, nlat)
    if grid.is_zonal:
        return ("time", grid.dims[0]), column
    # A latitude-longitude field repeats each latitude's value along longitude. It is
    # spread lazily, a few time steps at a time, so the whole float32 field (378 MB
    # on a 0.5 degree grid) is never held in memory and the write streams in slabs.
    import dask.array as dsa

    nlon = grid.shape[1]
    steps = max(1, _SLAB_BYTES // (4 * column.shape[1] * nlon))
    lazy = dsa.from_array(column.astype(np.float32), chunks=(steps, -1))
    spread = dsa.broadcast_to(lazy[:, :, None], column.shape + (nlon,),
                              chunks=(steps, -1, -1))
    return ("time", *grid.dims), spread


def _insolation_dataset(ctx, values_by_lat, bounds_days, description, title) -> xr.Dataset:
    axis = climatology_time_axis(bounds_days, ctx.calendar.name, year=ctx.year)
    dims, values = _on_grid(ctx, values_by_lat)
    attrs = variable_attrs("insolation", time_kind="climatology")
    attrs["comment"] = description
    ds = axis.merge(ctx.grid.to_dataset())
    ds["insolation"] = (dims, values.astype(np.float32, copy=False), attrs)
    return _finish(ctx, ds, title)


def daily_insolation_product(ctx: BuildContext) -> list[Output]:
    """Daily-mean TOA insolation for every day of the model year."""
    lat, _ = ctx.unique_latitudes_deg
    daily = daily_insolation(ctx.orbit, ctx.calendar, lat, ctx.spec.solar_constant_wm2,
                             year=ctx.year, method=ctx.spec.insolation.daily_method)
    bounds = np.stack([daily.day, daily.day + 1.0], axis=-1)
    description = f"daily mean TOA insolation; {daily.method_description}"
    ds = _insolation_dataset(ctx, daily.insolation_wm2, bounds, description,
                             f"Daily TOA insolation for {ctx.spec.experiment.name}")
    ds["insolation"].attrs["daily_method"] = daily.method
    return [Output("daily_insolation", _nc_name(ctx, "daily_insolation"), description, ds)]


def _monthly(ctx: BuildContext, definition: str) -> list[Output]:
    lat, _ = ctx.unique_latitudes_deg
    result = monthly_insolation(ctx.orbit, ctx.calendar, lat, ctx.spec.solar_constant_wm2,
                                months=definition, reference=ctx.reference_orbit,
                                year=ctx.year, daily_method=ctx.spec.insolation.daily_method)
    table = result.months
    bounds = np.stack([table.start_day, table.end_day], axis=-1)
    product = f"monthly_insolation_{definition}"
    words = "fixed-day (calendar)" if definition == "fixed_day" else "fixed-angle (celestial)"
    description = f"monthly mean TOA insolation over {words} months; {result.averaging}"
    ds = _insolation_dataset(ctx, result.insolation_wm2, bounds, description,
                             f"Monthly TOA insolation ({words} months) for "
                             f"{ctx.spec.experiment.name}")
    ds["insolation"].attrs["month_definition"] = definition
    if definition == "fixed_angle":
        ds["insolation"].attrs["reference_orbit_epoch"] = ctx.spec.insolation.reference_epoch
        ds = ds.assign_coords(month_start_true_longitude=(
            ("time",), table.start_true_longitude_deg,
            {"long_name": "true longitude of the Sun at the start of each month",
             "units": "degree"}))
    return [Output(product, _nc_name(ctx, product), description, ds)]


def monthly_fixed_day_product(ctx: BuildContext) -> list[Output]:
    """Monthly means over the calendar's fixed-day months."""
    return _monthly(ctx, "fixed_day")


def monthly_fixed_angle_product(ctx: BuildContext) -> list[Output]:
    """Monthly means over fixed-angle months (reference orbit from the spec)."""
    return _monthly(ctx, "fixed_angle")


# --- tables ------------------------------------------------------------------------------
def month_table_product(ctx: BuildContext) -> list[Output]:
    """Fixed-day and fixed-angle month boundaries, as CSV (and the same in JSON keys)."""
    day = fixed_day_months(ctx.orbit, ctx.calendar, year=ctx.year)
    angle = fixed_angle_months(ctx.orbit, ctx.calendar, reference=ctx.reference_orbit,
                               year=ctx.year)
    out = io.StringIO()
    out.write(f"# month definitions for {ctx.spec.experiment.name}, epoch {ctx.spec.epoch}; "
              f"{ctx.anchor_in_words}\n")
    out.write("# days are fractional days after 1 January 00:00 of the model year; fixed-angle "
              "months span the true-longitude arcs of the calendar months of the reference "
              f"orbit ({ctx.spec.insolation.reference_epoch})\n")
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["month", "fixed_day_start_day", "fixed_day_length_days",
                     "fixed_day_start_true_longitude_deg", "fixed_angle_start_day",
                     "fixed_angle_length_days", "fixed_angle_start_true_longitude_deg"])
    for k in range(12):
        writer.writerow([k + 1, f"{day.start_day[k]:.6f}", f"{day.length_days[k]:.6f}",
                         f"{day.start_true_longitude_deg[k]:.6f}",
                         f"{angle.start_day[k]:.6f}", f"{angle.length_days[k]:.6f}",
                         f"{angle.start_true_longitude_deg[k]:.6f}"])
    return [Output("month_table", _text_name(ctx, "month_table", ".csv"),
                   "fixed-day and fixed-angle month boundaries (CSV)", text=out.getvalue())]


def timestep_table_product(ctx: BuildContext) -> list[Output]:
    """Per-timestep reference values for testing a model's own orbit code (CSV and NetCDF)."""
    spec = ctx.spec.timestep_table
    length = int(round(float(ctx.calendar.year_length_days(ctx.year))))
    days = np.arange(length) if spec.days is None else np.asarray(spec.days) - 1
    steps = spec.steps_per_day
    t = (days[:, None] + np.arange(steps)[None, :] / steps).ravel()
    solar = SolarYear(ctx.orbit, ctx.calendar, year=ctx.year)
    lam = np.rad2deg(np.asarray(solar.true_longitude_rad(t), dtype=float)) % 360.0
    dec = np.rad2deg(np.asarray(solar.declination_rad(t), dtype=float))
    dist = np.asarray(solar.distance_factor(t), dtype=float)
    points = spec.points
    inst = [np.asarray(instantaneous_insolation(ctx.orbit, ctx.calendar, t, p.lat_deg,
                                                p.lon_deg, ctx.spec.solar_constant_wm2,
                                                year=ctx.year), dtype=float).ravel()
            for p in points]
    out = io.StringIO()
    out.write(f"# per-timestep reference values for {ctx.spec.experiment.name}, epoch "
              f"{ctx.spec.epoch}, timestep {spec.timestep_minutes:g} minutes; "
              f"{ctx.anchor_in_words}\n")
    out.write("# time_days: days after 1 January 00:00 of the model year at the START of the "
              "timestep; instantaneous insolation uses mean solar time from longitude "
              "(no equation of time)\n")
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["time_days", "true_longitude_deg", "declination_deg", "distance_factor",
                     *(f"insolation_wm2_lat{p.lat_deg:g}_lon{p.lon_deg:g}" for p in points)])
    for i in range(t.size):
        writer.writerow([f"{t[i]:.6f}", f"{lam[i]:.8f}", f"{dec[i]:.8f}", f"{dist[i]:.10f}",
                         *(f"{v[i]:.6f}" for v in inst)])
    ds = time_axis(None, ctx.calendar.name, ctx.year, values_days=t)
    ds["true_longitude"] = (("time",), lam, variable_attrs("true_longitude", time_kind="point"))
    ds["declination"] = (("time",), dec, variable_attrs("declination", time_kind="point"))
    ds["distance_factor"] = (("time",), dist,
                             variable_attrs("distance_factor", time_kind="point"))
    ds = ds.assign_coords(
        point_lat=(("point",), [p.lat_deg for p in points],
                   {"standard_name": "latitude", "units": "degrees_north"}),
        point_lon=(("point",), [p.lon_deg for p in points],
                   {"standard_name": "longitude", "units": "degrees_east"}),
    )
    attrs = variable_attrs("insolation_instantaneous", time_kind="point")
    attrs["coordinates"] = "point_lat point_lon"
    ds["insolation"] = (("point", "time"), np.stack(inst, axis=0), attrs)
    ds = _finish(ctx, ds, f"Per-timestep reference values for {ctx.spec.experiment.name}")
    desc = "per-timestep true longitude, declination, (a/r)^2 and instantaneous insolation"
    return [Output("timestep_table", _text_name(ctx, "timestep_table", ".csv"), desc + " (CSV)",
                   text=out.getvalue()),
            Output("timestep_table", _nc_name(ctx, "timestep_table"), desc, ds)]


# --- templates ---------------------------------------------------------------------------
def templates_product(ctx: BuildContext) -> list[Output]:
    """Every template of the spec, rendered."""
    values = template_values(ctx)
    outputs = []
    for ref in ctx.spec.templates:
        path = bundled_template_path(ref.name) if ref.name is not None else Path(ref.path)
        name = rendered_file_name(ctx.spec.experiment.name, path)
        text = render_file(path, {**values, "output_file": name})
        outputs.append(Output("templates", name, f"rendered template {ref.label}", text=text))
    return outputs


#: Products of a time slice: spec name -> function.
PRODUCT_MAKERS: dict[str, Callable[[BuildContext], list[Output]]] = {
    "orbit": orbit_product,
    "solar_constant": solar_constant_product,
    "greenhouse_gases": greenhouse_gas_product,
    "daily_insolation": daily_insolation_product,
    "monthly_insolation_fixed_day": monthly_fixed_day_product,
    "monthly_insolation_fixed_angle": monthly_fixed_angle_product,
    "month_table": month_table_product,
    "timestep_table": timestep_table_product,
    "templates": templates_product,
}


def make_outputs(ctx: BuildContext) -> list[Output]:
    """Every output of the spec's products, in the order the spec lists them."""
    outputs: list[Output] = []
    for product in ctx.spec.products:
        if product not in PRODUCT_MAKERS:
            raise SpecError(f"product {product!r} is not available in a time-slice build; "
                            f"expected one of {', '.join(PRODUCT_MAKERS)}")
        outputs.extend(PRODUCT_MAKERS[product](ctx))
    if ctx.spec.geography is not None:
        from bcgen.timeslice.geography import geography_outputs

        outputs.extend(geography_outputs(ctx, Output))
    names = [o.file_name for o in outputs]
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        raise SpecError(f"output.file_pattern gives several outputs the name {dupes[0]}; "
                        "include {product} in the pattern")
    for out in outputs:  # each file's own attributes, from the finished dataset
        if out.dataset is not None:
            ds = out.dataset
            ds.attrs.update(ctx.attributes(ds.attrs.get("title", out.description), ds,
                                           file_name=out.file_name, product=out.product))
    return outputs
