"""Convert model output between fixed-day and fixed-angle months (xarray in, xarray out).

:func:`to_fixed_angle_months` takes a Dataset of monthly means (fixed-day months) or of
daily (or sub-daily) means and returns the means over the fixed-angle months of the
given orbit (:func:`bcgen.solar_calendar.months.fixed_angle_months`), for every model
year of a series or for the one year of a climatology. :func:`to_fixed_day_months`
goes back from fixed-angle months (read from the time bounds) to the calendar months.

How
---
- Daily and sub-daily means are averaged exactly over the fractional-day months,
  overlap-weighted (:mod:`bcgen.convert.aggregate`).
- Monthly means go through a published mean-preserving interpolation integrated
  exactly over the new months (:mod:`bcgen.convert.interpolation`; default
  Killworth 1996). Year boundaries use the neighbouring years of the series; the first
  and last year follow :data:`~bcgen.convert.interpolation.END_RULES` (cyclic for a
  climatology).
- Missing data: see :mod:`bcgen.convert.aggregate` (a month whose source is all
  missing stays missing; a partly missing one is the mean of its valid part when that
  covers at least ``min_valid_fraction`` of it). With ``epstein1991`` one missing
  month makes every month of that point's year missing: the harmonic fit needs all
  twelve means.
- The output's time axis repeats the input's calendar name as written (``365_day``
  stays ``365_day``; only the deprecated ``gregorian`` becomes ``standard``) and the
  input's time units (``days since 0001-01-01`` stays so, in both directions), so raw
  time numbers of input and output compare directly.
- The work is lazy on dask-backed data: each variable goes through
  :func:`dask.array.blockwise`, one task per spatial chunk with the whole time axis
  (the time pieces of the chunk, one per input file, are handed over as a list and
  read in turn, never joined; the time axis keeps its place, so blocks reach the
  kernel of :mod:`bcgen.convert.kernels` without a transposing copy). Memory
  stays bounded by the chunk size, and the same graph runs on a dask.distributed
  cluster. Numpy-backed data are converted at once by the same kernel.

Variables
---------
Every variable with the time axis and a numeric type is converted; variables without
the time axis are copied unchanged; time-dependent non-numeric variables (dates as
text, flags with ``flag_values``) are dropped with a warning. All attributes are kept.
Values are computed in float64 on decoded values (``scale_factor``/``add_offset``
applied, ``_FillValue`` as NaN) and stored as float32 when the decoded input was
float32 or an integer of at most 16 bits, else float64; the packing (scale, offset,
integer type, fill value) is dropped because means of packed integers need not fit
the packing; ``valid_min``/``valid_max``/``valid_range`` are converted to unpacked
values for daily means (averaged, so they stay inside) and dropped otherwise (an
interpolation may overshoot them, and readers would mask those values);
``actual_range`` is dropped.

What each variable's values are is read from its ``cell_methods``
(:mod:`bcgen.convert.cellmethods`): means (``time: mean``, and variables without a time
entry, which get ``time: mean``) are re-averaged; sums (``time: sum``, e.g. an
accumulated precipitation amount) are converted as their mean rate and multiplied by
the new month's length (a month's total); daily maxima or minima (one-day steps) are
averaged into ``time: maximum within days time: mean over days``. Any other time
statistic (a monthly maximum, an instantaneous ``time: point`` value, a median...) is
refused with an error naming the variable: re-averaging would falsify it.
"""

from __future__ import annotations

import dataclasses
import re
import uuid
import warnings
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import xarray as xr

from bcgen import arguments
from bcgen.arguments import shown
from bcgen.convert import cellmethods
from bcgen.convert.aggregate import (
    DEFAULT_MIN_VALID_FRACTION,
    IntervalWeights,
    apply_weights,
    overlap_weights,
)
from bcgen.convert.interpolation import END_RULES, METHODS, MeanPreservingPlan, Method
from bcgen.convert.kernels import RowWeights, bad_columns, joined
from bcgen.convert.timeaxis import TimeAxis, read_time_axis
from bcgen.errors import BcgenError, BcgenWarning, OrbitError
from bcgen.orbit.elements import PERIHELION_CONVENTIONS, OrbitalElements
from bcgen.solar_calendar.calendars import Anchor, ModelCalendar, parse_anchor

#: Prefix of the global attributes that record a conversion.
ATTR_PREFIX = "month_conversion_"
#: What a converted file says about its annual means (fixed-angle months differ in length).
ANNUAL_MEAN_NOTE = (
    "Fixed-angle months have unequal lengths: the annual mean is the mean of the months "
    "weighted by their lengths in days (upper minus lower time bound), not the plain mean "
    "of the monthly values."
)


