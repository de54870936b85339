"""Every ledger action has words for people; the interface, the CLI's history and the lender's
report show those, never the ledger's own names (``batch.position_added``)."""

from __future__ import annotations

import re
from pathlib import Path

from tracker.domain.actions import ACTION_WORDS, action_words

SERVICES = Path(__file__).resolve().parents[2] / "tracker" / "services"
# An action name as the services write it: "subject.what_happened" (column names such as
# "loan.id" and settings keys such as "tracker.operator_initials" are not actions)
LITERAL = re.compile(r'"([a-z_]+)\.([a-z_]+)"')
NOT_ACTIONS = {"id", "seq", "code"}


def actions_in_services() -> set[str]:
    found = set()
    for path in SERVICES.rglob("*.py"):
        for subject, what in LITERAL.findall(path.read_text(encoding="utf-8")):
            if what not in NOT_ACTIONS and subject != "tracker":
                found.add(f"{subject}.{what}")
    return found


def test_every_action_the_services_record_has_words() -> None:
    written = actions_in_services()
    assert {"powder.drilled", "batch.position_added", "report.generated"} <= written
    assert written - set(ACTION_WORDS) == set()


def test_words_never_show_the_ledgers_names() -> None:
    for action, words in ACTION_WORDS.items():
        assert "_" not in words and "." not in words and words != action


def test_an_action_from_a_newer_version_is_spelled_out() -> None:
    assert action_words("sample.flash_frozen") == "sample flash frozen"
