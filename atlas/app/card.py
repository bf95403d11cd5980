"""The star card: what is known of the star shown (rows from :mod:`atlas.presentation`)."""

from __future__ import annotations

import html
import math

import panel as pn

from atlas.app.scripts import CSS
from atlas.presentation import observation_rows, record_rows

#: The view parameters the card shows.
WATCHES = ("star", "frame")


def swatch_css(colour) -> str | None:
    """A CSS colour from a record's ``colour_srgb`` ([r, g, b] in 0..1 or 0..255, or #hex)."""
    if isinstance(colour, str) and len(colour) in (4, 7) and colour.startswith("#"):
        return colour if all(c in "0123456789abcdefABCDEF" for c in colour[1:]) else None
    if isinstance(colour, (list, tuple)) and len(colour) == 3:
        try:
            vals = [float(c) for c in colour]
        except (TypeError, ValueError):
            return None
        if not all(math.isfinite(c) for c in vals):
            return None
        if max(vals) <= 1.0:
            vals = [c * 255 for c in vals]
        r, g, b = (int(round(min(255, max(0, c)))) for c in vals)
        return f"#{r:02x}{g:02x}{b:02x}"
    return None


def star_card_html(rec: dict, frame_note: str = "", more: list | None = None) -> str:
    """The star card: name, class, Teff, RV, barycentric correction, S/N, R, colour, file."""
    colour = swatch_css(rec.get("colour_srgb"))
    sw = (f'<span class="striae-swatch" style="background:{colour}"></span> {colour}'
          if colour else '<span class="na">not measured</span>')
    na = '<span class="na">not measured</span>'
    rows = []
    for label, text in record_rows(rec):
        if label == "range (vacuum)" and text is None:
            text = "not measured"
        rows.append((label, html.escape(text) if text is not None else
                     ('<span class="na">unknown</span>' if label == "source file" else na)))
        if label == "resolving power":
            rows.append(("true colour", sw))
    for label, text in more or []:
        rows.append((label, html.escape(text) if text is not None else '<span class="na">not recorded</span>'))
    body = "".join(f"<tr><td>{k}</td><td>{v}</td></tr>" for k, v in rows)
    note = f'<p style="color:#8a5a00;font-size:12px">{html.escape(frame_note)}</p>' if frame_note else ""
    return f'<div class="striae-card"><table>{body}</table>{note}</div>'


class Card:
    """The card's pane; ``update()`` redraws it from the view model."""

    def __init__(self, vm):
        self.vm = vm
        self.pane = pn.pane.HTML("", sizing_mode="stretch_width", stylesheets=[CSS])

    def update(self):
        rec = self.vm.record()
        try:
            attrs = dict(self.vm.data.atlas.star(self.vm.state.star).attrs)
        except Exception:  # a damaged store: the card still shows the catalog's record
            attrs = {}
        more = observation_rows(rec, attrs, self.vm.strip_width_kms())
        self.pane.object = star_card_html(rec, self.vm.frame_fallback(), more)
