"""Scanning: `tracker lookup` reads what a scanner types; every single-character error and
every swap of neighbours in every ID of the demo database is caught, never silently resolved."""

from __future__ import annotations

from pathlib import Path

import pytest
from sqlalchemy import select
from stdnum.iso7064 import mod_37_2  # independent ISO/IEC 7064 implementation

from tests.cli.conftest import invoke, ok_json
from tracker.db.database import open_database
from tracker.domain.ids import BadId, parse_id
from tracker.services.core.lookup import MODEL_BY_KIND

ALPHABET = "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ*"  # ISO/IEC 7064 MOD 37-2 (python-stdnum docs)


def _all_ids(db_path: Path) -> list[str]:
    db = open_database(db_path)
    try:
        with db.read_session() as session:
            return [
                row.public_id
                for model in MODEL_BY_KIND.values()
                for row in session.scalars(select(model))
            ]
    finally:
        db.close()


def _variants(compact: str) -> list[tuple[str, bool]]:
    """(variant, only the check character changed) for every single error and adjacent swap."""
    out = [
        (compact[:i] + c + compact[i + 1 :], i == len(compact) - 1)
        for i in range(len(compact))
        for c in ALPHABET
        if c != compact[i]
    ]
    out += [
        (compact[:i] + compact[i + 1] + compact[i] + compact[i + 2 :], False)
        for i in range(len(compact) - 1)
        if compact[i] != compact[i + 1]
    ]
    return out


@pytest.mark.slow
def test_every_single_error_in_every_demo_id_is_rejected(demo_db: Path) -> None:
    ids = _all_ids(demo_db)
    kinds = {i[:2] for i in ids}
    assert len(ids) > 80 and {"SP", "PW", "SO", "AQ", "CP", "LN", "LC", "OP"} <= kinds
    checked = 0
    for public in ids:
        compact = public.replace("-", "")
        assert compact[-1] == mod_37_2.calc_check_digit(compact[:-1])  # python-stdnum
        for variant, check_only in _variants(compact):
            with pytest.raises(BadId) as caught:
                parse_id(variant)
            if check_only:  # the typed character, never the right one: "scan it again"
                assert f"check character {variant[-1]!r}" in str(caught.value)
                assert f"{compact[-1]!r}" not in str(caught.value)
            checked += 1
    assert checked > 80 * 300


def test_lookup_names_the_item_from_any_typed_or_scanned_form(demo_db: Path) -> None:
    powder = next(i for i in _all_ids(demo_db) if i.startswith("PW"))
    for typed in (powder, powder.lower(), powder.replace("-", ""), f"  {powder}\r\n"):
        found = ok_json(invoke("lookup", typed, db=demo_db, as_json=True))
        assert (found["id"], found["kind"]) == (powder, "powder")
        assert found["label"] and found["ancestors"][-1].startswith("SP-")
    human = invoke("lookup", powder, db=demo_db)
    assert human.exit_code == 0 and powder in human.stdout and "label:" in human.stdout


@pytest.mark.parametrize("kind", ["SP", "PW", "SO", "AQ", "CP", "LC", "LN"])
def test_a_misread_check_character_is_one_line_asking_for_a_rescan(
    demo_db: Path, kind: str
) -> None:
    public = next(i for i in _all_ids(demo_db) if i.startswith(kind))
    expected = mod_37_2.calc_check_digit(public[:-1].replace("-", ""))  # python-stdnum
    typed = next(c for c in "7XK" if c != expected)
    result = invoke("lookup", public[:-1] + typed, db=demo_db)
    assert result.exit_code == 2
    (line,) = result.stderr.strip().splitlines()
    assert line.startswith(f"error: SCANNED: '{public[:-1]}{typed}': ")
    assert f"check character '{typed}'" in line and "scan the label again" in line
    assert f"'{expected}'" not in line


def test_a_swap_of_neighbours_is_caught_by_lookup(demo_db: Path) -> None:
    public = next(i for i in _all_ids(demo_db) if i.startswith("SO"))
    digits = public[3:8]
    i = next(k for k in range(4) if digits[k] != digits[k + 1])
    swapped = public[:3] + digits[:i] + digits[i + 1] + digits[i] + digits[i + 2 :] + public[8:]
    result = invoke("lookup", swapped, db=demo_db)
    assert result.exit_code == 2 and "mistyped or misread" in result.stderr


def test_lookup_refuses_links_when_the_lab_prints_none(demo_db: Path) -> None:
    public = next(i for i in _all_ids(demo_db) if i.startswith("SP"))
    result = invoke("lookup", "HTTPS://LAB.EXAMPLE/T/" + public, db=demo_db)
    assert result.exit_code == 2 and "prints no link prefix" in result.stderr
