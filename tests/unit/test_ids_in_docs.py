"""Every ID written where a person reads it — the README, the docs, the command help and the
interface's texts — carries the right check character, so an example typed as printed works."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from stdnum.iso7064 import mod_37_2  # python-stdnum: an independent ISO/IEC 7064 MOD 37-2

from tracker.domain.ids import Kind

ROOT = Path(__file__).resolve().parents[2]
# Two letters of a known kind, five or more digits, a check character; not inside a longer word
ID = re.compile(
    r"(?<![\w-])(" + "|".join(k.value for k in Kind) + r")-(\d{5,12})-([0-9A-Z*])(?![\w-])"
)
READ_BY_PEOPLE = [
    ROOT / "README.md",
    ROOT / "DEVELOPERS.md",
    *sorted((ROOT / "docs").rglob("*.md")),
    *sorted((ROOT / "tracker").rglob("*.py")),  # help texts, examples, the interface's words
    *sorted((ROOT / "tracker").rglob("*.tcss")),
]


def written_ids() -> list[tuple[str, int, str]]:
    found = []
    for path in READ_BY_PEOPLE:
        for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
            found += [(str(path.relative_to(ROOT)), number, m.group(0)) for m in ID.finditer(line)]
    return found


def test_the_documents_hold_ids_to_check() -> None:
    places = {place for place, _, _ in written_ids()}
    assert {"README.md", "tracker/ui/screens/help.py"} <= places, places
    assert any(p.startswith("tracker/cli/groups/") for p in places)


@pytest.mark.parametrize(("place", "line", "written"), written_ids())
def test_every_written_id_has_its_check_character(place: str, line: int, written: str) -> None:
    compact = written.replace("-", "")
    expected = mod_37_2.calc_check_digit(compact[:-1])
    assert compact[-1] == expected, f"{place}:{line}: {written} should end in {expected}"
