"""The view state: every incoming URL value is validated, clamped or refused with a notice."""

from __future__ import annotations

import json

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from atlas.app.state import (
    MAX_MARKS,
    MAX_NOTE,
    MAX_SPECIES,
    PER_PAGE_MAX,
    URL_PARAMS,
    ViewState,
    parse_query,
    to_query,
)

STARS = {"vega-like": 40, "cool-giant": 7, "123": 3}


def test_empty_query_gives_the_first_star_and_no_notice():
    values, notices = parse_query({}, STARS)
    assert values == {"star": "vega-like"}
    assert notices == []


def test_a_full_query_round_trips_through_the_url():
    s = ViewState()
    s.param.update(star="cool-giant", page=3, per_page=2, lo=6550.5, hi=6575.25, frame="rest",
                   medium="vacuum", unit="nm", flux="raw", lines=["Fe I", "H I"], strength=2,
                   ref="H I 6562.8", marks=[[6560.0, 6565.0, "core"]], compare="vega-like")
    values, notices = parse_query(to_query(s), STARS)
    assert notices == []
    t = ViewState()
    t.param.update(**values)
    assert t.values() == s.values()


@pytest.mark.parametrize("bad", ["../etc/passwd", "Vega Like", "x" * 80, "-lead"])
def test_a_star_that_is_not_a_slug_is_refused(bad):
    values, notices = parse_query({"star": bad}, STARS)
    assert values["star"] == "vega-like"
    assert len(notices) == 1 and notices[0].startswith("star:")


def test_an_unknown_star_is_refused_with_a_notice():
    values, notices = parse_query({"star": "sirius"}, STARS)
    assert values["star"] == "vega-like"
    assert "no star 'sirius'" in notices[0]


def test_a_numeric_star_id_parsed_as_a_number_is_still_found():
    # the URL sync turns digit strings into numbers before we see them
    values, notices = parse_query({"star": 123}, STARS)
    assert values["star"] == "123" and notices == []


def test_page_past_the_end_is_clamped_with_a_notice():
    values, notices = parse_query({"star": "cool-giant", "per_page": "5", "page": "9"}, STARS)
    assert values["page"] == 2  # 7 strips, 5 per page
    assert any(n.startswith("page:") for n in notices)


@pytest.mark.parametrize("raw,expected", [("0", 1), ("-4", 1), ("99", PER_PAGE_MAX)])
def test_per_page_is_clamped_into_range(raw, expected):
    values, _ = parse_query({"per_page": raw}, STARS)
    assert values["per_page"] == expected


@pytest.mark.parametrize("raw", ["abc", "2.5", "1e3", "", "[1]"])
def test_page_must_be_a_whole_number(raw):
    values, notices = parse_query({"page": raw}, STARS)
    assert "page" not in values
    assert notices and notices[0].startswith("page:")


@pytest.mark.parametrize("lo,hi", [("nan", "6000"), ("inf", "6000"), ("6000", "5000"),
                                   ("6000", "6000"), ("5", "6000"), ("6000", "x"), ("6000", "")])
def test_bad_windows_fall_back_to_whole_strips(lo, hi):
    values, notices = parse_query({"lo": lo, "hi": hi}, STARS)
    assert values.get("lo") is None and values.get("hi") is None
    assert notices


def test_a_good_window_is_kept():
    values, notices = parse_query({"lo": "6550.5", "hi": "6575"}, STARS)
    assert (values["lo"], values["hi"]) == (6550.5, 6575.0) and notices == []


@pytest.mark.parametrize("key,raw,expected", [
    ("frame", "REST", "rest"), ("frame", "bary", "barycentric"), ("flux", "normalised", "normalized"),
    ("unit", "a", "A"), ("medium", "vac", "vacuum"),
])
def test_choices_accept_plain_spellings(key, raw, expected):
    values, notices = parse_query({key: raw}, STARS)
    assert values[key] == expected and notices == []


def test_an_unknown_choice_keeps_the_default_with_a_notice():
    values, notices = parse_query({"frame": "galactic"}, STARS)
    assert "frame" not in values
    assert notices[0].startswith("frame:")


def test_species_lists_come_as_json_or_commas_and_are_checked():
    assert parse_query({"lines": '["Fe I","H I"]'}, STARS)[0]["lines"] == ["Fe I", "H I"]
    assert parse_query({"lines": "Fe I, Na I,Fe I"}, STARS)[0]["lines"] == ["Fe I", "Na I"]
    assert parse_query({"lines": ["TiO"]}, STARS)[0]["lines"] == ["TiO"]
    values, notices = parse_query({"lines": "Fe I,<script>"}, STARS)
    assert "lines" not in values and notices
    too_many = ",".join(f"X{i}" for i in range(MAX_SPECIES + 1))
    assert "lines" not in parse_query({"lines": too_many}, STARS)[0]


def test_marks_are_bounded_and_notes_cleaned():
    good = json.dumps([[6560, 6565, "core\x07 of H" + "!" * 200]])
    marks = parse_query({"marks": good}, STARS)[0]["marks"]
    assert marks[0][:2] == [6560.0, 6565.0]
    assert len(marks[0][2]) == MAX_NOTE and "\x07" not in marks[0][2]
    for bad in ("[[6565, 6560, 'x']]", "[[1,2,3,4]]", '{"a":1}', "[[\"nan\", 6000]]",
                json.dumps([[5000, 5001, ""]] * (MAX_MARKS + 1))):
        values, notices = parse_query({"marks": bad}, STARS)
        assert "marks" not in values and notices, bad


def test_ref_must_look_like_a_line():
    assert parse_query({"ref": "Na I 5889.95"}, STARS)[0]["ref"] == "Na I 5889.95"
    values, notices = parse_query({"ref": "drop table"}, STARS)
    assert "ref" not in values and notices


def test_compare_equal_to_star_is_dropped():
    values, _ = parse_query({"star": "cool-giant", "compare": "cool-giant"}, STARS)
    assert values["compare"] == ""


@settings(max_examples=150, deadline=None)
@given(st.dictionaries(st.sampled_from(URL_PARAMS), st.one_of(st.text(max_size=60), st.integers(),
                                                               st.floats(), st.lists(st.text(max_size=8), max_size=5))))
def test_any_query_gives_values_the_state_accepts(raw):
    values, notices = parse_query(raw, STARS)
    s = ViewState()
    s.param.update(**values)  # never raises: every value is of the right type and range
    assert s.star in STARS
    assert all(isinstance(n, str) and "\n" not in n for n in notices)
