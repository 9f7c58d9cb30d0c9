"""The reliability corpus: eight classes of bad input, each refused in one line with nothing lost.

The classes are those of the reliability rules (outputs never inputs; units read, never
assumed; one folder, one writer, all or nothing; bounded sizes; one validation layer for
the command line and the API; safe names; transient runs at scale; signals are tested in
``test_signals.py``). Every case runs ``bcgen`` in-process in a fresh folder and checks
what ``test_bad_inputs.py`` checks: the exit status, stderr is exactly one line
``bcgen: error: ...`` matching the case's pattern, no traceback, nothing on stdout, and
every file and folder in the working folder (inputs and outputs) byte-for-byte unchanged.

Facts the cases rest on: CF 1.11 §4.1 (latitude units ``degrees_north`` and aliases;
other angle units are converted by UDUNITS-2 through cf-units); an angle of π/3 rad is
60 degrees (analytic); the Earth's obliquity stays within about 22-24.5 degrees over the
last few million years (Berger & Loutre 1991, from memory) and so a value near 0.41 is
radians; CO2 in glacial-interglacial air ranges about 180-300 ppm (common practice).
"""

from __future__ import annotations

import json
import os
import re
from pathlib import Path

import netCDF4
import numpy as np
import pytest
from test_bad_inputs import FILES, Case, built_before, snapshot

from bcgen.io import set_backend
from bcgen.io.lock import FolderLock

OK_SPEC = FILES["ok.yaml"].read_bytes()
TRANSIENT = FILES["transient.yaml"]


def grid_file(path: Path, *, lat=(-60.0, -30.0, 0.0, 30.0, 60.0), units="degrees_north",
              standard_name="latitude") -> None:
    """A zonal grid file: a latitude axis with the given units (None: no units attribute)."""
    lat = np.asarray(lat, dtype=float)
    with netCDF4.Dataset(path, "w") as nc:
        nc.createDimension("lat", lat.size)
        v = nc.createVariable("lat", "f8", ("lat",))
        if standard_name:
            v.standard_name = standard_name
        if units is not None:
            v.units = units
        v[:] = lat


def spec(text: str) -> bytes:
    return text.encode()


def grid_spec(path: str, name: str = "t") -> bytes:
    return spec(f"experiment: {{name: {name}}}\nepoch: 6ka\ngrid: {{kind: file, path: {path}}}\n"
                "products: [orbit, monthly_insolation_fixed_day]\n")


RAD = np.deg2rad([-60.0, -30.0, 0.0, 30.0, 60.0])

