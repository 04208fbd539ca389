"""Two `flask mail send-pending` at once, on both databases: every queued message goes out exactly once."""
from __future__ import annotations

import asyncio
import subprocess
import threading
from collections import Counter

import pytest
import sqlalchemy as sa

from models.core.outbox import OutboxMessage, queue_message
from tests.child import ROOT, command, environment
from tests.conftest import LAB_NOW, Mailbox, free_port
from webapp.extensions import db

pytestmark = pytest.mark.slow

# Enough that both senders are still claiming (models.core.outbox.claim_next takes one at a time)
# once the first is let through its first delivery.
MESSAGES = 250


class HeldMailbox(Mailbox):
    """Holds the first delivery until a second arrives while it waits, so two senders overlap."""

    def __init__(self):
        super().__init__()
        self.opened = threading.Event()
        self.waiting = 0

    async def handle_DATA(self, server, session, envelope):  # noqa: N802 (aiosmtpd's name)
        """Wait at the gate until two deliveries are in progress at once (or the test opens it)."""
        self.waiting += 1  # one event loop runs every handler, so no lock is needed
        if self.waiting >= 2:
            self.opened.set()
        while not self.opened.is_set():
            await asyncio.sleep(0.01)
        self.waiting -= 1
        return await super().handle_DATA(server, session, envelope)


@pytest.fixture
def held_smtp():
    """A real SMTP server on loopback with the gate; yields (port, mailbox)."""
    from aiosmtpd.controller import Controller

    mailbox, port = HeldMailbox(), free_port()
    controller = Controller(mailbox, hostname="127.0.0.1", port=port)
    controller.start()
    try:
        yield port, mailbox
    finally:
        mailbox.opened.set()
        controller.stop()


def test_two_senders_at_once_deliver_each_message_exactly_once(app, database_url, held_smtp):
    port, mailbox = held_smtp
    for n in range(MESSAGES):
        queue_message(db.session, [f"rso{n % 3}@example.org"], f"Message {n}", f"Body {n}", LAB_NOW)
    db.session.commit()
    env = environment(database_url, MAIL_SERVER="127.0.0.1", MAIL_PORT=str(port))
    senders = [subprocess.Popen(command("flask", "mail", "send-pending"), cwd=ROOT, env=env,
                                stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True) for _ in range(2)]

    def open_when_one_ends(process):
        process.wait()
        mailbox.opened.set()  # a sender that ended early must not leave the other held for ever

    watchers = [threading.Thread(target=open_when_one_ends, args=(p,)) for p in senders]
    for watcher in watchers:
        watcher.start()
    outputs = [p.communicate() for p in senders]
    for watcher in watchers:
        watcher.join()
    assert [p.returncode for p in senders] == [0, 0], outputs
    sent = [int(out.split()[1].rstrip(";")) for out, _err in outputs]  # "Sent 120; not sent 0 ..."
    assert sum(sent) == MESSAGES and all(sent), f"both senders delivered: {sent}"
    subjects = Counter(message["Subject"] for message in mailbox.messages)
    assert subjects == Counter(f"Message {n}" for n in range(MESSAGES))
    db.session.remove()
    rows = db.session.execute(sa.select(OutboxMessage.sent_at, OutboxMessage.attempts)).all()
    assert len(rows) == MESSAGES and all(sent_at is not None and attempts == 1 for sent_at, attempts in rows)


class ClaimWatcher(Mailbox):
    """Notes, at each delivery, how many unsent messages some sender has claimed."""

    def __init__(self, database_url: str):
        super().__init__()
        self.engine = sa.create_engine(database_url)
        self.claimed: list[int] = []

    async def handle_DATA(self, server, session, envelope):  # noqa: N802 (aiosmtpd's name)
        """Count the claims, then take the message."""
        with self.engine.connect() as connection:
            self.claimed.append(connection.scalar(sa.select(sa.func.count()).select_from(OutboxMessage).where(
                OutboxMessage.sent_at.is_(None), OutboxMessage.claimed_until.is_not(None))))
        return await super().handle_DATA(server, session, envelope)


def test_a_sender_holds_a_claim_only_on_the_message_it_is_sending(app, database_url):
    """A claim lapses after five minutes; a batch claimed ahead of a slow mail server would lapse
    on the messages still waiting, and another sender would send them too."""
    from aiosmtpd.controller import Controller

    watcher, port = ClaimWatcher(database_url), free_port()
    controller = Controller(watcher, hostname="127.0.0.1", port=port)
    controller.start()
    try:
        for n in range(5):
            queue_message(db.session, ["rso@example.org"], f"Message {n}", "Body", LAB_NOW)
        db.session.commit()
        app.config.update(MAIL_SERVER="127.0.0.1", MAIL_PORT=port)
        result = app.test_cli_runner().invoke(args=["mail", "send-pending"])
    finally:
        controller.stop()
        watcher.engine.dispose()
    assert result.exit_code == 0 and "Sent 5; not sent 0" in result.output, result.output
    assert watcher.claimed == [1, 1, 1, 1, 1]
