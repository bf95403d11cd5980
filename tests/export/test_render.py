"""The two renderers on plain arrays: PDF pages (matplotlib) and standalone HTML (Bokeh)."""

from __future__ import annotations

import base64
import gzip
import html
import json
import re
import shutil
import subprocess

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from matplotlib.backends.backend_agg import FigureCanvasAgg

from atlas.export.html import render_html
from atlas.export.parts import LineMarker, MarkBand, PageText, StripData, thin_labels
from atlas.export.pdf import PageSpec, draw_page, max_per_page, write_pdf

NOTE = "<script>alert(1)</script> costs $5 ^_^"


def _strip(k, n=3000, lo=5000.0, width=50.0):
    x = np.linspace(lo + k * width, lo + (k + 1) * width, n)
    y = 1.0 - 0.4 * np.exp(-0.5 * ((x - (lo + k * width + 0.5 * width)) / 0.2) ** 2)
    return StripData(k, x, y, (float(x[0]), float(x[-1])))


def _text(title="Test Star Q"):
    return PageText(title, ("class K0 · RV +1.00 km/s", "source: q.fits"),
                    "wavelength (Å, air, observed frame)", "normalized flux", "footer words")


def _markers(lo=5000.0, hi=5300.0, step=0.05):
    # Dense on purpose: far more labels than fit, so thinning has to act.
    xs = np.arange(lo, hi, step)
    return [LineMarker(float(x), f"Xx I {x:.2f}", "Xx I", False, 1 + i % 4)
            for i, x in enumerate(xs)]


def test_thin_labels_keeps_spacing_and_prefers_strong_lines():
    x = np.array([10.0, 10.4, 11.0, 20.0, 20.1])
    pri = np.array([2, 1, 3, 4, 1])
    keep = thin_labels(x, pri, 1.0)
    assert list(keep) == [1, 4]  # 10.4 (strength 1) beats 10.0 and 11.0; 20.1 beats 20.0
    assert np.all(np.diff(x[keep]) >= 1.0)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(0, 1000, allow_nan=False), max_size=80),
       st.floats(0.01, 50))
def test_thin_labels_never_keeps_two_closer_than_the_gap(xs, sep):
    x = np.array(xs)
    pri = np.arange(x.size) % 4
    keep = thin_labels(x, pri, sep)
    kept = np.sort(x[keep])
    assert np.all(np.diff(kept) >= sep)
    # Greedy: every dropped label sits within `sep` of a kept one of equal or higher priority.
    for i in set(range(x.size)) - set(keep.tolist()):
        near = [j for j in keep if abs(x[j] - x[i]) < sep]
        assert near and min(pri[j] for j in near) <= pri[i]


def test_page_has_header_footer_strips_labels_and_marks():
    strips = [_strip(k) for k in range(4)]
    marks = [MarkBand(5020.0, 5024.0, NOTE)]
    fig = draw_page(PageSpec(strips, 2, 3), _text(), _markers(), marks, per_page=4)
    texts = [t.get_text() for t in fig.texts]
    assert "Test Star Q" in texts and "page 2 of 3" in texts and "footer words" in texts
    axes = fig.axes
    assert len(axes) == 4
    for ax, s in zip(axes, strips, strict=True):
        assert ax.get_xlim() == pytest.approx(s.xlim)
    ax_texts = [t for ax in axes for t in ax.texts]
    notes = [t for t in ax_texts if t.get_text() == NOTE]
    assert len(notes) == 1  # the mark lies in the first strip only
    assert notes[0].get_parse_math() is False  # "$5 ^_^" stays text, not mathtext
    labels = [t for t in ax_texts if t.get_text().startswith("Xx I")]
    in_strips = [m for m in _markers() if 5000.0 <= m.x <= 5200.0]
    assert 0 < len(labels) < len(in_strips)  # thinned, not dropped


def test_rendered_line_labels_do_not_overlap():
    fig = draw_page(PageSpec([_strip(0)], 1, 1), _text(), _markers(5000, 5050, 0.02), [],
                    per_page=6)
    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    r = canvas.get_renderer()
    boxes = sorted((t.get_window_extent(r) for t in fig.axes[0].texts
                    if t.get_text().startswith("Xx I")), key=lambda b: b.x0)
    assert len(boxes) > 20
    for a, b in zip(boxes, boxes[1:], strict=False):
        assert a.x1 <= b.x0 + 1e-6, (a, b)


def test_too_many_strips_per_page_is_known():
    assert max_per_page("a4") >= 6 and max_per_page("letter") >= 5
    assert max_per_page("letter") <= max_per_page("a4")  # Letter is shorter (common practice)


def _count_pages(data: bytes) -> int:
    return len(re.findall(rb"/Type\s*/Page(?![a-z])", data))


def test_write_pdf_pages_and_text(tmp_path):
    out = tmp_path / "p.pdf"
    pages = [PageSpec([_strip(k, n=500) for k in range(j * 2, j * 2 + 2)], j + 1, 3)
             for j in range(3)]
    n = write_pdf(out, iter(pages), lambda p: _text("Pdf Star Z"), _markers(step=0.5), [],
                  per_page=2)
    data = out.read_bytes()
    assert n == 3
    assert data.startswith(b"%PDF")
    assert _count_pages(data) == 3
    if shutil.which("pdftotext") is None:
        pytest.skip("pdftotext (poppler-utils) is not installed")
    txt = subprocess.run(["pdftotext", "-layout", str(out), "-"], capture_output=True, text=True,
                         check=True).stdout
    assert "Pdf Star Z" in txt
    assert re.search(r"Xx I 50\d\d\.\d\d", txt)
    assert txt.count("page ") >= 3


def _bokeh_doc(text: str) -> dict:
    m = re.search(r'<script type="application/json" id="[^"]+">\s*(.*?)\s*</script>', text, re.S)
    assert m, "no embedded Bokeh document"
    return json.loads(html.unescape(m.group(1)))


def _arrays(node, found):
    if isinstance(node, dict):
        if node.get("type") == "ndarray":
            raw = base64.b64decode(node["array"]["data"])
            if raw[:2] == b"\x1f\x8b":
                raw = gzip.decompress(raw)
            found.append(np.frombuffer(raw, dtype=node["dtype"]))
        else:
            for v in node.values():
                _arrays(v, found)
    elif isinstance(node, list):
        for v in node:
            _arrays(v, found)
    return found


def test_html_is_standalone_with_data_and_escaped_note():
    strips = [_strip(k, n=500) for k in range(2)]
    text = _text("Star <b>Bold</b>")
    page = render_html(strips, text, _markers(5000, 5100, 1.0), [MarkBand(5010, 5012, NOTE)])
    # Inline resources: no script fetched from anywhere.
    assert not re.search(r"<script[^>]*\bsrc=", page)
    assert "<script>alert(1)" not in page and "<b>Bold" not in page
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    doc = _bokeh_doc(page)
    arrays = _arrays(doc, [])
    for s in strips:
        assert any(a.size == s.x.size and np.allclose(a, s.x.astype(np.float32)) for a in arrays)
        assert any(a.size == s.y.size and np.allclose(a, s.y.astype(np.float32)) for a in arrays)