#: Files of this corpus (beside those of test_bad_inputs.py).
MORE: dict = {
    "grid_rad_as_deg.nc": lambda p: grid_file(p, lat=RAD),
    "grid_no_units.nc": lambda p: grid_file(p, units=None),
    "grid_metres.nc": lambda p: grid_file(p, units="m"),
    "grid_nonsense_units.nc": lambda p: grid_file(p, units="furlongs_of_angle"),
    "grid_empty.nc": lambda p: grid_file(p, lat=()),
    **{f"g_{k}.yaml": grid_spec(f"grid_{k}.nc")
       for k in ("rad_as_deg", "no_units", "metres", "nonsense_units", "empty")},
    "rad_table.csv": b"age_ka_bp,eccentricity,obliquity_deg,perihelion_longitude_deg\n"
                     b"0,0.0167,0.4091,102.0\n10,0.0194,0.4225,300\n",
    "rad_table.yaml": spec("experiment: {name: t}\nepoch: 6ka\norbit: {solution: table, "
                           "table: rad_table.csv}\nproducts: [orbit]\n"),
    "fixed_rad.yaml": spec("experiment: {name: t}\nepoch: 6ka\norbit: {solution: fixed, "
                           "eccentricity: 0.0187, obliquity_deg: 0.4207, perihelion_deg: 0.87, "
                           "perihelion_convention: perihelion_longitude}\nproducts: [orbit]\n"),
    "gas_fraction.csv": b"age_ka_bp,co2_ppm\n0,0.00028\n10,0.00026\n",
    "gas_ppt.csv": b"age_ka_bp,n2o_ppt\n0,270\n10,260\n",
    "tr_gas_fraction.yaml": spec("experiment: {name: g}\ntransient: {start_epoch: 6ka, end_epoch: "
                                 "5990 BP, greenhouse_gas_table: gas_fraction.csv}\n"
                                 "products: [greenhouse_gases]\n"),
    "tr_gas_ppt.yaml": spec("experiment: {name: g}\ntransient: {start_epoch: 6ka, end_epoch: "
                            "5990 BP, greenhouse_gas_table: gas_ppt.csv}\n"
                            "products: [greenhouse_gases]\n"),
    "co2_ppb.yaml": spec("experiment: {name: t}\nepoch: 6ka\ngreenhouse_gases: {co2: {value: 280, "
                         "units: ppb}}\nproducts: [greenhouse_gases]\n"),
    # --- sizes
    "fine_grid.yaml": spec("experiment: {name: f}\nepoch: 6ka\ngrid: {kind: regular, "
                           "resolution_deg: 0.001}\nproducts: [daily_insolation]\n"),
    "fine_lon.yaml": spec("experiment: {name: f}\nepoch: 6ka\ngrid: {kind: regular, "
                          "lat_resolution_deg: 1, lon_resolution_deg: 0.0001}\n"
                          "products: [monthly_insolation_fixed_day]\n"),
    "huge_gaussian.yaml": spec("experiment: {name: f}\nepoch: 6ka\ngrid: {kind: gaussian, "
                               "nlat: 20000}\nproducts: [daily_insolation]\n"),
    # 1.2-second steps at 200 points: 72,000 x 366 x 200 rows
    "tiny_step.yaml": spec("experiment: {name: f}\nepoch: 6ka\ntimestep_table: {timestep_minutes: "
                           "0.02, points: ["
                           + ", ".join(f"{{lat_deg: 0, lon_deg: {k}}}" for k in range(200))
                           + "]}\nproducts: [timestep_table]\n"),
    "subsecond_step.yaml": spec("experiment: {name: f}\nepoch: 6ka\ntimestep_table: "
                                "{timestep_minutes: 1e-9, points: [{lat_deg: 0, lon_deg: 0}]}\n"
                                "products: [timestep_table]\n"),
    "absurd_grid.yaml": spec("experiment: {name: f}\nepoch: 6ka\ngrid: {kind: regular, "
                             "resolution_deg: 1e-300}\nproducts: [daily_insolation]\n"),
    "absurd_transient.yaml": spec("experiment: {name: f}\ntransient: {start_epoch: 6ka, "
                                  "end_epoch: 5990 BP}\ngrid: {kind: regular, resolution_deg: "
                                  "1e-300}\nproducts: [daily_insolation]\n"),
    "fine_transient.yaml": spec("experiment: {name: f}\ntransient: {start_epoch: 6ka, end_epoch: "
                                "5990 BP}\ngrid: {kind: regular, resolution_deg: 0.001}\n"
                                "products: [daily_insolation]\n"),
    # --- units of model output (read by cf-units, UDUNITS-2)
    "rsdt_watts.nc": lambda p: _rsdt(p, "W"),
    "rsdt_nonsense.nc": lambda p: _rsdt(p, "W per square thing"),
    "rsdt_no_units.nc": lambda p: _rsdt(p, None),
    "rsdt_blank_units.nc": lambda p: _rsdt(p, " "),
    "tas_bad_units.nc": lambda p: _model(p, units="degrees of warmth"),
    # --- names
    **{f"name_{k}.yaml": spec(f"experiment: {{name: '{v}'}}\nepoch: 6ka\nproducts: [orbit]\n")
       for k, v in (("dot", "."), ("dotdot", ".."), ("dash", "-rf"), ("hidden", ".t"),
                    ("under", "_t"), ("slash", "a/b"), ("long", "x" * 101))},
    # --- transient manifests edited by hand
    "tr_manifest_list.json": b'{"kind": "transient", "files": {"oops": 1}}\n',
    "tr_manifest_text.json": b"this is not JSON\n",
}


def make(folder: Path, names) -> None:
    for name in names:
        made = MORE.get(name, FILES.get(name))
        path = folder / name
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(made, Path):
            path.write_bytes(made.read_bytes())
        elif isinstance(made, bytes):
            path.write_bytes(made)
        else:
            made(path)


# --- preparations (run before the snapshot) -------------------------------------------------
def symlink(link: str, target: str):
    def prepare(folder: Path, mp) -> None:
        (folder / link).parent.mkdir(parents=True, exist_ok=True)
        os.symlink(os.path.relpath(folder / target, (folder / link).parent), folder / link)
    return prepare


def hardlink(link: str, target: str):
    return lambda folder, mp: os.link(folder / target, folder / link)


