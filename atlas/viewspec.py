"""The view specification: every name a link, an export or the command line may carry.

One table (:data:`PARAMS`) says, for each view parameter, its default and how an incoming
value is read; one parser, :func:`parse_view`, applies it with a *policy*:

``"clamp"`` (links)
    a value out of range is pulled into range, a value that cannot be read is left out
    (so the current or default value stays) with a one-line notice naming the parameter;
``"refuse"`` (the command line, the export API)
    the first value that is out of range or unreadable raises
    :class:`atlas.errors.InputError` naming the parameter.

The URL state (:mod:`atlas.app.state`), the export (:mod:`atlas.export`) and ``striae
export`` all read views through this module, so what a link can say and what an export
understands never drift apart.  Pure data and parsing: no UI imports.

Wavelengths ``lo``/``hi`` and marks are Å in the displayed frame and medium, even when
``unit`` is ``nm``.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from atlas.errors import InputError

#: Star ids: the catalog's slug rule (never a path).
STAR_ID = re.compile(r"[a-z0-9][a-z0-9-]{0,63}")
#: A species in the line filter, e.g. ``Fe I``, ``TiO``, ``He II``.
SPECIES = re.compile(r"[A-Za-z][A-Za-z0-9]{0,7}( [IVX]{1,4})?")
#: A reference line: a species and a wavelength in Å, e.g. ``Na I 5889.95``.
REF_LINE = re.compile(r"[A-Za-z][A-Za-z0-9]{0,7}( [IVX]{1,4})? \d{3,6}(\.\d{1,4})?")

FRAMES = ("observed", "barycentric", "rest")
MEDIA = ("air", "vacuum")
UNITS = ("A", "nm")
FLUXES = ("normalized", "raw")
#: The flux axis: fitted to what the strip shows, or fixed at 0 .. 1.05 (normalised flux).
FLUX_AXES = ("fit", "fixed")

#: Other spellings accepted for a choice (lower case) -> the one the view uses.
ALIASES = {
    "normalised": "normalized", "norm": "normalized", "a": "A", "angstrom": "A", "å": "A",
    "vac": "vacuum", "bary": "barycentric", "obs": "observed",
}

#: Bounds of incoming values.
WAVE_MIN_A, WAVE_MAX_A = 100.0, 1.0e6
MIN_WINDOW_A = 1.0e-3
MAX_PAGE = 10_000_000
PER_PAGE_MAX = 100  # the viewer and the PDF narrow it (see ``bounds`` of parse_view)
MAX_SPECIES = 40
MAX_MARKS = 50
MAX_NOTE = 80
MAX_FEATURES = 1_000_000  # a chosen feature is a row number below this
MAX_TEXT = 40  # characters of a bad value quoted back in a message

POLICIES = ("clamp", "refuse")


def is_star_id(value) -> bool:
    """True when ``value`` is a well-formed star id (the whole string, no newline)."""
    return isinstance(value, str) and STAR_ID.fullmatch(value) is not None


def is_species(value) -> bool:
    """True when ``value`` looks like a species name for the line filter."""
    return isinstance(value, str) and SPECIES.fullmatch(value) is not None


class Bad(ValueError):
    """One incoming value that cannot be used: ``where`` (the parameter) and ``reason``."""

    def __init__(self, where: str, reason: str):
        super().__init__(f"{where}: {reason}")
        self.where, self.reason = where, reason


def text_of(v: Any) -> str:
    """An incoming value as stripped text (lists and dicts as JSON, booleans as words)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (list, tuple, dict)):
        return json.dumps(v)
    return "" if v is None else str(v).strip()


def _quote(s: str) -> str:
    return repr(s[:MAX_TEXT])


# ----------------------------------------------------------------- one reader per kind


def read_star(v: Any, where: str = "star", ids: Sequence[str] | None = None) -> str:
    """A star id ("" for none): the slug rule, and in ``ids`` when they are given."""
    s = text_of(v).lower()
    if s == "":
        return ""
    if not is_star_id(s):
        raise Bad(where, f"{_quote(s)} is not a star id (lower-case letters, digits, '-')")
    if ids is not None and s not in ids:
        raise Bad(where, f"no star {s!r} in this atlas")
    return s


def read_choice(v: Any, choices: Sequence[str], where: str) -> str:
    """One of ``choices``, also under the spellings of :data:`ALIASES`."""
    s = text_of(v)
    key = ALIASES.get(s.lower(), s.lower())
    if key not in choices:
        raise Bad(where, f"{_quote(s)} is not one of {', '.join(choices)}")
    return key


