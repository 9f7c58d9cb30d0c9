"""Why a write failed, in one line: a full disk is named whatever the library reported."""

from __future__ import annotations

import errno
import os
from pathlib import Path

#: Target size of one chunk of a data variable, bytes (see :mod:`bcgen.io.netcdf`).
CHUNK_TARGET_BYTES = 4 * 1024 * 1024

#: Free space below which a failed write is put down to a full disk, bytes. A write that
#: failed for lack of space leaves less free than it tried to write, and bcgen writes at
#: most about one chunk (:data:`CHUNK_TARGET_BYTES`) at a time.
NEARLY_FULL_BYTES = CHUNK_TARGET_BYTES

_NO_SPACE = "no space left on the device (disk full)"

_ERRNO_TEXT = {
    errno.ENOSPC: _NO_SPACE,
    errno.EDQUOT: "no space left on the device (disk quota exceeded)",
    errno.EACCES: "permission denied (is the folder writable?)",
    errno.EPERM: "permission denied (is the folder writable?)",
    errno.EROFS: "the file system is read-only",
    errno.ENOENT: "the folder does not exist",
}


def disk_is_full(folder) -> bool:
    """Tell whether the file system of ``folder`` has (nearly) no space left for this user.

    Looks at ``os.statvfs(folder).f_bavail``, the blocks free to unprivileged users,
    times the fragment size; below :data:`NEARLY_FULL_BYTES` the disk counts as full.
    False when the file system cannot tell (or on a platform without ``statvfs``), and for
    a file system of no size at all (``f_blocks`` 0: /proc, /sys and other pseudo file
    systems, which hold no files of ours and are never "full").
    """
    statvfs = getattr(os, "statvfs", None)
    if statvfs is None:  # pragma: no cover - not on POSIX
        return False
    try:
        st = statvfs(folder)
    except OSError:
        return False
    if st.f_blocks == 0:
        return False
    return st.f_bavail * max(st.f_frsize, 1) < NEARLY_FULL_BYTES


def write_failure(path, exc: BaseException) -> str:
    """One line saying why ``path`` could not be written, from the error the write raised.

    A full disk does not always give ENOSPC: the netCDF library reports a file it
    could not create as "Permission denied" and a failed HDF5 write as "NetCDF: HDF
    error". So after any failed write the free space of the folder is looked at
    (:func:`disk_is_full`); call this before the partly written file is removed.
    """
    path = Path(path)
    code = exc.errno if isinstance(exc, OSError) else None
    if code in (errno.ENOSPC, errno.EDQUOT):
        reason = _ERRNO_TEXT[code]
    elif disk_is_full(path.parent):
        reason = _NO_SPACE
    elif code == errno.ENOENT and path.parent.is_dir():
        reason = f"the folder {path.parent} does not take new files (a special file system?)"
    elif isinstance(exc, OSError):
        reason = _ERRNO_TEXT.get(code or 0) or exc.strerror or _one_line(exc)
    else:
        reason = _one_line(exc)
    return f"cannot write {path}: {reason}"


def _one_line(exc: BaseException) -> str:
    text = " ".join(str(exc).split())
    return text or type(exc).__name__
