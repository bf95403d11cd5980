"""The view state: one ``param.Parameterized`` that is the whole view, and the URL.

Every value a view shows lives here; ``pn.state.location.sync`` mirrors it to the
query string (see :mod:`atlas.app.viewer`), so a copied link reopens the same view.
Incoming values are never trusted: :func:`parse_query` reads them with the view
specification (:mod:`atlas.viewspec`, link policy: clamp) and returns a notice for every
value it had to drop or change.

Conventions of the parameters
-----------------------------
``star``, ``compare``
    star ids (slugs ``[a-z0-9][a-z0-9-]{0,63}``) from the atlas catalog; ``compare``
    is empty when no second star is shown.
``lo``, ``hi``
    the zoom window, in Å (always Å, even when ``unit`` is ``nm``), in the displayed
    ``frame`` and ``medium``; both ``None`` when every strip shows its whole range.
    Only one strip is zoomed at a time: the strip that holds the middle of the window.
``frame``
    ``observed`` (as recorded), ``barycentric`` (Earth's motion removed), ``rest``
    (the star's radial velocity removed as well).
``medium``, ``unit``, ``flux``
    wavelengths shown in ``air`` or ``vacuum``; axis in ``A`` or ``nm``; ``raw`` or
    ``normalized`` flux.
``page``, ``per_page``
    page number counted from 1; strips stacked per page.
``lines``, ``strength``
    line markers: species shown (empty list = every species) and the weakest strength
    class shown (1 = strongest .. 4 = weak, as in the line list).
``ref``
    the line the cursor velocity readout is measured from, e.g. ``Na I 5889.95`` (empty
    = none).
``marks``
    marked ranges ``[lo_A, hi_A, note]`` in the displayed frame and medium.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from typing import Any

import param

from atlas.viewspec import (
    FLUX_AXES,
    FLUXES,
    FRAMES,
    MAX_FEATURES,
    MAX_MARKS,
    MAX_NOTE,
    MAX_PAGE,
    MAX_SPECIES,
    MEDIA,
    NAMES,
    PARAMS,
    UNITS,
    WAVE_MAX_A,
    WAVE_MIN_A,
    Bad,
    parse_view,
    read_marks,
)

__all__ = ["MAX_MARKS", "MAX_NOTE", "MAX_SPECIES", "PER_PAGE_MAX", "URL_PARAMS", "WAVE_MAX_A",
           "WAVE_MIN_A", "Bad", "DEFAULTS", "ViewState", "parse_marks", "parse_query",
           "parse_search", "to_query"]

#: The most strips the viewer stacks on one page.
PER_PAGE_MAX = 12

#: The parameters mirrored to the URL, in the order they appear there.
URL_PARAMS = NAMES


def _doc(name: str) -> str:
    return PARAMS[name].doc


class ViewState(param.Parameterized):
    """Everything one view shows; mirrored to the URL query string."""

    star = param.String(default=PARAMS["star"].default, doc=_doc("star"))
    compare = param.String(default=PARAMS["compare"].default, doc=_doc("compare"))
    lo = param.Number(default=None, allow_None=True, doc=_doc("lo"))
    hi = param.Number(default=None, allow_None=True, doc=_doc("hi"))
    frame = param.Selector(default=PARAMS["frame"].default, objects=list(FRAMES))
    medium = param.Selector(default=PARAMS["medium"].default, objects=list(MEDIA))
    unit = param.Selector(default=PARAMS["unit"].default, objects=list(UNITS))
    flux = param.Selector(default=PARAMS["flux"].default, objects=list(FLUXES))
    yaxis = param.Selector(default=PARAMS["yaxis"].default, objects=list(FLUX_AXES), doc=_doc("yaxis"))
    page = param.Integer(default=1, bounds=(1, MAX_PAGE), doc=_doc("page"))
    per_page = param.Integer(default=PARAMS["per_page"].default, bounds=(1, PER_PAGE_MAX),
                             doc=_doc("per_page"))
    lines = param.List(default=[], item_type=str, doc=_doc("lines"))
    strength = param.Integer(default=PARAMS["strength"].default, bounds=(1, 4), doc=_doc("strength"))
    ref = param.String(default="", doc=_doc("ref"))
    marks = param.List(default=[], doc=_doc("marks"))
    feature = param.Integer(default=-1, bounds=(-1, MAX_FEATURES), doc=_doc("feature"))

    def values(self) -> dict[str, Any]:
        """The URL parameters as a plain dict."""
        return {k: getattr(self, k) for k in URL_PARAMS}


DEFAULTS = {k: ViewState.param[k].default for k in URL_PARAMS}


def parse_marks(v: Any) -> list[list]:
    """Marks as a link gives them (notes cut to length); raises :class:`Bad`."""
    return read_marks(v, "clamp")


def parse_search(search: str, stars: Mapping[str, int]) -> tuple[dict[str, Any], list[str]]:
    """:func:`parse_query` of an address's query string (``?a=b&...``, leading ``?`` optional)."""
    from urllib.parse import parse_qsl

    return parse_query(dict(parse_qsl(search.lstrip("?"), keep_blank_values=True)), stars)


def parse_query(
    raw: Mapping[str, Any],
    stars: Mapping[str, int],
) -> tuple[dict[str, Any], list[str]]:
    """Validate incoming URL values: returns (values to apply, notices).

    The view specification's parser with the link policy (clamp, or leave out with a
    notice), then what needs the atlas: ``stars`` maps each star id to its number of
    strips; an empty star becomes the first, a compare equal to the star is dropped,
    and a page past the last is clamped.
    """
    ids = list(stars)
    values, notices = parse_view(raw, "clamp", ids=ids, bounds={"per_page": (1, PER_PAGE_MAX)})
    star = values.get("star") or ""
    if star == "" and ids:
        star = values["star"] = ids[0]
    if values.get("compare") and values["compare"] == star:
        values["compare"] = ""
    per_page = values.get("per_page", DEFAULTS["per_page"])
    n_pages = max(1, -(-int(stars.get(star, 1)) // per_page))
    if "page" in values and values["page"] > n_pages:
        notices.append(f"page: {values['page']} is past the last page; showing page {n_pages}")
        values["page"] = n_pages
    return values, notices


def to_query(state: ViewState) -> dict[str, str]:
    """The state as query-string values (strings), leaving out defaults."""
    out = {}
    for k in URL_PARAMS:
        v = getattr(state, k)
        if v == DEFAULTS[k] and k != "star":
            continue
        if isinstance(v, list):
            out[k] = json.dumps(v, separators=(",", ":"))
        elif isinstance(v, float):
            out[k] = repr(round(v, 6))
        else:
            out[k] = str(v)
    return out
