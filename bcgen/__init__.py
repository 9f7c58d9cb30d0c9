"""bcgen: boundary conditions for paleoclimate model experiments.

The public API is small and explicit; see the README's API reference.
"""

from __future__ import annotations

__version__ = "0.1.0"

from bcgen.epochs import parse_epoch, parse_epochs  # noqa: E402
from bcgen.errors import BcgenError, BcgenWarning, OutsideValidityWarning  # noqa: E402
from bcgen.orbit import OrbitalElements, convert_perihelion, solve  # noqa: E402

__all__ = [
    "BcgenError",
    "BcgenWarning",
    "OrbitalElements",
    "OutsideValidityWarning",
    "__version__",
    "convert_perihelion",
    "parse_epoch",
    "parse_epochs",
    "solve",
]
