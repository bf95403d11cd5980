"""The export's view: the view specification read with the command-line policy (refuse).

:func:`make_view` takes the URL's names (:mod:`atlas.viewspec`) as a dict and keywords and
returns a frozen :class:`ExportView`; any unusable value raises
:class:`atlas.errors.InputError` naming the parameter.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

from atlas.errors import InputError
from atlas.frames import Frame
from atlas.viewspec import Bad, parse_view, read_choice

PAPERS = ("a4", "letter")

#: The view-state names an export understands (others, e.g. ``compare``, are ignored).
VIEW_KEYS = ("star", "lo", "hi", "frame", "medium", "unit", "flux", "lines", "strength",
             "marks", "per_page", "page")
#: Export-only names.
EXTRA_KEYS = ("paper", "markers")


@dataclass(frozen=True)
class ExportView:
    """A validated view to export; wavelengths ``lo``/``hi`` in Å (display frame, medium)."""

    star: str
    lo: float | None = None
    hi: float | None = None
    frame: str = "observed"
    medium: str = "air"
    unit: str = "A"
    flux: str = "normalized"
    lines: tuple[str, ...] = ()  # species shown; empty = every species
    strength: int = 3  # weakest strength class shown (1 strongest .. 4 weak)
    markers: bool = True  # False: no line markers at all
    marks: tuple[tuple[float, float, str], ...] = field(default_factory=tuple)
    per_page: int = 6
    page: int = 1
    paper: str = "a4"


def make_view(view: Mapping | None = None, **kw) -> ExportView:
    """Validate view-state values (a dict with the URL's names, plus keywords) into a view.

    Unknown keys of ``view`` (``compare``, ``ref``, ...) are ignored; ``None`` keyword
    values fall back to ``view`` and then to the defaults.  Raises ``InputError``
    naming the parameter for any unusable value.
    """
    unknown = set(kw) - set(VIEW_KEYS) - set(EXTRA_KEYS)
    if unknown:
        raise TypeError(f"unknown view parameters: {', '.join(sorted(unknown))}")
    raw = {k: v for k, v in dict(view or {}).items() if k in VIEW_KEYS or k in EXTRA_KEYS}
    raw.update({k: v for k, v in kw.items() if v is not None})
    star = raw.get("star")
    if star is None or str(star).strip() == "":
        raise InputError("star", "no star given")
    values, _ = parse_view({k: v for k, v in raw.items() if k in VIEW_KEYS}, "refuse")
    try:
        paper = read_choice(raw.get("paper", "a4"), PAPERS, "paper")
    except Bad as exc:
        raise InputError(exc.where, exc.reason) from None
    values.pop("compare", None)
    values.pop("ref", None)
    for k in ("lines", "marks"):
        if k in values:
            values[k] = tuple(tuple(m) for m in values[k]) if k == "marks" else tuple(values[k])
    return ExportView(**values, markers=bool(raw.get("markers", True)), paper=paper)


#: The export's name for :class:`atlas.frames.Frame` (one implementation, shared with the app).
FrameMap = Frame


def frame_for(view: ExportView, record: Mapping) -> FrameMap:
    """The FrameMap of a view for a star record; InputError when the frame is unavailable."""
    fmap = Frame.of_record(view.frame, view.medium, record, view.unit)
    if view.frame == "barycentric" and fmap.bary_kms is None:
        raise InputError("frame", f"star {view.star!r} has no barycentric correction (its file "
                         "lacks time, site or coordinates); use frame observed")
    if view.frame == "rest" and not fmap.has_star_velocity():
        raise InputError("frame", f"star {view.star!r} has no measured radial velocity, so "
                         "there is no rest frame; use frame observed"
                         + (" or barycentric" if fmap.bary_kms is not None else ""))
    return fmap