class ConversionError(BcgenError, ValueError):
    """An input or option that the month conversion cannot handle."""


class DroppedVariableWarning(BcgenWarning):
    """A time-dependent variable that is not converted (not numeric, or categorical)."""


# --- kernels applied to numpy blocks -------------------------------------------------------
@dataclass(frozen=True)
class _AggregatePlan:
    weights: IntervalWeights
    min_valid_fraction: float
    rows: RowWeights

    @classmethod
    def build(cls, weights: IntervalWeights, min_valid_fraction: float) -> _AggregatePlan:
        cover = np.zeros(weights.n_target)
        for b in range(weights.index.shape[1]):  # the order of apply_weights
            cover += weights.weight_days[:, b]
        rows = RowWeights.build(weights.index, weights.weight_days, cover,
                                weights.target_length_days, min_valid_fraction)
        return cls(weights, min_valid_fraction, rows)

    def __call__(self, x: np.ndarray) -> np.ndarray:
        return apply_weights(self.weights, x, min_valid_fraction=self.min_valid_fraction)

    def block(self, pieces, dtype=np.float64) -> np.ndarray:
        x = joined([pieces] if isinstance(pieces, np.ndarray) else list(pieces))
        bad = bad_columns(x)
        out = self.rows.apply(x, np.empty((self.rows.index.shape[0], x.shape[1]), dtype))
        if bad is not None:
            out[:, bad] = self(np.asarray(x[:, bad], dtype=np.float64))
        return out


@dataclass(frozen=True)
class _Kernel:
    """Block function: converts the time axis ``axis`` of a numpy block."""

    plan: object
    dtype: np.dtype
    axis: int
    token: str = dataclasses.field(default_factory=lambda: uuid.uuid4().hex)

    def __dask_tokenize__(self):  # the plan is large and made once: name it, do not hash it
        return ("bcgen.convert", self.token, str(self.dtype), self.axis)

    def __call__(self, block) -> np.ndarray:
        """Convert a block, or the list of its pieces along time (dask.array.blockwise)."""
        pieces = block if isinstance(block, list) else [block]
        views = [np.moveaxis(np.asarray(p), self.axis, 0) for p in pieces]  # no copy: time first
        out = self.plan.block([v.reshape(v.shape[0], -1) for v in views], self.dtype)
        return np.moveaxis(out.reshape((out.shape[0],) + views[0].shape[1:]), 0, self.axis)


# --- orbit and calendar arguments ----------------------------------------------------------
def _scalar_orbit(orbit, what: str) -> OrbitalElements:
    if isinstance(orbit, str):
        from bcgen.epochs import parse_epoch
        from bcgen.orbit import solve

        return solve(parse_epoch(orbit))
    if not isinstance(orbit, OrbitalElements):
        raise OrbitError(f"{what} must be OrbitalElements (bcgen.orbit.solve) or an epoch string; "
                         f"got {type(orbit).__name__}")
    if orbit.shape not in ((), (1,)):
        raise OrbitError(f"{what} must be one orbit; got orbits of shape {orbit.shape}")
    return orbit if orbit.shape == () else orbit[0]


def _model_calendar(axis: TimeAxis, calendar, anchor, source: str) -> ModelCalendar:
    if isinstance(anchor, str):
        anchor = parse_anchor(anchor, source="anchor")
    if calendar is None:
        name = axis.calendar.name
        given_anchor = None
    elif isinstance(calendar, ModelCalendar):
        name, given_anchor = calendar.name, calendar.anchor
    else:
        name, given_anchor = ModelCalendar(str(calendar)).name, None
    if name != axis.calendar.name:
        raise ConversionError(f"{source}: the file's calendar is {axis.calendar.name!r} but "
                              f"calendar {name!r} was given; give the file's calendar or none")
    final = anchor if anchor is not None else (given_anchor or Anchor())
    if not isinstance(final, Anchor):
        raise ConversionError(f"anchor must be an Anchor or 'MM-DD HH:MM'; got {shown(final)}")
    return ModelCalendar(name, final)


# --- target months -------------------------------------------------------------------------
def _year_range(axis: TimeAxis) -> list[int]:
    cal = axis.calendar
    last = axis.date(axis.edges_days[-1] - 1e-3).year
    years, y = [], axis.origin_year
    while y <= last:
        years.append(y)
        y = cal.shift_year(y, 1)
    return years


