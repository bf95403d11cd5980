"""Export from a real atlas on disk (built by atlas.build in a temporary folder)."""

from __future__ import annotations

import json
import math
import re
import shutil
import subprocess

import numpy as np
import pytest
import xarray as xr
from matplotlib.backends.backend_agg import FigureCanvasAgg

import atlas.export as ex
from atlas.errors import InputError
from atlas.export.pdf import PageSpec, draw_page
from atlas.lines import load_lines

ALPHA, NOSITE = "test-star-alpha", "test-star-nosite"
C_KMS = 299792.458  # exact (SI definition of the metre)


def _pages(path) -> int:
    return len(re.findall(rb"/Type\s*/Page(?![a-z])", path.read_bytes()))


def _catalog(atlas_dir) -> dict:
    return json.loads((atlas_dir / "atlas.json").read_text())


def _record(atlas_dir, star_id) -> dict:
    return next(r for r in _catalog(atlas_dir)["stars"] if r["id"] == star_id)


def _leftovers(folder):
    return [p.name for p in folder.iterdir() if p.name.endswith(".part")]


def _patched(small_atlas, dst, **fields):
    """A copy of the atlas whose catalog record of test-star-alpha has ``fields`` changed."""
    shutil.copytree(small_atlas, dst)
    cat = _catalog(dst)
    for r in cat["stars"]:
        if r["id"] == ALPHA:
            r.update(fields)
    (dst / "atlas.json").write_text(json.dumps(cat))
    return dst


@pytest.fixture(scope="module")
def rv_atlas(small_atlas, tmp_path_factory):
    """test-star-alpha with a radial velocity of +20 km/s in its catalog record."""
    return _patched(small_atlas, tmp_path_factory.mktemp("rv") / "atlas", rv_kms=20.0,
                    rv_err_kms=0.5)


def test_rest_frame_needs_a_measured_velocity(small_atlas, tmp_path):
    norv = _patched(small_atlas, tmp_path / "atlas", rv_kms=None, rv_err_kms=None, rv_obs_kms=None)
    with pytest.raises(InputError, match="no measured radial velocity") as exc:
        ex.export_pdf(norv, ALPHA, tmp_path / "o.pdf", frame="rest")
    assert exc.value.where == "frame" and not (tmp_path / "o.pdf").exists()


def test_in_the_rest_frame_the_dips_fall_on_their_markers(small_atlas):
    # The test spectrum has its dips at line-list wavelengths in the observer's frame, so its
    # true radial velocity equals the barycentric correction (v_true = v_obs + v_bary with
    # v_obs = 0; Wright & Eastman 2014, PASP 126, 838).  The build measures the RV; in the
    # rest frame each dip must then sit on its line's rest wavelength.
    rec = _record(small_atlas, ALPHA)
    assert rec["rv_kms"] == pytest.approx(rec["barycentric_kms"], abs=0.5)
    prep = ex.prepare(small_atlas, ex.make_view(star=ALPHA, lo=6559.0, hi=6570.0, frame="rest",
                                                medium="vacuum", lines=["H I"]))
    (strip,) = list(prep.strips(100_000))
    dip = strip.x[np.nanargmin(strip.y)]
    marker = min((m.x for m in prep.markers), key=lambda v: abs(v - dip))
    assert dip == pytest.approx(marker, abs=0.05)  # 0.05 Å = 2.3 km/s; the dip is 0.3 Å wide


def test_whole_spectrum_pdf_has_a_page_per_group_of_strips(small_atlas, tmp_path):
    out = tmp_path / "all.pdf"
    res = ex.export_pdf(small_atlas, ALPHA, out, per_page=4)
    n_strips = _record(small_atlas, ALPHA)["strips"]
    assert res["strips"] == n_strips
    assert res["pages"] == math.ceil(n_strips / 4) == _pages(out)
    assert out.read_bytes().startswith(b"%PDF")


def test_region_is_cut_into_strips_of_the_atlas_width(small_atlas, tmp_path):
    # Velocity strips span ln(max/min) = strip_kms / c (atlas.strips); 5.5 widths -> 6 strips.
    ratio = math.exp(_catalog(small_atlas)["options"]["strip_kms"] / C_KMS)
    lo = 6460.0
    hi = lo * ratio**5.5
    out = tmp_path / "region.pdf"
    res = ex.export_pdf(small_atlas, ALPHA, out, lo=lo, hi=hi, medium="vacuum", per_page=4)
    assert (res["strips"], res["pages"], _pages(out)) == (6, 2, 2)


def test_region_narrower_than_a_strip_is_one_zoomed_strip(small_atlas):
    view = ex.make_view(star=ALPHA, lo=6560.0, hi=6570.0)  # air, observed frame
    prep = ex.prepare(small_atlas, view)
    assert len(prep.pieces) == 1
    (strip,) = list(prep.strips(2000))
    assert strip.xlim == pytest.approx((6560.0, 6570.0), abs=1e-6)
    assert strip.x.min() >= 6560.0 - 1e-3 and strip.x.max() <= 6570.0 + 1e-3


