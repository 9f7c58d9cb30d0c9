"""The keys of an experiment spec, as data: type, default, allowed values and meaning.

:data:`SCHEMA` is the one description of the format. The loader checks every
spec against it (unknown keys, types, ranges, closed vocabularies) and the
documentation and tests list every key from it (:func:`iter_keys`).

Defaults and where they come from
---------------------------------
``solar_constant_wm2: 1360.747``
    The CMIP6 piControl total solar irradiance, the mean of the CMIP6 solar
    forcing over 1850-01-01 to 1873-01-28 (Matthes et al. 2017, GMD 10,
    2247-2302, doi:10.5194/gmd-10-2247-2017), which PMIP4 keeps for its
    paleo time slices (Otto-Bliesner et al. 2017; Kageyama et al. 2017).
``calendar: {anchor: march_equinox, date: "03-21 12:00"}``
    The PMIP protocols fix the March (vernal) equinox at 21 March, 12:00 of
    the model calendar (PMIP3 and PMIP4 experiment-design pages).
``calendar.name: noleap``
    A 365-day year without leap days: common practice in PMIP models (no
    protocol prescribes a calendar).
``orbit.solution: berger1978``
    The PMIP protocols compute their orbital parameters with Berger (1978).
``insolation.reference_epoch: 1950CE``
    Fixed-angle months span the arcs of true longitude that the months of the
    model calendar span in the 1950 CE orbit (bcgen's convention, see the README
    section "Calendars, anchoring and months"; 1950 CE is the "present" of the BP
    time scale).
``insolation.daily_method: midday``
    The daily mean of each calendar day is taken with the Sun's position at
    12:00 of that day; this reproduces the PMIP1 insolation check tables
    (Bonfils et al. 1998, appendix "About insolation computations").
``output.compression_level: 4``, ``output.shuffle: true``
    Common practice: zlib levels above about 4 cost time for little gain on
    smooth fields, and the shuffle filter helps floating-point data.
``geography.connectivity: edge``, ``geography.min_depth_m: 10``
    An ocean model exchanges water through cell faces only, and needs a few metres
    of water in every wet cell; 10 m is a round value of common practice.
``geography.basins: lake``
    Basins below sea level that the world ocean does not reach (the Caspian) stay
    water bodies, labelled, and count as land in the land fraction, as CMIP's
    land-area fraction counts lakes (common practice).
``transient.years_per_file: 100``
    Common practice for model forcing files (a century per file).
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field, replace
from types import MappingProxyType
from typing import Literal

from bcgen.geography.options import (
    BASIN_POLICIES,
    CONNECTIVITIES,
    ICE_KINDS,
    SHALLOW_POLICIES,
    STRAIT_ACTIONS,
)
from bcgen.insolation.daily import (  # how the daily mean of a day is formed; the CMIP6 S0
    CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    DAILY_METHODS,
)
from bcgen.orbit import PERIHELION_CONVENTIONS, SOLUTIONS
from bcgen.solar_calendar.calendars import ANCHOR_KINDS, CALENDAR_NAMES, MAX_MODEL_YEAR

KeyType = Literal[
    "string",
    "name",
    "number",
    "integer",
    "boolean",
    "epoch",
    "choice",
    "path",
    "mapping",
    "variants",
    "list",
]

# ---------------------------------------------------------------------------------------------
# Closed vocabularies
# ---------------------------------------------------------------------------------------------

#: What the calendar date anchors: the March equinox or the perihelion passage.
ANCHORS = tuple(ANCHOR_KINDS)
#: Grid kinds.
GRID_KINDS = ("regular", "gaussian", "zonal", "file")
#: Products of a time slice and what each needs.
PRODUCTS = (
    "orbit",
    "solar_constant",
    "greenhouse_gases",
    "daily_insolation",
    "monthly_insolation_fixed_day",
    "monthly_insolation_fixed_angle",
    "month_table",
    "timestep_table",
    "templates",
)
#: Products that a transient run can write for every model year.
TRANSIENT_PRODUCTS = (
    "orbit",
    "greenhouse_gases",
    "daily_insolation",
    "monthly_insolation_fixed_day",
    "monthly_insolation_fixed_angle",
    "month_table",
)
#: Products computed on the grid.
GRIDDED_PRODUCTS = (
    "daily_insolation",
    "monthly_insolation_fixed_day",
    "monthly_insolation_fixed_angle",
)
#: Templates shipped with bcgen, chosen by name in ``templates``.
BUNDLED_TEMPLATES = ("namelist", "env", "summary_json", "cmip_attributes")
#: Placeholders of ``output.file_pattern``.
FILE_PATTERN_FIELDS = {
    "experiment": "experiment.name",
    "product": "the product name (orbit, daily_insolation, ...)",
    "epoch": "the epoch as written in the spec, or START-END for a transient run",
    "calendar": "calendar.name",
    "grid": "a short grid label such as 'zonal1deg', 'regular2deg', 'gaussian48' or 'file'",
    "first_year": "first model year in the file (transient runs)",
    "last_year": "last model year in the file (transient runs)",
}
#: Units of greenhouse-gas values and their factor to a mole fraction (mol mol-1).
GAS_UNITS = {
    "ppm": 1e-6,
    "ppb": 1e-9,
    "ppt": 1e-12,
    "1e-6": 1e-6,
    "1e-9": 1e-9,
    "1e-12": 1e-12,
    "1": 1.0,
}
#: Greenhouse gases by spec name, with their CF standard name (standard-name table v93).
GASES = {
    "co2": "mole_fraction_of_carbon_dioxide_in_air",
    "ch4": "mole_fraction_of_methane_in_air",
    "n2o": "mole_fraction_of_nitrous_oxide_in_air",
    "cfc11": "mole_fraction_of_cfc11_in_air",
    "cfc12": "mole_fraction_of_cfc12_in_air",
    "cfc113": "mole_fraction_of_cfc113_in_air",
    "cfc114": "mole_fraction_of_cfc114_in_air",
    "cfc115": "mole_fraction_of_cfc115_in_air",
    "hcfc22": "mole_fraction_of_hcfc22_in_air",
    "hcfc141b": "mole_fraction_of_hcfc141b_in_air",
    "hcfc142b": "mole_fraction_of_hcfc142b_in_air",
    "hfc23": "mole_fraction_of_hfc23_in_air",
    "hfc32": "mole_fraction_of_hfc32_in_air",
    "hfc125": "mole_fraction_of_hfc125_in_air",
    "hfc134a": "mole_fraction_of_hfc134a_in_air",
    "hfc143a": "mole_fraction_of_hfc143a_in_air",
    "hfc152a": "mole_fraction_of_hfc152a_in_air",
    "hfc227ea": "mole_fraction_of_hfc227ea_in_air",
    "hfc245fa": "mole_fraction_of_hfc245fa_in_air",
    "sf6": "mole_fraction_of_sulfur_hexafluoride_in_air",
    "nf3": "mole_fraction_of_nitrogen_trifluoride_in_air",
    "cf4": "mole_fraction_of_carbon_tetrafluoride_in_air",
    "pfc116": "mole_fraction_of_pfc116_in_air",
    "ccl4": "mole_fraction_of_carbon_tetrachloride_in_air",
    "ch3cl": "mole_fraction_of_methyl_chloride_in_air",
    "ch3br": "mole_fraction_of_methyl_bromide_in_air",
    "halon1211": "mole_fraction_of_halon1211_in_air",
    "halon1301": "mole_fraction_of_halon1301_in_air",
    "halon2402": "mole_fraction_of_halon2402_in_air",
}
#: Ways to interpolate a greenhouse-gas table between its ages.
GAS_INTERPOLATIONS = ("linear", "nearest")
#: How ``solar_constant_wm2`` is scaled to the epoch (``none``: used as given).
SOLAR_CONSTANT_SCALINGS = ("none", "gough1981")
#: Global attributes that bcgen writes itself and a spec may not set.
RESERVED_ATTRIBUTES = (
    "Conventions",
    "history",
    "creation_date",
    "bcgen_version",
    "bcgen_spec",
    "orbital_solution",
    "tracking_id",
)

# ---------------------------------------------------------------------------------------------
# Defaults (each justified in the module docstring)
# ---------------------------------------------------------------------------------------------
DEFAULT_SOLAR_CONSTANT_WM2 = CMIP6_PICONTROL_SOLAR_CONSTANT_WM2
DEFAULT_CALENDAR = "noleap"
DEFAULT_ANCHOR = "march_equinox"
DEFAULT_ANCHOR_DATE = "03-21 12:00"
DEFAULT_SOLUTION = "berger1978"
DEFAULT_REFERENCE_EPOCH = "1950CE"
DEFAULT_DAILY_METHOD = "midday"
DEFAULT_DIRECTORY = "out"
DEFAULT_FILE_PATTERN = "{experiment}_{product}.nc"
DEFAULT_TRANSIENT_FILE_PATTERN = "{experiment}_{product}_{first_year}-{last_year}.nc"
DEFAULT_COMPRESSION_LEVEL = 4
DEFAULT_YEARS_PER_FILE = 100


@dataclass(frozen=True)
class Key:
    """One key of the spec format.

    Attributes
    ----------
    type : str
        ``string`` (free text), ``name`` (a string matching ``pattern``),
        ``number``, ``integer``, ``boolean`` (true/false only), ``epoch``
        (a string read by :func:`bcgen.epochs.parse_epoch`), ``choice`` (one of
        ``choices``), ``path`` (a file, relative to the spec's folder),
        ``mapping`` (fixed ``keys``; or keys from ``key_choices`` or matching
        ``key_pattern``, each with a value described by ``item``),
        ``variants`` (a mapping whose ``kind`` selects the keys), ``list``
        (items described by ``item``).
    doc : str
        What the key means, with its unit.
    """

    type: KeyType
    doc: str
    required: bool = False
    default: object = None
    choices: tuple[str, ...] = ()
    noun: str = "value"
    keys: Mapping[str, Key] | None = None
    variants: Mapping[str, Mapping[str, Key]] | None = None
    item: Key | None = None
    key_pattern: str | None = None
    key_choices: tuple[str, ...] = ()
    pattern: str | None = None
    minimum: float | None = None
    maximum: float | None = None
    exclusive_minimum: bool = False
    exclusive_maximum: bool = False
    min_items: int = 0
    example: str = field(default="", compare=False)

    def range_text(self) -> str:
        """Return the allowed range in interval notation, e.g. ``[0, 1)``; empty if unbounded."""
        if self.minimum is None and self.maximum is None:
            return ""
        lo = "(" if self.exclusive_minimum or self.minimum is None else "["
        hi = ")" if self.exclusive_maximum or self.maximum is None else "]"
        lo_v = "-inf" if self.minimum is None else f"{self.minimum:g}"
        hi_v = "inf" if self.maximum is None else f"{self.maximum:g}"
        return f"{lo}{lo_v}, {hi_v}{hi}"


def _map(**keys: Key) -> Mapping[str, Key]:
    return MappingProxyType(keys)


_LAT = Key("number", "latitude, degrees north", minimum=-90, maximum=90)
_LON = Key("number", "longitude, degrees east", minimum=-180, maximum=360)


def _step(doc: str) -> Key:
    return Key("number", doc, minimum=0, maximum=180, exclusive_minimum=True)


_RESOLUTION = _step(
    "grid spacing in degrees, of both axes (regular) or of latitude (zonal); "
    "180 and 360 must be multiples of it"
)
_LAT_CENTRES = Key(
    "list",
    "latitudes of the cell centres, degrees north, strictly monotonic",
    item=_LAT,
    min_items=1,
)
_LON_CENTRES = Key(
    "list",
    "longitudes of the cell centres, degrees east, strictly increasing and spanning less than 360",
    item=_LON,
    min_items=1,
)

_FIXED_NOTE = "only with solution 'fixed'"
_ECC = Key("number", "eccentricity e (dimensionless)", minimum=0, maximum=1, exclusive_maximum=True)
_OBL = Key("number", "obliquity of the ecliptic, degrees", minimum=0, maximum=90)
_PERI = Key(
    "number",
    "longitude of perihelion, degrees, in `perihelion_convention`",
    minimum=0,
    maximum=360,
    exclusive_maximum=True,
)
_PERI_CONV = Key(
    "choice",
    "the convention of `perihelion_deg`: "
    + "; ".join(f"{k}: {v}" for k, v in PERIHELION_CONVENTIONS.items()),
    choices=tuple(PERIHELION_CONVENTIONS),
    noun="perihelion convention",
)



def _fixed_only(key: Key) -> Key:
    """Return the key as one of ``orbit`` that only the ``fixed`` solution reads."""
    return replace(key, doc=key.doc + "; " + _FIXED_NOTE)


def _model_year(doc: str) -> Key:
    return Key("integer", doc, default=1, minimum=1, maximum=MAX_MODEL_YEAR)


def _templates(doc: str) -> Key:
    """Return a list of templates: bundled names or the paths of the user's own."""
    return Key(
        "list",
        doc + "a bundled name (" + ", ".join(BUNDLED_TEMPLATES) + ") or the path of your own "
        "template",
        item=Key("string", "a template"),
        min_items=1,
    )


#: A point of the globe: latitude and longitude, both required.
_POINT = Key(
    "mapping",
    "a point",
    keys=_map(lat_deg=replace(_LAT, required=True), lon_deg=replace(_LON, required=True)),
)
#: The NetCDF file of a geography input.
_NETCDF_FILE = Key("path", "NetCDF file, relative to the spec's folder", required=True)


def _netcdf_variable(doc: str, variable_doc: str, **more: Key) -> Key:
    """Return a geography input read from one variable of a NetCDF file (and ``more`` keys)."""
    return Key(
        "mapping",
        doc,
        keys=_map(
            file=_NETCDF_FILE, variable=Key("string", variable_doc, required=True), **more
        ),
    )

_GAS = Key(
    "mapping",
    "a gas concentration: a value and its units",
    keys=_map(
        value=Key("number", "the concentration, in `units`", required=True, minimum=0),
        units=Key(
            "choice",
            "units of `value`: ppm, ppb, ppt, or the CF/UDUNITS factors "
            "1e-6, 1e-9, 1e-12, or 1 (a mole fraction)",
            required=True,
            choices=tuple(GAS_UNITS),
            noun="units",
        ),
    ),
)

SCHEMA: Mapping[str, Key] = _map(
    experiment=Key(
        "mapping",
        "what the experiment is",
        required=True,
        keys=_map(
            name=Key(
                "name",
                "short name used in file names and attributes: letters, digits, '_', '.', '-'",
                required=True,
                pattern=r"[A-Za-z0-9_.-]+",
            ),
            description=Key(
                "string", "one or more sentences saying what the experiment is", default=""
            ),
        ),
    ),
    epoch=Key(
        "epoch",
        "the epoch of a time slice, such as '6ka', '127 ka BP' or '1850CE' "
        "(see bcgen.epochs); a spec has either 'epoch' or 'transient'",
        example="6ka",
    ),
    transient=Key(
        "mapping",
        "a transient run through a range of epochs (instead of 'epoch')",
        keys=_map(
            start_epoch=Key("epoch", "epoch of the first model year", required=True),
            end_epoch=Key("epoch", "epoch of the last model year", required=True),
            first_model_year=_model_year("the model year that starts the run"),
            acceleration=Key(
                "integer",
                "orbital acceleration: years of orbit per model year",
                default=1,
                minimum=1,
            ),
            years_per_file=Key(
                "integer",
                "model years in each output file",
                default=DEFAULT_YEARS_PER_FILE,
                minimum=1,
            ),
            greenhouse_gas_table=Key(
                "path",
                "CSV table of greenhouse gases by age (columns "
                "named with their units), interpolated to each model year",
            ),
            greenhouse_gas_interpolation=Key(
                "choice",
                "how the gas table is interpolated",
                default="linear",
                choices=GAS_INTERPOLATIONS,
                noun="interpolation",
            ),
        ),
    ),
    orbit=Key(
        "mapping",
        "where the orbital elements come from",
        keys=_map(
            solution=Key(
                "choice",
                "berger1978 (the series of Berger 1978), nbody (bcgen's integration "
                "of the planets from DE421), table (interpolated from `table`) or fixed "
                "(explicit values)",
                default=DEFAULT_SOLUTION,
                choices=tuple(SOLUTIONS),
                noun="orbital solution",
            ),
            table=Key(
                "path",
                "orbit table (CSV or NetCDF, see bcgen.orbit.table); only with solution 'table'",
            ),
            eccentricity=_fixed_only(_ECC),
            obliquity_deg=_fixed_only(_OBL),
            perihelion_deg=_fixed_only(_PERI),
            perihelion_convention=_fixed_only(_PERI_CONV),
            idealized=Key(
                "boolean",
                "true for a deliberately non-Earth orbit: lifts the check "
                "that e and obliquity lie in Earth's range",
                default=False,
            ),
            expected=Key(
                "mapping",
                "published values the computed orbit is checked against "
                "(time slices only); each is compared to the digits written",
                keys=_map(
                    source=Key("string", "where the values are published", required=True),
                    eccentricity=_ECC,
                    obliquity_deg=_OBL,
                    perihelion_deg=_PERI,
                    perihelion_convention=replace(
                        _PERI_CONV, doc=_PERI_CONV.doc + "; required with perihelion_deg"
                    ),
                ),
            ),
        ),
    ),
    solar_constant_wm2=Key(
        "number",
        "total solar irradiance at 1 au, W m-2",
        default=DEFAULT_SOLAR_CONSTANT_WM2,
        minimum=0,
        maximum=5000,
        exclusive_minimum=True,
    ),
    solar_constant_scaling=Key(
        "choice",
        "gough1981 scales solar_constant_wm2 (today's Sun) to the epoch for the Sun's "
        "evolution, S0 / (1 + 0.4 age / 4.57 Gyr) (Gough 1981, Solar Physics 74, 21; a "
        "transient run takes its start epoch); none uses it as given",
        default="none",
        choices=SOLAR_CONSTANT_SCALINGS,
        noun="solar constant scaling",
    ),
    greenhouse_gases=Key(
        "mapping",
        "gas concentrations by name (" + ", ".join(GASES) + ")",
        key_choices=tuple(GASES),
        item=_GAS,
        noun="gas",
    ),
    calendar=Key(
        "mapping",
        "the model calendar and how the orbit is placed in it",
        keys=_map(
            name=Key(
                "choice",
                "CF calendar name",
                default=DEFAULT_CALENDAR,
                choices=CALENDAR_NAMES,
                noun="calendar",
            ),
            anchor=Key(
                "choice",
                "the event fixed at `date`",
                default=DEFAULT_ANCHOR,
                choices=ANCHORS,
                noun="anchor",
            ),
            date=Key(
                "string",
                "'MM-DD HH:MM' of the model calendar at which the anchor event "
                "happens (default '03-21 12:00' for the March equinox; required with "
                "anchor 'perihelion')",
                default=DEFAULT_ANCHOR_DATE,
            ),
            model_year=_model_year(
                "the model year a time slice is dated in (transient runs "
                "use transient.first_model_year)"
            ),
        ),
    ),
    grid=Key(
        "variants",
        "the grid of the insolation products, chosen by `kind`",
        variants=_map(
            regular=_map(
                resolution_deg=_RESOLUTION,
                lat_resolution_deg=_step(
                    "latitude spacing in degrees; 180 must be a multiple of it"
                ),
                lon_resolution_deg=_step(
                    "longitude spacing in degrees; 360 must be a multiple of it"
                ),
                latitudes_deg=_LAT_CENTRES,
                longitudes_deg=_LON_CENTRES,
            ),
            gaussian=_map(
                nlat=Key(
                    "integer",
                    "number of Gaussian latitudes (even)",
                    required=True,
                    minimum=2,
                    maximum=20000,
                ),
                nlon=Key(
                    "integer", "number of longitudes (default 2 × nlat)", minimum=1, maximum=40000
                ),
            ),
            zonal=_map(
                resolution_deg=_RESOLUTION,
                latitudes_deg=_LAT_CENTRES,
            ),
            file=_map(
                path=Key("path", "a NetCDF file whose latitude/longitude are used", required=True),
                lat_name=Key(
                    "string",
                    "name of the latitude variable (default: found by CF standard_name or units)",
                ),
                lon_name=Key(
                    "string",
                    "name of the longitude variable (default: found by CF standard_name or units)",
                ),
            ),
        ),
    ),
    insolation=Key(
        "mapping",
        "how insolation is computed",
        keys=_map(
            daily_method=Key(
                "choice",
                "midday: the Sun's position at 12:00 of each day; "
                "day_average: averaged over the day",
                default=DEFAULT_DAILY_METHOD,
                choices=tuple(DAILY_METHODS),
                noun="daily method",
            ),
            reference_epoch=Key(
                "epoch",
                "the epoch of the reference orbit (Berger 1978) whose "
                "month arcs define fixed-angle months",
                default=DEFAULT_REFERENCE_EPOCH,
            ),
        ),
    ),
    products=Key(
        "list",
        "what to produce: " + ", ".join(PRODUCTS),
        required=True,
        item=Key("choice", "a product", choices=PRODUCTS, noun="product"),
        min_items=1,
    ),
    timestep_table=Key(
        "mapping",
        "the per-timestep reference table",
        keys=_map(
            timestep_minutes=Key(
                "number",
                "model timestep, minutes (a divisor of 1440)",
                required=True,
                minimum=0,
                maximum=1440,
                exclusive_minimum=True,
            ),
            points=Key(
                "list",
                "points where instantaneous insolation is tabulated",
                required=True,
                min_items=1,
                item=_POINT,
            ),
            days=Key(
                "list",
                "days of the model year to tabulate (1 = 1 January); default all",
                item=Key("integer", "a day of the model year", minimum=1, maximum=366),
                min_items=1,
            ),
        ),
    ),
    templates=_templates("templates to render: "),
    attribute_templates=_templates(
        "metadata templates: each renders to a JSON object of global attributes that is "
        "added to every NetCDF file of a time-slice build; "
    ),
    geography=Key(
        "mapping",
        "paleogeography on the spec's grid (a time slice on a latitude-longitude grid): "
        "relief, bathymetry, land and ice fractions, the land-sea mask and a change report",
        keys=_map(
            present=Key(
                "mapping",
                "the model's present-day relief (metres above present sea level, negative "
                "under the sea): one `variable`, or `orography` and `bathymetry`",
                required=True,
                keys=_map(
                    file=_NETCDF_FILE,
                    variable=Key("string", "the relief variable (units of length)"),
                    orography=Key("string", "surface height on land (0 on the sea), m"),
                    bathymetry=Key("string", "sea depth, positive down (0 on land), m"),
                ),
            ),
            reconstruction=Key(
                "mapping",
                "a reconstruction's surface at the epoch and at 0 ka, for the anomaly method",
                keys=_map(
                    file=_NETCDF_FILE,
                    epoch_variable=Key("string", "surface at the epoch (length units)",
                                       required=True),
                    present_variable=Key("string", "surface at 0 ka (length units)",
                                         required=True),
                    epoch_land_variable=Key("string", "the reconstruction's own land mask at "
                                            "the epoch (land area fraction 0 to 1, or binary)"),
                    present_land_variable=Key("string", "its land mask at 0 ka; needs "
                                              "epoch_land_variable"),
                    sea_level_variable=Key("string", "a variable holding the sea-level change "
                                           "of the epoch (one value, length units), instead "
                                           "of sea_level_change_m"),
                ),
            ),
            ice=_netcdf_variable(
                "land ice at the epoch",
                "the ice variable",
                kind=Key("choice", "what the variable holds: thickness (length units) or "
                         "fraction (area fraction, 1 or %)", default="thickness",
                         choices=ICE_KINDS, noun="ice kind"),
            ),
            sea_level_change_m=Key("number", "sea level at the epoch minus today's, m "
                                   "(negative in a glacial)", default=0.0,
                                   minimum=-1000.0, maximum=1000.0),
            connectivity=Key("choice", "which neighbours connect ocean cells in the flood "
                             "fill: edge (faces only, as ocean models need) or corner",
                             default="edge", choices=CONNECTIVITIES, noun="connectivity"),
            basins=Key("choice", "basins below sea level not connected to the world ocean: "
                       "lake (kept as labelled lakes) or land", default="lake",
                       choices=BASIN_POLICIES, noun="basin policy"),
            min_depth_m=Key("number", "shallowest ocean cell, m", default=10.0, minimum=0.0),
            shallow_cells=Key("choice", "ocean cells shallower than min_depth_m: deepen or land",
                              default="deepen", choices=SHALLOW_POLICIES, noun="policy"),
            mean_salinity=Key("number", "present global-mean ocean salinity (for the implied "
                              "salinity change), e.g. 34.7", minimum=0.0,
                              exclusive_minimum=True),
            salinity=_netcdf_variable(
                "a salinity climatology (depth, lat, lon) to compute the present mean from",
                "the salinity variable",
            ),
            straits=Key(
                "list",
                "strait rules: passages to keep open or closed on the grid",
                min_items=1,
                item=Key(
                    "mapping",
                    "a strait rule",
                    keys=_map(
                        name=Key("string", "your name for the strait (used in the report)",
                                 required=True),
                        action=Key("choice", "open (carve ocean) or close (make land)",
                                   required=True, choices=STRAIT_ACTIONS, noun="action"),
                        path=Key("list", "points along the strait, in order", min_items=2,
                                 item=_POINT),
                        box=Key("mapping", "cells whose centres lie in a box", keys=_map(
                            lat_min_deg=replace(_LAT, required=True),
                            lat_max_deg=replace(_LAT, required=True),
                            lon_min_deg=replace(_LON, required=True),
                            lon_max_deg=replace(_LON, required=True))),
                        width_cells=Key("integer", "width of the passage in cells", default=1,
                                        minimum=1, maximum=20),
                        depth_m=Key("number", "depth of the carved cells, m (open only)",
                                    default=0.0, minimum=0.0),
                    ),
                ),
            ),
        ),
    ),
    output=Key(
        "mapping",
        "where and how files are written",
        keys=_map(
            directory=Key(
                "string",
                "output folder, relative to the working directory (`bcgen build -o` overrides it)",
                default=DEFAULT_DIRECTORY,
            ),
            file_pattern=Key(
                "string",
                "NetCDF file name with placeholders "
                + ", ".join("{" + k + "}" for k in FILE_PATTERN_FIELDS)
                + f" (default '{DEFAULT_FILE_PATTERN}'; for a transient run "
                f"'{DEFAULT_TRANSIENT_FILE_PATTERN}')",
                default=DEFAULT_FILE_PATTERN,
            ),
            compression_level=Key(
                "integer",
                "zlib level, 0 (none) to 9",
                default=DEFAULT_COMPRESSION_LEVEL,
                minimum=0,
                maximum=9,
            ),
            shuffle=Key(
                "boolean", "apply the HDF5 shuffle filter before compression", default=True
            ),
        ),
    ),
    attributes=Key(
        "mapping",
        "global attributes added to every file (string values), "
        "e.g. institution, contact, license, references",
        key_pattern=r"[A-Za-z][A-Za-z0-9_]*",
        item=Key("string", "an attribute value"),
        noun="attribute",
    ),
)


def iter_keys(schema: Mapping[str, Key] = SCHEMA, prefix: str = "") -> Iterator[tuple[str, Key]]:
    """Yield ``(dotted path, Key)`` for every key of the format, depth first.

    Keys of one variant of ``grid`` are yielded once per variant that has them;
    list items are shown as ``path[]``.
    """
    for name, key in schema.items():
        path = f"{prefix}{name}"
        yield path, key
        if key.keys is not None:
            yield from iter_keys(key.keys, path + ".")
        if key.variants is not None:
            yield (
                f"{path}.kind",
                Key(
                    "choice",
                    "the kind of grid",
                    required=True,
                    choices=tuple(key.variants),
                    noun="grid kind",
                ),
            )
            seen: set[str] = set()
            for variant in key.variants.values():
                for sub_path, sub_key in iter_keys(variant, path + "."):
                    if sub_path not in seen:
                        seen.add(sub_path)
                        yield sub_path, sub_key
        if key.type == "list" and key.item is not None and key.item.keys is not None:
            yield from iter_keys(key.item.keys, path + "[].")
        if key.type == "mapping" and key.item is not None:
            yield f"{path}.<{key.noun}>", key.item
            if key.item.keys is not None:
                yield from iter_keys(key.item.keys, f"{path}.<{key.noun}>.")
