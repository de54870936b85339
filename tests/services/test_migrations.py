"""Schema revisions: data made at the first revision survives upgrades; models match migrations."""

from __future__ import annotations

from pathlib import Path

import pytest
from alembic.autogenerate import compare_metadata
from alembic.config import Config
from alembic.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import create_engine, text

from tests import factories as make
from tests.conftest import TickingClock
from tracker.db import migrate
from tracker.db.database import Database, open_database, upgrade_database
from tracker.db.engine import build_engine, create_private_file
from tracker.domain.base import Base
from tracker.domain.errors import RuleViolation
from tracker.services import lineage, setup
from tracker.services.ledger import verify


def test_revision_list_matches_the_migration_scripts() -> None:
    config = Config()
    config.set_main_option("script_location", str(migrate.MIGRATIONS_DIR))
    script = ScriptDirectory.from_config(config)
    walked = [rev.revision for rev in script.walk_revisions()]
    assert tuple(reversed(walked)) == migrate.REVISIONS
    assert script.get_current_head() == migrate.HEAD


def test_models_and_migrations_agree(db: Database) -> None:
    """Autogenerate finds nothing to do: no model change is missing its migration."""
    with db.engine.connect() as connection:
        context = MigrationContext.configure(connection, opts={"compare_type": True})
        assert compare_metadata(context, Base.metadata) == []


def _database_at_first_revision(tmp_path: Path) -> Database:
    path = tmp_path / "old.sqlite"
    create_private_file(path)
    url = f"sqlite:///{path}"
    engine = build_engine(url)
    migrate.upgrade(engine, migrate.REVISIONS[0])
    engine.dispose()
    return Database(url, build_engine(url), TickingClock())


def test_old_sqlite_file_is_backed_up_and_upgraded_on_open(tmp_path: Path) -> None:
    db = _database_at_first_revision(tmp_path)
    with db.engine.connect() as conn:
        assert migrate.current_revision(conn) == migrate.REVISIONS[0]
    _seed_at_old_revision(db)  # the services write at the first revision too
    spec = make.specimen(db, make.loan(db))
    make.powder(db, spec)
    head_before = verify(db)
    db.close()

    path = tmp_path / "old.sqlite"
    reopened = open_database(path, clock=TickingClock())
    try:
        with reopened.engine.connect() as conn:
            assert migrate.current_revision(conn) == migrate.HEAD
        assert verify(reopened) == head_before
        powder = lineage.show_item(reopened, spec).item.children[0]
        assert powder.facts["mass_mg"] == pytest.approx(2.0)
    finally:
        reopened.close()
    backup = tmp_path / f"old.sqlite.bak-{migrate.REVISIONS[0]}"
    assert backup.exists() and backup.stat().st_mode & 0o077 == 0
    with create_engine(f"sqlite:///{backup}").connect() as conn:
        revision = conn.execute(text("SELECT version_num FROM alembic_version")).scalar()
    assert revision == migrate.REVISIONS[0]


def _seed_at_old_revision(db: Database) -> None:
    """Operators and the ledger's first event, written straight into the old schema."""
    from tracker.domain.models import Operator, Role
    from tracker.services.uow import append_event

    with db.write_session() as session, session.begin():
        now = db.clock()
        session.add(Operator(code="boss", name="Bea Oswald", role=Role.MANAGER, created_at=now))
        session.add(
            Operator(code="tech", name="Teo Chandler", role=Role.TECHNICIAN, created_at=now)
        )
        session.flush()
        append_event(
            session,
            at=now,
            operator="boss",
            action="ledger.opened",
            object_ref="",
            parent_ref="",
            payload={"note": "made at the first revision"},
        )


def test_explicit_upgrade_reports_revisions(tmp_path: Path) -> None:
    _database_at_first_revision(tmp_path).close()
    old, new = upgrade_database(tmp_path / "old.sqlite")
    assert (old, new) == (migrate.REVISIONS[0], migrate.HEAD)
    assert upgrade_database(tmp_path / "old.sqlite") == (migrate.HEAD, migrate.HEAD)


def test_database_from_a_newer_tracker_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "new.sqlite"
    setup.init_database(path, {"code": "boss", "name": "Bea Oswald"}).close()
    with create_engine(f"sqlite:///{path}").begin() as conn:
        conn.execute(text("UPDATE alembic_version SET version_num = '9999_future'"))
    with pytest.raises(RuleViolation, match="newer than this tracker"):
        open_database(path)