def test_real_samples_when_few_enough_else_envelopes(small_atlas):
    prep = ex.prepare(small_atlas, ex.make_view(star=ALPHA, lo=6560.0, hi=6562.0,
                                               medium="vacuum"))
    (strip,) = list(prep.strips(100_000))
    ds = xr.open_zarr(small_atlas / _record(small_atlas, ALPHA)["store"])
    w = ds["wavelength"].values.ravel()
    w = np.unique(w[(w >= 6560.0) & (w <= 6562.0)])
    assert not strip.decimated
    np.testing.assert_allclose(strip.x, w, rtol=1e-7)  # window returns float32 wavelengths
    whole = ex.prepare(small_atlas, ex.make_view(star=ALPHA, medium="vacuum"))
    first = next(whole.strips(300))
    assert first.decimated and first.x.size <= 300


def test_pdf_page_shows_star_name_header_and_line_label(small_atlas, tmp_path):
    prep = ex.prepare(small_atlas, ex.make_view(star=ALPHA, lo=6555.0, hi=6575.0))
    strips = list(prep.strips(2000))
    fig = draw_page(PageSpec(strips, 1, 1), prep.text, prep.markers, prep.marks, per_page=6)
    FigureCanvasAgg(fig).draw()
    texts = [t.get_text() for t in fig.texts] + [t.get_text() for a in fig.axes for t in a.texts]
    lines = load_lines()
    h_alpha = lines[(lines.species == "H I") & (abs(lines.vacuum_A - 6564.6) < 0.1)].iloc[0]
    label = f"H I {h_alpha.air_A:.2f}"
    assert "Test Star Alpha" in texts and label in texts
    assert any("alpha.fits" in t and "air" in t for t in texts)
    assert any(t.startswith("atlas built ") and "striae" in t for t in texts)
    out = tmp_path / "h.pdf"
    ex.export_pdf(small_atlas, ALPHA, out, lo=6555.0, hi=6575.0)
    if shutil.which("pdftotext") is None:
        pytest.skip("pdftotext (poppler-utils) is not installed")
    txt = subprocess.run(["pdftotext", str(out), "-"], capture_output=True, text=True,
                         check=True).stdout
    assert "Test Star Alpha" in txt and label in txt and "page 1 of 1" in txt


def test_pdf_page_converts_to_png(small_atlas, tmp_path):
    if shutil.which("pdftoppm") is None:
        pytest.skip("pdftoppm (poppler-utils) is not installed")
    out = tmp_path / "p.pdf"
    ex.export_pdf(small_atlas, ALPHA, out, lo=6540.0, hi=6600.0, per_page=3,
                  marks=[[6560.0, 6566.0, "H alpha wing"]])
    subprocess.run(["pdftoppm", "-png", "-r", "40", "-f", "1", "-l", "1", str(out),
                    str(tmp_path / "p")], check=True, capture_output=True)
    png = next(tmp_path.glob("p*.png"))
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_markers_follow_frame_and_velocity(rv_atlas):
    lines = load_lines()
    ha = lines[(lines.species == "H I") & (abs(lines.vacuum_A - 6564.6) < 0.1)].iloc[0]
    rest = ex.prepare(rv_atlas, ex.make_view(star=ALPHA, lo=6555.0, hi=6575.0, frame="rest",
                                             medium="vacuum", lines=["H I"]))
    xs = [m.x for m in rest.markers if m.species == "H I"]
    # In the rest frame a stellar line sits at its rest wavelength (definition; common practice).
    assert min(abs(np.array(xs) - ha.vacuum_A)) < 1e-6
    rec = _record(rv_atlas, ALPHA)
    obs = ex.prepare(rv_atlas, ex.make_view(star=ALPHA, lo=6555.0, hi=6575.0,
                                            medium="vacuum", lines=["H I"]))
    x = min((m.x for m in obs.markers), key=lambda v: abs(v - ha.vacuum_A))
    # Observed: moved by the star's RV less the barycentric correction, to first order
    # v = c dλ/λ (common practice); Wright & Eastman (2014) for the composition.
    v_kms = C_KMS * (x / ha.vacuum_A - 1.0)
    assert v_kms == pytest.approx(20.0 - rec["barycentric_kms"], abs=0.01)
    assert any("RV +20.00 ± 0.50 km/s (barycentric)" in h for h in obs.text.header)


def test_species_filter_and_no_markers(small_atlas):
    prep = ex.prepare(small_atlas, ex.make_view(star=ALPHA, lines="Fe I"))
    assert prep.markers and {m.species for m in prep.markers} == {"Fe I"}
    assert ex.prepare(small_atlas, ex.make_view(star=ALPHA, markers=False)).markers == []
    with pytest.raises(InputError) as exc:
        ex.prepare(small_atlas, ex.make_view(star=ALPHA, lines="Xq IV"))
    assert exc.value.where == "lines"