def grid_in_output(folder: Path, mp) -> None:
    (folder / "out").mkdir()
    grid_file(folder / "out" / "t_monthly_insolation_fixed_day.nc")
    (folder / "gio.yaml").write_bytes(grid_spec("out/t_monthly_insolation_fixed_day.nc"))


def gas_table_in_output(folder: Path, mp) -> None:
    (folder / "out").mkdir()
    table = folder / "out" / "g_greenhouse_gases_1-11.nc"
    table.write_bytes(b"age_ka_bp,co2_ppm\n0,280\n7,260\n")
    (folder / "gt.yaml").write_bytes(spec(
        "experiment: {name: g}\ntransient: {start_epoch: 6ka, end_epoch: 5990 BP, "
        "greenhouse_gas_table: out/g_greenhouse_gases_1-11.nc}\nproducts: [greenhouse_gases]\n"))


_HELD: list[FolderLock] = []


def locked(directory: str):
    """Another run holds the folder's lock (this process, through its own open file)."""
    def prepare(folder: Path, mp) -> None:
        (folder / directory).mkdir(exist_ok=True)
        _HELD.append(FolderLock(folder / directory).acquire())
    return prepare


@pytest.fixture(autouse=True)
def _release_locks():
    yield
    while _HELD:
        _HELD.pop().release()


def folder_in_the_way(folder: Path, mp) -> None:
    """An earlier build, then one of its outputs replaced by a folder (it cannot be replaced)."""
    built_before(folder, mp)
    target = folder / "out" / "t_monthly_insolation_fixed_day.nc"
    target.unlink()
    target.mkdir()
    (target / "keep.txt").write_text("a folder a user made here\n")


def rename_fails_on(name: str):
    """An earlier build; then moving the new ``name`` into place fails once (EIO), mid-way."""
    def prepare(folder: Path, mp) -> None:
        built_before(folder, mp)
        real = os.rename
        failed = []

        def rename(src, dst, *a, **k):
            if Path(dst).name == name and Path(dst).parent.name == "out" and not failed:
                failed.append(dst)
                raise OSError(5, "Input/output error")
            return real(src, dst, *a, **k)

        mp.setattr(os, "rename", rename)
    return prepare


def manifest_as(content: str, name: str = "tr_manifest.json"):
    def prepare(folder: Path, mp) -> None:
        (folder / "out").mkdir(exist_ok=True)
        (folder / "out" / name).write_bytes(MORE[content])
        (folder / "out" / "tr_orbit_1-10.nc").write_bytes(b"an old file\n")
    return prepare


def C(id, argv, pattern, files=(), **kw) -> Case:  # noqa: N802 - a table constructor
    return Case(id, tuple(argv.split()) if isinstance(argv, str) else tuple(argv), pattern,
                tuple(files), **kw)


SAME = r"is the same file as {}: an output is never an input \(--force does not change that\)"

