"""Marks: typed, added, edited, deleted, moved with the mark tool; notes stay plain text."""

from __future__ import annotations

import pytest

from atlas.app.markers import parse_mark


def test_parse_mark_reads_ranges_units_and_notes():
    assert parse_mark("6550-6575 Hα wing") == (6550.0, 6575.0, "Hα wing")
    assert parse_mark("655.0–657.5 nm core") == (6550.0, 6575.0, "core")
    assert parse_mark("655 .. 656", unit="nm") == (6550.0, 6560.0, "")
    assert parse_mark("6575 to 6550 <b>x</b>") == (6550.0, 6575.0, "<b>x</b>")
    for bad in ("", "6550", "abc-def", "6550-6550 same"):
        with pytest.raises(ValueError):
            parse_mark(bad)


@pytest.fixture
def viewer(make_viewer):
    return make_viewer(star="test-star-a", per_page=3)


def test_typed_mark_is_added_drawn_edited_and_deleted(viewer):
    st = viewer.state
    viewer.marks.add_text("5010-5020 first <script>alert(1)</script>")
    assert st.marks == [[5010.0, 5020.0, "first <script>alert(1)</script>"]]
    slot = viewer.strips.slots[0]
    assert list(slot.ksrc.data["note"]) == ["first <script>alert(1)</script>"]  # canvas text
    viewer.marks.add_text("5030-5031")
    viewer.marks.edit(1, note="second")
    assert st.marks[1] == [5030.0, 5031.0, "second"]
    assert "second" in " ".join(viewer.marks.w_pick.options)
    viewer.marks.delete(0)
    assert st.marks == [[5030.0, 5031.0, "second"]]


def test_bad_typed_mark_gives_a_notice_and_changes_nothing(viewer):
    viewer.marks.add_text("from here to there")
    assert viewer.state.marks == [] and viewer.notice.visible


def test_mark_tool_edits_reach_the_state(viewer):
    st = viewer.state
    viewer.marks.add_text("5005-5010 keep")
    viewer.marks.add_text("5015-5020 drop")  # both in strip 0 (about 4928..5028 Å air)
    slot = viewer.strips.slots[0]
    # the browser moved mark 0, deleted mark 1 and drew a new band (index = empty value)
    assert slot.mark_idx == [0, 1]
    slot.ksrc.data = {"x0": [5006.0, 5022.0], "x1": [5011.0, 5025.0], "note": ["keep", -1],
                      "i": [0.0, -1.0]}
    assert st.marks == [[5006.0, 5011.0, "keep"], [5022.0, 5025.0, ""]]


def test_marks_follow_a_change_of_frame(viewer):
    st = viewer.state
    viewer.marks.add_text("5010-5020 m")
    fr0 = viewer.vm.frame()
    st.frame = "rest"
    a, b, note = st.marks[0]
    back = fr0.to_display_A(viewer.vm.frame().from_display_A([a, b]))
    assert back == pytest.approx([5010.0, 5020.0], abs=1e-4) and note == "m"
    assert a != pytest.approx(5010.0, abs=1e-3)  # rv 25 km/s, bary -5: a real shift
