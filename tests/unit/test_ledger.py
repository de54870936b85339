"""Ledger canonical form, hashing and chain verification, checked against the docstring."""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import replace
from datetime import UTC, datetime, timedelta, timezone

import pytest
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey
from hypothesis import given
from hypothesis import strategies as st

from tracker.domain.ledger import (
    GENESIS_HASH,
    NO_ORIGIN,
    LedgerRow,
    Origin,
    canonical_bytes,
    canonical_json,
    event_hash,
    seal,
    stored_hash_holds,
    verify_chain,
)
from tracker.domain.signing import seeded_signer


def reference_hash(
    seq: int, at: str, op: str, action: str, obj: str, parent: str, prev: str, payload: str
) -> str:
    """Written from the module docstring of tracker.domain.ledger, not from its code."""
    lines = ["tracker-ledger/1", str(seq), at, op, action, obj, parent, prev, payload]
    assert not any("\n" in line for line in lines)
    data = "\n".join(lines).encode("utf-8")  # joined by LF, no trailing LF, UTF-8
    return hashlib.sha256(data).hexdigest()  # lower-case hex SHA-256 (hashlib)


def reference_hash_2(
    seq: int, at: str, op: str, origin: tuple[str, str, str], rest: tuple[str, ...]
) -> str:
    """Format 2, written from the module docstring: the origin's three fields follow the
    operator; ``rest`` is action, object, parent, prev_hash and payload."""
    lines = ["tracker-ledger/2", str(seq), at, op, *origin, *rest]
    assert len(lines) == 12 and not any("\n" in line for line in lines)
    return hashlib.sha256("\n".join(lines).encode("utf-8")).hexdigest()


def bytes_1(seq: int, at: str, op: str, *rest: str) -> bytes:
    """Format 1's canonical bytes (no origin), in reference_hash's argument order."""
    return canonical_bytes("tracker-ledger/1", seq, at, op, NO_ORIGIN, *rest)


def hash_1(seq: int, at: datetime | str, op: str, *rest: str) -> str:
    return event_hash("tracker-ledger/1", seq, at, op, NO_ORIGIN, *rest)


# ---------------------------------------------------------------- canonical JSON


def test_canonical_json_sorted_and_compact() -> None:
    # RFC 8259 JSON; sorted keys, no insignificant white space (module docstring)
    payload = {"b": 1, "a": [1, 2, {"z": None, "y": True}], "c": "x y"}
    assert canonical_json(payload) == '{"a":[1,2,{"y":true,"z":null}],"b":1,"c":"x y"}'
    assert json.loads(canonical_json(payload)) == payload


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_canonical_json_refuses_nan(bad: float) -> None:
    # RFC 8259 §6: NaN and Infinity are not permitted in JSON
    with pytest.raises(ValueError):
        canonical_json({"mass_mg": bad})


def test_canonical_json_keeps_non_ascii_as_utf8() -> None:
    text = canonical_json({"unit": "µg", "delta": "δ44/40Ca ‰"})
    assert text == '{"delta":"δ44/40Ca ‰","unit":"µg"}'
    assert "\\u" not in text
    data = bytes_1(1, "t", "op", "a", "", "", GENESIS_HASH, text)
    assert "µg".encode() in data  # UTF-8 bytes C2 B5 (Unicode standard)


def test_canonical_json_escapes_line_feeds() -> None:
    # RFC 8259 §7: control characters in strings are escaped, so the payload stays one line
    text = canonical_json({"note": "line one\nline two"})
    assert "\n" not in text
    bytes_1(1, "t", "op", "a", "", "", GENESIS_HASH, text)  # accepted


# ---------------------------------------------------------------- canonical bytes


ARGS = (
    7,
    "2026-03-04T09:15:00.000000Z",
    "tech",
    "powder.drilled",
    "PW-00003-K",
    "",
    "ab" * 32,
    '{"mass_mg":2.15}',
)


