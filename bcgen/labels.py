"""How bcgen names latitudes and latitude bands, in figures and in messages alike.

One home for these words, so that a figure's axis, a validation report and an error
message name the same place the same way: ``65°N``, ``30°S``, ``Equator``; a band
``60°S to 30°S``. (Model days in words: :mod:`bcgen.validation.dates`.)

>>> latitude_label(65.0), latitude_label(-30.0), latitude_label(0.0)
('65°N', '30°S', 'Equator')
>>> band_label(-30.0, 0.0)
'30°S to Equator'
"""

from __future__ import annotations


def latitude_label(lat_deg: float) -> str:
    """Return ``65°N``, ``30°S`` or ``Equator``."""
    if abs(lat_deg) < 1e-9:
        return "Equator"
    return f"{abs(lat_deg):g}°{'N' if lat_deg > 0 else 'S'}"


def band_label(south_deg: float, north_deg: float) -> str:
    """Return a latitude band from its southern to its northern edge: ``60°S to 30°S``."""
    return f"{latitude_label(south_deg)} to {latitude_label(north_deg)}"
