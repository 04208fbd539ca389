"""Dose records: the entry rules, and correction by a new version that keeps the original."""
from dataclasses import replace
from datetime import date

import pytest
import sqlalchemy as sa

from models.core.codes import Location, Quantity, Result
from models.core.errors import Invalid
from models.core.units import to_msv
from models.doses.record_ops import DoseEntry, add_dose_record, amend_dose_record, entry_errors
from models.doses.tables import DoseRecord, DoseSource, DosimeterKind, Hand
from models.doses.version_ops import chains, current_dose_records, history

BASE = DoseEntry(person_id=1, wear_start=date(2026, 1, 1), wear_end=date(2026, 1, 31),
                 quantity=Quantity.HP10, location=Location.WHOLE_BODY, result=Result.MEASURED, value=0.2)


@pytest.mark.parametrize("changes, field", [
    ({}, None),
    ({"wear_end": date(2025, 12, 31)}, "wear_end"),
    ({"wear_start": None}, "wear_start"),
    ({"value": -0.1}, "value"),
    ({"value": float("nan")}, "value"),
    ({"value": None}, "value"),                                   # measured needs a value
    ({"result": Result.BELOW_MRD, "value": None}, "mrd"),          # below MRD needs its MRD
    ({"result": Result.BELOW_MRD, "value": None, "mrd": 0.1}, None),
    ({"result": Result.BELOW_MRD, "value": 0.3, "mrd": 0.1}, "value"),
    ({"result": Result.UNUSED, "value": None}, None),
    ({"result": Result.UNUSED, "value": 0.4}, "value"),
    ({"result": Result.LOST, "value": None}, None),
    ({"result": Result.LOST, "value": 0.0}, "value"),               # lost has no reading at all
    ({"result": Result.NOT_RETURNED, "value": 0.2}, "value"),
    ({"source": DoseSource.RSO_ESTIMATE}, "basis"),
    ({"source": DoseSource.RSO_ESTIMATE, "basis": "  "}, "basis"),
    ({"source": DoseSource.INCIDENT_ESTIMATE, "basis": "Reconstructed from the session log."}, None),
    ({"mrd": -1.0}, "mrd"),
    ({"unit": "rem"}, "unit"),
    ({"quantity": Quantity.HP3}, "location"),                       # Hp(3) only at the eye
    ({"quantity": Quantity.HP3, "location": Location.EYE}, None),
    ({"quantity": Quantity.HP10, "location": Location.LEFT_HAND}, "location"),
    ({"quantity": Quantity.HP007, "location": Location.RIGHT_HAND}, None),
    ({"quantity": Quantity.HP007, "location": Location.ABDOMEN}, "location"),
    ({"location": Location.ABDOMEN}, None),
    ({"quantity": Quantity.HP007}, None),                           # skin, whole body
])
def test_entry_rules(changes, field):
    errors = entry_errors(replace(BASE, **changes))
    assert (next(iter(errors)) if errors else None) == field, errors


@pytest.mark.parametrize("value, unit, msv", [
    (100.0, "mrem", 1.0),    # 1 rem = 0.01 Sv, so 100 mrem = 1 mSv (10 CFR 20.1004)
    (125.0, "mrem", 1.25),   # 125 mrem = 1.25 mSv, the common-practice quarterly level I
    (0.3, "mSv", 0.3),
    (None, "mrem", None),
])
def test_unit_conversion(value, unit, msv):
    assert to_msv(value, unit) == pytest.approx(msv) if msv is not None else to_msv(value, unit) is None


def test_a_dosimeter_belongs_to_its_wearer_and_place(make_person, make_dosimeter):
    ann, bob = make_person("ann"), make_person("bob")
    ring = make_dosimeter(ann, kind=DosimeterKind.RING, hand=Hand.LEFT)
    entry = replace(BASE, person_id=ann.id, dosimeter_id=ring.id, quantity=Quantity.HP007)
    assert "location" in entry_errors(entry, ring)  # a left ring's results are at the left hand
    assert entry_errors(replace(entry, location=Location.LEFT_HAND), ring) == {}
    assert "dosimeter" in entry_errors(replace(entry, person_id=bob.id, location=Location.LEFT_HAND), ring)


def test_a_repeat_of_a_current_record_is_refused(session, make_person, make_dose):
    ann = make_person("ann")
    first = make_dose(ann)
    with pytest.raises(Invalid) as caught:
        add_dose_record(session, replace(BASE, person_id=ann.id, wear_start=first.wear_start,
                                         wear_end=first.wear_end))
    assert f"#{first.id}" in caught.value.errors["wear_start"]


