"""Holding the writer lock in a test: a real unit of work in a thread, until released."""

from __future__ import annotations

import threading
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import UTC, datetime

from tracker.db.database import open_database
from tracker.services.core.uow import unit_of_work


@dataclass
class Held:
    taking: datetime  # just before the holder asked for the lock
    taken: datetime  # just after it had it


@contextmanager
def held(url: str, actor: str, doing: str) -> Iterator[Held]:
    """Another writer in a thread holds the lock (and writes nothing) until the block ends."""
    db = open_database(url)
    has_it, finish = threading.Event(), threading.Event()

    def hold() -> None:
        with unit_of_work(db, actor, doing):
            has_it.set()
            finish.wait(60)

    thread = threading.Thread(target=hold)
    taking = datetime.now(UTC)
    thread.start()
    assert has_it.wait(30)
    try:
        yield Held(taking, datetime.now(UTC))
    finally:
        finish.set()
        thread.join()
        db.close()
