"""Survey meters: registration rules and calibration state on a day."""
from datetime import date

import pytest

from models.core.due_dates import DUE_SOON, METER_CALIBRATION_MONTHS, OK, OVERDUE
from models.core.errors import Invalid
from models.surveys.meter_ops import calibration_on, recalibrate, validate_meter_usable
from models.surveys.tables import SurveyMeter
from tests.conftest import LAB_TODAY

D = date.fromisoformat


def test_default_calibration_interval_has_its_source():
    # 12 months: common state rule, e.g. N.D. Admin. Code 33.1-10-15-08.
    assert METER_CALIBRATION_MONTHS == 12


@pytest.mark.parametrize(
    ("calibrated_on", "on", "last_valid", "state", "valid"),
    [
        # 12 months from 2025-03-10 end at the anniversary 2026-03-10; the day before is the last
        # valid day (common practice: "valid for 12 months").
        ("2025-03-10", "2025-06-01", "2026-03-09", OK, True),
        ("2025-03-10", "2026-03-02", "2026-03-09", DUE_SOON, True),  # last usable day within 7
        ("2025-03-10", "2026-03-09", "2026-03-09", DUE_SOON, True),  # the last usable day
        ("2025-03-10", "2026-03-10", "2026-03-09", OVERDUE, False),  # the anniversary: ran out
        ("2024-02-29", "2025-02-27", "2025-02-27", DUE_SOON, True),  # leap day clamps to Feb 28
        ("2024-02-29", "2025-02-28", "2025-02-27", OVERDUE, False),
    ],
)
def test_calibration_on(calibrated_on, on, last_valid, state, valid):
    meter = SurveyMeter(serial="X", calibrated_on=D(calibrated_on), calibration_interval_months=12)
    calibration = calibration_on(meter, D(on), soon_days=7)
    assert (calibration.last_valid, calibration.state, calibration.valid) == (
        D(last_valid), state, valid)


def test_meter_calibrated_after_the_survey_date_is_refused():
    meter = SurveyMeter(serial="X", calibrated_on=D("2025-05-01"), calibration_interval_months=12)
    with pytest.raises(Invalid, match="after the readings' date"):
        validate_meter_usable(meter, D("2025-04-15"))


def test_bad_meters_are_refused_by_field(make_meter, app):
    with pytest.raises(Invalid) as caught:
        make_meter(serial=" ", correction_factor=0, calibrated_on=date(2999, 1, 1),
                   calibration_interval_months=0)
    assert set(caught.value.errors) == {"serial", "correction_factor", "calibrated_on",
                                        "calibration_interval_months"}


def test_duplicate_serial_is_refused(make_meter):
    make_meter(serial="GM-1")
    with pytest.raises(Invalid, match="already registered"):
        make_meter(serial="GM-1")


def test_recalibration_moves_the_date_forward_only(session, make_meter):
    meter = make_meter(calibrated_on=D("2024-01-10"))
    with pytest.raises(Invalid, match="before the one on record"):
        recalibrate(session, meter, D("2023-12-01"), 12, LAB_TODAY)
    recalibrate(session, meter, D("2025-01-09"), 12, LAB_TODAY)
    assert meter.calibrated_on == D("2025-01-09")
