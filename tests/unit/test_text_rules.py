"""The text rule against Unicode's own character data, as Python's ``unicodedata`` holds it.

Every expectation is taken from ``unicodedata`` (general categories and bidirectional
classes, The Unicode Standard ch. 4) or from Unicode Standard Annex #15 (normalization
forms, through ``unicodedata.normalize``), never from the rule's own output.
"""

from __future__ import annotations

import json
import sys
import unicodedata

import pytest

from tracker.domain.text_rules import (
    TextProblem,
    accept,
    excerpt,
    json_visible,
    marker,
    nfc,
    visible,
)

# Unicode general categories of characters a person cannot read as text (The Unicode
# Standard, table 4-4): controls, format characters, surrogates, private use, unassigned,
# and the line and paragraph separators.
UNREADABLE = {"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"}
# Bidirectional classes of the explicit formatting characters (UAX #9, table 1).
EXPLICIT_BIDI = {"LRE", "RLE", "LRO", "RLO", "PDF", "LRI", "RLI", "FSI", "PDI"}

C0 = [chr(c) for c in range(0x00, 0x20)]
C1 = [chr(c) for c in range(0x80, 0xA0)]
DEL = "\x7f"
# The characters the refusal list names one by one (bidi marks, zero-width, soft hyphen, BOM).
NAMED = [
    *map(chr, range(0x202A, 0x202F)),
    *map(chr, range(0x2066, 0x206A)),
    "\u200e",
    "\u200f",
    "\u061c",
    *map(chr, range(0x200B, 0x200E)),
    *map(chr, range(0x2060, 0x2065)),
    "\ufeff",
    "\u00ad",
]


def every_code_point_in(categories: set[str]) -> list[str]:
    return [chr(c) for c in range(sys.maxunicode + 1) if unicodedata.category(chr(c)) in categories]


def refused(text: str, *, multiline: bool = False) -> bool:
    try:
        accept(text, multiline=multiline)
    except TextProblem:
        return True
    return False


def test_every_control_character_is_refused_inside_a_name() -> None:
    for char in [*C0, DEL, *C1]:
        assert unicodedata.category(char) == "Cc"  # the reference says it is a control
        assert refused(f"MZ {char}12"), hex(ord(char))


def test_free_text_keeps_line_breaks_and_tabs_and_nothing_else_of_the_controls() -> None:
    for char in [*C0, DEL, *C1]:
        assert refused(f"a{char}b", multiline=True) is (char not in "\n\t"), hex(ord(char))
    assert accept("first line\r\nsecond\tcolumn", multiline=True) == "first line\nsecond\tcolumn"


def test_the_named_invisible_and_bidi_characters_are_format_characters_and_refused() -> None:
    for char in NAMED:
        assert unicodedata.category(char) == "Cf", hex(ord(char))
        assert refused(f"FNHC{char}77"), hex(ord(char))
        assert refused(f"a note{char}", multiline=True), hex(ord(char))


def test_every_explicit_bidi_control_is_refused_and_called_one() -> None:
    explicit = [
        chr(c) for c in range(0x10000) if unicodedata.bidirectional(chr(c)) in EXPLICIT_BIDI
    ]
    assert len(explicit) == 9  # LRE RLE PDF LRO RLO, LRI RLI FSI PDI
    for char in [*explicit, "\u200e", "\u200f", "\u061c"]:
        with pytest.raises(TextProblem) as caught:
            accept(f"12{char}34")
        assert "bidirectional" in caught.value.reason
        assert f"U+{ord(char):04X} {unicodedata.name(char)}" in caught.value.reason


def test_every_unreadable_code_point_is_refused_and_every_other_kind_is_not() -> None:
    hidden = every_code_point_in(UNREADABLE - {"Cn", "Co"})  # all of Cc, Cf, Cs, Zl, Zp
    hidden += every_code_point_in({"Cn", "Co"})[::997]  # a spread over a million code points
    for char in hidden:
        assert refused(f"x{char}y"), hex(ord(char))
    # One of every other category, as unicodedata files them, is accepted.
    others: dict[str, str] = {}
    for c in range(0x30000):
        category = unicodedata.category(chr(c))
        if category not in UNREADABLE and category not in others and chr(c).strip():
            others[category] = chr(c)
    for category, char in others.items():
        if unicodedata.category(char) == "Mn" and refused(f"x{char}y"):
            continue  # only the invisible marks are refused, tested below
        assert not refused(f"x{char}y"), (category, hex(ord(char)))


