"""``striae export`` on the command line: output, and one-line errors naming the option."""

from __future__ import annotations

import re

import pytest

from atlas import cli

ALPHA = "test-star-alpha"


def _one_line_error(capsys, code, *fragments):
    err = capsys.readouterr().err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert code == 2, err
    assert len(lines) == 1 and lines[0].startswith("striae: "), err
    assert "Traceback" not in err
    for f in fragments:
        assert f in lines[0], (f, lines[0])
    return lines[0]


def test_pdf_in_nm_with_a_mark(small_atlas, tmp_path, capsys):
    out = tmp_path / "na.pdf"
    code = cli.main(["export", str(small_atlas), ALPHA, "--unit", "nm", "--range", "655:658",
                     "--mark", "656.0:656.6:wing: blended?", "--pdf", str(out)])
    assert code == 0
    said = capsys.readouterr().out
    assert re.search(r"wrote .*na\.pdf: 1 page\(s\), \d strip\(s\)", said)
    assert out.read_bytes().startswith(b"%PDF")


def test_html_with_lines_filter(small_atlas, tmp_path, capsys):
    out = tmp_path / "v.html"
    code = cli.main(["export", str(small_atlas), ALPHA, "--range", "6555:6575",
                     "--lines", "H I,Fe I", "--html", str(out)])
    assert code == 0, capsys.readouterr().err
    assert "H I 6562" in out.read_text(encoding="utf-8")


@pytest.mark.parametrize(
    ("args", "fragments"),
    [
        (["--range", "6600:6500"], ("--range", "low to high")),
        (["--range", "abc:6600"], ("--range", "not a number")),
        (["--range", "6500"], ("--range", "A:B")),
        (["--range", "nan:6600"], ("--range", "finite")),
        (["--range", "7000:7100"], ("--range", "outside the spectrum")),
        (["--per-page", "0"], ("--per-page",)),
        (["--per-page", "abc"], ("--per-page", "whole number")),
        (["--per-page", "40"], ("--per-page", "at most")),
        (["--frame", "galactic"], ("--frame",)),
        (["--unit", "um"], ("--unit",)),
        (["--mark", "6500"], ("--mark",)),
        (["--mark", "6600:6500:x"], ("--mark", "low to high")),
        (["--lines", "Zz IX"], ("--lines",)),
        (["--paper", "a5"], ("--paper",)),
    ],
)
def test_bad_options_are_one_line(small_atlas, tmp_path, capsys, args, fragments):
    out = tmp_path / "o.pdf"
    code = cli.main(["export", str(small_atlas), ALPHA, *args, "--pdf", str(out)])
    _one_line_error(capsys, code, *fragments)
    assert not out.exists()


def test_star_and_output_mistakes(small_atlas, tmp_path, capsys):
    a = str(small_atlas)
    code = cli.main(["export", a, "test-star-nosite", "--frame", "barycentric", "--pdf",
                     str(tmp_path / "o.pdf")])
    _one_line_error(capsys, code, "--frame", "no barycentric correction")
    code = cli.main(["export", a, "nobody", "--pdf", str(tmp_path / "o.pdf")])
    _one_line_error(capsys, code, "STAR", "no star 'nobody'")
    code = cli.main(["export", a, "../etc", "--pdf", str(tmp_path / "o.pdf")])
    _one_line_error(capsys, code, "STAR", "not a star id")
    code = cli.main(["export", a, ALPHA, "--pdf", str(tmp_path)])
    _one_line_error(capsys, code, str(tmp_path), "is a folder")
    code = cli.main(["export", a, ALPHA, "--pdf", str(tmp_path / "nope" / "o.pdf")])
    _one_line_error(capsys, code, "does not exist")
    code = cli.main(["export", a, ALPHA])
    _one_line_error(capsys, code, "--pdf/--html")
    code = cli.main(["export", a, ALPHA, "--pdf", "x.pdf", "--html", "x.html"])
    _one_line_error(capsys, code, "--pdf/--html")
    code = cli.main(["export", str(tmp_path / "none"), ALPHA, "--pdf", str(tmp_path / "o.pdf")])
    _one_line_error(capsys, code, "none", "atlas")
    code = cli.main(["export"])
    _one_line_error(capsys, code, "ATLAS")


def test_subprocess_error_is_one_line(small_atlas, tmp_path, run_striae):
    proc = run_striae("export", small_atlas, ALPHA, "--range", "6600:6500", "--pdf",
                      tmp_path / "o.pdf")
    assert proc.returncode == 2, proc.stderr
    assert proc.stderr.strip().splitlines() == [
        "striae: --range: must run from low to high, not 6600:6500"]


def test_help_has_an_example(capsys):
    with pytest.raises(SystemExit):
        cli.main(["export", "--help"])
    out = capsys.readouterr().out
    assert "Example:" in out and "--pdf" in out and "--html" in out
