"""Public IDs: ISO/IEC 7064 MOD 37-2 check character, parsing, QR alphanumeric mode."""

from __future__ import annotations

import pytest
import qrcode.util
from hypothesis import given
from hypothesis import strategies as st
from stdnum.iso7064 import mod_37_2

from tracker.domain.ids import (
    BadId,
    Kind,
    PublicId,
    check_character,
    format_id,
    is_valid,
    parse_id,
)

DATA = "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ"
ALPHABET = DATA + "*"  # ISO/IEC 7064 MOD 37-2 character set (python-stdnum docs)
# ISO/IEC 18004 alphanumeric-mode character set (from memory): 0-9, A-Z, space, $ % * + - . / :
QR_ALPHANUMERIC = set(DATA + " $%*+-./:")
HUGE = (99_999, 100_000, 123_456_789, 999_999_999_999)


@given(st.text(alphabet=DATA, max_size=40))
def test_check_character_matches_stdnum(body: str) -> None:
    # reference: python-stdnum's ISO/IEC 7064 MOD 37-2 implementation
    assert check_character(body) == mod_37_2.calc_check_digit(body)
    assert check_character(body.lower()) == check_character(body)


@given(st.text(alphabet=DATA, min_size=1, max_size=20), st.sampled_from(ALPHABET))
def test_is_valid_matches_stdnum(body: str, check: str) -> None:
    # reference: python-stdnum mod_37_2.is_valid
    assert is_valid(body + check) == mod_37_2.is_valid(body + check)


def test_stdnum_docstring_vector() -> None:
    # python-stdnum docs, stdnum.iso7064.mod_37_2: calc_check_digit('G123489654321') == 'Y'
    assert check_character("G123489654321") == "Y"
    assert is_valid("G123489654321Y")
    # '...498...' is an adjacent transposition of the docstring's '...489...'; stdnum says 'H'
    assert check_character("G123498654321") == mod_37_2.calc_check_digit("G123498654321") == "H"
    assert not is_valid("G123498654321Y")


def test_specimen_42() -> None:
    # expected check character computed with python-stdnum (the module docstring says 'Y')
    expected = "SP-00042-" + mod_37_2.calc_check_digit("SP00042")
    assert format_id(Kind.SPECIMEN, 42) == expected == "SP-00042-E"
    assert parse_id(expected) == PublicId(Kind.SPECIMEN, 42)


def _single_errors(compact: str) -> list[str]:
    """Every single-character substitution and every adjacent transposition of ``compact``."""
    variants = [
        compact[:i] + char + compact[i + 1 :]
        for i in range(len(compact))
        for char in ALPHABET
        if char != compact[i]
    ]
    variants += [
        compact[:i] + compact[i + 1] + compact[i] + compact[i + 2 :]
        for i in range(len(compact) - 1)
        if compact[i] != compact[i + 1]
    ]
    return variants


def _accepted(variant: str) -> bool:
    try:
        parse_id(variant)
    except BadId:
        return is_valid(variant)
    return True


@pytest.mark.slow
@pytest.mark.parametrize("kind", list(Kind))
def test_every_single_error_is_rejected(kind: Kind) -> None:
    # property of a pure ISO/IEC 7064 system with prime modulus 37 (python-stdnum docs; ISO/IEC
    # 7064 from memory): every single substitution and adjacent transposition is detected
    missed: list[str] = []
    for number in [*range(2001), *HUGE]:
        pid = PublicId(kind, number)
        compact = pid.compact
        body = kind.value + str(number).zfill(5)
        assert compact == body + mod_37_2.calc_check_digit(body)  # python-stdnum
        assert is_valid(compact)
        assert parse_id(str(pid)) == pid
        missed += [v for v in _single_errors(compact) if _accepted(v)]
    assert missed == []


@pytest.mark.parametrize(
    "text",
    [
        "SP-00042-E",
        "sp-00042-e",
        "SP00042E",
        "sp00042e",
        "SP 00042 E",
        "SP_00042_E",
        "SP.00042.E",
        "  SP-00042-E\t",
    ],
)
def test_parse_accepts_case_and_separators(text: str) -> None:
    # common practice: scanners and people type IDs in either case, with or without separators
    assert parse_id(text) == PublicId(Kind.SPECIMEN, 42)


def test_wrong_prefix() -> None:
    body = "XX00042"
    text = body + mod_37_2.calc_check_digit(body)  # a correct check character (python-stdnum)
    with pytest.raises(BadId) as caught:
        parse_id(text)
    message = str(caught.value)
    assert "'XX'" in message
    assert all(kind.value in message for kind in Kind)


def test_wrong_check_character() -> None:
    wrong = next(c for c in ALPHABET if c != "E")
    with pytest.raises(BadId, match="check character"):
        parse_id(f"SP-00042-{wrong}")


@pytest.mark.parametrize("text", ["", "   ", "hello", "SP-ABCDE-1", "S-00042-E", "SP--E", "42"])
def test_malformed(text: str) -> None:
    with pytest.raises(BadId, match=r"XX-00000-C") as caught:
        parse_id(text)
    assert isinstance(caught.value, ValueError)


@given(st.sampled_from(list(Kind)), st.integers(min_value=0, max_value=999_999_999_999))
def test_str_round_trips(kind: Kind, number: int) -> None:
    pid = PublicId(kind, number)
    assert parse_id(str(pid)) == pid
    assert parse_id(pid.compact) == pid
    assert parse_id(str(pid).lower()) == pid


@pytest.mark.parametrize("number", [10**12, 10**15])
def test_every_formatted_id_parses_or_is_refused(number: int) -> None:
    try:
        text = format_id(Kind.SPECIMEN, number)
    except ValueError:
        return  # refusing to format is acceptable; emitting an unreadable ID is not
    assert parse_id(text) == PublicId(Kind.SPECIMEN, number)


def test_ids_use_qr_alphanumeric_mode() -> None:
    # ISO/IEC 18004 alphanumeric mode; reference: qrcode library's mode selection
    seen: set[str] = set()
    for kind in Kind:
        for number in [*range(300), *HUGE]:
            pid = PublicId(kind, number)
            for text in (str(pid), pid.compact):
                assert set(text) <= QR_ALPHANUMERIC
                assert qrcode.util.optimal_mode(text.encode()) == qrcode.util.MODE_ALPHA_NUM
            seen.add(pid.compact[-1])
    assert seen == set(ALPHABET)  # all 37 check characters occur, '*' included
    # lower case would force byte mode (qrcode library; check-values.md QR table)
    assert qrcode.util.optimal_mode(b"sp-00042-e") == qrcode.util.MODE_8BIT_BYTE


@pytest.mark.parametrize("text", ["", "E", "SP-00042-E", "SP*0042E", "SP00042É"])
def test_is_valid_refuses_non_compact_text(text: str) -> None:
    # is_valid works on the compact form: separators and characters outside 0-9A-Z are refused
    assert not is_valid(text)