CASES = {
    "outputs-never-inputs": [
        C("convert-onto-its-input", "convert model.nc -o model.nc --epoch 6ka",
          r"^-o model\.nc " + SAME.format(r"input model\.nc"), ["model.nc"]),
        C("convert-onto-its-input-force", "convert model.nc -o model.nc --epoch 6ka --force",
          r"^-o model\.nc " + SAME.format(r"input model\.nc"), ["model.nc"]),
        C("convert-onto-second-input", "convert model.nc model_y2.nc -o model_y2.nc --epoch 6ka "
          "--force", r"^-o model_y2\.nc " + SAME.format(r"input model_y2\.nc"),
          ["model.nc", "model_y2.nc"]),
        C("convert-onto-input-by-symlink", "convert model.nc -o link.nc --epoch 6ka --force",
          r"^-o link\.nc " + SAME.format(r"input model\.nc"), ["model.nc"],
          prepare=symlink("link.nc", "model.nc")),
        C("convert-onto-input-by-hard-link", "convert model.nc -o hard.nc --epoch 6ka --force",
          r"^-o hard\.nc " + SAME.format(r"input model\.nc"), ["model.nc"],
          prepare=hardlink("hard.nc", "model.nc")),
        C("convert-onto-input-other-spelling", "convert model.nc -o ./sub/../model.nc --epoch 6ka "
          "--force", r"^-o \./sub/\.\./model\.nc " + SAME.format(r"input model\.nc"),
          ["model.nc", "sub/ok.yaml"]),
        C("convert-onto-its-spec", "convert model.nc -o ok.yaml --spec ok.yaml --force",
          r"^-o ok\.yaml " + SAME.format(r"--spec ok\.yaml"), ["model.nc", "ok.yaml"]),
        C("build-output-is-the-spec", "build ok.yaml -o out --force",
          r"^out/t_orbit\.nc " + SAME.format(r"the spec .*ok\.yaml"), ["ok.yaml"],
          prepare=symlink("out/t_orbit.nc", "ok.yaml")),
        C("build-output-is-the-grid-file", "build gio.yaml -o out --force",
          r"^out/t_monthly_insolation_fixed_day\.nc " + SAME.format(r"grid\.path .*"),
          prepare=grid_in_output),
        C("transient-output-is-the-gas-table", "build gt.yaml -o out --force",
          r"^out/g_greenhouse_gases_1-11\.nc "
          + SAME.format(r"transient\.greenhouse_gas_table .*"), prepare=gas_table_in_output),
    ],
    "units-read": [
        C("grid-radians-labelled-degrees", "build g_rad_as_deg.yaml -o out",
          r"grid_rad_as_deg\.nc: latitude 'lat': latitudes from -1\.0472 to 1\.0472 with units "
          r"'degrees_north' look like radians \(-60\.0 to 60\.0 degrees\)",
          ["g_rad_as_deg.yaml", "grid_rad_as_deg.nc"]),
        C("grid-without-units", "build g_no_units.yaml -o out",
          r"grid_no_units\.nc: latitude 'lat': no units attribute; expected units = "
          r"\"degrees_north\"", ["g_no_units.yaml", "grid_no_units.nc"]),
        C("grid-units-not-an-angle", "build g_metres.yaml -o out",
          r"grid_metres\.nc: latitude 'lat': units 'm' are not an angle; expected degrees_north",
          ["g_metres.yaml", "grid_metres.nc"]),
        C("grid-units-unknown", "build g_nonsense_units.yaml -o out",
          r"latitude 'lat': units 'furlongs_of_angle' are not units that UDUNITS-2 knows",
          ["g_nonsense_units.yaml", "grid_nonsense_units.nc"]),
        C("grid-empty-latitude", "build g_empty.yaml -o out",
          r"grid_empty\.nc: latitude 'lat' has no values", ["g_empty.yaml", "grid_empty.nc"]),
        C("validate-units-not-a-flux", "validate rsdt_watts.nc --spec ok.yaml",
          r"^rsdt_watts\.nc:rsdt: units 'W' cannot be converted to W m-2; expected the TOA "
          r"insolation in W m-2 or a unit convertible to it$", ["rsdt_watts.nc", "ok.yaml"]),
        C("validate-units-unknown", "validate rsdt_nonsense.nc --spec ok.yaml",
          r"^rsdt_nonsense\.nc:rsdt: units 'W per square thing' cannot be converted to W m-2",
          ["rsdt_nonsense.nc", "ok.yaml"]),
        C("validate-without-units", "validate rsdt_no_units.nc --spec ok.yaml",
          r"^rsdt_no_units\.nc:rsdt: no units attribute; expected units = \"W m-2\"",
          ["rsdt_no_units.nc", "ok.yaml"]),
        C("validate-blank-units", "validate rsdt_blank_units.nc --spec ok.yaml",
          r"^rsdt_blank_units\.nc:rsdt: no units attribute", ["rsdt_blank_units.nc", "ok.yaml"]),
        C("convert-units-not-udunits", "convert tas_bad_units.nc -o out.nc --epoch 6ka",
          r"^tas_bad_units\.nc:tas: units 'degrees of warmth' are not units that UDUNITS-2 "
          r"knows; correct the attribute \(the conversion keeps it as given\)$",
          ["tas_bad_units.nc"]),
        C("table-obliquity-in-radians-option", "orbit 6ka --solution table --table rad_table.csv",
          r"^rad_table\.csv: column obliquity_deg: obliquity 0\.4\d* degrees looks like radians "
          r"\(2\d\.\d\d degrees\)", ["rad_table.csv"]),
        C("table-obliquity-in-radians-spec", "build rad_table.yaml -o out",
          r"orbit\.table: .*rad_table\.csv: column obliquity_deg: obliquity 0\.4\d* degrees looks "
          r"like radians", ["rad_table.yaml", "rad_table.csv"]),
        C("fixed-obliquity-in-radians-option", ["orbit", "6ka", "--solution", "fixed",
                                                 "--eccentricity", "0.01", "--obliquity-deg",
                                                 "0.4171", "--perihelion-deg", "0",
                                                 "--perihelion-convention",
                                                 "perihelion_longitude"],
          r"^--obliquity-deg: obliquity 0\.4171 degrees looks like radians \(23\.90 degrees\)"),
        C("fixed-obliquity-in-radians-convert", ["convert", "model.nc", "-o", "out.nc",
                                                  "--eccentricity", "0.01", "--obliquity-deg",
                                                  "0.41", "--perihelion-deg", "0",
                                                  "--perihelion-convention",
                                                  "perihelion_longitude"],
          r"^--obliquity-deg: obliquity 0\.41 degrees looks like radians", ["model.nc"]),
        C("fixed-obliquity-in-radians-spec", "build fixed_rad.yaml -o out",
          r"orbit\.obliquity_deg: 0\.4207 degrees is outside Earth's range .*looks like radians",
          ["fixed_rad.yaml"]),
        C("gas-table-mole-fraction-as-ppm", "build tr_gas_fraction.yaml -o out",
          r"gas_fraction\.csv: column co2_ppm: 0\.0002\d ppm is far outside 100-10000 ppm, the "
          r"range for the Earth; it looks like a value in mol mol-1",
          ["tr_gas_fraction.yaml", "gas_fraction.csv"]),
        C("gas-table-ppb-as-ppt", "build tr_gas_ppt.yaml -o out",
          r"gas_ppt\.csv: column n2o_ppt: 2[67]0 ppt is far outside 50-2000 ppb, the range for the "
          r"Earth; it looks like a value in ppb", ["tr_gas_ppt.yaml", "gas_ppt.csv"]),
        C("spec-co2-in-ppb", "build co2_ppb.yaml -o out",
          r"greenhouse_gases\.co2: 280 ppb is far outside 100-10000 ppm, the range for the "
          r"Earth; it looks like a value in ppm", ["co2_ppb.yaml"]),
    ],
    "one-writer-all-or-nothing": [
        C("build-into-a-locked-folder", "build ok.yaml -o out",
          r"^another bcgen run \(pid \d+, started \d{4}-\d\d-\d\d \d\d:\d\d:\d\d UTC\) is "
          r"writing out; wait for it to finish or write elsewhere$", ["ok.yaml"],
          prepare=locked("out")),
        C("force-build-into-a-locked-folder", "build ok.yaml -o out --force",
          r"^another bcgen run \(pid \d+, started .*\) is writing out;", ["ok.yaml"],
          prepare=locked("out")),
        C("transient-into-a-locked-folder", "build transient.yaml -o out",
          r"^another bcgen run \(pid \d+, started .*\) is writing out;", ["transient.yaml"],
          prepare=locked("out")),
        C("force-with-a-folder-in-the-way", "build ok.yaml -o out --force",
          r"^cannot write out/t_monthly_insolation_fixed_day\.nc: it is a folder; the folder is "
          r"as it was$", ["ok.yaml"], prepare=folder_in_the_way),
        C("force-rename-fails-midway", "build ok.yaml -o out --force",
          r"^cannot replace out/t_monthly_insolation_fixed_day\.nc: Input/output error; the "
          r"folder is as it was$", ["ok.yaml"],
          prepare=rename_fails_on("t_monthly_insolation_fixed_day.nc")),
        C("force-manifest-rename-fails", "build ok.yaml -o out --force",
          r"^cannot replace out/t_manifest\.json: Input/output error; the folder is as it was$",
          ["ok.yaml"], prepare=rename_fails_on("t_manifest.json")),
        C("transient-manifest-edited-to-nonsense", "build transient.yaml -o out",
          r"^out/tr_manifest\.json: cannot read the existing manifest \(.*\); use --force",
          ["transient.yaml"], prepare=manifest_as("tr_manifest_text.json")),
        C("transient-manifest-of-wrong-shape", "build transient.yaml -o out",
          r"^out/tr_manifest\.json: cannot read the existing manifest \(not a bcgen manifest\)",
          ["transient.yaml"], prepare=manifest_as("tr_manifest_list.json")),
    ],
    "bounded-sizes": [
        C("grid-of-a-thousandth-degree", "build fine_grid.yaml -o out",
          r"^grid\.resolution_deg 0\.001: the products need about [\d.]+ TiB of memory "
          r"\(daily_insolation 366 x 64,800,000,000 cells\); the limit is [\d.]+ GiB",
          ["fine_grid.yaml"]),
        C("grid-fine-in-longitude", "build fine_lon.yaml -o out",
          r"^grid\.lat_resolution_deg/lon_resolution_deg: the products need about [\d.]+ [GT]iB "
          r"of memory", ["fine_lon.yaml"]),
        C("gaussian-grid-huge", "build huge_gaussian.yaml -o out",
          r"^grid\.nlat 20000: the products need about [\d.]+ TiB", ["huge_gaussian.yaml"]),
        C("timestep-of-a-second-at-many-points", "build tiny_step.yaml -o out",
          r"^timestep_table\.timestep_minutes 0\.02: the table would have 5,270,400,000 rows, "
          r"about [\d.]+ GiB; the limit is", ["tiny_step.yaml"]),
        C("grid-step-beyond-all-reason", "build absurd_grid.yaml -o out",
          r"^grid\.resolution_deg 1e-300: the products need more than a million PiB of memory "
          r"\(daily_insolation 366 x more than 10\^15 cells\)", ["absurd_grid.yaml"]),
        C("transient-grid-step-beyond-all-reason", "build absurd_transient.yaml -o out",
          r"^grid\.resolution_deg 1e-300: one time step has more than 10\^15 cells, more than "
          r"a million PiB as float64", ["absurd_transient.yaml"]),
        C("timestep-below-a-second", "build subsecond_step.yaml -o out",
          r"^subsecond_step\.yaml:\d+:\d+: timestep_table\.timestep_minutes: 1e-09 minutes is "
          r"shorter than one second", ["subsecond_step.yaml"]),
        C("orbit-range-step-overflowing", "orbit 6ka..0ka/1e-320yr",
          r"^cannot read epoch '6ka\.\.0ka/1e-320yr': the range has more than 10\^15 epochs"),
        C("transient-grid-too-fine", "build fine_transient.yaml -o out",
          r"^grid\.resolution_deg 0\.001: one time step has 64,800,000,000 cells, about "
          r"[\d.]+ GiB as float64; the limit is 1,000,000,000 cells", ["fine_transient.yaml"]),
        C("plot-orbit-over-40-million-epochs", "plot orbit 0ka..40000ka/1yr -o fig.png",
          r"^source 0ka\.\.40000ka/1yr has 40,000,001 epochs, which would need about 16\.0 GB "
          r"to plot; the limit is 1,000,000 epochs"),
        C("template-over-a-mebibyte", "build big_template.yaml -o out",
          r"^big_template\.yaml:\d+:\d+: templates\[0\]: \S*big\.tmpl: template of 1\.0 MiB; "
          r"templates are limited to 1\.0 MiB", ["big_template.yaml", "big.tmpl"]),
        C("orbit-range-over-the-limit", "orbit 0ka..100000ka/1yr",
          r"^cannot read epoch '0ka\.\.100000ka/1yr': the range has 100,000,001 epochs; the limit "
          r"is 50,000,000"),
    ],
    "one-validation-layer": [
        C("solar-constant-overflows", "insolation 6ka --lat 65 --solar-constant 1e308",
          r"^--solar-constant: expected a positive number of W m-2 no larger than 5000 \(today's "
          r"is about 1361\); got 1e\+308$"),
        C("solar-constant-infinite", "insolation 6ka --lat 65 --solar-constant inf",
          r"^--solar-constant: expected a positive number of W m-2; got inf$"),
        C("solar-constant-nan", "insolation 6ka --lat 65 --solar-constant nan",
          r"^--solar-constant: expected a positive number of W m-2; got nan$"),
        C("solar-constant-overflows-json", "insolation 6ka --lat 65 --solar-constant 1e308 "
          "--format json", r"^--solar-constant: expected a positive number of W m-2 no larger"),
        C("latitude-infinite", "insolation 6ka --lat inf",
          r"^--lat: latitudes must be in \[-90, 90\] degrees north; got inf$"),
        C("min-valid-fraction-above-1", "convert model.nc -o out.nc --epoch 6ka "
          "--min-valid-fraction 2", r"^--min-valid-fraction: expected a fraction in \(0, 1\]; "
          r"got 2$", ["model.nc"]),
        C("min-valid-fraction-nan", "convert model.nc -o out.nc --epoch 6ka "
          "--min-valid-fraction nan",
          r"^--min-valid-fraction: expected a fraction in \(0, 1\]; got nan$",
          ["model.nc"]),
        C("epoch-overflows", "orbit 1e400ka", r"^cannot read epoch '1e400ka': the number is too "
          r"large"),
        C("epoch-beyond-a-billion-years", "orbit 2000Ma", r"^cannot read epoch '2000Ma': the "
          r"epoch is more than 1,000,000,000 years from 1950 CE"),
        C("convert-different-variables", "convert model.nc pr_y2.nc -o out.nc --epoch 6ka",
          r"^pr_y2\.nc: holds the variables pr but model\.nc holds tas; the files of one "
          r"conversion must hold the same variables$", ["model.nc", "pr_y2.nc"]),
    ],
    "safe-names": [
        C(f"name-{k}", f"build name_{k}.yaml -o out",
          rf"^name_{k}\.yaml:1:\d+: experiment\.name: {pattern}", [f"name_{k}.yaml"])
        for k, pattern in (
            ("dot", r"'\.' is not a usable name; it must start with a letter or digit"),
            ("dotdot", r"'\.\.' is not a usable name; it must start with a letter or digit"),
            ("dash", r"'-rf' is not a usable name; it must start with a letter or digit"),
            ("hidden", r"'\.t' is not a usable name; it must start with a letter or digit"),
            ("under", r"'_t' is not a usable name; it must start with a letter or digit"),
            ("slash", r"'a/b' is not a usable name; expected letters, digits"),
            ("long", r"the name has 101 characters; the limit is 100"),
        )
    ],
}

