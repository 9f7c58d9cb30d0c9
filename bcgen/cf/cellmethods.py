"""CF ``cell_methods`` (CF 1.11 §7.3, §7.4) split into entries, for the readers of model output.

>>> [(e.names, e.method, e.qualifiers) for e in parse("area: mean time: maximum within days")]
[(('area',), 'mean', {}), (('time',), 'maximum', {'within': 'days'})]
"""

from __future__ import annotations

import re
from dataclasses import dataclass

# One cell_methods entry (CF §7.3): "name: [name: ...] method [where t] [over t] [within t]
# [(comment)]".
_ENTRY = re.compile(r"((?:[\w-]+:\s*)+)([\w-]+)((?:\s+(?:where|over|within)\s+[\w-]+)*)"
                    r"(\s*\([^)]*\))?")


@dataclass(frozen=True)
class Entry:
    """One entry of a cell_methods string."""

    names: tuple[str, ...]
    method: str
    qualifiers: dict[str, str]
    text: str  # as written


def parse(cell_methods: str) -> list[Entry]:
    """Split a CF cell_methods string into its entries (CF §7.3)."""
    out = []
    for m in _ENTRY.finditer(cell_methods):
        names = tuple(n.strip() for n in m.group(1).split(":") if n.strip())
        words = m.group(3).split()
        qualifiers = dict(zip(words[::2], words[1::2], strict=True))
        out.append(Entry(names, m.group(2), qualifiers, m.group(0).strip()))
    return out
