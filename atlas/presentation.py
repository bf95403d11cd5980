"""How a view looks, shared by the viewer and both exports: colours, y limits, record rows.

Plain Python and numpy (no UI imports), so the app (:mod:`atlas.app`), the PDF and the
HTML export draw the same colours and say the same words about a star.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

#: One colour for each meaning on a page; nothing else picks a colour.
PALETTE = {
    "ink": "#20283a",        # text
    "muted": "#5a6275",      # secondary text
    "paper": "#fbf8f1",      # plot background
    "rule": "#e6dfd0",       # grid, borders
    "spectrum": "#1f4e79",   # the star's flux
    "stellar": "#b0562c",    # a line of the star (line list)
    "telluric": "#6b8f71",   # a line of Earth's atmosphere
    "mark": "#d9a400",       # a marked range
    "focus": "#2b8a9e",      # the zoomed strip's outline, the zoom window on the overview
    "mark_text": "#6b4e00",  # a mark's note
    "feature_known": "#5b3f8c",        # a found feature some line explains
    "feature_unexplained": "#c0304a",  # a found feature nothing explains
    "overview": "#7a869a",   # the whole-spectrum overview
    "second": "#8a4f9e",     # the comparison star
    "grow": "#2f7d4f",       # a line deeper in the comparison star
    "fade": "#c2562e",       # a line shallower in the comparison star
}


def y_limits(y, normalised: bool, room_above: float = 0.04) -> tuple[float, float]:
    """Flux-axis limits for the samples ``y``: the 0.1 and 99.9 percentiles (one wild
    sample does not flatten the strip), 0..≥1.05 for normalised flux (capped at 2),
    padded by 4 % below and ``room_above`` of the span above (room for line labels)."""
    y = np.asarray(y, dtype=np.float64)
    y = y[np.isfinite(y)]
    if y.size == 0:
        return (0.0, 1.2) if normalised else (0.0, 1.0)
    lo, hi = (float(v) for v in np.percentile(y, [0.1, 99.9]))
    if normalised:
        lo, hi = min(lo, 0.0), min(max(hi, 1.05), 2.0)
    span = hi - lo if hi > lo else max(abs(hi), 1.0) * 0.1
    return lo - 0.04 * span, hi + room_above * span


#: The fixed flux axis of normalised flux.
FIXED_NORMALISED = (0.0, 1.05)


def flux_axis(y, normalised: bool, mode: str = "fit", room_above: float = 0.06) -> tuple[float, float]:
    """The flux axis of a drawn strip: ``"fit"`` to the samples ``y`` it shows
    (:func:`y_limits`), or ``"fixed"`` at 0 .. 1.05 for normalised flux (raw flux is
    always fitted)."""
    if mode == "fixed" and normalised:
        return FIXED_NORMALISED
    return y_limits(y, normalised, room_above)


def _num(v) -> float | None:
    try:
        x = float(v)
    except (TypeError, ValueError):
        return None
    return x if math.isfinite(x) else None


def _fmt(v, spec: str, suffix: str = "") -> str | None:
    x = _num(v)
    return None if x is None else f"{x:{spec}}{suffix}"


def rv_text(rec: Mapping) -> str | None:
    """``+3.00 ± 0.50 km/s`` (the error when measured), or None when no RV."""
    rv = _fmt(rec.get("rv_kms"), "+.2f")
    if rv is None:
        return None
    err = _fmt(rec.get("rv_err_kms"), ".2f")
    return f"{rv} ± {err} km/s" if err else f"{rv} km/s"


def record_rows(rec: Mapping) -> list[tuple[str, str | None]]:
    """The rows of a star's card, as (label, text); text None = not measured / unknown."""
    lo, hi = _fmt(rec.get("wavelength_min_A"), ".1f"), _fmt(rec.get("wavelength_max_A"), ".1f")
    samples = rec.get("samples")
    return [
        ("star", str(rec.get("name") or rec.get("id") or "")),
        ("class", str(rec["spectral_class"]) if rec.get("spectral_class") else None),
        ("Teff", _fmt(rec.get("teff_k"), ".0f", " K")),
        ("RV (barycentric)", rv_text(rec)),
        ("barycentric corr.", _fmt(rec.get("barycentric_kms"), "+.3f", " km/s")),
        ("S/N", _fmt(rec.get("snr"), ".0f")),
        ("resolving power", _fmt(rec.get("resolving_power"), ",.0f")),
        ("samples", f"{int(samples):,}" if _num(samples) is not None else None),
        ("range (vacuum)", f"{lo} – {hi} Å" if lo and hi else None),
        ("source file", str(rec.get("source")) if rec.get("source") else None),
    ]


def observation_rows(rec: Mapping, attrs: Mapping, strip_kms: float | None) -> list[tuple[str, str | None]]:
    """More rows of a star's card: when and where it was observed and how it was measured
    (``attrs`` are the star's Spectrum attributes as stored; text None = not recorded)."""
    lat, lon, h = (_num(attrs.get(k)) for k in ("site_lat_deg", "site_lon_deg", "site_height_m"))
    site = None
    if lat is not None and lon is not None:
        site = f"{lat:+.4f}°, {lon:+.4f}°" + (f", {h:.0f} m" if h is not None else "")
    vsini = _num(rec.get("vsini_kms", attrs.get("vsini_kms")))
    method = rec.get("rv_method") or attrs.get("rv_method")
    return [
        ("observed (UTC)", str(attrs["obs_time_utc"]) if attrs.get("obs_time_utc") else None),
        ("site", site),
        ("exposure", _fmt(attrs.get("exposure_s"), ".0f", " s")),
        ("v sin i", None if vsini is None else f"{vsini:.0f} km/s"),
        ("RV method", str(method) if method else None),
        ("class range", str(rec["class_range"]) if rec.get("class_range") else None),
        ("strip width", None if strip_kms is None else f"{strip_kms:,.0f} km/s"),
    ]


def header_measurements(rec: Mapping, rv_kms: float | None, bary_kms: float | None) -> str:
    """One line of a star's measurements for a printed or exported page."""
    meas = []
    if rec.get("spectral_class"):
        meas.append(f"class {rec['spectral_class']}")
    if (t := _fmt(rec.get("teff_k"), ".0f", " K")) is not None:
        meas.append(f"Teff {t}")
    if rv_kms is not None:
        err = _fmt(rec.get("rv_err_kms"), ".2f")
        kind = "barycentric" if bary_kms is not None else "observed"
        meas.append(f"RV {rv_kms:+.2f}{' ± ' + err if err else ''} km/s ({kind})")
    else:
        meas.append("RV not measured")
    if bary_kms is not None:
        meas.append(f"barycentric correction {bary_kms:+.3f} km/s")
    if (s := _fmt(rec.get("snr"), ".0f")) is not None:
        meas.append(f"S/N {s}")
    return " · ".join(meas)
