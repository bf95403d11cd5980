"""The viewer's export buttons: PDF pages and standalone HTML of the current view."""

from __future__ import annotations

import pytest


@pytest.fixture
def viewer(make_viewer):
    return make_viewer(star="test-star-a", per_page=12)


def test_pdf_of_the_page_clamps_strips_per_page(viewer):
    from atlas.export.pdf import max_per_page

    v = viewer.controls.export_view()
    assert v["per_page"] == min(12, max_per_page("a4"))
    buf = viewer.controls.export_pdf_bytes()
    data = buf.getvalue()
    assert data.startswith(b"%PDF") and len(data) > 1000
    assert viewer.controls.w_pdf.filename == "test-star-a.pdf"


def test_html_of_a_zoomed_window_carries_the_marks_as_text(viewer):
    st = viewer.state
    st.param.update(lo=5005.0, hi=5015.0)
    viewer.marks.add_text("5008-5010 <script>alert(1)</script>")
    v = viewer.controls.export_view()
    assert (v["lo"], v["hi"]) == (5005.0, 5015.0)
    page = viewer.controls.export_html_bytes().getvalue().decode()
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    assert "<script>alert(1)</script>" not in page


def test_export_refusal_becomes_a_notice(viewer, monkeypatch):
    from atlas.errors import InputError

    def refuse(*a, **k):
        raise InputError("frame", "no such frame here")

    monkeypatch.setattr("atlas.export.export_pdf", refuse)
    assert viewer.controls.export_pdf_bytes() is None
    assert viewer.notice.visible and "no such frame here" in viewer.notice.object
