"""The README's PostgreSQL GRANT lines, run on the test cluster: the application login works,
and cannot change the ledger or the corrections, nor switch their triggers off."""

from __future__ import annotations

import re
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from tests import factories as make
from tracker.db.database import open_database
from tracker.services import corrections, ledger, setup

README = Path(__file__).resolve().parents[2] / "README.md"
pytestmark = pytest.mark.postgresql


def _grant_lines() -> str:
    storage = re.search(
        r"^## Storage\n(.*?)(?=^## )", README.read_text(encoding="utf-8"), flags=re.S | re.M
    )
    assert storage is not None
    blocks: list[str] = re.findall(r"```sql\n(.*?)```", storage.group(1), flags=re.S)
    (block,) = blocks
    return block


@pytest.fixture
def cluster(pg_server: str) -> Iterator[dict[str, str]]:
    """A database owned by a fresh owner role, and a fresh application role (both LOGIN)."""
    tag = uuid.uuid4().hex[:8]
    names = {
        "db": f"tracker_lab_{tag}",
        "owner": f"tracker_owner_{tag}",
        "app": f"tracker_app_{tag}",
    }
    admin = create_engine(
        make_url(pg_server).set(database="postgres"), isolation_level="AUTOCOMMIT"
    )
    with admin.connect() as conn:
        conn.execute(text(f"CREATE ROLE {names['owner']} LOGIN"))
        conn.execute(text(f"CREATE ROLE {names['app']} LOGIN"))
        conn.execute(text(f"CREATE DATABASE {names['db']} OWNER {names['owner']}"))

    def as_role(role: str) -> str:
        url = make_url(pg_server).set(username=names[role], database=names["db"])
        return url.render_as_string(hide_password=False)

    yield {**names, "owner_url": as_role("owner"), "app_url": as_role("app")}
    with admin.connect() as conn:
        conn.execute(text(f"DROP DATABASE IF EXISTS {names['db']} WITH (FORCE)"))
        conn.execute(text(f"DROP ROLE IF EXISTS {names['app']}"))
        conn.execute(text(f"DROP ROLE IF EXISTS {names['owner']}"))
    admin.dispose()


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
]


def test_the_readme_grants_let_the_app_work_but_never_edit_the_ledger(
    cluster: dict[str, str],
) -> None:
    owner = setup.init_database(cluster["owner_url"], {"code": "boss", "name": "Bea Oswald"})
    setup.add_operator(owner, "boss", {"code": "tech", "name": "Teo Chandler"})
    with owner.engine.begin() as conn:
        sql = _grant_lines().replace("tracker_lab", cluster["db"])
        sql = sql.replace("tracker_app", cluster["app"])
        for statement in filter(str.strip, sql.split(";")):
            conn.execute(text(statement))
    owner.close()

    app = open_database(cluster["app_url"])  # the workstations' login
    try:
        powder = make.powder(app, make.specimen(app, make.loan(app)), "2.000")
        corrections.correct_weighing(
            app,
            "tech",
            {
                "item": powder,
                "tare": "1000.000 mg",
                "gross": "1002.020 mg",
                "reason": "misread",
            },
        )
        assert ledger.verify(app).ok
        refusals = []
        for statement in REFUSED:
            with pytest.raises(Exception) as caught, app.engine.begin() as conn:
                conn.execute(text(statement))
            refusals.append(str(caught.value).lower())
        # refused by privilege or ownership, not merely by the triggers behind them
        assert all("permission denied" in r or "must be owner" in r for r in refusals), refusals
        assert ledger.verify(app).ok
    finally:
        app.close()
