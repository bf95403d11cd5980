"""The vocabulary of a view, shared by the app's URL state and the export.

One place for the names a link or an export may carry and the values each
accepts, so that what a link can say and what an export understands never drift
apart.  Pure data: no UI imports.
"""

from __future__ import annotations

import re

#: Star ids: the catalog's slug rule (never a path).
STAR_ID = re.compile(r"[a-z0-9][a-z0-9-]{0,63}")
#: A species in the line filter, e.g. ``Fe I``, ``TiO``, ``He II``.
SPECIES = re.compile(r"[A-Za-z][A-Za-z0-9]{0,7}( [IVX]{1,4})?")

FRAMES = ("observed", "barycentric", "rest")
MEDIA = ("air", "vacuum")
UNITS = ("A", "nm")
FLUXES = ("normalized", "raw")


def is_star_id(value) -> bool:
    """True when ``value`` is a well-formed star id (the whole string, no newline)."""
    return isinstance(value, str) and STAR_ID.fullmatch(value) is not None


def is_species(value) -> bool:
    """True when ``value`` looks like a species name for the line filter."""
    return isinstance(value, str) and SPECIES.fullmatch(value) is not None
