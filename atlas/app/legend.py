"""The legend: one entry for every colour and shape drawn on the page, and nothing else.

Panels report the glyphs they drew (keys of :data:`ITEMS`); the legend lists exactly
those, each with its own swatch, so no colour or shape stands for two things.
"""

from __future__ import annotations

import html

import panel as pn

from atlas.presentation import PALETTE

#: key -> (words, swatch kind, colour).  Kinds: line, band, tick, diamond, up, down, box, outline.
ITEMS = {
    "spectrum": ("the star's flux (real samples)", "line", PALETTE["spectrum"]),
    "envelope": ("the star's flux, least to greatest per screen pixel (line: their middle)", "band", PALETTE["spectrum"]),
    "stellar": ("a line of the star (line list, placed by its RV)", "tick", PALETTE["stellar"]),
    "telluric": ("a line of Earth's atmosphere (observer's frame)", "tick", PALETTE["telluric"]),
    "feature_known": ("a found feature a listed line explains", "diamond", PALETTE["feature_known"]),
    "feature_unexplained": ("a found feature nothing listed explains", "diamond",
                            PALETTE["feature_unexplained"]),
    "mark": ("a marked range (your note under it)", "band", PALETTE["mark"]),
    "focus": ("the zoomed strip; the zoom window on the overview", "outline", PALETTE["focus"]),
    "page": ("this page's strips, on the overview", "box", PALETTE["spectrum"]),
    "overview": ("the whole spectrum (overview)", "line", PALETTE["overview"]),
    "second": ("the second star's flux (comparison)", "line", PALETTE["second"]),
    "difference": ("second − first (comparison)", "line", PALETTE["ink"]),
    "grow": ("a line deeper in the second star", "up", PALETTE["grow"]),
    "fade": ("a line shallower in the second star", "down", PALETTE["fade"]),
}

_SHAPES = {
    "line": '<span style="display:inline-block;width:18px;height:0;border-top:2px solid {c};'
            'vertical-align:middle"></span>',
    "band": '<span style="display:inline-block;width:18px;height:9px;background:{c};opacity:.55;'
            'vertical-align:middle"></span>',
    "tick": '<span style="display:inline-block;width:0;height:12px;border-left:2px solid {c};'
            'margin:0 8px;vertical-align:middle"></span>',
    "diamond": '<span style="color:{c}">◆</span>',
    "up": '<span style="color:{c}">▲</span>',
    "down": '<span style="color:{c}">▼</span>',
    "box": '<span style="display:inline-block;width:16px;height:9px;border:1px solid {c};'
           'background:{c}26;vertical-align:middle"></span>',
    "outline": '<span style="display:inline-block;width:16px;height:9px;border:2px solid {c};'
               'vertical-align:middle"></span>',
}


def legend_html(keys) -> str:
    """The legend entries for ``keys``, in the order of :data:`ITEMS`."""
    parts = []
    for k, (words, kind, colour) in ITEMS.items():
        if k in keys:
            parts.append(f'<span class="striae-legend-item" data-glyph="{k}" style="margin-right:14px;'
                         f'white-space:nowrap">{_SHAPES[kind].format(c=colour)} {html.escape(words)}</span>')
    return '<div style="font-size:11.5px;line-height:1.9">' + "".join(parts) + "</div>"


class Legend:
    def __init__(self):
        self.keys: frozenset = frozenset()
        self.pane = pn.pane.HTML("", sizing_mode="stretch_width", margin=(0, 4), name="legend")

    def show(self, keys):
        keys = frozenset(keys)
        if keys != self.keys:
            self.keys = keys
            self.pane.object = legend_html(keys)