def read_whole(v: Any, lo: int, hi: int, where: str, policy: str) -> int:
    """A whole number in [lo, hi] (clamped into it, or refused outside it)."""
    if isinstance(v, bool):
        raise Bad(where, f"{v!r} is not a whole number")
    if isinstance(v, float) and math.isfinite(v) and v == int(v):
        n = int(v)
    elif isinstance(v, int):
        n = v
    else:
        s = text_of(v)
        if not re.fullmatch(r"[+-]?\d{1,12}", s):
            raise Bad(where, f"{_quote(s)} is not a whole number")
        n = int(s)
    if lo <= n <= hi:
        return n
    if policy == "refuse":
        raise Bad(where, f"must be from {lo} to {hi}, not {n}")
    return min(max(n, lo), hi)


def read_number(v: Any, where: str) -> float | None:
    """A finite number, or None for an empty value."""
    if isinstance(v, bool):
        raise Bad(where, f"{v!r} is not a number")
    s = text_of(v)
    if s.lower() in ("", "none", "null"):
        return None
    try:
        x = float(s)
    except ValueError:
        raise Bad(where, f"{_quote(s)} is not a number") from None
    if not math.isfinite(x):
        raise Bad(where, f"{_quote(s)} is not a finite number")
    return x


def _as_list(v: Any, where: str, commas: bool) -> list:
    if isinstance(v, (list, tuple)):
        return list(v)
    s = text_of(v)
    if s == "":
        return []
    if s.startswith("["):
        try:
            out = json.loads(s)
        except ValueError:
            raise Bad(where, "not a readable list") from None
        if isinstance(out, list):
            return out
    if commas:
        return [p for p in (x.strip() for x in s.split(",")) if p]
    raise Bad(where, "must be a list of [lo, hi, note]")


def read_species(v: Any) -> list[str]:
    """Species names like ``Fe I``, ``H I``, ``TiO`` (JSON list or commas; at most 40)."""
    items = _as_list(v, "lines", commas=True)
    if len(items) > MAX_SPECIES:
        raise Bad("lines", f"more than {MAX_SPECIES} species")
    out: list[str] = []
    for it in items:
        s = " ".join(str(it).split())
        if not s:
            continue
        if not is_species(s):
            raise Bad("lines", f"{_quote(s)} is not a species name like 'Fe I' or 'TiO'")
        if s not in out:
            out.append(s)
    return out


def read_ref(v: Any) -> str:
    """A reference line such as ``Na I 5889.95`` ("" for none)."""
    s = " ".join(text_of(v).split())
    if s and (len(s) > MAX_TEXT or not REF_LINE.fullmatch(s)):
        raise Bad("ref", f"{_quote(s)} is not a line like 'Na I 5889.95'")
    return s


def clean_note(note: Any, policy: str) -> str:
    """A mark's note: printable, single spaces, at most 80 characters (cut or refused)."""
    s = "" if note is None else str(note)
    s = " ".join("".join(ch if ch.isprintable() else " " for ch in s).split())
    if len(s) > MAX_NOTE:
        if policy == "refuse":
            raise Bad("marks", f"a note may hold at most {MAX_NOTE} characters")
        s = s[:MAX_NOTE]
    return s


def read_marks(v: Any, policy: str) -> list[list]:
    """Marked ranges ``[lo_A, hi_A, note]`` (or dicts lo/hi/note): finite, lo < hi."""
    items = _as_list(v, "marks", commas=False)
    if len(items) > MAX_MARKS:
        raise Bad("marks", f"more than {MAX_MARKS} marks")
    out = []
    for it in items:
        if isinstance(it, Mapping):
            it = [it.get("lo"), it.get("hi"), it.get("note", "")]
        if isinstance(it, (str, bytes)) or not isinstance(it, Sequence) or len(it) not in (2, 3):
            raise Bad("marks", "each mark must be [lo, hi, note]")
        a, b = read_number(it[0], "marks"), read_number(it[1], "marks")
        if a is None or b is None or not (WAVE_MIN_A <= a < b <= WAVE_MAX_A):
            raise Bad("marks", f"each mark needs lo < hi within 100 .. 1e6 Å, not "
                      f"{_quote(text_of(it[0]))}..{_quote(text_of(it[1]))}")
        out.append([a, b, clean_note(it[2] if len(it) == 3 else "", policy)])
    return out


# ----------------------------------------------------------------- the table


@dataclass(frozen=True)
class Param:
    """One view parameter: its default and its reader ``read(value, policy, context)``."""

    name: str
    default: Any
    read: Callable[[Any, str, dict], Any]
    doc: str


def _bounded(name, lo, hi):
    def read(v, policy, ctx):
        a, b = ctx.get("bounds", {}).get(name, (lo, hi))
        return read_whole(v, a, b, name, policy)
    return read