def _orbits_of_years(orbit, years: list[int], source: str) -> OrbitalElements:
    """One orbit per model year: from a callable, an array of one orbit per year, or one orbit."""
    if callable(orbit) and not isinstance(orbit, OrbitalElements):
        try:
            orbits = orbit(np.asarray(years))
        except BcgenError as exc:
            raise ConversionError(f"{source}: {exc}") from None
        if not isinstance(orbits, OrbitalElements) or orbits.shape != (len(years),):
            raise ConversionError(f"{source}: the orbit function must return OrbitalElements of "
                                  f"shape ({len(years)},) for the {len(years)} model years")
        return orbits
    if isinstance(orbit, OrbitalElements) and orbit.shape not in ((), (1,)):
        if orbit.shape != (len(years),):
            raise OrbitError(f"orbit: orbits of shape {orbit.shape} for the {len(years)} "
                             f"model years of {source} "
                             f"({years[0]}-{years[-1]}); give one orbit per model year")
        return orbit
    one = _scalar_orbit(orbit, "orbit")
    epoch = None if one.years_from_1950 is None else np.full(len(years), one.years_from_1950)
    return OrbitalElements(*(np.full(len(years), v) for v in (
        one.eccentricity, one.obliquity_deg, one.perihelion_longitude_deg)), epoch,
        one.solution)


def transient_orbits(experiment) -> Callable[[np.ndarray], OrbitalElements]:
    """Return the function model years → orbits of a transient run (its mapping, acceleration).

    Model year ``first_model_year + k`` has the orbit of the epoch ``start_epoch + k ×
    acceleration`` years (:class:`bcgen.spec.TransientSpec`), from the run's orbital
    solution (an orbit table is read once). A model year outside the run is an error
    naming it. Give the result as ``orbit`` to :func:`to_fixed_angle_months` to convert a
    transient run's output.

    Parameters
    ----------
    experiment : bcgen.experiment.Experiment or bcgen.spec.ExperimentSpec
        A transient experiment, or its spec.
    """
    from bcgen.experiment import Experiment

    if not isinstance(experiment, Experiment):
        experiment = Experiment(experiment)
    spec = experiment.spec
    tr = spec.transient
    if tr is None:
        raise ConversionError("transient_orbits needs a spec with a 'transient' section")
    where = f"the transient run of {spec.path}" if spec.path else "the transient run"

    def orbits(model_years) -> OrbitalElements:
        years = np.asarray(model_years)
        outside = years[(years < tr.first_model_year) | (years > tr.last_model_year)]
        if outside.size:
            raise ConversionError(
                f"model year {int(outside[0])} is not covered by {where} (model years "
                f"{tr.first_model_year}-{tr.last_model_year})")
        return experiment.orbit_at(tr.epochs_of_model_years(years))

    return orbits


def _fixed_angle_targets(axis: TimeAxis, cal: ModelCalendar, orbits: OrbitalElements, reference,
                         years):
    """Fixed-angle months of every model year, each with its own orbit (``orbits[i]``).

    Each month ends where the next one starts: within a model year that is its own end;
    December ends where the next model year's January starts, so the months tile the
    time axis even when the orbit changes from one model year to the next.
    """
    from bcgen.solar_calendar.months import fixed_angle_months

    if cal.every_year_alike:  # all orbits at once
        table = fixed_angle_months(orbits, cal, reference=reference, year=years[0])
        start_days, end_days = table.start_day, table.end_day
    else:
        tables = [fixed_angle_months(orbits[i], cal, reference=reference, year=y)
                  for i, y in enumerate(years)]
        start_days = np.stack([t.start_day for t in tables])
        end_days = np.stack([t.end_day for t in tables])
    offsets = np.array([axis.year_offset_days(y) for y in years])[:, np.newaxis]
    start = (offsets + start_days).ravel()
    end = np.append(start[1:], offsets[-1, 0] + end_days[-1, -1])
    month = np.tile(np.arange(1, 13), len(years))
    year = np.repeat(np.asarray(years), 12)
    return start, end, month, year


def _calendar_month_targets(axis: TimeAxis, years):
    start, month, year = [], [], []
    cal = axis.calendar
    for y in years:
        start.append(axis.year_offset_days(y) + cal.month_starts_days(y)[:12])
        month.append(np.arange(1, 13))
        year.append(np.full(12, y))
    last = years[-1]
    end_last = axis.year_offset_days(last) + cal.year_length_days(last)
    start = np.concatenate(start)
    return start, np.append(start[1:], end_last), np.concatenate(month), np.concatenate(year)


