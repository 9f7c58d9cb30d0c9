"""Writing a figure to PNG or PDF atomically, never over an existing file without ``force``."""

from __future__ import annotations

from pathlib import Path
from typing import Literal

from bcgen.errors import OutputError
from bcgen.io import write_file_atomic

FigureFormat = Literal["png", "pdf"]
#: File suffixes and the format each selects.
FORMATS: dict[str, FigureFormat] = {".png": "png", ".pdf": "pdf"}


def figure_format(path) -> FigureFormat:
    """Return the figure format given by the file's suffix (``.png`` or ``.pdf``).

    Raises
    ------
    OutputError
        For any other suffix.
    """
    suffix = Path(path).suffix.lower()
    if suffix not in FORMATS:
        raise OutputError(
            f"-o {path}: unknown figure format {suffix or '(no suffix)'!r}; expected a file "
            f"ending in {' or '.join(FORMATS)}"
        )
    return FORMATS[suffix]


def check_output(path, force: bool = False) -> Path:
    """Refuse an output before any work: bad suffix, missing folder, existing file."""
    path = Path(path)
    figure_format(path)
    if path.is_dir():
        raise OutputError(f"cannot write {path}: it is a folder")
    if not path.parent.is_dir():
        raise OutputError(f"cannot write {path}: folder {path.parent} does not exist")
    if path.exists() and not force:
        raise OutputError(f"{path} already exists; use --force to overwrite it")
    return path


def check_dpi(dpi) -> int:
    """Refuse a resolution that is not a whole number from 10 to 2400 dots per inch."""
    if not isinstance(dpi, int) or isinstance(dpi, bool) or not 10 <= dpi <= 2400:
        raise OutputError(f"--dpi: expected a whole number from 10 to 2400, got {dpi!r}")
    return dpi


def save_figure(fig, path, *, force: bool = False, dpi: int = 150) -> Path:
    """Save a matplotlib Figure to ``path``, atomically.

    The figure is written to a hidden temporary file in the target folder and
    renamed into place only when complete (as :func:`bcgen.io.write_netcdf`
    does); on any failure, including an interrupt, no output is left.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure.
    path : str or os.PathLike
        Output file; ``.png`` or ``.pdf`` selects the format.
    force : bool
        Replace an existing file.
    dpi : int
        Resolution of a PNG, dots per inch (also of images embedded in a PDF).

    Returns
    -------
    pathlib.Path
        The path written.
    """
    from bcgen import __version__

    path = check_output(path, force)
    fmt = figure_format(path)
    check_dpi(dpi)
    metadata = {"Creator": f"bcgen {__version__}"} if fmt == "pdf" else {
        "Software": f"bcgen {__version__}"}
    write_file_atomic(path, lambda tmp: fig.savefig(tmp, format=fmt, dpi=dpi, metadata=metadata),
                      force=force)
    return path
