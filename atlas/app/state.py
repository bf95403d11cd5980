"""The view state: one ``param.Parameterized`` that is the whole view, and the URL.

Every value a view shows lives here; ``pn.state.location.sync`` mirrors it to the
query string (see :mod:`atlas.app.viewer`), so a copied link reopens the same view.
Incoming values are never trusted: :func:`parse_query` validates and clamps each one
with our own parsing and returns a notice for every value it had to drop or change.

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
import math
import re
from collections.abc import Mapping, Sequence
from typing import Any

import param

from atlas.view import FLUXES, FRAMES, MEDIA, UNITS, is_species, is_star_id

#: Bounds of the incoming values (the app clamps lo/hi further to the star's range).
WAVE_MIN_A, WAVE_MAX_A = 100.0, 1.0e6
MIN_WINDOW_A = 1.0e-3
PER_PAGE_MAX = 12
MAX_PAGE = 10_000_000
MAX_SPECIES = 40
MAX_MARKS = 50
MAX_NOTE = 80

#: The parameters mirrored to the URL, in the order they appear there.
URL_PARAMS = (
    "star", "compare", "page", "per_page", "lo", "hi", "frame", "medium", "unit",
    "flux", "lines", "strength", "ref", "marks",
)


class ViewState(param.Parameterized):
    """Everything one view shows; mirrored to the URL query string."""

    star = param.String(default="", doc="id of the star shown")
    compare = param.String(default="", doc="id of a second star to compare, or empty")
    lo = param.Number(default=None, allow_None=True, doc="zoom window start, Å (display frame/medium)")
    hi = param.Number(default=None, allow_None=True, doc="zoom window end, Å (display frame/medium)")
    frame = param.Selector(default="observed", objects=list(FRAMES))
    medium = param.Selector(default="air", objects=list(MEDIA))
    unit = param.Selector(default="A", objects=list(UNITS))
    flux = param.Selector(default="normalized", objects=list(FLUXES))
    page = param.Integer(default=1, bounds=(1, MAX_PAGE), doc="page number, from 1")
    per_page = param.Integer(default=5, bounds=(1, PER_PAGE_MAX), doc="strips per page")
    lines = param.List(default=[], item_type=str, doc="species shown; empty = all")
    strength = param.Integer(default=3, bounds=(1, 4), doc="weakest line class shown")
    ref = param.String(default="", doc="reference line of the velocity readout")
    marks = param.List(default=[], doc="marked ranges [lo_A, hi_A, note]")

    def values(self) -> dict[str, Any]:
        """The URL parameters as a plain dict."""
        return {k: getattr(self, k) for k in URL_PARAMS}


DEFAULTS = {k: ViewState.param[k].default for k in URL_PARAMS}


class Bad(ValueError):
    """One incoming value that cannot be used (the message says why)."""


def _text(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (list, dict)):
        return json.dumps(v)
    return str(v).strip()


def parse_id(v: Any, ids: Sequence[str], what: str) -> str:
    """A star id: must match the slug rule and be in the catalog."""
    s = _text(v).lower()
    if s == "":
        return ""
    if not is_star_id(s):
        raise Bad(f"{what}: {s[:40]!r} is not a star id")
    if s not in ids:
        raise Bad(f"{what}: no star {s!r} in this atlas")
    return s


def parse_int(v: Any, lo: int, hi: int, what: str) -> int:
    """A whole number, clamped into [lo, hi]."""
    s = _text(v)
    if not re.fullmatch(r"[+-]?\d{1,12}", s):
        raise Bad(f"{what}: {s[:40]!r} is not a whole number")
    return min(max(int(s), lo), hi)


def parse_float(v: Any, what: str) -> float | None:
    """A finite number, or None for an empty value."""
    s = _text(v)
    if s.lower() in ("", "none", "null"):
        return None
    try:
        x = float(s)
    except ValueError:
        raise Bad(f"{what}: {s[:40]!r} is not a number") from None
    if not math.isfinite(x):
        raise Bad(f"{what}: {s[:40]!r} is not a finite number")
    return x


def parse_choice(v: Any, choices: Sequence[str], what: str) -> str:
    s = _text(v).lower()
    aliases = {"normalised": "normalized", "norm": "normalized", "a": "A", "angstrom": "A",
               "nm": "nm", "vac": "vacuum", "bary": "barycentric", "obs": "observed"}
    s = aliases.get(s, s)
    if s not in choices:
        raise Bad(f"{what}: {s[:40]!r} is not one of {', '.join(choices)}")
    return s


def _as_list(v: Any, what: str) -> list:
    if isinstance(v, (list, tuple)):
        return list(v)
    s = _text(v)
    if s == "":
        return []
    if s.startswith("["):
        try:
            out = json.loads(s)
        except ValueError:
            raise Bad(f"{what}: not a readable list") from None
        if not isinstance(out, list):
            raise Bad(f"{what}: not a list")
        return out
    return [p for p in (x.strip() for x in s.split(",")) if p]


def parse_species(v: Any) -> list[str]:
    """A list of species names like ``Fe I``, ``H I``, ``TiO`` (bounded)."""
    items = _as_list(v, "lines")
    if len(items) > MAX_SPECIES:
        raise Bad(f"lines: more than {MAX_SPECIES} species")
    out = []
    for it in items:
        s = " ".join(str(it).split())
        if not is_species(s):
            raise Bad(f"lines: {s[:40]!r} is not a species name")
        if s not in out:
            out.append(s)
    return out


def parse_ref(v: Any) -> str:
    """A reference line: a species name and a wavelength in Å, e.g. ``Na I 5889.95``."""
    s = " ".join(_text(v).split())
    if s == "":
        return ""
    if len(s) > 40 or not re.fullmatch(r"[A-Za-z][A-Za-z0-9]{0,7}( [IVX]{1,4})? \d{3,6}(\.\d{1,4})?", s):
        raise Bad(f"ref: {s[:40]!r} is not a line like 'Na I 5889.95'")
    return s


def parse_marks(v: Any) -> list[list]:
    """Marked ranges ``[lo_A, hi_A, note]``: finite, lo < hi, short printable notes."""
    items = _as_list(v, "marks")
    if len(items) > MAX_MARKS:
        raise Bad(f"marks: more than {MAX_MARKS} marks")
    out = []
    for it in items:
        if not isinstance(it, (list, tuple)) or len(it) not in (2, 3):
            raise Bad("marks: each mark must be [lo, hi, note]")
        a = parse_float(it[0], "marks")
        b = parse_float(it[1], "marks")
        if a is None or b is None or not (WAVE_MIN_A <= a < b <= WAVE_MAX_A):
            raise Bad("marks: each mark needs lo < hi within 100 .. 1e6 Å")
        note = str(it[2]) if len(it) == 3 else ""
        note = "".join(ch for ch in note if ch.isprintable())[:MAX_NOTE]
        out.append([a, b, note])
    return out


def parse_search(search: str, stars: Mapping[str, int]) -> tuple[dict[str, Any], list[str]]:
    """:func:`parse_query` of an address's query string (``?a=b&...``, leading ``?`` optional)."""
    from urllib.parse import parse_qsl

    return parse_query(dict(parse_qsl(search.lstrip("?"), keep_blank_values=True)), stars)