def _select_covered(axis: TimeAxis, start, end, min_valid_fraction):
    if axis.cyclic:
        return np.ones(start.shape, dtype=bool)
    e = axis.edges_days
    covered = np.clip(np.minimum(end, e[-1]) - np.maximum(start, e[0]), 0.0, None)
    return covered >= min_valid_fraction * (end - start) * (1 - 1e-12)


# --- the conversion ------------------------------------------------------------------------
def _plan(axis: TimeAxis, start, end, method: str, min_valid_fraction: float):
    if axis.kind == "daily":
        w = overlap_weights(axis.edges_days, start, end, period_days=axis.period_days)
        return _AggregatePlan.build(w, min_valid_fraction)
    return MeanPreservingPlan.build(axis.edges_days, start, end, method=method,
                                    cyclic=axis.cyclic, min_valid_fraction=min_valid_fraction)


def _out_dtype(var: xr.DataArray) -> np.dtype:
    dt = var.dtype
    if dt == np.float32:
        return np.dtype(np.float32)
    if np.issubdtype(dt, np.integer) and dt.itemsize <= 2:
        return np.dtype(np.float32)
    if "scale_factor" in var.encoding or "add_offset" in var.encoding:
        packed = np.dtype(var.encoding.get("dtype", dt))
        if np.issubdtype(packed, np.integer) and packed.itemsize <= 2:
            return np.dtype(np.float32)
    return np.dtype(np.float64)


def _unpacked_attrs(var: xr.DataArray, dtype: np.dtype, keep_valid: bool) -> dict:
    """Attributes of a converted variable: packing dropped, valid range in unpacked values.

    ``actual_range`` is dropped (the converted values have another range, CF 1.11 §2.5.1).
    ``valid_min``/``valid_max``/``valid_range`` are kept only when the converted values
    are weighted means of the input values (``keep_valid``: daily means averaged): a
    mean-preserving interpolation may overshoot a bound next to a month at it (sea ice
    at 0 %, a dry month), and readers that mask values outside the valid range would
    then lose those months; a total over a longer month may exceed a monthly maximum.
    """
    attrs = dict(var.attrs)
    scale = var.encoding.get("scale_factor", 1.0)
    offset = var.encoding.get("add_offset", 0.0)
    for key in ("valid_min", "valid_max", "valid_range"):
        if key in attrs and keep_valid:
            attrs[key] = (np.asarray(attrs[key], dtype=np.float64) * scale + offset).astype(dtype)
        else:
            attrs.pop(key, None)
    for key in ("actual_range", "missing_value", "_FillValue", "scale_factor", "add_offset",
                "_Unsigned"):
        attrs.pop(key, None)
    return attrs


def _convert_variable(var: xr.DataArray, dim: str, kernel_plan, n_out: int,
                      decision: cellmethods.ConversionRule, source_days,
                      target_days) -> xr.DataArray:
    """Convert one variable along ``dim``, lazily (dask.array.blockwise) when it is chunked.

    The time axis stays where it is, so the blocks of a (time, lat, lon) variable reach the
    kernel time-first and contiguous; each task gets all the time pieces of one spatial
    block (one per input file of a multi-file set) as a list, not joined. A sum
    (``decision.treatment == "sum"``) is divided by its interval's length in days, the
    mean rate converted, and multiplied by the new interval's length.
    """
    dtype = _out_dtype(var)
    axis = var.dims.index(dim)
    kernel = _Kernel(kernel_plan, dtype, axis)
    data = var.data
    along = (-1,) + (1,) * (var.ndim - axis - 1)
    if decision.treatment == "sum":
        data = data / np.asarray(source_days, dtype=np.float64).reshape(along)
    if var.chunks is not None:  # dask-backed: each task gets the time pieces of a block
        import dask.array

        index = tuple(f"d{i}" for i in range(data.ndim))
        out_index = index[:axis] + ("months",) + index[axis + 1:]
        data = dask.array.blockwise(
            kernel, out_index, data, index, concatenate=False, new_axes={"months": n_out},
            dtype=dtype, meta=np.empty((0,) * data.ndim, dtype=dtype),
            name=f"bcgen-convert-{kernel.token}")
    else:
        data = kernel(np.asarray(data))
    if decision.treatment == "sum":
        data = (data * np.asarray(target_days, dtype=np.float64).reshape(along)).astype(dtype)
    out = xr.DataArray(data, dims=var.dims, name=var.name,
                       coords={k: c for k, c in var.coords.items() if dim not in c.dims})
    out.attrs = _unpacked_attrs(var, dtype, keep_valid=isinstance(kernel_plan, _AggregatePlan)
                                and decision.treatment == "mean")
    out.attrs["cell_methods"] = decision.cell_methods
    fill = np.array(1.0e20, dtype=dtype) if dtype == np.float32 else 1.0e20
    out.encoding = {"_FillValue": fill, "dtype": dtype}
    for key in ("zlib", "complevel", "shuffle"):
        if key in var.encoding:
            out.encoding[key] = var.encoding[key]
    return out


