"""Text from outside: which characters it may hold, the form it is kept in, how the rest is shown.

Names, catalogue numbers and notes arrive typed, scanned or in a lender's file. Some
characters in them are not text a person can read: control characters a terminal acts
on (ESC starts the sequences that clear a screen, recolour it or set its title),
bidirectional controls that reorder what is shown (so ``MZ<U+202E>12`` can look like
another number), and invisible format characters that make two "identical" names
differ. Such text is refused on the way in, with the character named, and text that is
already stored is shown with those characters made visible (``<U+202E>``), never sent
raw to a terminal.

Character classes are Unicode general categories as Python's ``unicodedata`` reports
them (The Unicode Standard, chapter 4.5 "General Category"): Cc controls (C0, DEL and
C1), Cf format characters (bidi controls, zero-width characters, the soft hyphen, U+FEFF
...), Cs surrogates, Co private use, Cn unassigned, Zl/Zp line and paragraph separators.
Text is kept in Normalization Form C (Unicode Standard Annex #15), so the same letters
typed precomposed or decomposed are one name, one catalogue number.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Callable

# Categories never accepted from outside, and shown escaped when found in stored text.
HIDDEN_CATEGORIES = frozenset({"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"})
# Bidirectional formatting characters (UAX #9, "Explicit Directional Formatting
# Characters" and the implicit marks ALM, LRM, RLM): all Cf, named apart in refusals.
BIDI_CONTROLS = frozenset(
    [chr(c) for c in range(0x202A, 0x202F)] + [chr(c) for c in range(0x2066, 0x206A)]
) | {"\u200e", "\u200f", "\u061c"}
# Default_Ignorable_Code_Point characters that are not Cf (Unicode DerivedCoreProperties.txt,
# from memory): variation selectors, the combining grapheme joiner, Hangul and Khmer fillers.
# Invisible, so refused where they would make look-alike names and numbers (one-line
# fields); free text keeps them (an emoji's presentation selector in a note is harmless).
IGNORABLE_MARKS = re.compile(
    "[\u034f\u115f\u1160\u17b4\u17b5\u180b-\u180d\u180f\u3164\ufe00-\ufe0f\uffa0"
    "\U000e0100-\U000e01ef]"
)
# Space separators (category Zs) other than the ordinary space: a no-break or thin space
# looks like a space, so "MZ 12" typed with one is a second, look-alike catalogue number.
_ODD_SPACE = re.compile("[\u00a0\u1680\u2000-\u200a\u202f\u205f\u3000]")
LINE_KEEPERS = frozenset("\n\t")  # what free text (notes, reasons) may keep of the controls
EXCERPT_BEFORE, EXCERPT_AFTER, EXCERPT_MAX = 12, 12, 56


class TextProblem(ValueError):
    """A piece of outside text refused: ``shown`` is an excerpt with the character visible."""

    def __init__(self, shown: str, reason: str) -> None:
        super().__init__(reason)
        self.shown, self.reason = shown, reason


def marker(char: str) -> str:
    """How one hidden character is written where a person will read it: ``<U+202E>``."""
    return f"<U+{ord(char):04X}>"


def is_hidden(char: str) -> bool:
    """True for a character a terminal acts on or a reader cannot see (see the categories)."""
    return unicodedata.category(char) in HIDDEN_CATEGORIES


def accept(text: str, *, multiline: bool = False) -> str:
    """The text as it is kept: trimmed, in NFC; or TextProblem naming the first bad character.

    Blanks around the text (spaces, a tab or line break left by a spreadsheet) are trimmed,
    as request models always did. One-line text (names, IDs, catalogue numbers, codes) then
    holds no control character at all, tab and line break included. Free text
    (``multiline``) may keep line breaks (a Windows CR LF becomes LF) and tabs, nothing else
    of the controls.
    """
    text = text.strip()
    if multiline and "\r\n" in text:
        text = text.replace("\r\n", "\n")
    if text.isascii() and (text.isprintable() or (multiline and _only_line_keepers(text))):
        return text  # the usual case; ASCII is in NFC already
    _require_clean(text, multiline)
    return nfc(text)


def nfc(text: str) -> str:
    """``text`` in Normalization Form C (UAX #15): how accepted text is kept and compared."""
    if text.isascii() or unicodedata.is_normalized("NFC", text):
        return text
    return unicodedata.normalize("NFC", text)


def _only_line_keepers(text: str) -> bool:
    return text.replace("\n", " ").replace("\t", " ").isprintable()


def _require_clean(text: str, multiline: bool) -> None:
    printable = text.isprintable() or (multiline and _only_line_keepers(text))
    first = None if printable else _first_hidden(text, multiline)
    if first is None and not multiline:
        mark = IGNORABLE_MARKS.search(text) or _ODD_SPACE.search(text)
        first = None if mark is None else mark.start()
    if first is not None:
        raise TextProblem(excerpt(text, first), _reason(text[first], multiline))


def _first_hidden(text: str, multiline: bool) -> int | None:
    for index, char in enumerate(text):
        if is_hidden(char) and not (multiline and char in LINE_KEEPERS):
            return index
    return None


def excerpt(text: str, index: int) -> str:
    """Some text around ``text[index]``, which is marked, every hidden character made visible."""
    start = max(0, index - EXCERPT_BEFORE)
    end = index + 1 + EXCERPT_AFTER
    shown = visible(text[start:index]) + marker(text[index]) + visible(text[index + 1 : end])
    shown = visible(shown, keep_lines=False)
    if len(shown) > EXCERPT_MAX:
        shown = shown[:EXCERPT_MAX] + "…"
    elif end < len(text):
        shown += "…"
    return ("…" if start else "") + shown


def _reason(char: str, multiline: bool) -> str:
    """Why one character is refused, said with its code point and Unicode name."""
    code = marker(char)[1:-1]
    name = unicodedata.name(char, "")
    called = f"{code} {name}" if name else code
    category = unicodedata.category(char)
    if char in LINE_KEEPERS:
        what = "a line break" if char == "\n" else "a tab"
        return f"holds {called} ({what}); this field is one line: write it on one"
    if char in BIDI_CONTROLS:
        why = "a bidirectional control that reorders how the text is shown"
    elif category == "Cc":
        why = "a control character that a terminal would act on"
    elif category == "Cf":
        why = "an invisible format character"
    elif category in ("Zl", "Zp"):
        why = "a line or paragraph separator" + ("" if multiline else " in a one-line field")
    elif category == "Cs":
        why = "half of a surrogate pair, not a character"
    elif category == "Co":
        why = "a private-use character, whose look depends on the font"
    elif category == "Cn":
        why = f"not a character in Unicode {unicodedata.unidata_version}"
    elif category == "Zs":
        return f"holds {called}, a space that looks like an ordinary one; type an ordinary space"
    else:
        why = "an invisible mark that would make look-alike names and numbers"
    return f"holds {called}, {why}; remove it"


def visible(text: str, *, keep_lines: bool = True, mark: Callable[[str], str] = marker) -> str:
    """``text`` with every hidden character written as ``mark`` gives it (``<U+001B>``).

    The one way tracker shows stored text to a person: the command line's output and
    refusals, the interface and spreadsheet cells all pass through here, so an ESC, a
    bidi override or a zero-width space in a name an older release stored is seen, never
    obeyed. ``keep_lines`` keeps line breaks and tabs (multi-line notes); a one-line
    refusal writes them visibly too.
    """
    if text.isprintable() or (keep_lines and _only_line_keepers(text)):
        return text
    kept = LINE_KEEPERS if keep_lines else frozenset()
    return "".join(mark(char) if char not in kept and is_hidden(char) else char for char in text)


def json_escape(char: str) -> str:
    """A hidden character as a JSON string escape (RFC 8259 §7): the text stays exact."""
    code = ord(char)
    if code <= 0xFFFF:
        return f"\\u{code:04x}"
    code -= 0x10000  # a character beyond the BMP is written as its UTF-16 surrogate pair
    return f"\\u{0xD800 + (code >> 10):04x}\\u{0xDC00 + (code & 0x3FF):04x}"


def json_visible(document: str) -> str:
    """A JSON document whose hidden characters are escapes: it decodes to the same values.

    Outside strings JSON holds only ASCII punctuation, digits, letters and whitespace, so
    every hidden character in ``document`` is inside a string, where an escape is exact.
    """
    return visible(document, mark=json_escape)
