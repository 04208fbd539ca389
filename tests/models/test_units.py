"""Dose-rate units on entry, against REFERENCE.md "Units"."""
import pytest

from models.core import units


@pytest.mark.parametrize(
    ("value", "unit", "expected_usv_h"),
    [
        (1.0, "uSv/h", 1.0),
        (0.25, "mrem/h", 2.5),  # 1 rem = 0.01 Sv (10 CFR 20.1004): 0.25 mrem/h = 2.5 uSv/h
        (2.5, "mrem/h", 25.0),  # 10 CFR 20.1004
        (1.0, "mR/h", 10.0),  # the logbook's conservative choice: "1 R ~ 1 rem" (common practice)
        (2.5, "mR/h", 25.0),  # Tennessee 0400-20-06-.07(1)(a) quotes 2.5 mR/h as 25 uSv/h
        (0.0, "mR/h", 0.0),
    ],
)
def test_to_usv_h(value, unit, expected_usv_h):
    assert units.to_usv_h(value, unit) == pytest.approx(expected_usv_h)


def test_air_kerma_per_roentgen_is_the_published_figure():
    # 1 R = 2.58e-4 C/kg (10 CFR 20.1004) x W/e 33.97 J/C (ICRU) is about 8.76 mGy air kerma.
    assert units.AIR_KERMA_UGY_PER_MR == pytest.approx(8.76, abs=0.005)


def test_mr_factor_errs_on_the_safe_side_of_air_kerma():
    # Counting 10 uSv/h per mR/h overstates the 8.76 uGy/h air kerma (ICRU), never understates it.
    assert units.USV_PER_MR >= units.AIR_KERMA_UGY_PER_MR


def test_every_unit_names_its_source():
    assert "10 CFR 20.1004" in units.RATE_UNITS["mrem/h"].source
    assert "10 CFR 20.1004" in units.RATE_UNITS["mR/h"].source


def test_unknown_unit_is_refused():
    with pytest.raises(ValueError, match="unknown dose-rate unit"):
        units.to_usv_h(1.0, "Gy/min")
