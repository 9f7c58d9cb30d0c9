"""A corpus of bad inputs: each gives one line naming what is wrong, and leaves no output.

Every case is a command line run in a fresh folder with the files it needs. For each:
the exit status is 2 (1 where a check ran and failed by design); stderr is exactly one
line, ``bcgen: error: ...`` (``bcgen: check failed: ...`` for a status-1 case),
matching the case's pattern, which names the file, key, line or option and what is
expected; there is no traceback; nothing is printed on stdout for status 2; and the folder
is unchanged afterwards: no file created, removed or modified (so no partial output, no
temporary file left, no existing output overwritten).

Most cases run in-process through ``bcgen.cli.main`` (fast); the last tests run the
installed ``bcgen`` console script as a real subprocess, and interrupt one with SIGINT.

Expected messages are bcgen's own wording (what the corpus pins down). The facts they
rest on: the CF calendars and their month lengths (CF Conventions 1.11 §4.4.1: noleap has
a 28-day February, 360_day twelve 30-day months), an eccentricity of an ellipse lies in
[0, 1) and an obliquity in [0, 90] degrees (analytic), latitudes lie in [-90, 90]
(common practice), and a bare number is no epoch (the project's stated convention).
"""

from __future__ import annotations

import errno
import hashlib
import json
import os
import re
import signal
import subprocess
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import netCDF4
import numpy as np
import pytest
from io_faults import FailingBackend

from bcgen.io import set_backend

# --- input files ---------------------------------------------------------------------------
#: Month edges of a noleap year, days after 1 January (CF 1.11 §4.4.1: noleap months).
NOLEAP_EDGES = np.array([0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334, 365.0])


def write_model(path: Path, *, var: str = "tas", units: str = "K",
                standard_name: str = "air_temperature", edges=NOLEAP_EDGES,
                calendar: str | None = "noleap", bounds: bool = True, with_time: bool = True,
                first_day: float = 0.0, lat=(-30.0, 30.0), value: float = 280.0,
                cell_methods: str | None = None,
                time_units: str = "days since 0001-01-01 00:00:00") -> None:
    """A small CF file of interval means ``var(time, lat)`` (or ``var(lat)`` without time)."""
    edges = np.asarray(edges, dtype=float) + first_day
    lat = np.asarray(lat, dtype=float)
    with netCDF4.Dataset(path, "w") as nc:
        nc.createDimension("lat", lat.size)
        la = nc.createVariable("lat", "f8", ("lat",))
        la.units, la.standard_name = "degrees_north", "latitude"
        la[:] = lat
        dims: tuple[str, ...] = ("lat",)
        if with_time:
            nc.createDimension("time", edges.size - 1)
            t = nc.createVariable("time", "f8", ("time",))
            t.units, t.standard_name, t.axis = time_units, "time", "T"
            if calendar is not None:
                t.calendar = calendar
            t[:] = 0.5 * (edges[:-1] + edges[1:])
            if bounds:
                nc.createDimension("bnds", 2)
                t.bounds = "time_bnds"
                tb = nc.createVariable("time_bnds", "f8", ("time", "bnds"))
                tb[:, 0], tb[:, 1] = edges[:-1], edges[1:]
            dims = ("time", "lat")
        v = nc.createVariable(var, "f4", dims)
        v.units, v.standard_name = units, standard_name
        if cell_methods is not None:
            v.cell_methods = cell_methods
        shape = ((edges.size - 1,) if with_time else ()) + (lat.size,)
        v[:] = np.full(shape, value, dtype="f4")


def rsdt(path: Path, **kw) -> None:
    """TOA incoming shortwave as a model would write it (for bcgen validate)."""
    write_model(path, var="rsdt", units="W m-2", standard_name="toa_incoming_shortwave_flux",
                **kw)