def _orbit_attrs(prefix: str, orbit: OrbitalElements) -> dict[str, object]:
    attrs = {
        f"{prefix}eccentricity": float(orbit.eccentricity),
        f"{prefix}obliquity_deg": float(orbit.obliquity_deg),
        f"{prefix}perihelion_longitude_deg": float(orbit.perihelion_longitude_deg),
        f"{prefix}perihelion_longitude_convention": _ascii(
            PERIHELION_CONVENTIONS["perihelion_longitude"]),
        f"{prefix}sun_longitude_at_perihelion_deg": float(orbit.sun_longitude_at_perihelion_deg),
        f"{prefix}sun_longitude_at_perihelion_convention": _ascii(
            PERIHELION_CONVENTIONS["sun_longitude_at_perihelion"]),
        f"{prefix}solution": str(orbit.solution),
    }
    if orbit.years_from_1950 is not None:
        attrs[f"{prefix}years_from_1950"] = float(orbit.years_from_1950)
    return attrs


def _orbit_record(orbits: OrbitalElements, years: list[int]) -> dict[str, object]:
    """Global attributes of the orbits of ``years``: one orbit, or the first and last year's."""
    if np.all(orbits.eccentricity == orbits.eccentricity[0]) and np.all(
            orbits.obliquity_deg == orbits.obliquity_deg[0]) and np.all(
            orbits.perihelion_longitude_deg == orbits.perihelion_longitude_deg[0]):
        return _orbit_attrs("orbit_", orbits[0])
    attrs: dict[str, object] = {f"{ATTR_PREFIX}orbit": (
        f"each model year has its own orbit ({len(years)} model years, {years[0]}-"
        f"{years[-1]}); the first year's and the last year's are recorded")}
    attrs.update(_orbit_attrs("orbit_first_year_", orbits[0]))
    attrs.update(_orbit_attrs("orbit_last_year_", orbits[-1]))
    return attrs


def _ascii(text: str) -> str:
    return text.replace("ϖ", "varpi").replace("°", " deg").encode("ascii", "replace").decode()


def _decisions(ds, axis: TimeAxis, names, source: str) -> dict:
    """How each variable is converted (:mod:`bcgen.convert.cellmethods`); refuse the others."""
    daily = axis.kind == "daily" and bool(np.all(np.abs(np.diff(axis.edges_days) - 1.0) < 1e-6))
    out = {}
    for name in names:
        cm = ds[name].attrs.get("cell_methods")
        try:
            out[name] = cellmethods.conversion_rule(cm, axis.dim, daily=daily)
        except cellmethods.RefusedStatistic as exc:
            raise ConversionError(
                f"{source}: variable '{name}' has cell_methods {str(cm)!r}: {exc}, so it "
                "cannot be re-averaged over other months; leave the variable out of the "
                "input") from None
    return out


