"""The PostgreSQL set-up of docs/storage.md, run on the test cluster: the commands it shows
give each person a login that does a day's work, and that login cannot change the ledger, the
corrections or the terms, delete anything, nor switch the checks off."""

from __future__ import annotations

import re
import shlex
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import select, text
from sqlalchemy.engine import make_url

from tests.keys import PASSPHRASE
from tests.logins import Cluster, cli, ok
from tracker.db.database import Database, open_database
from tracker.domain.models import CustodyEvent
from tracker.services.admin import keys
from tracker.services.bench import drilling
from tracker.services.corrections import weighings
from tracker.services.ledger import chain
from tracker.services.loans import lending, specimens

STORAGE = Path(__file__).resolve().parents[2] / "docs" / "storage.md"
pytestmark = pytest.mark.postgresql


def _setup_commands() -> list[list[str]]:
    """The `tracker ...` lines of the storage page's set-up block, as argument lists."""
    storage = STORAGE.read_text(encoding="utf-8")
    blocks: list[str] = re.findall(r"```bash\n(.*?)```", storage, flags=re.S)
    (block,) = [b for b in blocks if "db " in b]
    return [shlex.split(line)[1:] for line in block.splitlines() if line.startswith("tracker ")]


@pytest.fixture
def names(pg_server: str) -> Iterator[dict[str, str]]:
    """The storage page's role and database names, made unique on the shared test cluster."""
    tag = uuid.uuid4().hex[:8]
    names = {
        "tracker_lab": f"tracker_lab_{tag}",
        "tracker_owner": f"tracker_owner_{tag}",
        "amira_h": f"amira_h_{tag}",
        "tomas_h": f"tomas_h_{tag}",
        "tracker_staff": f"tracker_staff_{tag}",
    }
    admin = Cluster(pg_server)
    admin.admin(f"CREATE ROLE {names['tracker_owner']} LOGIN CREATEROLE")
    admin.admin(f"CREATE DATABASE {names['tracker_lab']} OWNER {names['tracker_owner']}")
    yield names
    admin.admin(f"DROP DATABASE IF EXISTS {names['tracker_lab']} WITH (FORCE)")
    for role in ("amira_h", "tomas_h", "tracker_staff", "tracker_owner"):
        admin.admin(f"DROP ROLE IF EXISTS {names[role]}")


def _run_readme(pg_server: str, names: dict[str, str]) -> None:
    server = make_url(pg_server)
    for args in _setup_commands():
        argv = []
        for arg in args:
            if arg.startswith("postgresql://"):
                role = arg.split("//")[1].split("@")[0]
                url = server.set(username=names[role], database=names["tracker_lab"])
                arg = url.render_as_string(hide_password=False)
            argv.append(names.get(arg, arg))
        if argv[-1] in names.values() or "workstation-grants" in argv:  # add-login, grants
            argv += ["--group", names["tracker_staff"]]
        ok(cli(*argv))


def _login(pg_server: str, names: dict[str, str], role: str) -> Database:
    url = make_url(pg_server).set(username=names[role], database=names["tracker_lab"])
    return open_database(url.render_as_string(hide_password=False))


REFUSED = [
    "UPDATE custody_event SET payload = '{}'",
    "DELETE FROM custody_event",
    "TRUNCATE custody_event",
    "ALTER TABLE custody_event DISABLE TRIGGER ALL",
    "DROP TRIGGER custody_event_append_only ON custody_event",
    "UPDATE correction SET reason = 'nothing happened'",
    "DELETE FROM correction",
    "DELETE FROM event_ref",
    "UPDATE backdated_entry SET field = 'received_at'",
    "UPDATE alembic_version SET version_num = '0001_initial'",
    "UPDATE loan_terms SET due_on = '2040-01-01'",
    "DELETE FROM powder",
    "DELETE FROM operator",
    "UPDATE specimen SET catalog_number = 'X-1'",
    "ALTER TABLE powder DISABLE TRIGGER powder_login_check_corrected",
    "UPDATE concentration SET value_ug_per_g = 1",
]


def test_the_readme_set_up_gives_each_person_a_login_that_works_but_edits_no_history(
    pg_server: str, names: dict[str, str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)  # where the storage page's `key new --out tomas.pub` writes
    _run_readme(pg_server, names)
    amira, tomas = _login(pg_server, names, "amira_h"), _login(pg_server, names, "tomas_h")
    try:
        # Tomas unlocks the key he made with the storage page's `key new`, as a script would
        made = keys.key_to_unlock(tomas, "tomas")
        assert made is not None
        keys.unlock_file(tomas, made, PASSPHRASE)
        lender = lending.add_lender(amira, "amira", {"name": "Invented Museum"}).item.id
        terms = {"permitted_tissues": ["enamel"], "max_total_mass": "40 mg", "due_on": "2030-01-01"}
        loan = {"lender": lender, "reference": "IM-1", "title": "Teeth", "borrower": "A. Haddad"}
        lending.add_loan(amira, "amira", {**loan, "received_on": "2026-01-02", "terms": terms})
        spec = specimens.add_specimen(tomas, "tomas", {"loan": "IM-1", "catalog_number": "T-1"})
        specimens.check_in(tomas, "tomas", {"specimen": spec.item.id, "condition": "complete"})
        drill = {"specimen": spec.item.id, "tissue": "enamel", "tare": "1000.000 mg"}
        powder = drilling.drill(tomas, "tomas", {**drill, "gross": "1002.000 mg"}).item.id
        fix = {"item": powder, "tare": "1000.000 mg", "gross": "1002.020 mg", "reason": "misread"}
        weighings.correct_weighing(tomas, "tomas", fix)
        with tomas.read_session() as session:
            who = session.execute(select(CustodyEvent.action, CustodyEvent.operator)).all()
        assert ("powder.corrected", "tomas") in who and ("loan.added", "amira") in who
        assert ("operator.login_bound", "amira") in who
        assert chain.verify(tomas).ok
        refusals = []
        for statement in REFUSED:
            with pytest.raises(Exception) as caught, tomas.engine.begin() as conn:
                conn.execute(text(statement))
            refusals.append(str(caught.value).lower())
        # refused by privilege or ownership, not merely by the triggers behind them
        assert all("permission denied" in r or "must be owner" in r for r in refusals), refusals
        assert chain.verify(tomas).ok
    finally:
        amira.close()
        tomas.close()
