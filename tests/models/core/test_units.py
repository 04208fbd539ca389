"""Dose-rate units on entry, against REFERENCE.md "Units"."""
import pytest

from models.core import units


@pytest.mark.parametrize(
    ("value", "unit", "kv", "expected_usv_h"),
    [
        (1.0, "uSv/h", 50.0, 1.0),
        (0.25, "mrem/h", 50.0, 2.5),  # 1 rem = 0.01 Sv (10 CFR 20.1004): 0.25 mrem/h = 2.5 uSv/h
        (2.5, "mrem/h", 50.0, 25.0),  # 10 CFR 20.1004
        # 1 mR = 8.764 uGy air kerma (2.58e-4 C/kg x 33.97 J/C); H*(10)/Ka from ICRU 57 Table A.21 (from
        # memory, REFERENCE.md), the largest up to the kVp:
        (1.0, "mR/h", 50.0, 14.64),  # 8.764 x 1.67 (50 keV)
        (1.0, "mR/h", 45.0, 14.64),  # 45 kV reaches the 50 keV row: 8.764 x 1.67
        (1.0, "mR/h", 60.0, 15.25),  # 8.764 x 1.74 (60 keV, the peak)
        (1.0, "mR/h", 100.0, 15.25),  # past the peak the 60 keV value stands: 8.764 x 1.74
        # 8.764 x 1.10 (30 keV) = 9.64 is below the rules' 10 uSv per mR (Tennessee 0400-20-06-.07(1)(a)
        # states 2.5 mR in 1 hour where 25 Pa. Code 227a.13(b) states 2.5 mrem, 0.025 mSv), so 10 stands.
        (2.5, "mR/h", 25.0, 25.0),
        (0.0, "mR/h", 60.0, 0.0),
    ],
)
def test_to_usv_h(value, unit, kv, expected_usv_h):
    assert units.to_usv_h(value, unit, kv) == pytest.approx(expected_usv_h, rel=1e-3)


def test_air_kerma_per_roentgen_is_the_published_figure():
    # 1 R = 2.58e-4 C/kg (10 CFR 20.1004) x W/e 33.97 J/C (ICRU) is about 8.76 mGy air kerma.
    assert units.AIR_KERMA_UGY_PER_MR == pytest.approx(8.76, abs=0.005)


@pytest.mark.parametrize("kv", [10.0, 20.0, 30.0, 42.0, 50.0, 57.5, 60.0, 80.0, 150.0])
def test_mr_factor_never_below_the_ambient_dose_equivalent_at_any_energy_up_to_the_kvp(kv):
    # ICRU 57 Table A.21 rows up to the kVp (from memory, REFERENCE.md): the factor is above each.
    table = ((10, 0.008), (15, 0.26), (20, 0.61), (30, 1.10), (40, 1.47), (50, 1.67), (60, 1.74),
             (80, 1.72), (100, 1.65))
    for energy, coefficient in table:
        if energy <= kv:
            assert units.usv_h_per_mr(kv) >= 8.764 * coefficient


def test_every_unit_names_its_source():
    assert "10 CFR 20.1004" in units.RATE_UNITS["mrem/h"].source
    assert "ICRU Report 57" in units.unit_source("mR/h", 50.0)
    assert "1.67 Sv/Gy" in units.unit_source("mR/h", 50.0)


@pytest.mark.parametrize("kv", [0.0, -5.0, float("nan")])
def test_mr_factor_refuses_an_impossible_voltage(kv):
    with pytest.raises(ValueError, match="tube voltage"):
        units.usv_h_per_mr(kv)


def test_unknown_unit_is_refused():
    with pytest.raises(ValueError, match="unknown dose-rate unit"):
        units.to_usv_h(1.0, "Gy/min", 50.0)