PARAMS: dict[str, Param] = {p.name: p for p in (
    Param("star", "", lambda v, p, c: read_star(v, "star", c.get("ids")), "id of the star shown"),
    Param("compare", "", lambda v, p, c: read_star(v, "compare", c.get("ids")),
          "id of a second star to compare, or empty"),
    Param("page", 1, _bounded("page", 1, MAX_PAGE), "page number, from 1"),
    Param("per_page", 5, _bounded("per_page", 1, PER_PAGE_MAX), "strips stacked per page"),
    Param("lo", None, lambda v, p, c: read_number(v, "lo"), "zoom window start, Å"),
    Param("hi", None, lambda v, p, c: read_number(v, "hi"), "zoom window end, Å"),
    Param("frame", "observed", lambda v, p, c: read_choice(v, FRAMES, "frame"),
          "observed, barycentric or rest"),
    Param("medium", "air", lambda v, p, c: read_choice(v, MEDIA, "medium"), "air or vacuum"),
    Param("unit", "A", lambda v, p, c: read_choice(v, UNITS, "unit"), "axis unit, A or nm"),
    Param("flux", "normalized", lambda v, p, c: read_choice(v, FLUXES, "flux"),
          "normalized or raw flux"),
    Param("yaxis", "fit", lambda v, p, c: read_choice(v, FLUX_AXES, "yaxis"),
          "flux axis: fit (to the strip or zoom window shown) or fixed (0 .. 1.05, normalised flux)"),
    Param("lines", [], lambda v, p, c: read_species(v), "species marked; empty = all"),
    Param("strength", 3, _bounded("strength", 1, 4), "weakest line strength class marked"),
    Param("ref", "", lambda v, p, c: read_ref(v), "reference line of the velocity readout"),
    Param("marks", [], lambda v, p, c: read_marks(v, p), "marked ranges [lo_A, hi_A, note]"),
    Param("feature", -1, _bounded("feature", -1, MAX_FEATURES),
          "chosen found feature: its row in wavelength order, -1 = none"),
)}

#: The parameters of a view, in the order a link lists them.
NAMES = ("star", "compare", "page", "per_page", "lo", "hi", "frame", "medium", "unit",
         "flux", "yaxis", "lines", "strength", "ref", "marks", "feature")
assert set(NAMES) == set(PARAMS)


def _window(lo, hi) -> tuple[float | None, float | None]:
    if lo is None and hi is None:
        return None, None
    if (lo is None) != (hi is None):
        raise Bad("lo/hi", "give both ends of the range or neither")
    if not lo < hi:
        raise Bad("lo/hi", f"the range must run from low to high, not {lo:g}..{hi:g}")
    if not (WAVE_MIN_A <= lo and hi <= WAVE_MAX_A) or hi - lo < MIN_WINDOW_A:
        raise Bad("lo/hi", "need lo < hi, both in Å within 100 .. 1e6")
    return lo, hi


def parse_view(
    raw: Mapping[str, Any],
    policy: str,
    *,
    ids: Sequence[str] | None = None,
    bounds: Mapping[str, tuple[int, int]] | None = None,
) -> tuple[dict[str, Any], list[str]]:
    """Read the view parameters of ``raw`` with ``policy``: returns (values, notices).

    Only names present in ``raw`` appear in the result (unknown names are ignored);
    ``lo``/``hi`` are read as one window.  ``ids`` (the atlas's star ids) checks
    ``star``/``compare`` when given; ``bounds`` narrows whole-number parameters, e.g.
    ``{"per_page": (1, 12)}``.  With ``"refuse"`` the first bad value raises
    ``InputError(name, reason)``; with ``"clamp"`` it is left out with a notice.
    """
    if policy not in POLICIES:
        raise ValueError(f"policy must be one of {POLICIES}, not {policy!r}")
    ctx = {"ids": ids, "bounds": dict(bounds or {})}
    values: dict[str, Any] = {}
    notices: list[str] = []

    def refused(exc: Bad, kept: str = ""):
        if policy == "refuse":
            raise InputError(exc.where, exc.reason) from None
        notices.append(f"{exc}{kept}")

    bad_end: Bad | None = None
    for name in NAMES:
        if name not in raw:
            continue
        spec = PARAMS[name]
        try:
            values[name] = spec.read(raw[name], policy, ctx)
        except Bad as exc:
            if name in ("lo", "hi"):
                bad_end = bad_end or exc
                continue
            refused(exc, "" if name == "star" else f" (kept {spec.default!r})")
    if "lo" in raw or "hi" in raw:
        lo, hi = values.pop("lo", None), values.pop("hi", None)
        try:
            if bad_end is not None:
                raise bad_end if policy == "refuse" else Bad("lo/hi", str(bad_end))
            values["lo"], values["hi"] = _window(lo, hi)
        except Bad as exc:
            refused(exc, "; showing whole strips")
            values["lo"] = values["hi"] = None
    return values, notices


def defaults() -> dict[str, Any]:
    """Every parameter's default (fresh lists)."""
    return {k: (list(p.default) if isinstance(p.default, list) else p.default)
            for k, p in PARAMS.items()}
