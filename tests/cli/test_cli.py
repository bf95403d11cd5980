"""The command's own behaviour: help, version, and the one-line error path."""

from __future__ import annotations

import pytest

from atlas import cli
from atlas.errors import InputError


def test_help_lists_every_written_subcommand(capsys):
    with pytest.raises(SystemExit) as exc:
        cli.main(["--help"])
    assert exc.value.code == 0
    out = capsys.readouterr().out
    assert "striae" in out and "Example:" in out


def test_no_subcommand_prints_help_and_exits_2(capsys):
    assert cli.main([]) == 2
    assert "usage: striae" in capsys.readouterr().out


def test_input_error_becomes_one_line_and_exit_2(monkeypatch, capsys):
    def boom(args):
        raise InputError("stars/vega.fits", "not a spectrum file:\n no data")

    parser = cli.build_parser()
    monkeypatch.setattr(cli, "build_parser", lambda: parser)
    parser.set_defaults(_run=boom)
    assert cli.main([]) == 2
    err = capsys.readouterr().err
    assert err == "striae: stars/vega.fits: not a spectrum file: no data\n"


def test_input_error_message_is_one_line():
    e = InputError("--strip-kms", "must be positive,\nnot -3")
    assert e.message == "--strip-kms: must be positive, not -3"
