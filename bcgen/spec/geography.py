"""``geography:`` the paleogeography section of a time-slice spec, as frozen dataclasses.

This module states and checks the section; :mod:`bcgen.geography` reads the files
and computes. Rules checked here (the schema checks types and vocabularies):

- ``present`` names either one ``variable`` (relief) or both ``orography`` and
  ``bathymetry``;
- every file exists;
- a strait rule has either a ``path`` or a ``box``; strait names are unique; an
  ``open`` rule needs a ``depth_m`` of at least ``min_depth_m``;
- ``reconstruction.present_land_variable`` needs ``epoch_land_variable``;
- ``mean_salinity`` and ``salinity`` are alternatives, and so are
  ``sea_level_change_m`` and ``reconstruction.sea_level_variable``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from bcgen.spec.common import FieldError, existing_file


@dataclass(frozen=True)
class FieldRef:
    """A variable of a NetCDF file."""

    file: Path
    variable: str


@dataclass(frozen=True)
class StraitSpec:
    """One strait rule (see :class:`bcgen.geography.straits.StraitRule`)."""

    name: str
    action: str
    path_deg: tuple[tuple[float, float], ...] | None = None
    box_deg: tuple[float, float, float, float] | None = None
    width_cells: int = 1
    depth_m: float = 0.0


@dataclass(frozen=True)
class GeographySpec:
    """``geography:`` inputs and rules of the paleogeography (see the module docstring)."""

    present: FieldRef | None = None
    orography: FieldRef | None = None
    bathymetry: FieldRef | None = None
    reconstruction_epoch: FieldRef | None = None
    reconstruction_present: FieldRef | None = None
    land_mask_epoch: FieldRef | None = None
    land_mask_present: FieldRef | None = None
    ice: FieldRef | None = None
    ice_kind: str = "thickness"
    sea_level_change_m: float = 0.0
    sea_level: FieldRef | None = None
    connectivity: str = "edge"
    basins: str = "lake"
    min_depth_m: float = 10.0
    shallow_cells: str = "deepen"
    mean_salinity: float | None = None
    salinity: FieldRef | None = None
    straits: tuple[StraitSpec, ...] = field(default_factory=tuple)

    @classmethod
    def from_values(cls, values: dict) -> GeographySpec:
        """Build the section from the loader's checked values (``key: value`` mappings)."""
        v = dict(values)
        present = v.pop("present")
        file = existing_file("geography.present.file", present["file"], "relief file")
        has_var = "variable" in present
        has_pair = "orography" in present or "bathymetry" in present
        if has_var == has_pair or (has_pair and not ("orography" in present
                                                     and "bathymetry" in present)):
            raise FieldError("geography.present", "give either 'variable' (the relief) or both "
                             "'orography' and 'bathymetry'")
        kw: dict = {}
        if has_var:
            kw["present"] = FieldRef(file, present["variable"])
        else:
            kw["orography"] = FieldRef(file, present["orography"])
            kw["bathymetry"] = FieldRef(file, present["bathymetry"])
        if "reconstruction" in v:
            rec = v.pop("reconstruction")
            rfile = existing_file("geography.reconstruction.file", rec["file"],
                                  "reconstruction file")
            kw["reconstruction_epoch"] = FieldRef(rfile, rec["epoch_variable"])
            kw["reconstruction_present"] = FieldRef(rfile, rec["present_variable"])
            if "present_land_variable" in rec and "epoch_land_variable" not in rec:
                raise FieldError("geography.reconstruction.present_land_variable",
                                 "needs epoch_land_variable (the land mask at the epoch)")
            if "epoch_land_variable" in rec:
                kw["land_mask_epoch"] = FieldRef(rfile, rec["epoch_land_variable"])
            if "present_land_variable" in rec:
                kw["land_mask_present"] = FieldRef(rfile, rec["present_land_variable"])
            if "sea_level_variable" in rec:
                if "sea_level_change_m" in v:
                    raise FieldError("geography.reconstruction.sea_level_variable",
                                     "give either this or geography.sea_level_change_m, "
                                     "not both")
                kw["sea_level"] = FieldRef(rfile, rec["sea_level_variable"])
        if "ice" in v:
            ice = v.pop("ice")
            kw["ice"] = FieldRef(existing_file("geography.ice.file", ice["file"], "ice file"),
                                 ice["variable"])
            kw["ice_kind"] = ice.get("kind", "thickness")
        if "salinity" in v:
            sal = v.pop("salinity")
            if "mean_salinity" in v:
                raise FieldError("geography.salinity", "give either 'mean_salinity' or "
                                 "'salinity' (a file to compute it from), not both")
            kw["salinity"] = FieldRef(existing_file("geography.salinity.file", sal["file"],
                                                    "salinity file"), sal["variable"])
        if "shallow_cells" in v:
            kw["shallow_cells"] = v.pop("shallow_cells")
        straits = []
        for i, rule in enumerate(v.pop("straits", ())):
            where = f"geography.straits[{i}]"
            if ("path" in rule) == ("box" in rule):
                raise FieldError(where, "give either a 'path' of points or a 'box'")
            if rule["name"] in [s.name for s in straits]:
                raise FieldError(f"{where}.name", f"strait {rule['name']!r} is given twice")
            path = box = None
            if "path" in rule:
                path = tuple((float(p["lat_deg"]), float(p["lon_deg"])) for p in rule["path"])
            else:
                b = rule["box"]
                if b["lat_min_deg"] > b["lat_max_deg"]:
                    raise FieldError(f"{where}.box", "lat_min_deg must not exceed lat_max_deg")
                box = (float(b["lat_min_deg"]), float(b["lat_max_deg"]),
                       float(b["lon_min_deg"]), float(b["lon_max_deg"]))
            depth = float(rule.get("depth_m", 0.0))
            min_depth = float(v.get("min_depth_m", 10.0))
            if rule["action"] == "open" and depth < min_depth:
                raise FieldError(f"{where}.depth_m", f"an open strait needs a depth of at least "
                                 f"min_depth_m ({min_depth:g} m), got {depth:g}")
            straits.append(StraitSpec(rule["name"], rule["action"], path, box,
                                      int(rule.get("width_cells", 1)), depth))
        for name in ("sea_level_change_m", "min_depth_m", "mean_salinity"):
            if name in v:
                kw[name] = float(v.pop(name))
        kw.update(v)  # connectivity, basins
        return cls(straits=tuple(straits), **kw)
