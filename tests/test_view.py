"""The shared view vocabulary: what a link or an export may name."""

from atlas.view import is_species, is_star_id


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
