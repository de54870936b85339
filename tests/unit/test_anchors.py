"""Anchor files: the documented format reads back, anything else is refused, checks say why."""

from __future__ import annotations

import hashlib
import json

import pytest

from tracker.domain.anchors import Anchor, AnchorError, check_anchor, parse_anchor

FIRST = hashlib.sha256(b"first").hexdigest()
HEAD = hashlib.sha256(b"head").hexdigest()
OTHER = hashlib.sha256(b"other").hexdigest()
ANCHOR = Anchor(40, HEAD, FIRST, "2026-11-30T17:00:00.000000Z")


def test_anchor_text_is_the_documented_json_and_reads_back() -> None:
    record = json.loads(ANCHOR.to_text())  # format "tracker-anchor/1" (module docstring)
    assert record == {
        "format": "tracker-anchor/1",
        "seq": 40,
        "hash": HEAD,
        "first_hash": FIRST,
        "taken_at": "2026-11-30T17:00:00.000000Z",
    }
    assert parse_anchor(ANCHOR.to_text()) == ANCHOR


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("", "not JSON"),
        ("[" * 100_000, "not JSON"),  # nesting deeper than the parser's recursion limit
        ('{"format": "tracker-ledger/1"}', "not a tracker-anchor/1 or tracker-anchor/2 file"),
        ('["tracker-anchor/1"]', "not a tracker-anchor/1 or tracker-anchor/2 file"),
        (json.dumps({"format": "tracker-anchor/1", "seq": True}), "not an event number"),
        (json.dumps({"format": "tracker-anchor/1", "seq": 0}), "not an event number"),
        (json.dumps({"format": "tracker-anchor/1", "seq": 3, "hash": "AB"}), "hash"),
        (
            json.dumps(
                {"format": "tracker-anchor/1", "seq": 3, "hash": HEAD.upper(), "first_hash": FIRST}
            ),
            "not a hex SHA-256",
        ),
        (
            json.dumps({"format": "tracker-anchor/1", "seq": 3, "hash": HEAD, "first_hash": FIRST}),
            "taken_at",
        ),
    ],
)
def test_anything_but_an_anchor_is_refused(text: str, fragment: str) -> None:
    with pytest.raises(AnchorError, match=fragment):
        parse_anchor(text)


def test_a_ledger_that_still_holds_the_anchored_event_passes() -> None:
    assert check_anchor(ANCHOR, FIRST, head_seq=55, hash_at_anchor=HEAD).ok


def test_a_ledger_cut_short_fails_and_says_how_many_events_are_gone() -> None:
    check = check_anchor(ANCHOR, FIRST, head_seq=37, hash_at_anchor=None)
    assert not check.ok and "3 newest event(s) are gone" in (check.problem or "")


def test_a_ledger_rewritten_under_the_anchor_fails() -> None:
    check = check_anchor(ANCHOR, FIRST, head_seq=41, hash_at_anchor=OTHER)
    assert not check.ok and "rewritten" in (check.problem or "")


def test_an_anchor_of_another_ledger_is_told_apart() -> None:
    check = check_anchor(ANCHOR, OTHER, head_seq=90, hash_at_anchor=HEAD)
    assert not check.ok and "another ledger" in (check.problem or "")