def _convert(ds, axis: TimeAxis, start, end, month, year, *, method, min_valid_fraction,
             attrs, out_cyclic_years, source: str = "input") -> xr.Dataset:
    from bcgen.arguments import fraction

    min_valid_fraction = fraction(min_valid_fraction, "min_valid_fraction")
    dim = axis.dim
    if method not in METHODS:
        raise ConversionError(f"unknown method {method!r}; expected one of {', '.join(METHODS)}")
    if method == "epstein1991" and axis.kind != "daily" and not axis.cyclic:
        raise ConversionError("method epstein1991 applies to climatologies (12 months of one "
                              "repeating year) only; use killworth1996 for a series")
    plan = _plan(axis, start, end, method, min_valid_fraction)
    skip = {dim}
    if axis.bounds_name:
        skip.add(axis.bounds_name)
    out_vars, dropped, converted = {}, [], []
    for name, var in ds.variables.items():
        if name in skip:
            continue
        if dim not in var.dims:
            out_vars[name] = ds[name] if name in ds.coords or name in ds.data_vars else var
            continue
        numeric = np.issubdtype(var.dtype, np.number) and not np.issubdtype(var.dtype,
                                                                            np.complexfloating)
        if not numeric or "flag_values" in var.attrs or "flag_masks" in var.attrs:
            dropped.append(str(name))
            continue
        converted.append(name)
    decisions = _decisions(ds, axis, converted, source)
    source_days = np.diff(axis.edges_days)
    for name in converted:
        out_vars[name] = _convert_variable(ds[name], dim, plan, start.size, decisions[name],
                                           source_days, end - start)
    if dropped:
        warnings.warn(f"variables not converted and left out (not numeric means along "
                      f"'{dim}'): {', '.join(dropped)}", DroppedVariableWarning, stacklevel=3)
    time_ds = _time_coordinate(axis, start, end, out_cyclic_years, ds[dim].attrs,
                               ds[dim].encoding)
    data_vars = {k: v for k, v in out_vars.items() if k not in ds.coords}
    coords = {k: v for k, v in out_vars.items() if k in ds.coords}
    out = xr.Dataset(data_vars, coords=coords)
    out = out.assign_coords({dim: time_ds[dim]})
    bname = next(iter(n for n in time_ds.data_vars))
    out[bname] = time_ds[bname]
    if "month" not in out.variables:
        out = out.assign_coords(month=(dim, month.astype(np.int32), {
            "long_name": "month of the model year (1 = January)", "units": "1"}))
    if (not axis.cyclic or out_cyclic_years is None) and "model_year" not in out.variables:
        out = out.assign_coords(model_year=(dim, year.astype(np.int32), {
            "long_name": "model year of the month", "units": "1"}))
    out.attrs = dict(ds.attrs)
    out.attrs.update(attrs)
    out.attrs[f"{ATTR_PREFIX}method"] = method
    out.attrs[f"{ATTR_PREFIX}method_description"] = (
        METHODS[method][0] if axis.kind != "daily"
        else "exact overlap-weighted mean of the daily (or sub-daily) means")
    out.attrs[f"{ATTR_PREFIX}method_reference"] = (
        METHODS[method][1] if axis.kind != "daily" else "no interpolation needed")
    out.attrs[f"{ATTR_PREFIX}end_rule"] = END_RULES["cyclic" if axis.cyclic else "extrapolate"]
    out.attrs[f"{ATTR_PREFIX}source_time_axis"] = {
        "monthly": "monthly means of fixed-day (calendar) months",
        "daily": "daily or sub-daily means", "any_months": "means over fixed-angle months"}[
        axis.kind] + (" (climatology, cyclic)" if axis.cyclic else " (series)")
    out.attrs[f"{ATTR_PREFIX}missing_data_rule"] = (
        f"a month is the mean of its valid part when that covers at least "
        f"{min_valid_fraction:g} of it, else missing")
    hist = f"bcgen convert: {out.attrs[f'{ATTR_PREFIX}months']} ({method})"
    out.attrs["history"] = (f"{ds.attrs['history']}\n{hist}" if ds.attrs.get("history")
                            else hist)
    return out


#: Time units kept from the input as written ("days since 0001-01-01 00:00:00" and the like).
_KEPT_UNITS = re.compile(r"^\s*(days?|hours?|minutes?|seconds?)\s+since\s+\S", re.IGNORECASE)


def output_time_units(axis: TimeAxis, encoding=None) -> str:
    """Return the time units of a converted file: the input's, as written, when it has some.

    A script that compares raw time numbers between the input and the output (or
    between a file and its round trip) then sees the same origin: the months move,
    the units do not. An input without units (an xarray object built in memory) or
    with units that cannot hold fractional days gets ``days since <first year>-01-01``.
    """
    units = (encoding or {}).get("units")
    if isinstance(units, str) and _KEPT_UNITS.match(units):
        return units
    return f"days since {axis.origin_year:04d}-01-01 00:00:00"