MORE["model_y2.nc"] = lambda p: _model(p, first_day=365.0)
MORE["pr_y2.nc"] = lambda p: _model(p, var="pr", units="kg m-2 s-1",
                                    standard_name="precipitation_flux", first_day=365.0)
MORE["sub/ok.yaml"] = FILES["ok.yaml"]


def _model(path, **kw):
    from test_bad_inputs import write_model

    write_model(path, **kw)


def _rsdt(path, units):
    """Model TOA insolation of 300 W m-2 with the given ``units`` (None: no attribute)."""
    from test_bad_inputs import rsdt

    rsdt(path, lat=np.linspace(-90, 90, 19), value=300.0)
    with netCDF4.Dataset(path, "a") as nc:
        if units is None:
            nc["rsdt"].delncattr("units")
        else:
            nc["rsdt"].units = units


MORE["big.tmpl"] = b"# " + b"x" * 2**20 + b"\n"  # 1 MiB + 3 bytes: just over the limit
MORE["big_template.yaml"] = spec("experiment: {name: t}\nepoch: 6ka\nproducts: [orbit]\n"
                                 "templates: [big.tmpl]\n")


@pytest.mark.parametrize("units", ["W/m2", "W m**-2", "watt meter^-2"])
def test_model_output_in_other_spellings_of_w_m2_reads_the_same(tmp_path, units):
    from bcgen.validation.readers import read_model_output

    _rsdt(tmp_path / "a.nc", "W m-2")
    _rsdt(tmp_path / "b.nc", units)
    a, b = read_model_output(tmp_path / "a.nc"), read_model_output(tmp_path / "b.nc")
    np.testing.assert_array_equal(b.insolation_wm2, a.insolation_wm2)