def truncated(path: Path) -> None:
    """The first half of a valid NetCDF-4 file, as an interrupted copy leaves it."""
    full = path.with_name("full.tmpdata")
    write_model(full)
    data = full.read_bytes()
    full.unlink()
    path.write_bytes(data[: len(data) // 2])


#: The bad specs and tables of the corpus, kept as files (run them by hand to see the
#: messages: ``bcgen build tests/bad_inputs/feb30_noleap.yaml``).
BAD_INPUTS = Path(__file__).with_name("bad_inputs")

#: Files a case can ask for: name → a file of bad_inputs/, bytes, or a function writing it.
#: NetCDF files are written at run time rather than committed.
FILES: dict[str, Path | bytes | Callable[[Path], None]] = {
    **{path.name: path for path in sorted(BAD_INPUTS.iterdir()) if path.name != "README.md"},
    "model.nc": write_model,
    "model_y3.nc": lambda p: write_model(p, first_day=730.0),
    "julian_y2.nc": lambda p: write_model(p, calendar="julian", first_day=365.0),
    "no_time.nc": lambda p: write_model(p, with_time=False),
    "no_calendar.nc": lambda p: write_model(p, calendar=None),
    # Two stamps in January, none in June: neither monthly nor a constant step.
    "irregular.nc": lambda p: write_model(p, bounds=False, edges=np.array(
        [0, 10, 31, 59, 90, 120, 181, 212, 243, 273, 304, 334, 365.0])),
    "ten_day.nc": lambda p: write_model(p, edges=np.arange(0, 370, 10.0)),
    # CF 1.11 §4.4: "months since" is no fixed length of time (the calendar is not 360_day);
    # §4.4.1: the CF calendar names.
    "months_since.nc": lambda p: write_model(p, bounds=False, edges=np.arange(13.0),
                                             time_units="months since 0001-01-01"),
    "calendar_typo.nc": lambda p: write_model(p, calendar="no_leap_year"),
    # Monthly maxima (CF 1.11 §7.3 "time: maximum"): not re-averageable over other months.
    "monthly_max.nc": lambda p: write_model(p, var="tasmax", cell_methods="area: mean "
                                            "time: maximum"),
    "truncated.nc": truncated,
    "text.nc": b"this is not NetCDF at all\n" * 20,
    "zero.nc": b"",
    "rsdt_300.nc": lambda p: rsdt(p, lat=np.linspace(-90, 90, 19), value=300.0),
    "rsdt_no_calendar.nc": lambda p: rsdt(p, calendar=None),
    "rsdt_no_time.nc": lambda p: rsdt(p, with_time=False),
    "rsdt_ten_day.nc": lambda p: rsdt(p, edges=np.arange(0, 370, 10.0), bounds=False),
    "existing.nc": b"an earlier output that must survive\n",
    "existing.png": b"an earlier figure that must survive\n",
    "a_file": b"a file where a folder is expected\n",
    # A transient run of 20 model years, two products, files of 10 model years.
    "transient.yaml": b"experiment: {name: tr}\n"
                      b"transient: {start_epoch: 6ka, end_epoch: 5981 BP, years_per_file: 10}\n"
                      b"grid: {kind: zonal, resolution_deg: 30}\n"
                      b"products: [orbit, monthly_insolation_fixed_day]\n",
}


def make_files(folder: Path, names) -> None:
    for name in names:
        made = FILES[name]
        path = folder / name
        if isinstance(made, Path):
            path.write_bytes(made.read_bytes())
        elif isinstance(made, bytes):
            path.write_bytes(made)
        else:
            made(path)


# --- simulated environments ------------------------------------------------------------------
def read_only(folder: Path, monkeypatch) -> None:
    """Make ``folder`` read-only.

    The tests may run as root, and root ignores directory permissions (chmod does not
    stop its writes). Then the refusal a normal user gets is simulated in-process:
    ``os.access`` reports the folder unwritable and ``os.open`` raises PermissionError
    (EACCES) for a file created in it, as the kernel does for a non-root user.
    """
    folder.mkdir(exist_ok=True)
    folder.chmod(0o555)
    if os.geteuid() != 0:
        return
    real_access, real_open = os.access, os.open
    target = folder.resolve()

    def access(path, mode, *args, **kwargs):
        if mode & os.W_OK and Path(path).resolve() == target:
            return False
        return real_access(path, mode, *args, **kwargs)

    def os_open(path, flags, *args, **kwargs):
        if flags & (os.O_WRONLY | os.O_RDWR | os.O_CREAT) and \
                Path(path).resolve().parent == target:
            raise PermissionError(errno.EACCES, "Permission denied", str(path))
        return real_open(path, flags, *args, **kwargs)

    monkeypatch.setattr(os, "access", access)
    monkeypatch.setattr(os, "open", os_open)


def disk_full(monkeypatch, after: int = 0) -> None:
    """Simulate ENOSPC: the NetCDF write fails (after ``after`` files), through the seam.

    The failing write leaves a partly written temporary file, as a real full disk does.
    """
    set_backend(FailingBackend(OSError(errno.ENOSPC, "No space left on device"), after=after))


def no_space_left(monkeypatch) -> None:
    """The file system reports no free block (os.statvfs f_bavail = 0), as a full disk does."""
    real = os.statvfs

    def statvfs(path):
        st = real(path)
        return os.statvfs_result((st.f_bsize, st.f_frsize, st.f_blocks, 0, 0, st.f_files,
                                  st.f_ffree, st.f_favail, st.f_flag, st.f_namemax))

    monkeypatch.setattr(os, "statvfs", statvfs)


def disk_full_as(monkeypatch, error: BaseException, after: int = 0) -> None:
    """A full disk that the netCDF library reports as ``error`` rather than ENOSPC.

    The library turns a file it cannot create into EACCES ("Permission denied") and a
    failed HDF5 write into RuntimeError "NetCDF: HDF error" (netCDF-C's error codes, from
    memory); the free space (statvfs) is what tells a full disk.
    """
    set_backend(FailingBackend(error, after=after))
    no_space_left(monkeypatch)


def transient_disk_full(monkeypatch, after: int = 0) -> None:
    """A full disk under a transient build: its low-level chunk write fails (after ``after``).

    The failing write first writes part of its values, as a real one does, then raises
    what the netCDF library raises: RuntimeError "NetCDF: HDF error".
    """
    set_backend(FailingBackend(RuntimeError("NetCDF: HDF error"), after=after, slabs=True))
    no_space_left(monkeypatch)


def built_before(folder: Path, monkeypatch) -> None:
    """Build ok.yaml into ``out/`` first (outputs that a failing --force build must keep)."""
    from bcgen import build
    from bcgen.spec import load_spec

    build(load_spec(folder / "ok.yaml"), folder / "out")


# --- the corpus --------------------------------------------------------------------------------
@dataclass(frozen=True)
class Case:
    """A bad command line, the files it needs and the one line it must give."""

    id: str
    argv: tuple[str, ...]
    pattern: str
    files: tuple[str, ...] = ()
    status: int = 2
    prepare: Callable | None = None  # (folder, monkeypatch) -> None, before the snapshot
    changes_folder: bool = False  # a check that fails by design after writing complete files


def C(id, argv, pattern, files=(), **kw) -> Case:  # noqa: N802 - a table constructor
    return Case(id, tuple(argv.split()) if isinstance(argv, str) else tuple(argv), pattern,
                tuple(files), **kw)


CASES = [
    # --- YAML syntax -------------------------------------------------------------------------
    C("yaml-unclosed-flow", "build syntax_flow.yaml -o out",
      r"^syntax_flow\.yaml:2:\d+: YAML syntax error: expected ',' or '\}'", ["syntax_flow.yaml"]),
    C("yaml-bad-indent", "build syntax_indent.yaml -o out",
      r"^syntax_indent\.yaml:3:\d+: YAML syntax error: mapping values are not allowed",
      ["syntax_indent.yaml"]),
    C("yaml-tab", "build syntax_tab.yaml -o out",
      r"^syntax_tab\.yaml:2:\d+: YAML syntax error: .*indent with spaces, not tabs",
      ["syntax_tab.yaml"]),
    C("yaml-duplicate-key", "build duplicate.yaml -o out",
      r"^duplicate\.yaml:2:1: experiment: duplicate key \(first given on line 1\)$",
      ["duplicate.yaml"]),
    C("yaml-not-utf8", "build latin1.yaml -o out",
      r"^latin1\.yaml:1: not UTF-8 text \(byte \d+ of the file\); save the spec as UTF-8$",
      ["latin1.yaml"]),
    C("yaml-empty", "build empty.yaml -o out",
      r"^empty\.yaml: the spec is empty; expected a mapping with at least 'experiment'",
      ["empty.yaml"]),
    # --- unknown keys --------------------------------------------------------------------------
    C("unknown-top-key", "build unknown_top.yaml -o out",
      r"^unknown_top\.yaml:5:1: colour: unknown key; expected one of experiment, epoch,",
      ["unknown_top.yaml"]),
    C("unknown-nested-key", "build unknown_nested.yaml -o out",
      r"^unknown_nested\.yaml:5:\d+: calendar\.nmae: unknown key; expected one of name, anchor, "
      r"date, model_year \(did you mean 'name'\?\)$", ["unknown_nested.yaml"]),
    C("unknown-product", "build unknown_product.yaml -o out",
      r"^unknown_product\.yaml:4:\d+: products\[1\]: unknown product 'sunshine'; expected one "
      r"of orbit,", ["unknown_product.yaml"]),
    # --- wrong types -------------------------------------------------------------------------
    C("type-string-for-number", "build type_number.yaml -o out",
      r"^type_number\.yaml:5:\d+: solar_constant_wm2: expected a number, got the string 'lots'$",
      ["type_number.yaml"]),
    C("type-list-for-epoch", "build type_list.yaml -o out",
      r"^type_list\.yaml:2:\d+: epoch: expected an epoch such as '6ka', got a list$",
      ["type_list.yaml"]),
    C("type-yes-for-boolean", "build type_bool.yaml -o out",
      r"^type_bool\.yaml:5:\d+: output\.shuffle: expected true or false, got 'yes'",
      ["type_bool.yaml"]),
    C("type-int-option", "months 6ka --year 1.5",
      r"^bcgen months: argument --year: invalid int value: '1\.5'"),
    # --- impossible values -----------------------------------------------------------------
    C("eccentricity-above-1-spec", "build ecc_high.yaml -o out",
      r"^ecc_high\.yaml:5:\d+: orbit\.eccentricity: expected a number in \[0, 1\), got 1\.2$",
      ["ecc_high.yaml"]),
    C("eccentricity-negative-spec", "build ecc_negative.yaml -o out",
      r"^ecc_negative\.yaml:5:\d+: orbit\.eccentricity: expected a number in \[0, 1\), "
      r"got -0\.01$", ["ecc_negative.yaml"]),
    C("eccentricity-1-option", ["orbit", "6ka", "--solution", "fixed", "--eccentricity", "1",
                                "--obliquity-deg", "23", "--perihelion-deg", "0",
                                "--perihelion-convention", "perihelion_longitude"],
      r"^--eccentricity: eccentricity must be in \[0, 1\) .*; got 1$"),
    C("obliquity-negative-spec", "build obl_negative.yaml -o out",
      r"^obl_negative\.yaml:5:\d+: orbit\.obliquity_deg: expected a number in \[0, 90\], "
      r"got -2$", ["obl_negative.yaml"]),
    C("obliquity-not-earth-spec", "build obl_not_earth.yaml -o out",
      r"^obl_not_earth\.yaml:5:\d+: orbit\.obliquity_deg: 40 degrees is outside Earth's range "
      r".*set 'idealized: true'", ["obl_not_earth.yaml"]),
    C("obliquity-negative-option", ["orbit", "6ka", "--solution", "fixed", "--eccentricity",
                                    "0.01", "--obliquity-deg", "-3", "--perihelion-deg", "0",
                                    "--perihelion-convention", "perihelion_longitude"],
      r"^--obliquity-deg: obliquity must be in \[0, 90\] degrees .*; got -3$"),
    C("obliquity-absurd-convert", ["convert", "model.nc", "-o", "out.nc", "--eccentricity",
                                   "0.01", "--obliquity-deg", "200", "--perihelion-deg", "0",
                                   "--perihelion-convention", "perihelion_longitude"],
      r"^--obliquity-deg: obliquity must be in \[0, 90\] degrees .*; got 200$", ["model.nc"]),
    C("latitude-grid-spec", "build lat_grid.yaml -o out",
      r"^lat_grid\.yaml:3:\d+: grid\.latitudes_deg\[0\]: expected a number in \[-90, 90\], "
      r"got -95$", ["lat_grid.yaml"]),
    C("latitude-point-spec", "build lat_point.yaml -o out",
      r"^lat_point\.yaml:5:\d+: timestep_table\.points\[0\]\.lat_deg: expected a number in "
      r"\[-90, 90\], got 91$", ["lat_point.yaml"]),
    C("latitude-option", "insolation 6ka --lat 65 95",
      r"^--lat: latitudes must be in \[-90, 90\] degrees north; got 95$"),
    C("latitude-option-plot", "plot insolation 6ka --lat -91 0 -o fig.png",
      r"^--lat: latitudes must be in \[-90, 90\] degrees north .*; got -91$"),
    C("solar-constant-negative", "insolation 6ka --lat 65 --solar-constant -5",
      r"^--solar-constant: expected a positive number of W m-2; got -5$"),
    C("calendar-unknown-spec", "build calendar_unknown.yaml -o out",
      r"^calendar_unknown\.yaml:5:\d+: calendar\.name: unknown calendar 'noleapp'; expected one "
      r"of noleap, .*\(did you mean 'noleap'\?\)$", ["calendar_unknown.yaml"]),
    C("calendar-unknown-option", "months 6ka --calendar gregorian_ish",
      r"^--calendar: unknown calendar 'gregorian_ish'; expected one of noleap,"),
    # CF 1.11 §4.4.1: February has 28 days in noleap, so 30 February does not exist there.
    C("feb30-noleap-spec", "build feb30_noleap.yaml -o out",
      r"^feb30_noleap\.yaml:5:\d+: calendar\.date: 02-30 does not exist in the noleap calendar "
      r"\(month 02 has 28 days there\)$", ["feb30_noleap.yaml"]),
    C("feb30-noleap-option", ["months", "6ka", "--equinox", "02-30 00:00"],
      r"^--equinox: anchor date 02-30 00:00 does not exist in calendar noleap \(February has 28 "
      r"days\); give a date that exists in every year$"),
    C("feb30-noleap-convert-option",
      ["convert", "model.nc", "-o", "out.nc", "--epoch", "6ka", "--equinox", "02-30 12:00"],
      r"^--equinox: anchor date 02-30 12:00 does not exist in calendar noleap \(February has 28 "
      r"days\)$", ["model.nc"]),
    C("month-13-option", ["months", "6ka", "--equinox", "13-01 00:00"],
      r"^--equinox: '13-01 00:00': anchor month must be a whole number from 1 to 12; got 13$"),
    C("year-0-standard", "months 6ka --calendar standard --year 0",
      r"^--year: year 0 does not exist in calendar standard"),
    # --- ambiguous epochs ------------------------------------------------------------------
    C("epoch-bare-number", "orbit 6000",
      r"^cannot read epoch '6000': a bare number is ambiguous \(years BP\? CE\? a model year\?\)"),
    C("epoch-bare-number-reference", "months 6ka --reference 1850",
      r"^--reference: cannot read epoch '1850': a bare number is ambiguous"),
    C("epoch-bare-number-spec", "build epoch_bare.yaml -o out",
      r"^epoch_bare\.yaml:2:8: epoch: expected an epoch such as '6ka', '21000 BP' or '1850CE', "
      r"got the number 6000 \(a bare number is ambiguous", ["epoch_bare.yaml"]),
    C("epoch-quoted-number-spec", "build epoch_quoted.yaml -o out",
      r"^epoch_quoted\.yaml:2:8: epoch: cannot read epoch '6000': a bare number is ambiguous",
      ["epoch_quoted.yaml"]),
    C("epoch-range-without-step", "orbit 10ka..0ka",
      r"^cannot read epoch '10ka\.\.0ka': a range needs a step, as in '130ka\.\.115ka/1ka'"),
    # --- epochs outside a table's range --------------------------------------------------------
    C("epoch-outside-table-option", "orbit 20ka --solution table --table table.csv",
      r"^table\.csv: epoch 20ka is outside the orbit table, which covers 10ka to 0ka$",
      ["table.csv"]),
    C("epoch-outside-table-spec", "build table_spec.yaml -o out",
      r"^table_spec\.yaml:2:8: epoch: .*table\.csv: epoch 50ka is outside the orbit table, "
      r"which covers 10ka to 0ka$", ["table_spec.yaml", "table.csv"]),
    # --- missing files -----------------------------------------------------------------------
    C("missing-spec", "build nowhere.yaml -o out", r"^nowhere\.yaml: spec file not found$"),
    C("missing-table", "orbit 6ka --solution table --table nowhere.csv",
      r"^nowhere\.csv: orbit table not found$"),
    C("missing-grid-file", "build grid_file.yaml -o out",
      r"^grid_file\.yaml:3:\d+: grid\.path: grid file .*nogrid\.nc not found$",
      ["grid_file.yaml"]),
    C("missing-convert-input", "convert nowhere.nc -o out.nc --epoch 6ka",
      r"^nowhere\.nc: no such file$"),
    C("missing-one-of-a-set", "convert model.nc nowhere.nc -o out.nc --epoch 6ka",
      r"^nowhere\.nc: no such file$", ["model.nc"]),
    C("missing-validate-input", "validate nowhere.nc --spec ok.yaml",
      r"^nowhere\.nc: no such file$", ["ok.yaml"]),
    C("missing-validate-spec", "validate rsdt_300.nc --spec nowhere.yaml",
      r"^nowhere\.yaml: spec file not found$", ["rsdt_300.nc"]),
    # --- model files for convert and validate ----------------------------------------------
    C("no-time-axis-convert", "convert no_time.nc -o out.nc --epoch 6ka",
      r"^no_time\.nc: no time axis \(a coordinate with CF units 'days since \.\.\.' and a "
      r"calendar\); cannot convert$", ["no_time.nc"]),
    C("no-time-axis-validate", "validate rsdt_no_time.nc --spec ok.yaml",
      r"^rsdt_no_time\.nc:rsdt: no time dimension \(expected a coordinate with units",
      ["rsdt_no_time.nc", "ok.yaml"]),
    C("no-calendar-convert", "convert no_calendar.nc -o out.nc --epoch 6ka",
      r"^no_calendar\.nc: time coordinate 'time' has no calendar attribute; expected the "
      r"model's CF calendar", ["no_calendar.nc"]),
    C("no-calendar-validate", "validate rsdt_no_calendar.nc --spec ok.yaml",
      r"^rsdt_no_calendar\.nc:rsdt: time coordinate 'time' has no calendar attribute",
      ["rsdt_no_calendar.nc", "ok.yaml"]),
    C("irregular-spacing-convert", "convert irregular.nc -o out.nc --epoch 6ka",
      r"^irregular\.nc: time steps of [\d.]+ to [\d.]+ days without bounds are neither one per "
      r"calendar month nor daily", ["irregular.nc"]),
    C("non-monthly-bounds-convert", "convert ten_day.nc -o out.nc --epoch 6ka",
      r"^ten_day\.nc: time intervals of 10 to 10 days are neither calendar months \(1st 00:00 "
      r"to 1st 00:00\) nor days", ["ten_day.nc"]),
    C("non-monthly-spacing-validate", "validate rsdt_ten_day.nc --spec ok.yaml",
      r"^rsdt_ten_day\.nc:rsdt: the time axis has no bounds and its spacing \(10 days\) is "
      r"neither daily nor monthly", ["rsdt_ten_day.nc", "ok.yaml"]),
    C("months-since-convert", "convert months_since.nc -o out.nc --epoch 6ka",
      r"^months_since\.nc: time: time units 'months since 0001-01-01'; expected "
      r"'<days\|hours\|minutes\|seconds> since <date>'$", ["months_since.nc"]),
    C("unknown-calendar-convert", "convert calendar_typo.nc -o out.nc --epoch 6ka",
      r"^calendar_typo\.nc: time:calendar: unknown calendar 'no_leap_year'; expected one of "
      r"noleap, ", ["calendar_typo.nc"]),
    C("monthly-maximum-convert", "convert monthly_max.nc -o out.nc --epoch 6ka",
      r"^monthly_max\.nc: variable 'tasmax' has cell_methods 'area: mean time: maximum': "
      r"each value is a maximum, not a mean or a sum, so it cannot be re-averaged over other "
      r"months; leave the variable out of the input$", ["monthly_max.nc"]),
    C("mixed-calendars", "convert model.nc julian_y2.nc -o out.nc --epoch 6ka",
      r"^julian_y2\.nc: calendar julian differs from model\.nc \(noleap\); the files of one "
      r"conversion must share a calendar$", ["model.nc", "julian_y2.nc"]),
    C("gap-between-files", "convert model.nc model_y3.nc -o out.nc --epoch 6ka",
      r"^model_y3\.nc: starts at 0003-01-01 00:00:00 but model\.nc ends at 0002-01-01 "
      r"00:00:00 \(a gap between files\); expected consecutive files$",
      ["model.nc", "model_y3.nc"]),
    C("truncated-netcdf-convert", "convert truncated.nc -o out.nc --epoch 6ka",
      r"^truncated\.nc: cannot open as NetCDF \(.*HDF error", ["truncated.nc"]),
    C("truncated-netcdf-validate", "validate truncated.nc --spec ok.yaml",
      r"^truncated\.nc: cannot read as NetCDF \(.*HDF error", ["truncated.nc", "ok.yaml"]),
    C("not-netcdf-convert", "convert text.nc -o out.nc --epoch 6ka",
      r"^text\.nc: cannot open as NetCDF \(not a NetCDF or HDF5 file\)$", ["text.nc"]),
    C("empty-file-convert", "convert zero.nc -o out.nc --epoch 6ka",
      r"^zero\.nc: cannot open as NetCDF \(not a NetCDF or HDF5 file\)$", ["zero.nc"]),
    C("not-netcdf-validate", "validate text.nc --spec ok.yaml",
      r"^text\.nc: cannot read as NetCDF \(not a NetCDF or HDF5 file\)$", ["text.nc", "ok.yaml"]),
    C("not-netcdf-plot", "plot insolation text.nc -o fig.png",
      r"^text\.nc: cannot open as NetCDF", ["text.nc"]),
    # --- outputs -----------------------------------------------------------------------------
    C("existing-output-convert", "convert model.nc -o existing.nc --epoch 6ka",
      r"^existing\.nc already exists; use --force to overwrite it$", ["model.nc", "existing.nc"]),
    C("existing-output-plot", "plot insolation 6ka -o existing.png",
      r"^existing\.png already exists; use --force to overwrite it$", ["existing.png"]),
    C("existing-output-build", "build ok.yaml -o out",
      r"^out/t_\w+\.nc and 2 more already exist\(s\); use --force to overwrite$",
      ["ok.yaml"], prepare=built_before),
    C("output-folder-is-a-file", "build ok.yaml -o a_file",
      r"^output folder a_file is a file; give a folder with -o$", ["ok.yaml", "a_file"]),
    C("output-folder-missing", "convert model.nc -o nowhere/out.nc --epoch 6ka",
      r"^cannot write nowhere/out\.nc: folder nowhere does not exist$", ["model.nc"]),
    C("figure-format", "plot insolation 6ka -o fig.nc",
      r"^-o fig\.nc: unknown figure format '\.nc'; expected a file ending in \.png or \.pdf$"),
    C("read-only-folder-build", "build ok.yaml -o locked",
      r"^output folder locked is not writable$", ["ok.yaml"],
      prepare=lambda d, mp: read_only(d / "locked", mp)),
    C("read-only-folder-convert", "convert model.nc -o locked/out.nc --epoch 6ka",
      r"^cannot write locked/out\.nc: permission denied \(is the folder writable\?\)$",
      ["model.nc"], prepare=lambda d, mp: read_only(d / "locked", mp)),
    C("disk-full-convert", "convert model.nc -o out.nc --epoch 6ka",
      r"^cannot write out\.nc: no space left on the device \(disk full\)$", ["model.nc"],
      prepare=lambda d, mp: disk_full(mp)),
    C("disk-full-build-second-file", "build ok.yaml -o out",
      r"^cannot write out/t_monthly_insolation_fixed_day\.nc: no space left on the device "
      r"\(disk full\)$", ["ok.yaml"], prepare=lambda d, mp: disk_full(mp, after=1)),
    C("disk-full-as-eacces-convert", "convert model.nc -o out.nc --epoch 6ka",
      r"^cannot write out\.nc: no space left on the device \(disk full\)$", ["model.nc"],
      prepare=lambda d, mp: disk_full_as(mp, PermissionError(errno.EACCES, "Permission denied"))),
    C("disk-full-as-hdf-error-build", "build ok.yaml -o out",
      r"^cannot write out/t_monthly_insolation_fixed_day\.nc: no space left on the device "
      r"\(disk full\)$", ["ok.yaml"],
      prepare=lambda d, mp: disk_full_as(mp, RuntimeError("NetCDF: HDF error"), after=1)),
    C("disk-full-transient", "build transient.yaml -o out",
      r"^cannot write out/tr_orbit_1-10\.nc: no space left on the device \(disk full\)$",
      ["transient.yaml"],
      prepare=lambda d, mp: ((d / "out").mkdir(), transient_disk_full(mp))),
    C("disk-full-build-force", "build ok.yaml -o out --force",
      r"^cannot write out/t_monthly_insolation_fixed_day\.nc: no space left on the device "
      r"\(disk full\)$", ["ok.yaml"],
      prepare=lambda d, mp: (built_before(d, mp), disk_full(mp, after=1))),
    # --- options -------------------------------------------------------------------------------
    C("two-orbit-sources", "convert model.nc -o out.nc --epoch 6ka --spec ok.yaml",
      r"^give the run's orbit by exactly one of --spec, --epoch or .* \(got --spec, --epoch\)$",
      ["model.nc", "ok.yaml"]),
    C("fixed-needs-all-four", "orbit 6ka --solution fixed --eccentricity 0.01",
      r"^--solution fixed needs --eccentricity, .*; missing --obliquity-deg, --perihelion-deg, "
      r"--perihelion-convention$"),
    C("anomaly-needs-reference", "plot anomaly 6ka -o fig.png",
      r"^bcgen plot anomaly needs --reference SOURCE"),
    C("invalid-choice", "build ok.yaml --format xml",
      r"^bcgen build: argument --format: invalid choice: 'xml'", ["ok.yaml"]),
    C("unknown-command", "frobnicate", r"^bcgen: argument COMMAND: invalid choice: 'frobnicate'"),
    C("no-command", [], r"^no command given; expected one of build, orbit, months"),
    C("missing-required-option", "insolation 6ka",
      r"^bcgen insolation: the following arguments are required: --lat"),
    # --- checks that fail by design (status 1) ---------------------------------------------
    C("validate-inconsistent", "validate rsdt_300.nc --spec ok.yaml",
      r"^rsdt_300\.nc:rsdt is inconsistent with the spec: max abs error 300\.00 W m-2",
      ["rsdt_300.nc", "ok.yaml"], status=1),
    # orbit.expected: the 6 ka eccentricity is 0.018682 (Otto-Bliesner et al. 2017, GMD 10,
    # 3979-4003, Table 1), not 0.0123: the files are complete, then the check fails. The
    # message gives the computed value with more digits: 0.01868..., as the table within
    # its last digit.
    C("build-expected-disagrees", "build expected_wrong.yaml -o out",
      r"^computed orbit disagrees with orbit\.expected in expected_wrong\.yaml: eccentricity "
      r"0\.01868\d* vs 0\.0123$", ["expected_wrong.yaml"], status=1, changes_folder=True),
]


def snapshot(folder: Path) -> dict[str, str]:
    """Every file and folder under ``folder`` (hidden ones too) with its SHA-256."""
    found = {}
    for path in sorted(folder.rglob("*")):
        rel = str(path.relative_to(folder))
        found[rel] = "<dir>" if path.is_dir() else hashlib.sha256(path.read_bytes()).hexdigest()
    return found


def test_the_corpus_is_large_and_its_ids_unique():
    ids = [case.id for case in CASES]
    assert len(ids) == len(set(ids))
    assert len(CASES) >= 40


@pytest.mark.parametrize("case", CASES, ids=[case.id for case in CASES])
def test_bad_input(case, tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    make_files(tmp_path, case.files)
    try:
        with set_backend(None):  # a prepare may install a failing backend for this case only
            if case.prepare is not None:
                case.prepare(tmp_path, monkeypatch)
            before = snapshot(tmp_path)
            status, out, err = run_cli(case.argv)
    finally:
        for path in tmp_path.rglob("*"):  # undo chmod (read_only) so pytest can clean up
            if path.is_dir():
                path.chmod(0o755)
    assert "Traceback" not in err and "Traceback" not in out
    lines = err.splitlines()
    assert len(lines) == 1, f"expected one line on stderr, got:\n{err}"
    # Bad input is an error (status 2); a check that ran and failed says so (status 1).
    prefix = "bcgen: error: " if case.status == 2 else "bcgen: check failed: "
    assert lines[0].startswith(prefix), lines[0]
    assert re.search(case.pattern, lines[0][len(prefix):]), lines[0]
    assert status == case.status, err
    if case.status == 2:
        assert out == "", "nothing is printed on stdout for bad input"
    after = snapshot(tmp_path)
    if case.changes_folder:  # complete outputs, recorded in the manifest, nothing temporary
        manifest = json.loads((tmp_path / "out" / "t_manifest.json").read_text())
        written = {f"out/{f['file']}" for f in manifest["files"]} | {"out/t_manifest.json"}
        assert set(after) - set(before) == written | {"out"}
    else:
        assert after == before, "the folder changed: partial, temporary or overwritten output"


def test_30_february_is_accepted_in_the_360_day_calendar(tmp_path, monkeypatch, run_cli):
    # CF 1.11 §4.4.1: every month of 360_day has 30 days, so 02-30 exists in every year;
    # the same date is refused in noleap (cases feb30-noleap-* above).
    monkeypatch.chdir(tmp_path)
    make_files(tmp_path, ["feb30_360.yaml"])
    status, out, err = run_cli(["build", "feb30_360.yaml", "-o", "out", "--format", "json"])
    assert (status, err) == (0, "")
    assert json.loads(out)["calendar"]["name"] == "360_day"
    status, out, err = run_cli(["months", "6ka", "--calendar", "360_day", "--equinox",
                                "02-30 00:00", "--format", "json"])
    assert (status, err) == (0, "")
    months = json.loads(out)
    assert len(months) == 12
    # A 360_day year has 360 days (CF 1.11 §4.4.1); fixed-angle months tile it.
    assert sum(m["length_days"] for m in months) == pytest.approx(360.0, abs=1e-9)


# --- real subprocesses of the console script --------------------------------------------------
SUBPROCESS_CASES = ["yaml-unclosed-flow", "epoch-bare-number", "not-netcdf-convert",
                    "existing-output-convert", "invalid-choice", "no-calendar-validate"]


@pytest.mark.parametrize("case_id", SUBPROCESS_CASES)
def test_bad_input_in_a_real_process(case_id, tmp_path, bcgen_script):
    case = next(c for c in CASES if c.id == case_id)
    make_files(tmp_path, case.files)
    before = snapshot(tmp_path)
    result = subprocess.run(bcgen_script + list(case.argv), cwd=tmp_path, capture_output=True,
                            text=True, timeout=120)
    assert "Traceback" not in result.stderr
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("bcgen: error: "), result.stderr
    assert re.search(case.pattern, lines[0][len("bcgen: error: "):]), lines[0]
    assert result.returncode == case.status
    assert result.stdout == ""
    assert snapshot(tmp_path) == before


def big_model_file(path: Path, years: int = 40) -> None:
    """40 years of monthly (time, lat, lon) means on a 1-degree grid, about 120 MB."""
    edges = np.concatenate([NOLEAP_EDGES[:-1] + 365.0 * y for y in range(years)]
                           + [[365.0 * years]])
    n = edges.size - 1
    with netCDF4.Dataset(path, "w") as nc:
        for name, size in (("time", n), ("lat", 180), ("lon", 360), ("bnds", 2)):
            nc.createDimension(name, size)
        t = nc.createVariable("time", "f8", ("time",))
        t.units, t.calendar, t.bounds = "days since 0001-01-01 00:00:00", "noleap", "time_bnds"
        t[:] = 0.5 * (edges[:-1] + edges[1:])
        tb = nc.createVariable("time_bnds", "f8", ("time", "bnds"))
        tb[:, 0], tb[:, 1] = edges[:-1], edges[1:]
        la = nc.createVariable("lat", "f8", ("lat",))
        la.units, la[:] = "degrees_north", np.arange(-89.5, 90.0, 1.0)
        lo = nc.createVariable("lon", "f8", ("lon",))
        lo.units, lo[:] = "degrees_east", np.arange(0.5, 360.0, 1.0)
        v = nc.createVariable("tas", "f4", ("time", "lat", "lon"))
        v.units = "K"
        v[:] = np.broadcast_to((280.0 + np.arange(n) % 12).astype("f4")[:, None, None],
                               (n, 180, 360))


def test_sigint_during_a_real_convert_leaves_nothing(tmp_path, bcgen_script):
    big_model_file(tmp_path / "big.nc")
    before = snapshot(tmp_path)
    proc = subprocess.Popen(bcgen_script + ["convert", "big.nc", "-o", "out.nc", "--epoch",
                                            "6ka"], cwd=tmp_path, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)
    deadline = time.monotonic() + 60
    writing = False
    while time.monotonic() < deadline and proc.poll() is None:
        if list(tmp_path.glob(".out.nc.*.tmp")):  # the writer's temporary file: writing
            writing = True
            break
        time.sleep(0.002)
    assert writing and proc.poll() is None, "the conversion ended before it could be interrupted"
    time.sleep(0.05)  # well inside the write
    proc.send_signal(signal.SIGINT)
    out, err = proc.communicate(timeout=60)
    assert proc.returncode == 130, err
    assert err.splitlines() == ["bcgen: interrupted; no partial output was left"]
    assert out == ""
    time.sleep(0.2)  # nothing may come back after the process ended either
    assert snapshot(tmp_path) == before


def test_sigint_during_a_real_build_leaves_the_folder_as_it_was(tmp_path, bcgen_script):
    # A time-slice build stages its files and moves them into place only when all are
    # complete: interrupted after its first file, it leaves no output folder at all.
    # The files after the first take seconds (a 0.5 degree daily field), and the build runs at
    # a lower priority (nice 10) than this test, so that on a loaded machine the test still
    # sees the first file and signals while most of the build is still to do.
    (tmp_path / "big.yaml").write_text(
        "experiment: {name: big}\nepoch: 6ka\ngrid: {kind: regular, resolution_deg: 0.5}\n"
        "products: [orbit, daily_insolation, monthly_insolation_fixed_day]\n")
    before = snapshot(tmp_path)
    proc = subprocess.Popen(bcgen_script + ["build", "big.yaml", "-o", "out"], cwd=tmp_path,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        os.setpriority(os.PRIO_PROCESS, proc.pid, 10)
    except OSError:  # the process may already have ended; the check below says so
        pass
    deadline = time.monotonic() + 60
    staged = False
    while time.monotonic() < deadline and proc.poll() is None:
        if list(tmp_path.glob("out/.bcgen-build-*/big_orbit.nc")):  # one file complete
            staged = True
            break
        time.sleep(0.002)
    assert staged and proc.poll() is None, "the build ended before it could be interrupted"
    proc.send_signal(signal.SIGINT)
    out, err = proc.communicate(timeout=60)
    assert proc.returncode == 130, err
    assert err.splitlines() == ["bcgen: interrupted; no partial output was left"]
    assert out == ""
    assert snapshot(tmp_path) == before
