"""Driving the terminal interface with Textual's Pilot against a copy of the demo database.

The demo is built once per test session (deterministic, invented data); each test gets its
own copy, a fixed clock (so "days left" and snapshots never move), a private config folder
(the remembered operator) and an output folder for printed PDFs.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, TypeVar

import pytest
from sqlalchemy import func, select
from textual import events
from textual._time import get_time
from textual.keys import _character_to_key
from textual.pilot import Pilot
from textual.screen import Screen
from textual.widgets import Input, Static
from textual.worker import WorkerCancelled

from tracker.db.database import Database, open_database
from tracker.demo import build_demo
from tracker.domain.models import CustodyEvent
from tracker.ui.app import TrackerApp
from tracker.ui.keys import KeyRouting

NOW = datetime(2026, 12, 1, 12, 0, tzinfo=UTC)


def clock() -> datetime:
    return NOW


@pytest.fixture(scope="session")
def demo_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("demo") / "demo.sqlite"
    build_demo(path)
    return path


@dataclass
class Lab:
    """One test's database copy and folders."""

    db_path: Path
    out: Path

    def app(self, operator: str | None = "ines") -> TrackerApp:
        return TrackerApp(str(self.db_path), operator, clock=clock, out_dir=self.out)

    def open(self) -> Database:
        return open_database(self.db_path, clock=clock)


@pytest.fixture
def lab(demo_template: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Iterator[Lab]:
    target = tmp_path / "demo.sqlite"
    shutil.copyfile(demo_template, target)
    out = tmp_path / "out"
    out.mkdir()
    monkeypatch.setenv("TRACKER_CONFIG_DIR", str(tmp_path / "config"))
    monkeypatch.delenv("TRACKER_SCAN_GAP_MS", raising=False)
    yield Lab(target, out)


async def settle(pilot: Pilot[None], rounds: int = 4) -> None:
    """Let workers finish and their messages be handled (chains: scan → open → load).

    A worker cancelled by a newer one of its exclusive group (a lookup superseded by the
    next keystroke) has finished too: that is how the interface drops stale work."""
    for _ in range(rounds):
        await pilot.pause()
        while isinstance(pilot.app, KeyRouting) and pilot.app.keys_pending:
            await pilot.pause(0.05)  # a lone key waits to be told from typing (ui/keys.py)
        try:
            await pilot.app.workers.wait_for_complete()
        except WorkerCancelled:
            await pilot.app.workers.wait_for_complete()
        await pilot.pause()


async def until(pilot: Pilot[None], ready: Callable[[], bool], seconds: float = 10.0) -> None:
    """Settle until ``ready()`` holds: timers (a debounced preview) fire late on a busy machine."""
    deadline = get_time() + seconds
    while not ready():
        if get_time() > deadline:
            raise AssertionError(f"the interface was not ready within {seconds} s")
        await pilot.pause(0.05)
        await settle(pilot, rounds=1)


def _key(char: str) -> events.Key:
    name = char if char.isalnum() else _character_to_key(char)
    return events.Key(name, char)


async def scan(pilot: Pilot[None], text: str, gap: float = 0.004) -> None:
    """What a barcode scanner does: the characters a few ms apart, then Enter.

    The events carry scanner timing whatever the test machine's speed, so the burst
    detector is tested on timing, not on how fast CI happens to be.
    """
    await _keys_then_enter(pilot, text, gap)


async def type_slowly(pilot: Pilot[None], text: str, gap: float = 0.25) -> None:
    """A person typing (keys far apart), then Enter."""
    await _keys_then_enter(pilot, text, gap)


async def _keys_then_enter(pilot: Pilot[None], text: str, gap: float) -> None:
    """The characters of ``text`` then Enter, stamped ``gap`` seconds apart."""
    await _keys(pilot, [*(_key(c) for c in text), events.Key("enter", "\r")], gap)


async def _keys(pilot: Pilot[None], keys: list[events.Key], gap: float) -> None:
    start = get_time()
    for index, key in enumerate(keys):
        key.time = start + index * gap
        pilot.app.post_message(key)
    await settle(pilot)


async def type_into(pilot: Pilot[None], field: str, text: str, gap: float = 0.12) -> None:
    """A person clicks into the field ``#f-<field>`` of the form on screen and types ``text``
    at a typist's pace (no Enter)."""
    pilot.app.screen.query_one(f"#f-{field}", Input).focus()
    await settle(pilot, rounds=1)
    await _keys(pilot, [_key(c) for c in text], gap)


def events_after(lab: Lab, seq: int) -> list[CustodyEvent]:
    db = lab.open()
    try:
        with db.read_session() as session:
            rows = session.scalars(select(CustodyEvent).where(CustodyEvent.seq > seq))
            return list(rows)
    finally:
        db.close()


def head(lab: Lab) -> int:
    db = lab.open()
    try:
        with db.read_session() as session:
            return int(session.scalar(select(func.max(CustodyEvent.seq))) or 0)
    finally:
        db.close()


def query(lab: Lab, statement: Any) -> list[Any]:
    db = lab.open()
    try:
        with db.read_session() as session:
            return list(session.scalars(statement))
    finally:
        db.close()


ScreenKind = TypeVar("ScreenKind", bound=Screen[Any])


def screen_as(pilot: Pilot[None], kind: type[ScreenKind]) -> ScreenKind:
    """The screen on top, which must be a ``kind``: the check is part of the test."""
    screen = pilot.app.screen
    assert isinstance(screen, kind), type(screen).__name__
    return screen


def text_of(widget: Static) -> str:
    return str(widget.render())