def parse_query(
    raw: Mapping[str, Any],
    stars: Mapping[str, int],
) -> tuple[dict[str, Any], list[str]]:
    """Validate incoming URL values: returns (values to apply, notices).

    ``raw`` maps parameter names to strings (or already-parsed values); unknown keys
    are ignored.  ``stars`` maps each star id of the atlas to its number of strips,
    used to clamp ``page``.  A bad value is left out of the result (so the current or
    default value stays) and produces one notice naming the parameter.
    """
    values: dict[str, Any] = {}
    notices: list[str] = []
    ids = list(stars)

    def attempt(name, fn):
        if name not in raw:
            return
        try:
            values[name] = fn(raw[name])
        except Bad as exc:
            notices.append(f"{exc} (kept {DEFAULTS[name]!r})" if name not in ("star",)
                           else str(exc))

    attempt("star", lambda v: parse_id(v, ids, "star"))
    attempt("compare", lambda v: parse_id(v, ids, "compare"))
    attempt("frame", lambda v: parse_choice(v, FRAMES, "frame"))
    attempt("medium", lambda v: parse_choice(v, MEDIA, "medium"))
    attempt("unit", lambda v: parse_choice(v, UNITS, "unit"))
    attempt("flux", lambda v: parse_choice(v, FLUXES, "flux"))
    attempt("per_page", lambda v: parse_int(v, 1, PER_PAGE_MAX, "per_page"))
    attempt("strength", lambda v: parse_int(v, 1, 4, "strength"))
    attempt("lines", parse_species)
    attempt("ref", parse_ref)
    attempt("marks", parse_marks)
    attempt("page", lambda v: parse_int(v, 1, MAX_PAGE, "page"))
    attempt("lo", lambda v: parse_float(v, "lo"))
    attempt("hi", lambda v: parse_float(v, "hi"))

    # The star decides the page count; fall back to the first star.
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

    lo, hi = values.pop("lo", None), values.pop("hi", None)
    if ("lo" in raw or "hi" in raw) and (lo is not None or hi is not None):
        ok = (
            lo is not None and hi is not None
            and WAVE_MIN_A <= lo < hi <= WAVE_MAX_A and hi - lo >= MIN_WINDOW_A
        )
        if ok:
            values["lo"], values["hi"] = lo, hi
        else:
            notices.append("lo/hi: need lo < hi, both in Å within 100 .. 1e6; showing whole strips")
            values["lo"] = values["hi"] = None
    elif "lo" in raw or "hi" in raw:
        values["lo"] = values["hi"] = None
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