def test_canonical_bytes_layout() -> None:
    data = bytes_1(*ARGS)
    assert data.startswith(b"tracker-ledger/1\n7\n2026-03-04T09:15:00.000000Z\n")
    assert data.count(b"\n") == 8  # nine lines, eight separators
    assert not data.endswith(b"\n")
    assert b"\nPW-00003-K\n\n" in data  # empty parent: two consecutive line feeds
    assert hashlib.sha256(data).hexdigest() == reference_hash(*ARGS)


def test_event_hash_matches_reference() -> None:
    digest = hash_1(*ARGS)
    assert digest == reference_hash(*ARGS)
    assert len(digest) == 64
    assert digest == digest.lower()


def test_event_hash_formats_datetimes_in_utc() -> None:
    # ISO 8601 basic UTC with microseconds and Z (module docstring example)
    at_utc = datetime(2026, 3, 4, 9, 15, tzinfo=UTC)
    at_cet = datetime(2026, 3, 4, 10, 15, tzinfo=timezone(timedelta(hours=1)))
    expected = reference_hash(*ARGS)
    assert hash_1(ARGS[0], at_utc, *ARGS[2:]) == expected
    assert hash_1(ARGS[0], at_cet, *ARGS[2:]) == expected
    with pytest.raises(ValueError):
        hash_1(ARGS[0], datetime(2026, 3, 4, 9, 15), *ARGS[2:])  # naive: zone unknown


@pytest.mark.parametrize("index", range(1, 8))
def test_line_feed_in_any_field_refused(index: int) -> None:
    texts = list(ARGS[1:])  # every field after seq is text
    texts[index - 1] += "\nforged"
    with pytest.raises(ValueError, match="line feed"):
        bytes_1(ARGS[0], *texts)


# ---------------------------------------------------------------- format 2: the one hash

ORIGIN = Origin("ana", "bench-3", "ana_login")
REST = ("powder.drilled", "PW-00003-K", "SP-00001-W", "cd" * 32, '{"mass_mg":2.15}')


def test_format_2_hash_matches_the_docstring() -> None:
    """The OS user, host and login come after the operator, each on its own line."""
    digest = event_hash("tracker-ledger/2", 7, ARGS[1], "tech", ORIGIN, *REST)
    assert digest == reference_hash_2(7, ARGS[1], "tech", ORIGIN, REST)
    data = canonical_bytes("tracker-ledger/2", 7, ARGS[1], "tech", ORIGIN, *REST)
    assert data.split(b"\n")[3:7] == [b"tech", b"ana", b"bench-3", b"ana_login"]
    assert data.count(b"\n") == 11  # twelve lines, eleven separators


def test_format_1_does_not_hash_the_origin() -> None:
    """Events recorded before signing have no origin: whatever is passed, it is not hashed."""
    assert event_hash("tracker-ledger/1", *ARGS[:3], ORIGIN, *ARGS[3:]) == reference_hash(*ARGS)


def test_sqlite_stored_time_hashes_as_the_iso_form() -> None:
    """SQLite gives ``at`` back as "YYYY-MM-DD HH:MM:SS.ffffff" (SQLAlchemy's text, UTC);
    the ISO form differs by its "T" and "Z" only."""
    stored = "2026-03-04 09:15:00.000000"
    assert hash_1(7, stored, *ARGS[2:]) == reference_hash(*ARGS)
    expected = reference_hash_2(7, ARGS[1], "tech", ORIGIN, REST)
    assert event_hash("tracker-ledger/2", 7, stored, "tech", ORIGIN, *REST) == expected


@pytest.mark.parametrize("field", ["os_user", "host", "db_user"])
def test_a_line_feed_in_the_origin_is_refused(field: str) -> None:
    origin = ORIGIN._replace(**{field: "x\ny"})
    with pytest.raises(ValueError, match="line feed"):
        event_hash("tracker-ledger/2", 7, ARGS[1], "tech", origin, *REST)


