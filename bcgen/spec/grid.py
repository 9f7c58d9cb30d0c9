"""``grid:`` the grid of the insolation products, as a frozen, validated dataclass.

This module only states and checks the grid; :mod:`bcgen.grids` builds the
coordinates and cell bounds from it.

==========  ===================================================================
kind        keys
==========  ===================================================================
regular     latitude from ``resolution_deg``, ``lat_resolution_deg`` or
            ``latitudes_deg``; longitude from ``resolution_deg``,
            ``lon_resolution_deg`` or ``longitudes_deg`` (one source each)
gaussian    ``nlat`` (even), optional ``nlon`` (default 2 × nlat)
zonal       ``resolution_deg`` or ``latitudes_deg`` (latitude only)
file        ``path`` of a NetCDF file; optional ``lat_name``, ``lon_name``
==========  ===================================================================
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from pathlib import Path

import numpy as np

from bcgen.spec import schema as S
from bcgen.spec.common import FieldError, check_choice, check_number, existing_file


@dataclass(frozen=True)
class GridSpec:
    """``grid:`` a regular, Gaussian, zonal or file-defined grid (see the module docstring)."""

    kind: str
    resolution_deg: float | None = None
    lat_resolution_deg: float | None = None
    lon_resolution_deg: float | None = None
    latitudes_deg: tuple[float, ...] | None = None
    longitudes_deg: tuple[float, ...] | None = None
    nlat: int | None = None
    nlon: int | None = None
    path: Path | None = None
    lat_name: str | None = None
    lon_name: str | None = None

    def __post_init__(self) -> None:
        check_choice("grid.kind", self.kind, S.GRID_KINDS, "grid kind")
        allowed = S.SCHEMA["grid"].variants[self.kind]
        for f in fields(self):
            if f.name != "kind" and getattr(self, f.name) is not None and f.name not in allowed:
                raise FieldError(
                    f"grid.{f.name}",
                    f"not used by grid kind {self.kind!r}; it takes {', '.join(allowed)}",
                )
        for name in ("latitudes_deg", "longitudes_deg"):
            if getattr(self, name) is not None:
                object.__setattr__(self, name, tuple(getattr(self, name)))
        getattr(self, f"_check_{self.kind}")()

    # --- per kind ---------------------------------------------------------------------------
    def _check_regular(self) -> None:
        self._one_source("latitude", ("resolution_deg", "lat_resolution_deg", "latitudes_deg"))
        self._one_source("longitude", ("resolution_deg", "lon_resolution_deg", "longitudes_deg"))
        for key, span in (
            ("resolution_deg", 180.0),
            ("lat_resolution_deg", 180.0),
            ("lon_resolution_deg", 360.0),
        ):
            self._check_step(key, span)
        self._check_latitudes()
        self._check_longitudes()

    def _check_gaussian(self) -> None:
        if self.nlat is None:
            raise FieldError(
                "grid.nlat",
                "required with grid kind 'gaussian' (an even number of latitudes, e.g. 48, 64, 96)",
            )
        if (
            isinstance(self.nlat, bool)
            or not isinstance(self.nlat, int)
            or self.nlat < 2
            or self.nlat % 2
        ):
            raise FieldError(
                "grid.nlat", f"expected an even whole number from 2, got {self.nlat!r}"
            )
        if self.nlon is not None and (
            isinstance(self.nlon, bool) or not isinstance(self.nlon, int) or self.nlon < 1
        ):
            raise FieldError("grid.nlon", f"expected a whole number from 1, got {self.nlon!r}")

    def _check_zonal(self) -> None:
        self._one_source("latitude", ("resolution_deg", "latitudes_deg"))
        self._check_step("resolution_deg", 180.0)
        self._check_latitudes()

    def _check_file(self) -> None:
        if self.path is None:
            raise FieldError(
                "grid.path",
                "required with grid kind 'file': a NetCDF file with latitude and longitude",
            )
        object.__setattr__(self, "path", existing_file("grid.path", self.path, "grid file"))
        for key in ("lat_name", "lon_name"):
            value = getattr(self, key)
            if value is not None and (not isinstance(value, str) or not value.strip()):
                raise FieldError(f"grid.{key}", f"expected a variable name, got {value!r}")

    # --- helpers -----------------------------------------------------------------------------
    def _one_source(self, what: str, keys: tuple[str, ...]) -> None:
        given = [k for k in keys if getattr(self, k) is not None]
        if not given:
            raise FieldError(
                "grid", f"grid kind {self.kind!r} needs the {what}s: give one of {', '.join(keys)}"
            )
        if len(given) > 1:
            raise FieldError(
                f"grid.{given[1]}", f"conflicts with {given[0]}: give the {what}s one way only"
            )

    def _check_step(self, key: str, span: float) -> None:
        step = getattr(self, key)
        if step is None:
            return
        step = check_number(f"grid.{key}", step, 0, 180, lo_open=True)
        count = span / step
        if abs(count - round(count)) > 1e-9 * max(count, 1.0):
            raise FieldError(
                f"grid.{key}",
                f"{step:g} degrees does not divide {span:g} evenly; "
                "expected a step such as 0.5, 1, 1.25, 2, 2.5, 5 or 10",
            )

    def _check_latitudes(self) -> None:
        lats = self.latitudes_deg
        if lats is None:
            return
        if not lats:
            raise FieldError("grid.latitudes_deg", "give at least one latitude")
        for i, lat in enumerate(lats):
            check_number(f"grid.latitudes_deg[{i}]", lat, -90, 90, what="a latitude")
        diffs = np.diff(np.asarray(lats, dtype=float))
        if diffs.size and not (np.all(diffs > 0) or np.all(diffs < 0)):
            i = int(np.argmax(diffs <= 0) if diffs[0] > 0 else np.argmax(diffs >= 0)) + 1
            raise FieldError(
                f"grid.latitudes_deg[{i}]",
                "latitudes must be strictly increasing "
                f"or strictly decreasing; {lats[i]:g} after {lats[i - 1]:g}",
            )

    def _check_longitudes(self) -> None:
        lons = self.longitudes_deg
        if lons is None:
            return
        if not lons:
            raise FieldError("grid.longitudes_deg", "give at least one longitude")
        for i, lon in enumerate(lons):
            check_number(f"grid.longitudes_deg[{i}]", lon, -180, 360, what="a longitude")
        for i in range(1, len(lons)):
            if lons[i] <= lons[i - 1]:
                raise FieldError(
                    f"grid.longitudes_deg[{i}]",
                    f"longitudes must be strictly increasing; {lons[i]:g} after {lons[i - 1]:g}",
                )
        if lons[-1] - lons[0] >= 360:
            raise FieldError(
                "grid.longitudes_deg",
                f"the longitudes span {lons[-1] - lons[0]:g} degrees; expected less than 360",
            )

    # --- derived -----------------------------------------------------------------------------
    @property
    def has_longitude(self) -> bool:
        """False for a zonal (latitude-only) grid."""
        return self.kind != "zonal"

    @property
    def label(self) -> str:
        """A short label for file names: ``zonal1deg``, ``regular2x2.5deg``, ``gaussian48``."""
        if self.kind == "gaussian":
            return f"gaussian{self.nlat}"
        if self.kind == "file":
            return Path(self.path).stem
        lat = self.lat_resolution_deg or self.resolution_deg
        lon = self.lon_resolution_deg or self.resolution_deg
        lat_text = f"{lat:g}deg" if lat else f"{len(self.latitudes_deg)}lat"
        if self.kind == "zonal":
            return f"zonal{lat_text}"
        if lat and lon:
            return f"regular{lat:g}deg" if lat == lon else f"regular{lat:g}x{lon:g}deg"
        lon_text = f"{lon:g}deg" if lon else f"{len(self.longitudes_deg)}lon"
        return f"regular{lat_text}x{lon_text}"
