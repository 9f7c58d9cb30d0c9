"""Provenance: the global attributes that record what made a file (CF 1.11 §2.6.2).

CF names the attributes (``Conventions``, ``title``, ``institution``, ``source``,
``history``, ``references``, ``comment``); bcgen adds ``creation_date``,
``orbital_solution`` and ``bcgen_spec`` (the whole experiment spec). They are CF
knowledge, so they live beside the attribute tables, and they are the only part of a
file that changes from one build of a spec to the next (the creation time;
``SOURCE_DATE_EPOCH`` fixes it).

Why ``Conventions = "CF-1.11"``
-------------------------------
CF 1.13 (December 2025) is the newest release, but the newest CF suite of the
IOOS compliance-checker, which the test suite uses to verify every output, is
1.11. bcgen states the version its files are checked against. The files use
nothing added after 1.11, and later CF versions keep 1.11 files valid.

>>> from datetime import datetime
>>> attrs = provenance_attrs("epoch: 6ka", "Berger (1978)", title="t",
...                          created=datetime(2020, 1, 2, 3, 4, 5))
>>> attrs["Conventions"], attrs["creation_date"]
('CF-1.11', '2020-01-02T03:04:05Z')
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from datetime import datetime, timezone

#: The CF version bcgen declares (the newest the compliance-checker can verify; see above).
CONVENTIONS = "CF-1.11"

CYCLIC_COMMENT = (
    "This file holds one model year that repeats (a time slice): use its time steps "
    "cyclically, the first following the last. Time values are mid-interval times in a "
    "nominal year; the climatology bounds give each interval."
)


def provenance_attrs(
    spec_text: str,
    solution_reference: str,
    *,
    title: str,
    institution: str | None = None,
    solution: str | None = None,
    references: Sequence[str] = (),
    comment: str | None = None,
    time_slice: bool = False,
    command: str | None = None,
    created: datetime | None = None,
    extra: Mapping[str, str] | None = None,
) -> dict[str, str]:
    """Global attributes that record what made a file (CF §2.6.2 and bcgen's own).

    Parameters
    ----------
    spec_text : str
        The full text of the experiment spec (stored as ``bcgen_spec``).
    solution_reference : str
        Reference of the orbital solution (first entry of ``references``).
    title : str
        A short description of the file's contents.
    institution, comment : str, optional
        CF attributes; ``comment`` is appended to the cyclic-year note.
    solution : str, optional
        Name of the orbital solution (``orbital_solution`` attribute).
    references : sequence of str
        Further references (protocols, data sources), one per line.
    time_slice : bool
        True for a repeating time-slice year: ``comment`` states the cyclic intent
        (CF has no attribute for it).
    command : str, optional
        The command that made the file, recorded in ``history``.
    created : datetime, optional
        Creation time; default now, or ``SOURCE_DATE_EPOCH`` when that
        environment variable is set (reproducible builds).
    extra : mapping, optional
        More attributes (from the spec or a metadata template); they win.

    Returns
    -------
    dict
        ``Conventions``, ``title``, ``institution``, ``source``, ``history``,
        ``creation_date``, ``references``, ``orbital_solution``, ``comment``,
        ``bcgen_spec`` (those given).
    """
    from bcgen import __version__

    stamp = _utc_stamp(created)
    refs = [r for r in (solution_reference, *references) if r]
    attrs: dict[str, str] = {"Conventions": CONVENTIONS, "title": title}
    if institution:
        attrs["institution"] = institution
    attrs["source"] = f"bcgen {__version__}"
    attrs["history"] = f"{stamp} created by bcgen {__version__}" + (
        f": {command}" if command else ""
    )
    attrs["creation_date"] = stamp
    if refs:
        attrs["references"] = "\n".join(refs)
    if solution:
        attrs["orbital_solution"] = solution
    notes = [CYCLIC_COMMENT] if time_slice else []
    if comment:
        notes.append(comment)
    if notes:
        attrs["comment"] = "\n".join(notes)
    attrs["bcgen_spec"] = spec_text
    if extra:
        attrs.update({str(k): v for k, v in extra.items()})
    return attrs


def _utc_stamp(created: datetime | None) -> str:
    if created is None:
        epoch = os.environ.get("SOURCE_DATE_EPOCH")
        if epoch is not None and epoch.strip().isdigit():
            created = datetime.fromtimestamp(int(epoch), tz=timezone.utc)
        else:
            created = datetime.now(timezone.utc)
    if created.tzinfo is None:
        created = created.replace(tzinfo=timezone.utc)
    return created.astimezone(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
