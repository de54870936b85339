"""Scanned payloads: the lab's link prefix, other links, and the check-character message."""

from __future__ import annotations

import pytest
from stdnum.iso7064 import mod_37_2  # independent ISO/IEC 7064 implementation

from tracker.domain.ids import (
    BadId,
    Kind,
    PublicId,
    is_link,
    looks_like_id,
    parse_id,
    strip_uri_prefix,
)
from tracker.domain.labels import qr_payload, uri_prefix_problem

PREFIX = "HTTPS://LAB.EXAMPLE/T/"  # invented


def test_stdnum_docstring_vector_and_the_refusal_message() -> None:
    # python-stdnum docs, stdnum.iso7064.mod_37_2: calc_check_digit('G123489654321') == 'Y';
    # the same arithmetic on our IDs; a wrong one is refused with a request to re-scan
    assert mod_37_2.calc_check_digit("G123489654321") == "Y"
    expected = mod_37_2.calc_check_digit("SP00042")
    assert parse_id(f"SP-00042-{expected}") == PublicId(Kind.SPECIMEN, 42)
    typed = "Y" if expected != "Y" else "Z"
    with pytest.raises(BadId) as caught:
        parse_id(f"SP-00042-{typed}")
    said = str(caught.value)
    assert said.startswith(f"check character {typed!r} does not fit SP-00042: ")
    assert "scan the label again" in said and repr(expected) not in said


@pytest.mark.parametrize(
    "scanned",
    [PREFIX + "SP-00042-E", PREFIX.lower() + "sp00042e", f"  {PREFIX}SP-00042-E\r\n"],
)
def test_the_labs_link_is_read_as_the_id(scanned: str) -> None:
    assert parse_id(scanned, PREFIX) == PublicId(Kind.SPECIMEN, 42)
    assert looks_like_id(scanned, PREFIX)


@pytest.mark.parametrize("scanned", ["HTTPS://OTHER.EXAMPLE/T/SP-00042-E", "urn:x:SP-00042-E"])
def test_another_link_is_refused_not_guessed(scanned: str) -> None:
    with pytest.raises(BadId, match="not to this lab's labels"):
        parse_id(scanned, PREFIX)
    with pytest.raises(BadId, match="prints no link prefix"):
        parse_id(scanned)


def test_plain_ids_still_read_when_a_prefix_is_set() -> None:
    assert parse_id("sp-00042-e", PREFIX) == PublicId(Kind.SPECIMEN, 42)
    assert strip_uri_prefix("SP-00042-E", PREFIX) == "SP-00042-E"


def test_a_loan_reference_with_a_colon_is_not_mistaken_for_a_link() -> None:
    assert not looks_like_id("KF:2026:014")  # loan numbers are looked up as text
    assert looks_like_id("https://elsewhere.example/x")  # a scanned link is read as an ID


def test_payload_is_the_upper_case_id_behind_the_prefix() -> None:
    assert qr_payload("SP-00042-E", None) == "SP-00042-E"
    assert qr_payload("SP-00042-E", PREFIX) == PREFIX + "SP-00042-E"


@pytest.mark.parametrize(
    ("prefix", "ok"),
    [
        (PREFIX, True),
        ("https://lab.example/item?id=", True),
        ("urn:lab:", True),
        ("HTTPS://LAB.EXAMPLE/T", False),  # the ID would run into the path
        ("lab.example/t/", False),  # no scheme
        ("https://lab example/t/", False),  # a space
        ("https://" + "a" * 120 + "/", False),  # too long
    ],
)
def test_uri_prefix_rules(prefix: str, ok: bool) -> None:
    assert (uri_prefix_problem(prefix) is None) is ok


@pytest.mark.parametrize(
    ("text", "link"),
    [
        ("SP-00042-E", False),
        ("sp00042e", False),
        (" SP 00042 E ", False),
        (PREFIX + "SP-00042-E", True),
        ("urn:tracker:SP-00042-E", True),
        ("  ftp://x/SP", True),
    ],
)
def test_only_a_link_needs_the_prefix_and_every_prefix_is_a_link(text: str, link: bool) -> None:
    """Scans skip reading the prefix setting for bare IDs: safe only because every valid
    prefix starts with a scheme, so a text that is no link can never start with one."""
    assert is_link(text) is link
    assert uri_prefix_problem(PREFIX) is None and is_link(PREFIX)
    if not link:
        assert parse_id(text, PREFIX) == parse_id(text, None) == PublicId(Kind.SPECIMEN, 42)
    for not_a_link in ("LAB.EXAMPLE/T/", "SP-", "/t/"):
        assert uri_prefix_problem(not_a_link) is not None
