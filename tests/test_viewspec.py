"""The shared view vocabulary: what a link or an export may name."""

from atlas.viewspec import is_species, is_star_id


def test_star_ids_follow_the_slug_rule_over_the_whole_string():
    assert is_star_id("marrows-lamp")
    assert is_star_id("a" * 64)
    for bad in ("", "-x", "A", "../etc", "x/y", "a" * 65, "vega\n", "vega ", None, 7):
        assert not is_star_id(bad), bad


def test_species_names():
    for good in ("Fe I", "He II", "TiO", "H I", "O2"):
        assert is_species(good), good
    for bad in ("", "Fe  I", "<b>", "Fe I\n", "Fe IIIII"):
        assert not is_species(bad), bad


import pytest  # noqa: E402

from atlas.errors import InputError  # noqa: E402
from atlas.viewspec import MAX_NOTE, NAMES, PARAMS, parse_view  # noqa: E402


def test_every_name_has_one_spec_and_the_link_order_lists_them_all():
    assert set(NAMES) == set(PARAMS) and len(NAMES) == len(set(NAMES))


def test_link_policy_clamps_what_the_command_line_refuses():
    values, notices = parse_view({"per_page": "40"}, "clamp", bounds={"per_page": (1, 12)})
    assert values == {"per_page": 12} and notices == []
    with pytest.raises(InputError) as exc:
        parse_view({"per_page": "40"}, "refuse", bounds={"per_page": (1, 12)})
    assert exc.value.where == "per_page" and "1 to 12" in exc.value.reason


def test_a_long_note_is_cut_for_a_link_and_refused_for_the_command_line():
    marks = [[6560, 6565, "n" * (MAX_NOTE + 5)]]
    values, _ = parse_view({"marks": marks}, "clamp")
    assert values["marks"][0][2] == "n" * MAX_NOTE
    with pytest.raises(InputError) as exc:
        parse_view({"marks": marks}, "refuse")
    assert exc.value.where == "marks"


def test_an_unreadable_value_is_left_out_of_a_link_with_one_notice():
    values, notices = parse_view({"frame": "galactic", "unit": "nm"}, "clamp")
    assert values == {"unit": "nm"}
    assert len(notices) == 1 and notices[0].startswith("frame:")


def test_a_broken_window_end_names_that_end_on_the_command_line_and_the_pair_in_a_link():
    with pytest.raises(InputError) as exc:
        parse_view({"lo": "nan", "hi": "6600"}, "refuse")
    assert exc.value.where == "lo"
    values, notices = parse_view({"lo": "nan", "hi": "6600"}, "clamp")
    assert values["lo"] is None and values["hi"] is None
    assert len(notices) == 1 and notices[0].startswith("lo/hi:")


def test_both_policies_read_good_values_alike():
    raw = {"star": "vega-like", "lo": "6550.5", "hi": 6575, "frame": "bary", "flux": "normalised",
           "lines": "Fe I, H I", "marks": '[[6560, 6565, "core"]]', "page": "3", "ref": "H I 6562.8"}
    clamp, notices = parse_view(raw, "clamp")
    refuse, _ = parse_view(raw, "refuse")
    assert clamp == refuse and notices == []
    assert clamp["frame"] == "barycentric" and clamp["lines"] == ["Fe I", "H I"]


def test_an_unknown_policy_is_a_programming_error():
    with pytest.raises(ValueError):
        parse_view({}, "ignore")