def test_model_output_in_mw_m2_is_converted(tmp_path):
    # 1 W = 1000 mW (SI prefixes): 300,000 mW m-2 is 300 W m-2.
    from bcgen.validation.readers import read_model_output

    _rsdt(tmp_path / "m.nc", "mW m-2")
    with netCDF4.Dataset(tmp_path / "m.nc", "a") as nc:
        nc["rsdt"][:] = nc["rsdt"][:] * 1000.0
    np.testing.assert_allclose(read_model_output(tmp_path / "m.nc").insolation_wm2, 300.0,
                               rtol=1e-6)


def test_convert_keeps_the_units_as_given(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    _model(tmp_path / "w.nc", var="rsdt", units="mW m-2",
           standard_name="toa_incoming_shortwave_flux")
    status, _, err = run_cli(["convert", "w.nc", "-o", "out.nc", "--epoch", "6ka"])
    assert status == 0, err
    with netCDF4.Dataset(tmp_path / "out.nc") as nc:
        assert nc["rsdt"].units == "mW m-2"


def test_too_many_input_files_are_refused_before_any_is_opened(tmp_path):
    from bcgen.convert.io import open_inputs
    from bcgen.errors import TooLargeError
    from bcgen.sizes import MAX_INPUT_FILES

    paths = [tmp_path / f"m{i}.nc" for i in range(MAX_INPUT_FILES + 1)]  # none exists
    with pytest.raises(TooLargeError, match=r"^100,001 input files; one conversion joins at "
                       r"most 100,000 \(convert them in several runs\)$"):
        open_inputs(paths)


def test_a_template_at_the_limit_is_read(tmp_path):
    from bcgen.render import render_file
    from bcgen.sizes import MAX_TEMPLATE_BYTES

    path = tmp_path / "t.tmpl"
    path.write_bytes(b"x" * MAX_TEMPLATE_BYTES)
    assert len(render_file(path, {})) == MAX_TEMPLATE_BYTES


ALL = [(cls, case) for cls, cases in CASES.items() for case in cases]


def test_the_corpus_covers_every_class_with_enough_cases():
    assert len({c.id for _, c in ALL}) == len(ALL)
    assert len(ALL) >= 55  # with test_signals.py and the API table below: over 60 new cases
    assert all(len(cases) >= 5 for cases in CASES.values())


@pytest.mark.parametrize(("cls", "case"), ALL, ids=[f"{k}:{c.id}" for k, c in ALL])
def test_refused_in_one_line_with_nothing_changed(cls, case, tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    make(tmp_path, case.files)
    with set_backend(None):
        if case.prepare is not None:
            case.prepare(tmp_path, monkeypatch)
        before = snapshot(tmp_path)
        status, out, err = run_cli(case.argv)
    monkeypatch.undo()
    assert "Traceback" not in err and "Traceback" not in out
    lines = err.splitlines()
    assert len(lines) == 1, f"expected one line on stderr, got:\n{err}"
    assert lines[0].startswith("bcgen: error: "), lines[0]
    assert re.search(case.pattern, lines[0][len("bcgen: error: "):]), lines[0]
    assert status == 2, err
    assert out == ""
    assert snapshot(tmp_path) == before, "the folder changed"


# --- what the refused examples should give instead ---------------------------------------------
def test_a_radian_grid_that_says_so_is_converted(tmp_path, monkeypatch, run_cli):
    # π/3 rad is 60 degrees (analytic): a grid in radians with units "radians" gives the same
    # insolation as the same grid in degrees.
    monkeypatch.chdir(tmp_path)
    grid_file(tmp_path / "deg.nc")
    grid_file(tmp_path / "rad.nc", lat=RAD, units="radians")
    for name in ("deg", "rad"):
        (tmp_path / f"{name}.yaml").write_bytes(grid_spec(f"{name}.nc", name=name))
        status, _, err = run_cli(["build", f"{name}.yaml", "-o", f"out_{name}"])
        assert status == 0, err
    with netCDF4.Dataset(tmp_path / "out_deg" / "deg_monthly_insolation_fixed_day.nc") as a, \
            netCDF4.Dataset(tmp_path / "out_rad" / "rad_monthly_insolation_fixed_day.nc") as b:
        np.testing.assert_allclose(b["lat"][:], [-60, -30, 0, 30, 60], atol=1e-9)
        np.testing.assert_allclose(b["insolation"][:], a["insolation"][:], rtol=1e-6)


def test_insolation_json_is_always_valid_json(run_cli):
    # RFC 8259: NaN and Infinity are not JSON; every --format json output parses strictly.
    status, out, err = run_cli(["insolation", "6ka", "--lat", "-90", "0", "90",
                                "--solar-constant", "5000", "--format", "json"])
    assert status == 0, err

    def strict(text):
        raise ValueError(f"not JSON: {text}")

    data = json.loads(out, parse_constant=strict)
    assert data["latitudes_deg"] if "latitudes_deg" in data else data


def test_force_rebuild_replaces_the_whole_set_and_the_manifest_matches(tmp_path, run_cli,
                                                                          monkeypatch):
    # A --force rebuild with fewer products leaves exactly the new set, as its manifest says.
    monkeypatch.chdir(tmp_path)
    make(tmp_path, ["ok.yaml"])
    assert run_cli(["build", "ok.yaml", "-o", "out"])[0] == 0
    (tmp_path / "ok.yaml").write_text(OK_SPEC.decode().replace(
        "products: [orbit, monthly_insolation_fixed_day]", "products: [orbit]"))
    assert run_cli(["build", "ok.yaml", "-o", "out", "--force"])[0] == 0
    manifest = json.loads((tmp_path / "out" / "t_manifest.json").read_text())
    listed = {f["file"] for f in manifest["files"]} | {"t_manifest.json"}
    assert {p.name for p in (tmp_path / "out").iterdir()} == listed
    from bcgen.io import sha256_of

    for f in manifest["files"]:
        assert sha256_of(tmp_path / "out" / f["file"]) == f["sha256"]
