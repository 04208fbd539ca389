"""The outbox: queued with the transaction, claimed by one sender only, retried with growing waits."""
from datetime import UTC, datetime, timedelta

from models.core.outbox import OutboxMessage, claim_next, mark_failed, mark_sent, queue_message, undelivered

NOW = datetime(2026, 11, 30, 10, 0, tzinfo=UTC)


def test_a_message_without_an_address_is_not_queued(session):
    assert queue_message(session, ["", "  "], "Subject", "Body", NOW) is None
    assert undelivered(session)[0] == 0


def test_a_line_break_in_a_subject_cannot_forge_headers(session):
    message_id = queue_message(session, ["rso@example.org"], "Investigation needed: Eve\r\nBcc: all@example.org",
                               "Body", NOW)
    session.commit()
    assert session.get(OutboxMessage, message_id).subject == "Investigation needed: Eve Bcc: all@example.org"


def test_a_rolled_back_transaction_takes_its_message_with_it(session):
    queue_message(session, ["rso@example.org"], "Failed check", "Body", NOW)
    session.rollback()
    assert undelivered(session)[0] == 0


def test_only_one_sender_claims_a_message(session):
    message_id = queue_message(session, ["rso@example.org"], "Failed check", "Body", NOW)
    session.commit()
    first = claim_next(session, NOW)
    assert first.id == message_id and first.to == ["rso@example.org"]
    assert claim_next(session, NOW) is None  # a second sender finds it taken
    # A claim lapses after five minutes, so a sender that died does not hold the message forever.
    assert claim_next(session, NOW + timedelta(minutes=6)).id == message_id


def test_failures_wait_1_5_15_then_60_minutes_and_a_delivery_ends_it(session):
    message_id = queue_message(session, ["rso@example.org"], "Failed check", "Body", NOW)
    session.commit()
    waits = []
    for _ in range(5):
        mark_failed(session, message_id, "ConnectionRefusedError", NOW)
        session.expire_all()
        waits.append(session.get(OutboxMessage, message_id).next_attempt_at - NOW)
    assert waits == [timedelta(minutes=m) for m in (1, 5, 15, 60, 60)]
    assert claim_next(session, NOW) is None  # not due yet
    assert claim_next(session, NOW, waiting_too=True).id == message_id
    mark_sent(session, message_id, NOW)
    session.commit()
    assert undelivered(session)[0] == 0
    assert session.get(OutboxMessage, message_id).attempts == 6