def _time_coordinate(axis: TimeAxis, start, end, cyclic_years, attrs,
                     encoding=None) -> xr.Dataset:
    dim = axis.dim
    tvar_attrs = {k: v for k, v in attrs.items()
                  if k not in ("bounds", "climatology", "units", "calendar")}
    bname = axis.bounds_name or f"{dim}_bnds"
    mid = 0.5 * (start + end)
    cal = axis.calendar
    lower, upper = start.copy(), end.copy()
    link = "bounds"
    if cyclic_years is not None:  # CF climatology (§7.4): first year's start, last year's end
        link = "climatology"
        y1, y2 = cyclic_years
        lower = start - axis.year_offset_days(axis.origin_year) + axis.year_offset_days(y1)
        upper = end - axis.year_offset_days(axis.origin_year) + axis.year_offset_days(y2)
    units = output_time_units(axis, encoding)
    calendar = axis.calendar_name or cal.name  # as the input writes it (365_day stays 365_day)
    times = np.array([axis.date(t) for t in mid], dtype=object)
    bnds = np.array([[axis.date(a), axis.date(b)] for a, b in zip(lower, upper, strict=True)],
                    dtype=object)
    tvar_attrs.update({"standard_name": "time", "axis": "T", link: bname})
    time = xr.Variable((dim,), times, tvar_attrs,
                       encoding={"units": units, "calendar": calendar, "dtype": "float64",
                                 "_FillValue": None})
    bounds = xr.Variable((dim, "bnds"), bnds, {},
                         encoding={"units": units, "calendar": calendar, "dtype": "float64",
                                   "_FillValue": None})
    return xr.Dataset({bname: bounds}, coords={dim: time})


def to_fixed_angle_months(
    ds: xr.Dataset,
    orbit,
    *,
    reference=None,
    anchor: Anchor | str | None = None,
    calendar: ModelCalendar | str | None = None,
    method: Method = "killworth1996",
    cyclic: bool | None = None,
    min_valid_fraction: float = DEFAULT_MIN_VALID_FRACTION,
    source: str = "input",
    model_years: tuple[int, int] | None = None,
) -> xr.Dataset:
    """Means over fixed-angle months from fixed-day monthly or daily means.

    Parameters
    ----------
    ds : xarray.Dataset
        Model output with a decoded CF time axis (numpy- or dask-backed; chunk in space,
        each task reads the whole time axis of its spatial chunk).
    orbit : OrbitalElements, str or callable
        The run's orbit: one orbit (or an epoch such as ``"6ka"``, Berger 1978) for the
        whole input; OrbitalElements of shape (n,), the orbit of each of the n model
        years of the input in order; or a function from an array of model years to
        their orbits (for a transient run: :func:`transient_orbits` of its spec).
        Each model year's months are those of its own orbit; December ends where the
        next model year's January starts.
    reference : OrbitalElements or str, optional
        Orbit whose fixed-day months define the arcs of true longitude (default 1950 CE,
        see :func:`bcgen.solar_calendar.months.fixed_angle_months`).
    anchor : Anchor or str, optional
        Equinox anchor, e.g. ``"03-21 12:00"`` (default: 21 March 12:00, PMIP).
    calendar : ModelCalendar or str, optional
        Must match the file's calendar; a ModelCalendar also gives the anchor.
    method : {"killworth1996", "epstein1991"}
        Interpolation of monthly means (ignored for daily input). ``epstein1991``
        needs all twelve months at a point: one missing month makes that point's
        whole year missing (``killworth1996`` interpolates each run of valid months).
    cyclic : bool, optional
        Force a climatology or a series (default: detected, see :mod:`bcgen.convert.timeaxis`).
    min_valid_fraction : float
        Missing-data rule, see :mod:`bcgen.convert.aggregate`.
    source : str
        Name of the input for error messages.
    model_years : (int, int), optional
        First and last model year to return (a series only): the other years of ``ds``
        only serve as neighbours of these (the interpolation reads across year ends),
        and the global attributes record the orbits of these years alone. Default: all.

    Returns
    -------
    xarray.Dataset
        Same variables on the fixed-angle months, with time bounds, ``month`` and
        (for series) ``model_year`` coordinates and global attributes recording the
        method, orbit, reference orbit, anchor and end rule.
    """
    arguments.conversion(ds, ConversionError, method=method, methods=METHODS, cyclic=cyclic,
                         min_valid_fraction=min_valid_fraction, source=source, orbit=orbit,
                         reference=reference, model_years=model_years)
    axis = read_time_axis(ds, source, cyclic=cyclic)
    cal = _model_calendar(axis, calendar, anchor, source)
    if reference is None:
        from bcgen.orbit import solve

        reference = solve(0.0)
    reference = _scalar_orbit(reference, "reference")
    years = [axis.origin_year] if axis.cyclic else _year_range(axis)
    orbits = _orbits_of_years(orbit, years, source)
    start, end, month, year = _fixed_angle_targets(axis, cal, orbits, reference, years)
    keep = _select_covered(axis, start, end, min_valid_fraction)
    recorded = np.ones(len(years), dtype=bool)
    if model_years is not None:
        if axis.cyclic:
            raise ConversionError(f"{source}: model_years applies to a series, not to a "
                                  "climatology")
        first, last = (int(y) for y in model_years)
        keep &= (year >= first) & (year <= last)
        recorded = (np.asarray(years) >= first) & (np.asarray(years) <= last)
    if not keep.any():
        raise ConversionError(f"{source}: no fixed-angle month is covered by the data"
                              + ("" if model_years is None else
                                 f" in model years {model_years[0]}-{model_years[1]}"))
    start, end, month, year = start[keep], end[keep], month[keep], year[keep]
    if not axis.cyclic:  # a month reaching beyond the series: its covered part (its value's)
        start = np.maximum(start, axis.edges_days[0])
        end = np.minimum(end, axis.edges_days[-1])
    attrs = {f"{ATTR_PREFIX}months": "fixed-angle months: each month spans the arc of true "
             "solar longitude that the fixed-day month spans in the reference orbit",
             f"{ATTR_PREFIX}calendar": cal.name,
             f"{ATTR_PREFIX}anchor": cal.anchor.describe()}
    attrs.update(_orbit_record(orbits[recorded], [y for y, r in zip(years, recorded,
                                                                    strict=True) if r]))
    attrs.update(_orbit_attrs("reference_orbit_", reference))
    attrs[f"{ATTR_PREFIX}annual_mean"] = ANNUAL_MEAN_NOTE
    out = _convert(ds, dataclasses.replace(axis, calendar=cal), start, end,
                   month, year, method=method, min_valid_fraction=min_valid_fraction,
                   attrs=attrs, out_cyclic_years=axis.climatology, source=source)
    comment = ds.attrs.get("comment")
    out.attrs["comment"] = f"{comment}\n{ANNUAL_MEAN_NOTE}" if comment else ANNUAL_MEAN_NOTE
    return out


