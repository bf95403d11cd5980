"""The standalone HTML is the same self-contained page whether or not Panel was imported.

Panel registers Bokeh models whose external scripts (a relative
``static/extensions/panel/...`` file) Bokeh would otherwise add to every page rendered
in the same process; a page opened from disk cannot load them.  Each check runs in its
own interpreter so the import state is known.
"""

from __future__ import annotations

import subprocess
import sys

import pytest

SCRIPT = r"""
import re, sys
if sys.argv[1] == "panel":
    import panel  # noqa: F401  (registers Panel's models, as the app does)
import numpy as np
from atlas.export.html import render_html
from atlas.export.parts import PageText, StripData
x = np.linspace(6540.0, 6600.0, 500)
strip = StripData(index=1, x=x, y=np.ones_like(x), xlim=(6540.0, 6600.0))
text = PageText(title="t", header=(), x_label="wavelength (Å, air, rest frame)", y_label="flux",
                footer="f")
page = render_html([strip], text, [], [])
print(len(re.findall(r"<script[^>]*\bsrc=", page)), int("static/extensions" in page))
"""


@pytest.mark.parametrize("mode", ["bokeh-only", "panel"])
def test_standalone_html_has_no_external_script_even_after_panel_import(mode):
    out = subprocess.run([sys.executable, "-c", SCRIPT, mode], capture_output=True, text=True,
                         timeout=120, check=True).stdout.split()
    assert out == ["0", "0"], out
