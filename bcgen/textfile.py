"""Reading the small CSV tables users supply (orbit tables, gas tables, orbit-code dumps)."""

from __future__ import annotations

from pathlib import Path

from bcgen.errors import InputFileError


def content_lines(path, what: str) -> list[tuple[int, str]]:
    """Return the numbered lines of a UTF-8 text file, without blank and ``#`` comment lines.

    Parameters
    ----------
    path : path-like
        The file.
    what : str
        What the file is, for the error message (``"orbit table"``).

    Raises
    ------
    InputFileError
        The file is missing or not readable as UTF-8 text (one line naming it).
    """
    path = Path(path)
    if not path.is_file():
        raise InputFileError(f"{path}: {what} not found")
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        reason = " ".join(str(exc).split())
        raise InputFileError(f"{path}: cannot read as a UTF-8 CSV table ({reason})") from None
    return [
        (n, line)
        for n, line in enumerate(text.splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