def to_fixed_day_months(
    ds: xr.Dataset,
    *,
    method: Method = "killworth1996",
    cyclic: bool | None = None,
    min_valid_fraction: float = DEFAULT_MIN_VALID_FRACTION,
    source: str = "input",
) -> xr.Dataset:
    """Go back: calendar-month means from means over fixed-angle months.

    The fixed-angle months are read from the time bounds (as written by
    :func:`to_fixed_angle_months`), so no orbit is needed. Interpolation and rules as
    in :func:`to_fixed_angle_months`.
    """
    arguments.conversion(ds, ConversionError, method=method, methods=METHODS, cyclic=cyclic,
                         min_valid_fraction=min_valid_fraction, source=source)
    axis = read_time_axis(ds, source, cyclic=cyclic, expect="any_months")
    if axis.cyclic:
        years = [axis.date(0.5 * (axis.edges_days[0] + axis.edges_days[-1])).year]
    else:
        years = _year_range(axis)
        first = axis.date(axis.edges_days[0]).year
        if first < years[0]:
            years.insert(0, first)
    start, end, month, year = _calendar_month_targets(axis, years)
    keep = _select_covered(axis, start, end, min_valid_fraction)
    if not keep.any():
        raise ConversionError(f"{source}: no calendar month is covered by the data")
    start, end, month, year = start[keep], end[keep], month[keep], year[keep]
    attrs = {f"{ATTR_PREFIX}months": "fixed-day months: the calendar's months",
             f"{ATTR_PREFIX}calendar": axis.calendar.name}
    for key in list(ds.attrs):
        if key.startswith(ATTR_PREFIX):
            attrs.setdefault(f"source_{key}", ds.attrs[key])
    dropped_keys = {k for k in ds.attrs if k.startswith(ATTR_PREFIX)}
    clean = ds.copy()
    clean.attrs = {k: v for k, v in ds.attrs.items() if k not in dropped_keys}
    comment = str(clean.attrs.get("comment", "")).replace(ANNUAL_MEAN_NOTE, "").strip("\n")
    if comment:
        clean.attrs["comment"] = comment
    else:
        clean.attrs.pop("comment", None)
    drop = [c for c in ("month", "model_year") if c in clean.coords]
    clean = clean.drop_vars(drop)
    return _convert(clean, axis, start, end, month, year, method=method,
                    min_valid_fraction=min_valid_fraction, attrs=attrs,
                    out_cyclic_years=axis.climatology, source=source)
