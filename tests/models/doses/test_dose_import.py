"""Import of a dosimetry report: every row checked, all rows or none, the same file only once."""
import hashlib
import time
from datetime import date, timedelta

import pytest
import sqlalchemy as sa

from models.audit.audit_ops import BULK_CREATE
from models.audit.tables import AuditEvent
from models.audit.verify_ops import row_problems, verify_chain
from models.core.codes import Location, Quantity, Result
from models.core.errors import Invalid
from models.doses.import_ops import PRODUCT_LAYOUT, Refused, commit_report, layout_of, save_mapping, validate_report
from models.doses.tables import DoseRecord, DoseSource, DosimeterKind, Hand, ImportBatch
from models.people.tables import Person
from tests.models.audit.test_audit import insider

HEADER = "person,dosimeter,wear_start,wear_end,quantity,location,value,unit,result,mrd\n"


def report(rows: list[str]) -> bytes:
    """A CSV file in the product's own layout."""
    return (HEADER + "".join(r + "\n" for r in rows)).encode()


def thousand_rows(people: list[str]) -> list[str]:
    """1,000 monthly Hp(10) results spread over the given people."""
    rows = []
    for i in range(1000):
        login = people[i % len(people)]
        month = i // len(people)
        start = date(2020 + month // 12, month % 12 + 1, 1)
        end = (start + timedelta(days=32)).replace(day=1) - timedelta(days=1)
        rows.append(f"{login},,{start},{end},Hp(10),whole_body,{(i % 7) * 0.05:.2f},mSv,measured,")
    return rows


def count(session) -> int:
    """Dose records on file."""
    return session.scalar(sa.select(sa.func.count()).select_from(DoseRecord))


def test_one_bad_row_among_a_thousand_blocks_the_file(session, make_person):
    logins = [make_person(f"w{i}").login for i in range(20)]
    rows = thousand_rows(logins)
    bad = rows[417].split(",")
    bad[6] = "-0.25"
    rows[417] = ",".join(bad)

    started = time.perf_counter()
    preview = validate_report(session, report(rows), PRODUCT_LAYOUT, "service.csv")
    assert time.perf_counter() - started < 2.0  # checking 1,000 rows must stay interactive
    assert [r.line for r in preview.bad_rows] == [419]  # header is line 1, row 417 is line 419
    assert preview.problems() == ["Line 419: Value: A dose cannot be negative (-0.25 mSv)."]
    with pytest.raises(Invalid):
        commit_report(session, preview)
    assert count(session) == 0

    bad[6] = "0.25"
    rows[417] = ",".join(bad)
    data = report(rows)
    batch = commit_report(session, validate_report(session, data, PRODUCT_LAYOUT, "service.csv"))
    session.commit()
    assert batch.row_count == 1000 and count(session) == 1000

    again = validate_report(session, data, PRODUCT_LAYOUT, "service.csv")
    assert again.earlier.id == batch.id
    assert commit_report(session, again) is None
    # The same rows in a file that differs by a byte are caught row by row.
    renamed = validate_report(session, data + b"\n", PRODUCT_LAYOUT, "copy.csv")
    assert renamed.earlier is None and renamed.bad_count == 1000 and len(renamed.bad_rows) == 50
    assert "already exists" in renamed.bad_rows[0].errors["duplicate"]
    assert count(session) == 1000


@pytest.mark.parametrize("row, field, words", [
    ("nobody,,2026-01-01,2026-01-31,Hp(10),whole_body,0.1,mSv,measured,", "person", "Unknown wearer"),
    (",NOPE,2026-01-01,2026-01-31,Hp(10),whole_body,0.1,mSv,measured,", "dosimeter", "Unknown dosimeter"),
    ("ann,,2026-01-32,2026-01-31,Hp(10),whole_body,0.1,mSv,measured,", "wear_start", "not a date"),
    ("ann,,2026-02-01,2026-01-31,Hp(10),whole_body,0.1,mSv,measured,", "wear_end", "before it starts"),
    ("ann,,2026-01-01,2026-01-31,H*(10),whole_body,0.1,mSv,measured,", "quantity", "Unknown quantity"),
    ("ann,,2026-01-01,2026-01-31,Hp(10),torso,0.1,mSv,measured,", "location", "Unknown location"),
    ("ann,,2026-01-01,2026-01-31,Hp(10),whole_body,0.1,rem,measured,", "unit", "Unknown unit"),
    ("ann,,2026-01-01,2026-01-31,Hp(10),whole_body,abc,mSv,measured,", "value", "not a number"),
    ("ann,,2026-01-01,2026-01-31,Hp(10),whole_body,0.1,mSv,fine,", "result", "Unknown result"),
    ("ann,,2026-01-01,2026-01-31,Hp(10),whole_body,,mSv,below_mrd,", "mrd", "minimum reportable"),
    ("ann,,2026-01-01,2026-01-31,Hp(3),left_hand,0.1,mSv,measured,", "location", "not recorded at"),
    ("ann,R-1,2026-01-01,2026-01-31,Hp(0.07),right_hand,0.1,mSv,measured,", "location", "left hand ring"),
    ("bob,R-1,2026-01-01,2026-01-31,Hp(0.07),left_hand,0.1,mSv,measured,", "dosimeter", "issued to"),
    (",,2026-01-01,2026-01-31,Hp(10),whole_body,0.1,mSv,measured,", "person", "login or the dosimeter"),
])
def test_each_row_error_names_its_reason(session, make_person, make_dosimeter, row, field, words):
    ann = make_person("ann")
    make_person("bob")
    make_dosimeter(ann, serial="R-1", kind=DosimeterKind.RING, hand=Hand.LEFT)
    preview = validate_report(session, report([row]), PRODUCT_LAYOUT, "x.csv")
    assert words in preview.bad_rows[0].errors[field]


def test_good_rows_of_every_kind(session, make_person, make_dosimeter):
    ann = make_person("ann")
    make_dosimeter(ann, serial="R-1", kind=DosimeterKind.RING, hand=Hand.LEFT)
    rows = [
        ",R-1,2026-01-01,2026-01-31,Hp(0.07),left_hand,12,mrem,measured,",   # wearer from the serial
        "ann,,2026-01-01,2026-01-31,Hp(10),whole_body,,mrem,below_mrd,1",
        "ann,,2026-01-01,2026-01-31,Hp(3),eye,,mSv,lost,",
        "ann,,2026-01-01,2026-01-31,hp(0.07),Whole Body,,mSv,unused,",
    ]
    preview = validate_report(session, report(rows), PRODUCT_LAYOUT, "x.csv")
    assert preview.ready, preview.problems()
    commit_report(session, preview)
    ring, below = session.scalars(sa.select(DoseRecord).order_by(DoseRecord.id)).all()[:2]
    assert ring.value_msv == pytest.approx(0.12)  # 12 mrem = 0.12 mSv (10 CFR 20.1004)
    assert below.mrd_msv == pytest.approx(0.01)   # an MRD in the row's unit: 1 mrem = 0.01 mSv


def test_a_repeated_row_within_the_file(session, make_person):
    make_person("ann")
    row = "ann,,2026-01-01,2026-01-31,Hp(10),whole_body,0.1,mSv,measured,"
    preview = validate_report(session, report([row, row]), PRODUCT_LAYOUT, "x.csv")
    assert [r.line for r in preview.bad_rows] == [3]
    assert "Repeats line 2" in preview.bad_rows[0].errors["duplicate"]


@pytest.mark.parametrize("data, words", [
    (b"", "empty"),
    (HEADER.encode(), "no rows"),
    (b"who,when\nann,2026\n", "no column"),
    ("person\n\xe9".encode("latin-1"), "UTF-8"),
])
def test_file_errors(session, data, words):
    preview = validate_report(session, data, PRODUCT_LAYOUT, "x.csv")
    assert words in " ".join(preview.file_errors) and not preview.ready


def test_a_saved_mapping_reads_a_service_layout(session, make_person, make_dosimeter):
    make_dosimeter(make_person("ann"), serial="B-77")
    mapping = save_mapping(session, name="Service A", date_format="%d.%m.%Y", default_unit="mrem",
                           columns={"dosimeter": "Badge", "wear_start": "From", "wear_end": "To",
                                    "quantity": "Qty", "location": "Where", "value": "Dose",
                                    "person": ""})
    data = b"Badge;From;To;Qty;Where;Dose\nB-77;01.02.2026;28.02.2026;Hp(10);whole_body;30\n"
    preview = validate_report(session, data, layout_of(mapping), "a.csv")
    assert preview.ready, preview.problems()
    commit_report(session, preview)
    record = session.scalar(sa.select(DoseRecord))
    assert (record.wear_start, record.value_msv) == (date(2026, 2, 1), pytest.approx(0.3))
    bad = validate_report(session, data.replace(b"01.02.2026", b"2026-02-01"), layout_of(mapping), "b.csv")
    assert "DD.MM.YYYY" in bad.bad_rows[0].errors["wear_start"]


def test_mapping_refusals(session):
    with pytest.raises(Invalid) as caught:
        save_mapping(session, name=" ", columns={"value": "Dose"}, date_format="%Q", default_unit="Sv")
    assert set(caught.value.errors) == {"name", "person", "wear_start", "wear_end", "quantity",
                                        "location", "date_format", "default_unit"}


def test_a_file_committed_meanwhile_by_someone_else_is_refused_cleanly(session, make_person):
    """Two people committing the same file at once: the second gets a message, not a crash."""
    import hashlib

    from models.doses.import_ops import PRODUCT_LAYOUT, commit_report, validate_report
    from models.doses.tables import ImportBatch

    make_person("ada")
    data = (b"person,dosimeter,wear_start,wear_end,quantity,location,value,unit,result,mrd\n"
            b"ada,,2026-01-01,2026-01-31,Hp(10),whole_body,0.2,mSv,measured,\n")
    preview = validate_report(session, data, PRODUCT_LAYOUT, "report.csv")
    session.add(ImportBatch(filename="report.csv", sha256=hashlib.sha256(data).hexdigest(),
                            row_count=1))
    session.flush()
    with pytest.raises(Invalid, match="just been imported by someone else"):
        commit_report(session, preview)


def test_import_refuses_overlapping_periods_of_one_dosimeter_and_impossible_dates(
        session, make_person, make_dosimeter):
    ann = make_person("ann")
    make_dosimeter(ann, serial="B-1")
    rows = [
        "ann,B-1,2026-01-01,2026-01-31,Hp(10),whole_body,0.2,mSv,measured,",
        "ann,B-1,2026-01-01,2026-01-31,Hp(0.07),whole_body,0.2,mSv,measured,",  # the badge's other reading
        "ann,B-1,2026-01-20,2026-02-19,Hp(10),whole_body,0.1,mSv,measured,",  # overlaps line 2
        "ann,,1949-12-01,1949-12-31,Hp(10),whole_body,0.1,mSv,measured,",
        "ann,,2026-03-01,2101-01-31,Hp(10),whole_body,0.1,mSv,measured,",
    ]
    preview = validate_report(session, report(rows), PRODUCT_LAYOUT, "service.csv")
    # header is line 1: the rows are lines 2-6
    assert [(r.line, sorted(r.errors)) for r in preview.bad_rows] == [
        (4, ["wear_start"]), (5, ["wear_end", "wear_start"]), (6, ["wear_end"])]
    assert "overlaps this wear period" in preview.bad_rows[0].errors["wear_start"]
def ten_thousand_rows(logins: list[str]) -> list[str]:
    """10,000 monthly Hp(10) results: 50 people x 200 months from January 2000."""
    rows = []
    for i in range(10_000):
        month = i // len(logins)
        start = date(2000 + month // 12, month % 12 + 1, 1)
        end = (start + timedelta(days=32)).replace(day=1) - timedelta(days=1)
        rows.append(f"{logins[i % len(logins)]},,{start},{end},Hp(10),whole_body,0.05,mSv,measured,")
    return rows


def test_a_bad_row_in_the_middle_of_ten_thousand_adds_nothing(session, make_person):
    """The bad row sits in the second chunk of 5,000: the first chunk must not stay written."""
    rows = ten_thousand_rows([make_person(f"p{i}").login for i in range(50)])
    good = validate_report(session, report(rows), PRODUCT_LAYOUT, "good.csv")
    assert (good.row_count, good.bad_count, len(good.rows)) == (10_000, 0, 50)  # the page keeps 50

    # A record added after the preview makes row 7,000 a repeat: the commit itself must refuse.
    person_of_7000, start, end = rows[7000].split(",")[0], *rows[7000].split(",")[2:4]
    session.add(DoseRecord(person_id=session.scalar(sa.select(Person.id).where(Person.login == person_of_7000)),
                           wear_start=date.fromisoformat(start), wear_end=date.fromisoformat(end),
                           quantity=Quantity.HP10, location=Location.WHOLE_BODY, value_msv=0.1,
                           result=Result.MEASURED, source=DoseSource.DOSIMETRY_REPORT))
    session.commit()
    with pytest.raises(Refused, match="1 of 10000 rows have errors; nothing was imported") as refused:
        commit_report(session, good)
    assert [r.line for r in refused.value.preview.bad_rows] == [7002]  # header is line 1
    session.rollback()
    assert count(session) == 1
    assert session.scalar(sa.select(sa.func.count()).select_from(ImportBatch)) == 0

    bad = list(rows)
    bad[7000] = bad[7000].replace(",0.05,", ",-1,")
    preview = validate_report(session, report(bad), PRODUCT_LAYOUT, "bad.csv")
    assert (preview.row_count, preview.bad_count) == (10_000, 1)
    # A row already wrong is not also called a repeat.
    assert [(r.line, list(r.errors)) for r in preview.bad_rows] == [(7002, ["value"])]
    with pytest.raises(Invalid, match="1 of 10000 rows have errors"):
        commit_report(session, preview)
    assert count(session) == 1


def test_a_batch_is_one_audit_event_that_verify_recomputes(session, make_person):
    rows = ten_thousand_rows([make_person(f"p{i}").login for i in range(50)])[:6000]
    data = report(rows)
    events_before = session.scalar(sa.select(sa.func.count()).select_from(AuditEvent))
    batch = commit_report(session, validate_report(session, data, PRODUCT_LAYOUT, "r.csv"))
    session.commit()
    assert count(session) == 6000
    new = session.scalars(sa.select(AuditEvent).where(AuditEvent.id > events_before)
                          .order_by(AuditEvent.id)).all()
    # The batch's own row, then one event standing for the 6,000 records.
    assert [(e.entity, e.action) for e in new] == [("import_batch", "create"), ("dose_record", BULK_CREATE)]
    facts = new[1].after
    assert (facts["group_id"], facts["rows"]) == (batch.id, 6000)
    assert facts["file_sha256"] == hashlib.sha256(data).hexdigest()
    assert verify_chain(session) is None and row_problems(session) == []

    record_id = session.scalar(sa.select(DoseRecord.id).order_by(DoseRecord.id.desc()))
    insider(session, "UPDATE dose_record SET value_msv = 0.01 WHERE id = :id", id=record_id)
    assert row_problems(session) == [
        f"dose_record rows with import_batch_id = {batch.id}: 6000 rows stored, 6000 recorded; "
        "they differ from the bulk audit event"]


def test_removing_an_imported_row_is_reported(session, make_person):
    make_person("ann")
    rows = ["ann,,2026-01-01,2026-01-31,Hp(10),whole_body,0.1,mSv,measured,",
            "ann,,2026-02-01,2026-02-28,Hp(10),whole_body,0.2,mSv,measured,"]
    batch = commit_report(session, validate_report(session, report(rows), PRODUCT_LAYOUT, "r.csv"))
    session.commit()
    first = session.scalar(sa.select(sa.func.min(DoseRecord.id)))
    insider(session, "DELETE FROM dose_record WHERE id = :id", id=first)
    assert row_problems(session) == [
        f"dose_record rows with import_batch_id = {batch.id}: 1 rows stored, 2 recorded; "
        "they differ from the bulk audit event"]


def test_the_review_after_an_import_sees_the_imported_rows(session, make_person, use_limit_set):
    """Rows written by executemany still reach the evaluation: the batch event moves its version."""
    from models.exposure.investigation_ops import review_after_dose_change

    use_limit_set("icrp103")
    ada = make_person("ada")
    on = date(2026, 11, 30)
    assert review_after_dose_change(session, on) == []  # evaluated (and kept) before the import
    rows = ["ada,,2026-10-01,2026-10-31,Hp(10),whole_body,0.9,mSv,measured,",
            "ada,,2026-11-01,2026-11-30,Hp(10),whole_body,0.6,mSv,measured,"]
    commit_report(session, validate_report(session, report(rows), PRODUCT_LAYOUT, "q4.csv"))
    raised = review_after_dose_change(session, on)
    session.commit()
    # common practice: 1.25 mSv Hp(10) in a quarter is level I (REFERENCE.md); 0.9 + 0.6 = 1.5 mSv.
    # With no Hp(0.07) reported the lens reads Hp(10) too, against the same quarterly level I.
    assert sorted((i.series, i.person_id, i.period, i.period_start, i.level) for i in raised) == [
        ("effective", ada.id, "quarter", date(2026, 10, 1), "level_1"),
        ("lens", ada.id, "quarter", date(2026, 10, 1), "level_1")]