def test_mrem_entry_is_stored_in_msv(session, make_person):
    ann = make_person("ann")
    record = add_dose_record(session, replace(BASE, person_id=ann.id, value=50.0, unit="mrem"))
    assert record.value_msv == pytest.approx(0.5)  # 50 mrem = 0.5 mSv (10 CFR 20.1004)
    assert record.entered_unit == "mrem"


def test_amend_keeps_the_original_and_chains_versions(session, make_person, make_dose):
    ann = make_person("ann")
    lost = make_dose(ann, result=Result.LOST, value=None)
    estimate = replace(BASE, person_id=ann.id, wear_start=lost.wear_start, wear_end=lost.wear_end,
                       value=0.15, source=DoseSource.RSO_ESTIMATE,
                       basis="Average of the three previous months for the same work.")
    second = amend_dose_record(session, lost, estimate, "Badge lost; estimate from earlier months.")
    session.commit()
    assert (second.version, second.supersedes_id, second.basis) == (
        2, lost.id, "Average of the three previous months for the same work.")
    session.refresh(lost)
    assert lost.result is Result.LOST and lost.value_msv is None  # the original is untouched
    assert session.scalar(sa.select(sa.func.count()).select_from(DoseRecord)) == 2
    assert [r.id for r in current_dose_records(session, person_id=ann.id)] == [second.id]
    assert [r.id for r in history(session, lost)] == [lost.id, second.id]
    assert [r.id for r in history(session, second)] == [lost.id, second.id]
    assert [[r.id for r in c] for c in chains([second, lost])] == [[lost.id, second.id]]


@pytest.mark.parametrize("reason, changes, field", [
    ("", {"value": 0.3}, "reason"),
    ("Typo.", {}, "reason"),                      # nothing changed
    ("Typo.", {"value": -1.0}, "value"),
    ("Typo.", {"person_id": None}, "person"),
])
def test_amend_refusals(session, make_person, make_dose, reason, changes, field):
    ann = make_person("ann")
    record = make_dose(ann, value=0.2)
    entry = replace(BASE, **{"person_id": ann.id, "wear_start": record.wear_start,
                             "wear_end": record.wear_end, **changes})
    with pytest.raises(Invalid) as caught:
        amend_dose_record(session, record, entry, reason)
    assert field in caught.value.errors


def test_only_the_latest_version_can_be_amended(session, make_person, make_dose):
    ann = make_person("ann")
    record = make_dose(ann, value=0.2)
    entry = replace(BASE, person_id=ann.id, wear_start=record.wear_start, wear_end=record.wear_end)
    amend_dose_record(session, record, replace(entry, value=0.25), "Service corrected its report.")
    with pytest.raises(Invalid) as caught:
        amend_dose_record(session, record, replace(entry, value=0.3), "Again.")
    assert "latest version" in caught.value.errors["reason"]


@pytest.mark.parametrize("changes, today, field", [
    ({"wear_start": date(1949, 12, 31)}, None, "wear_start"),       # before 1950
    ({"wear_end": date(2101, 1, 1)}, None, "wear_end"),             # after 2100
    ({}, date(2026, 1, 31), None),                                  # ends today: fine
    ({}, date(2026, 1, 30), "wear_end"),                            # ends tomorrow in the lab
])
def test_wear_dates_that_cannot_be_right(changes, today, field):
    errors = entry_errors(replace(BASE, **changes), today=today)
    assert list(errors) == ([field] if field else [])


def test_a_dosimeter_cannot_have_two_results_for_one_day(session, make_person, make_dosimeter):
    ann = make_person("ann")
    badge = make_dosimeter(ann)
    january = replace(BASE, person_id=ann.id, dosimeter_id=badge.id)
    first = add_dose_record(session, january)
    # the same badge's Hp(0.07) for the same days is its other reading, not an overlap
    add_dose_record(session, replace(january, quantity=Quantity.HP007))
    with pytest.raises(Invalid) as refused:
        add_dose_record(session, replace(january, wear_start=date(2026, 1, 15), wear_end=date(2026, 2, 14)))
    assert "overlaps this wear period" in refused.value.errors["wear_start"]
    # a correction of the record itself may change its days
    amend_dose_record(session, first, replace(january, wear_end=date(2026, 1, 30)), "service corrected the dates")