def test_marks_are_converted_to_the_display_unit(small_atlas):
    prep = ex.prepare(small_atlas, ex.make_view(star=ALPHA, unit="nm",
                                                marks=[[6560.0, 6566.0, "n"]]))
    (band,) = prep.marks
    assert (band.x0, band.x1, band.note) == pytest.approx((656.0, 656.6, "n"))


def test_html_page_mode_and_content(small_atlas, tmp_path):
    out = tmp_path / "v.html"
    note = "<script>alert(1)</script>"
    res = ex.export_html(small_atlas, ALPHA, out, per_page=4, page=2,
                         marks=[[6450.0, 6650.0, note]])
    assert res["strips"] == 4
    page = out.read_text(encoding="utf-8")
    assert "<script>alert(1)" not in page and "&lt;script&gt;alert(1)" in page
    assert not re.search(r"<script[^>]*\bsrc=", page)
    # Strips count from 1 on screen: page 2 of 4 per page holds strips 5..8.
    assert "strip 5" in page and "strip 8" in page and "strip 4" not in page
    assert "strip 9" not in page
    with pytest.raises(InputError) as exc:
        ex.export_html(small_atlas, ALPHA, tmp_path / "w.html", per_page=4, page=5)
    assert exc.value.where == "page"


def test_html_refuses_too_many_strips(small_atlas, tmp_path, monkeypatch):
    monkeypatch.setattr(ex, "HTML_MAX_STRIPS", 3)
    with pytest.raises(InputError, match="at most 3") as exc:
        ex.export_html(small_atlas, ALPHA, tmp_path / "x.html", lo=6460.0, hi=6600.0)
    assert exc.value.where == "lo/hi"
    assert not (tmp_path / "x.html").exists()


@pytest.mark.parametrize(
    ("kw", "where", "words"),
    [
        ({"star_id": "no-such-star"}, "star", "no star"),
        ({"star_id": "../x"}, "star", "not a star id"),
        ({"lo": 7000.0, "hi": 7100.0}, "lo/hi", "outside the spectrum"),
        ({"lo": 6500.0, "hi": 6400.0}, "lo/hi", "low to high"),
        ({"lo": float("nan"), "hi": 6600.0}, "lo", "not a finite number"),
        ({"per_page": 0}, "per_page", "from 1"),
        ({"per_page": 30}, "per_page", "fit on one A4 page"),
        ({"frame": "barycentric", "star_id": NOSITE}, "frame", "no barycentric correction"),
    ],
)
def test_bad_requests_are_one_line_errors_and_write_nothing(small_atlas, tmp_path, kw, where, words):
    kw = {"star_id": ALPHA, **kw}
    out = tmp_path / "out.pdf"
    with pytest.raises(InputError) as exc:
        ex.export_pdf(small_atlas, out=out, **kw)
    assert exc.value.where == where and words in exc.value.reason
    assert "\n" not in exc.value.message
    assert not out.exists() and _leftovers(tmp_path) == []


def test_bad_output_paths(small_atlas, tmp_path):
    (tmp_path / "folder.pdf").mkdir()
    (tmp_path / "plain").write_text("x")
    for out, words in ((tmp_path / "folder.pdf", "is a folder"),
                       (tmp_path / "missing" / "o.pdf", "does not exist"),
                       (tmp_path / "plain" / "o.pdf", "does not exist")):
        with pytest.raises(InputError) as exc:
            ex.export_pdf(small_atlas, ALPHA, out)
        assert exc.value.where == str(out) and words in exc.value.reason
    with pytest.raises(InputError) as exc:
        ex.export_pdf(tmp_path / "no-atlas", ALPHA, tmp_path / "o.pdf")
    assert "atlas" in exc.value.reason


def test_failure_while_drawing_leaves_the_old_file_untouched(small_atlas, tmp_path, monkeypatch):
    out = tmp_path / "keep.pdf"
    out.write_bytes(b"previous contents")
    calls = []

    def broken(*args, **kw):
        calls.append(1)
        if len(calls) > 2:
            raise RuntimeError("disk trouble")
        return real(*args, **kw)

    from atlas.export import gather

    real = gather._window
    monkeypatch.setattr(gather, "_window", broken)
    with pytest.raises(RuntimeError):
        ex.export_pdf(small_atlas, ALPHA, out, per_page=2)
    assert out.read_bytes() == b"previous contents"
    assert _leftovers(tmp_path) == []


def test_export_into_a_file_object(small_atlas):
    import io

    pdf, page = io.BytesIO(), io.BytesIO()
    res = ex.export_pdf(small_atlas, ALPHA, pdf, lo=6555.0, hi=6575.0)
    assert res["out"] is None and pdf.getvalue().startswith(b"%PDF")
    ex.export_html(small_atlas, ALPHA, page, lo=6555.0, hi=6575.0)
    assert page.getvalue().lstrip().lower().startswith(b"<!doctype html")
