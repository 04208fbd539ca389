"""Survey level sources follow the family of rules the lab works under."""
import pytest

from models.surveys.level_sources import LOCAL_RULES, family_of, level_source
from models.surveys.tables import PointLevel


@pytest.mark.parametrize(
    ("preset_key", "family"),
    [("icrp103", "icrp"), ("euratom2013", "euratom"), ("cfr10_20", "us"), ("irr17", "uk"),
     (None, None), ("a lab's own", None)],
)
def test_family_follows_the_limit_sets_preset(preset_key, family):
    assert family_of(preset_key) == family


def test_us_labs_see_the_published_clauses_quoting_only_what_each_says():
    surface = level_source(PointLevel.SURFACE, "us")
    housing = level_source(PointLevel.HOUSING, "us")
    # ANSI N43.2 as quoted in DOE-HDBK-1109-97: 2.5 uSv/h (0.25 mrem/h) at 5 cm, outer surface.
    assert "ANSI N43.2 as quoted in DOE-HDBK-1109-97: 2.5 µSv/h (0.25 mrem/h) at 5 cm" in surface
    # 25 Pa. Code 227a.13(b): 2.5 mrem (0.025 mSv) in 1 hour at 5 cm, all shutters closed.
    assert "25 Pa. Code 227a.13(b): 2.5 mrem (0.025 mSv) in 1 hour at 5 cm from the tube housing with " \
           "all shutters closed" in housing
    # Tennessee 0400-20-06-.07(1)(a) states 2.5 mR in 1 hour at 5 cm, nothing about shutters.
    tennessee = housing[housing.index("Tennessee"):]
    assert "2.5 mR in 1 hour at 5 cm" in tennessee
    assert "shutter" not in tennessee and "µSv" not in tennessee


@pytest.mark.parametrize("family", ["euratom", "icrp", "uk", None])
@pytest.mark.parametrize("level", list(PointLevel))
def test_other_families_are_told_their_local_rules_set_the_level(family, level):
    source = level_source(level, family)
    assert source.startswith(LOCAL_RULES)
    # No US clause is quoted as if it applied there.
    for clause in ("227a", "0400-20-06", "ANSI N43.2"):
        assert clause not in source