def test_variation_selectors_are_refused_in_names_and_kept_in_notes() -> None:
    for char in [*map(chr, range(0xFE00, 0xFE10)), "\U000e0100", "\u034f", "\u3164"]:
        assert unicodedata.category(char) in {"Mn", "Lo"}  # visible categories, invisible marks
        assert refused(f"FNHC 1{char}")
        assert accept(f"sample ok{char}", multiline=True) == f"sample ok{char}"


def test_every_space_but_the_ordinary_one_is_refused_in_names_and_kept_in_notes() -> None:
    spaces = every_code_point_in({"Zs"})  # space separators, as unicodedata files them
    assert " " in spaces and "\u00a0" in spaces
    for char in spaces:
        assert refused(f"MZ{char}12") is (char != " "), hex(ord(char))
        note = f"a{char}note"
        assert accept(note, multiline=True) == unicodedata.normalize("NFC", note)


def test_text_is_kept_in_normalization_form_c() -> None:
    # UAX #15: "é" precomposed (U+00E9) and decomposed (e + U+0301) are canonically equivalent.
    composed, decomposed = "Muséum Z-1", "Muse\u0301um Z-1"
    assert composed != decomposed
    assert unicodedata.normalize("NFC", decomposed) == composed
    assert accept(decomposed) == accept(composed) == composed
    assert unicodedata.is_normalized("NFC", accept("Ångström \u212b"))  # Å and the Ångström sign
    assert nfc(decomposed) == composed


def test_ordinary_text_from_many_scripts_passes_unchanged() -> None:
    for text in ["FNHC Z-1", "Ctenodus sp. (invented)", "δ44/40Ca ‰", "Σπήλαιο", "洞窟 3", "n° 12"]:
        assert accept(text) == unicodedata.normalize("NFC", text)


def test_a_refusal_shows_the_character_where_it_is() -> None:
    with pytest.raises(TextProblem) as caught:
        accept("KF-" + "0" * 30 + "\u202e" + "1" * 30)
    shown = caught.value.shown
    assert "<U+202E>" in shown
    assert shown.startswith("…") and shown.endswith("…")
    assert len(shown) < 60  # fits the one-line refusal whole
    assert all(unicodedata.category(c) not in UNREADABLE for c in shown)
    assert excerpt("ab\x1bcd", 2) == "ab<U+001B>cd"


def test_tab_and_line_break_in_a_name_say_the_field_is_one_line() -> None:
    for char, words in (("\t", "a tab"), ("\n", "a line break")):
        with pytest.raises(TextProblem) as caught:
            accept(f"two{char}lines")
        assert words in caught.value.reason and "one line" in caught.value.reason


def test_visible_writes_every_unreadable_character_as_its_code_point() -> None:
    hidden = [*every_code_point_in(UNREADABLE - {"Cn", "Co"}), "\ue000", "\U0010fffd", "\u0378"]
    for char in hidden:
        shown = visible(f"a{char}b", keep_lines=False)
        assert shown == f"a{marker(char)}b", hex(ord(char))
        assert marker(char) == f"<U+{ord(char):04X}>"
    assert visible("line one\nline\ttwo") == "line one\nline\ttwo"
    assert visible("Muséum δ ‰ n° 12") == "Muséum δ ‰ n° 12"


def test_json_visible_is_json_that_decodes_to_the_exact_text() -> None:
    hidden = "".join([*C0, DEL, *C1, *NAMED, "\ue000", "\U000f0000", "\u2028"])
    document = {"name": f"FNHC{hidden}Z", hidden: ["x", hidden], "plain": "δ ‰ µ"}
    dumped = json_visible(json.dumps(document, ensure_ascii=False, indent=2))
    assert json.loads(dumped) == document
    assert all(unicodedata.category(c) not in UNREADABLE or c == "\n" for c in dumped)
    assert "δ ‰ µ" in dumped  # readable text stays readable