def test_an_unknown_format_is_refused() -> None:
    with pytest.raises(ValueError, match="unknown ledger format"):
        event_hash("tracker-ledger/9", 7, ARGS[1], "tech", ORIGIN, *REST)


def test_seal_hashes_by_format_2_and_signs_that_hash() -> None:
    at = datetime(2026, 3, 4, 9, 15, tzinfo=UTC)
    signer = seeded_signer("ledger unit test")  # an invented key from a public seed
    sealed = seal(7, at, "tech", ORIGIN, *REST, signer=signer)
    assert sealed.hash == reference_hash_2(7, ARGS[1], "tech", ORIGIN, REST)
    assert sealed.key_id == signer.key_id
    public = Ed25519PublicKey.from_public_bytes(bytes.fromhex(signer.public_hex))
    public.verify(bytes.fromhex(sealed.signature), sealed.hash.encode("ascii"))  # cryptography


def test_stored_hash_holds_by_each_events_own_format() -> None:
    """What verification and the authority replay check of each stored event."""
    digest = reference_hash_2(7, ARGS[1], "tech", ORIGIN, REST)
    action, obj, parent, prev, payload = REST
    row = (7, ARGS[1], "tech", action, obj, parent, payload, prev, digest, "tracker-ledger/2")
    stored = (*row, *ORIGIN, None, None)
    assert stored_hash_holds(stored)
    assert not stored_hash_holds((*row, "ana", "bench-4", "ana_login", None, None))  # host
    assert not stored_hash_holds((*row[:9], "tracker-ledger/1", *ORIGIN, None, None))
    old = (7, ARGS[1], "tech", *ARGS[3:6], ARGS[7], ARGS[6], reference_hash(*ARGS))
    assert stored_hash_holds((*old, "tracker-ledger/1", "", "", "", None, None))


# ---------------------------------------------------------------- chain verification


def build_chain(n: int) -> list[LedgerRow]:
    rows: list[LedgerRow] = []
    prev = "0" * 64  # module docstring: 64 zeros before event 1
    start = datetime(2026, 2, 2, 8, 0, tzinfo=UTC)
    for seq in range(1, n + 1):
        at = (start + timedelta(minutes=seq)).strftime("%Y-%m-%dT%H:%M:%S.%fZ")
        fields = (seq, at, "tech", "powder.drilled", f"PW-{seq}", "SP-1", prev, f'{{"n":{seq}}}')
        digest = reference_hash(*fields)
        rows.append(
            LedgerRow(
                seq,
                at,
                "tech",
                "powder.drilled",
                f"PW-{seq}",
                "SP-1",
                f'{{"n":{seq}}}',
                prev,
                digest,
            )
        )
        prev = digest
    return rows


def stored_at(row: LedgerRow) -> str:
    """The chains built here store ``at`` as ledger text, as the database reads it back."""
    assert isinstance(row.at, str)
    return row.at


def reference_row_hash(row: LedgerRow) -> str:
    """reference_hash over a row's stored fields (its own ``hash`` aside)."""
    return reference_hash(
        row.seq,
        stored_at(row),
        row.operator,
        row.action,
        row.object_ref,
        row.parent_ref,
        row.prev_hash,
        row.payload,
    )


def test_intact_chain() -> None:
    rows = build_chain(5)
    report = verify_chain(rows)
    assert report.ok
    assert report.events == 5
    assert report.head_seq == 5
    assert report.head_hash == rows[-1].hash
    assert report.broken_seq is None


def test_an_empty_chain_is_not_intact() -> None:
    """Every ledger opens with a first event; one without it proves nothing."""
    report = verify_chain([])
    assert not report.ok
    assert report.events == 0 and report.head_seq == 0 and report.broken_seq == 1
    assert report.head_hash == GENESIS_HASH == "0" * 64
    assert report.reason is not None and "no events" in report.reason


def test_a_chain_without_its_first_event_is_not_intact() -> None:
    """Events 2..5 intact among themselves, event 1 gone: broken at event 1."""
    rows = build_chain(5)[1:]
    report = verify_chain(rows)
    assert not report.ok and report.broken_seq == 1 and report.events == 0
    assert report.reason is not None and "no first event" in report.reason


