"""Writing files safely: atomic writes, NetCDF encoding, folder locks, staged replacement.

Everything bcgen writes goes through this package, which knows nothing of orbits,
calendars or specs:

- :mod:`bcgen.io.atomic`: a file is written under a hidden temporary name in its
  target folder and renamed into place only when complete; never over an existing file
  without ``force``; :func:`write_file_atomic`, :func:`write_text_atomic`,
  :func:`prepare_output_folder`.
- :mod:`bcgen.io.diagnose`: one line saying why a write failed (a full disk is named
  even when the netCDF library reports it as something else).
- :mod:`bcgen.io.netcdf`: :func:`write_netcdf` (an xarray Dataset, chunked and
  compressed, interruptible) and its default encoding and chunks.
- :mod:`bcgen.io.series`: :class:`SeriesFile`, a NetCDF file filled a slab of time
  steps at a time (transient runs).
- :mod:`bcgen.io.lock`: one writer per output folder (:class:`FolderLock`).
- :mod:`bcgen.io.staging`: all-or-nothing replacement of a set of files with
  rollback (:func:`replace_all`), and the sweep of temporaries left by killed runs.
- :mod:`bcgen.io.paths`: an output is never an input (:func:`refuse_outputs_among_inputs`).
- :mod:`bcgen.io.backend`: the fault-injection seam.

The seam
--------
Every NetCDF byte bcgen writes goes through a :class:`NetCDFBackend`: its
``write_dataset`` writes a whole xarray Dataset, ``create`` opens a new file for
:class:`SeriesFile` and ``write_slab`` writes one slab of it. A subclass can fail
where a real disk or library would (a full disk after two files, a library error in
the middle of a file) and is installed for a block of code with
:class:`set_backend`, as ``xarray.set_options`` sets an option::

    class FullDisk(NetCDFBackend):
        def write_slab(self, handle, name, start, values):
            raise OSError(errno.ENOSPC, "No space left on device")

    with set_backend(FullDisk()):
        bcgen.cli.main(["build", "spec.yaml", "-o", "out"])

:func:`write_netcdf` and :class:`SeriesFile` also take a ``backend=`` argument.
"""

from bcgen.io.atomic import (
    create_temporary,
    move_into_place,
    prepare_output_folder,
    remove_quietly,
    sha256_of,
    write_file_atomic,
    write_text_atomic,
)
from bcgen.io.backend import NetCDFBackend, current_backend, set_backend
from bcgen.io.diagnose import disk_is_full, write_failure
from bcgen.io.netcdf import default_chunks, default_encoding, write_netcdf
from bcgen.io.series import SeriesFile

__all__ = [
    "NetCDFBackend",
    "SeriesFile",
    "create_temporary",
    "current_backend",
    "default_chunks",
    "default_encoding",
    "disk_is_full",
    "move_into_place",
    "prepare_output_folder",
    "remove_quietly",
    "set_backend",
    "sha256_of",
    "write_failure",
    "write_netcdf",
    "write_file_atomic",
    "write_text_atomic",
]
