"""One computed value kept until the records it was computed from change."""
from __future__ import annotations

from collections.abc import Callable, Hashable
from threading import Lock
from typing import Generic, TypeVar

from sqlalchemy.orm import Session

from models.audit.audit_ops import data_version

T = TypeVar("T")


class UntilChanged(Generic[T]):
    """Keeps the last value computed, for as long as no record of the given types is written.

    Every write appends an audit event, so the newest event of those types versions the inputs;
    `key` adds what else the value depends on (a date, say). One value per process is kept.
    """

    _all: list[UntilChanged] = []

    def __init__(self, entities: frozenset[str]):
        self.entities = entities
        self._lock = Lock()
        self._key: tuple | None = None
        self._value: T | None = None
        UntilChanged._all.append(self)

    @classmethod
    def forget_all(cls) -> None:
        """Drop every kept value (for a database whose ids were reset, as tests do)."""
        for cache in cls._all:
            with cache._lock:
                cache._key = cache._value = None

    def get(self, session: Session, key: Hashable, compute: Callable[[], T]) -> T:
        """The value for `key`, computed again only when the inputs or the key changed."""
        full_key = (str(session.get_bind().url), data_version(session, self.entities), key)
        with self._lock:
            if self._key != full_key:
                self._value, self._key = compute(), full_key
            return self._value