def test_altered_payload() -> None:
    rows = build_chain(5)
    rows[2] = replace(rows[2], payload='{"n":999}')
    report = verify_chain(rows)
    assert not report.ok
    assert report.broken_seq == 3
    assert report.events == 2
    assert report.reason is not None and "altered" in report.reason


def test_deleted_middle_event() -> None:
    rows = build_chain(5)
    del rows[2]
    report = verify_chain(rows)
    assert not report.ok
    assert report.broken_seq == 3
    assert report.reason is not None and "missing" in report.reason


def test_swapped_events() -> None:
    rows = build_chain(5)
    rows[1], rows[2] = rows[2], rows[1]
    report = verify_chain(rows)
    assert not report.ok
    assert report.broken_seq == 2


def test_swapped_and_renumbered_events() -> None:
    # contents of events 2 and 3 exchanged, seq numbers and own hashes made consistent
    rows = build_chain(5)
    second, third = rows[1], rows[2]
    for seq, source in ((2, third), (3, second)):
        moved = replace(source, seq=seq)
        rows[seq - 1] = replace(moved, hash=reference_row_hash(moved))
    report = verify_chain(rows)
    assert not report.ok
    assert report.broken_seq == 2


def test_wrong_prev_hash() -> None:
    rows = build_chain(5)
    forged = replace(rows[3], prev_hash="f" * 64)
    rows[3] = replace(forged, hash=reference_row_hash(forged))
    report = verify_chain(rows)
    assert not report.ok
    assert report.broken_seq == 4
    assert report.reason is not None and "previous-hash" in report.reason


def test_repeated_event() -> None:
    rows = build_chain(3)
    report = verify_chain([*rows, rows[-1]])
    assert not report.ok
    assert report.broken_seq == 3
    assert report.events == 3


def test_stored_hash_altered() -> None:
    rows = build_chain(3)
    rows[0] = replace(rows[0], hash="0" * 63 + "1")
    report = verify_chain(rows)
    assert not report.ok
    assert report.broken_seq == 1


JSON_VALUES = st.recursive(
    st.none()
    | st.booleans()
    | st.integers()
    | st.floats(allow_nan=False, allow_infinity=False)
    | st.text(),
    lambda children: (
        st.lists(children, max_size=4) | st.dictionaries(st.text(max_size=6), children, max_size=4)
    ),
    max_leaves=12,
)


def _keys_sorted(pairs: list[tuple[str, object]]) -> dict[str, object]:
    keys = [key for key, _ in pairs]
    assert keys == sorted(keys)
    return dict(pairs)


@given(st.dictionaries(st.text(max_size=6), JSON_VALUES, max_size=5))
def test_canonical_json_properties(payload: dict[str, object]) -> None:
    # RFC 8259 round trip through the standard library parser; keys sorted at every level
    text = canonical_json(payload)
    assert json.loads(text, object_pairs_hook=_keys_sorted) == payload
    assert "\n" not in text
    assert canonical_json(json.loads(text)) == text  # idempotent


def test_a_line_feed_inside_a_field_counts_as_altered_even_when_its_hash_fits() -> None:
    """Fields are joined by line feeds, so a field holding one could pose as two; the
    canonical form forbids them (module docstring), so verification refuses the event."""
    rows = build_chain(3)
    forged = replace(rows[2], operator="tech\nboss")
    text = "\n".join(
        (
            "tracker-ledger/1",
            "3",
            stored_at(forged),
            "tech\nboss",
            forged.action,
            forged.object_ref,
            forged.parent_ref,
            forged.prev_hash,
            forged.payload,
        )
    )
    rows[2] = replace(forged, hash=hashlib.sha256(text.encode()).hexdigest())
    report = verify_chain(rows)
    assert not report.ok and report.broken_seq == 3 and report.events == 2
