"""Schema revisions: data made at the first revision survives upgrades; models match migrations."""

from __future__ import annotations

import uuid
from decimal import Decimal
from pathlib import Path

import pytest
from alembic.autogenerate import compare_metadata
from alembic.config import Config
from alembic.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from tests import factories as make
from tests import keys
from tests.conftest import TickingClock
from tracker.db import migrate
from tracker.db.database import Database, open_database, upgrade_database
from tracker.db.engine import build_engine, create_private_file
from tracker.domain.base import Base
from tracker.domain.errors import RuleViolation
from tracker.domain.ids import check_character
from tracker.services.admin import keys as keys_service
from tracker.services.admin import setup
from tracker.services.ledger.chain import verify
from tracker.services.read import lineage
from tracker.services.read.item_facts import PowderFacts


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
    _write_first_revision_rows(db)
    head_before = _head(db)
    db.close()

    path = tmp_path / "old.sqlite"
    reopened = open_database(path, clock=TickingClock())
    try:
        with reopened.engine.connect() as conn:
            assert migrate.current_revision(conn) == migrate.HEAD
        upgraded = verify(reopened)
        assert upgraded.ok and (upgraded.head_seq, upgraded.head_hash) == head_before
        specimen = lineage.show_item(reopened, "SP-00001-" + check_character("SP00001")).item
        powder = specimen.children[0].facts
        assert isinstance(powder, PowderFacts)
        assert powder.mass_mg == Decimal("2.15")  # the float, exactly
        assert (upgraded.unsigned, upgraded.signed) == (3, 0)  # never "valid"
        # the upgraded file takes new writes through today's services, once a manager has
        # registered the first key (it signs its own registration)
        first = {"operator": "boss", "public_key": keys.signer("boss").public_hex}
        keys_service.register_key(reopened, "boss", first)
        second = {"operator": "tech", "public_key": keys.signer("tech").public_hex}
        keys_service.register_key(reopened, "boss", second)
        make.powder(reopened, make.specimen(reopened, make.loan(reopened)))
        after = verify(reopened)
        assert after.ok and after.unsigned == 3 and after.signing_since == 4
    finally:
        reopened.close()
    backup = tmp_path / f"old.sqlite.bak-{migrate.REVISIONS[0]}"
    assert backup.exists() and backup.stat().st_mode & 0o077 == 0
    with create_engine(f"sqlite:///{backup}").connect() as conn:
        revision = conn.execute(text("SELECT version_num FROM alembic_version")).scalar()
    assert revision == migrate.REVISIONS[0]


# Rows exactly as the first revision's tables hold them (columns of 0001_initial only).
_FIRST_REVISION_ROWS = [
    "INSERT INTO operator (id, code, name, role, active, created_at) VALUES (1, 'boss', "
    "'Bea Oswald', 'manager', TRUE, :now), (2, 'tech', 'Teo Chandler', 'technician', TRUE, :now)",
    "INSERT INTO lender (id, name, created_at) VALUES (1, 'Old Museum', :now)",
    "INSERT INTO loan (id, lender_id, reference, title, borrower, status, created_at) "
    "VALUES (1, 1, 'OLD-1', 'Old loan', 'Dr. Past', 'open', :now)",
    "INSERT INTO loan_terms (loan_id, version, kind, effective_from, permitted_tissues, "
    "due_on, return_specimens, powder_disposition, solution_disposition, report_data, "
    "acknowledgement, recorded_by, recorded_at) VALUES (1, 1, 'original', '2026-01-01', "
    "'[\"enamel\"]', '2027-01-01', TRUE, 'return', 'destroy', TRUE, TRUE, 'boss', :now)",
    "INSERT INTO specimen (id, loan_id, catalog_number, extra, status, created_at) "
    "VALUES (1, 1, 'OLD 1', '{}', 'on_hand', :now)",
    "INSERT INTO powder (id, specimen_id, tissue, tare_mg, gross_mg, readability_mg, mass_mg, "
    "mass_u_mg, drilled_at, drilled_by, status, created_at) VALUES (1, 1, 'enamel', 1000.0, "
    "1002.15, 0.001, 2.15, 0.0004, :now, 'tech', 'available', :now)",
]


# The people as the first release's ledger recorded them, and a drill.
_FIRST_REVISION_EVENTS = (
    ("ledger.opened", {"operator": "boss", "role": "manager"}),
    ("operator.added", {"code": "tech", "name": "Teo Chandler", "role": "technician"}),
    ("powder.drilled", {"step": 3}),
)


def _head(db: Database) -> tuple[int, str]:
    """The newest event's number and hash, read with the schema the database has."""
    with db.engine.connect() as conn:
        row = conn.execute(text("SELECT seq, hash FROM custody_event ORDER BY seq DESC")).first()
    assert row is not None
    return int(row[0]), str(row[1])


def _write_first_revision_rows(db: Database) -> None:
    """The rows, and two events as the first release hashed them (format 1, unsigned)."""
    from tracker.domain.ledger import FORMAT, GENESIS_HASH, NO_ORIGIN, canonical_json, event_hash

    with db.write_session() as session, session.begin():
        now = db.clock()
        for statement in _FIRST_REVISION_ROWS:
            session.execute(text(statement), {"now": now.replace(tzinfo=None)})
        prev = GENESIS_HASH
        for seq, (action, facts) in enumerate(_FIRST_REVISION_EVENTS, start=1):
            payload = canonical_json(facts)
            digest = event_hash(FORMAT, seq, now, "boss", NO_ORIGIN, action, "", "", prev, payload)
            session.execute(
                text(
                    "INSERT INTO custody_event (seq, at, operator, action, object_ref, "
                    "parent_ref, payload, prev_hash, hash) VALUES (:seq, :at, 'boss', :action, "
                    "'', '', :payload, :prev, :hash)"
                ),
                {
                    "seq": seq,
                    "at": now if db.backend == "postgresql" else f"{now:%Y-%m-%d %H:%M:%S.%f}",
                    "action": action,
                    "payload": payload,
                    "prev": prev,
                    "hash": digest,
                },
            )
            prev = digest


@pytest.mark.postgresql
def test_postgresql_upgrade_keeps_data_and_refuses_ledger_edits(pg_server: str) -> None:
    """The same first-revision rows on PostgreSQL, upgraded by `tracker db upgrade`."""
    name = f"tracker_mig_{uuid.uuid4().hex[:8]}"
    admin = create_engine(
        make_url(pg_server).set(database="postgres"), isolation_level="AUTOCOMMIT"
    )
    with admin.connect() as conn:
        conn.execute(text(f"CREATE DATABASE {name}"))
    url = make_url(pg_server).set(database=name).render_as_string(hide_password=False)
    try:
        engine = build_engine(url)
        migrate.upgrade(engine, migrate.REVISIONS[0])
        engine.dispose()
        old = Database(url, build_engine(url), TickingClock())
        _write_first_revision_rows(old)
        head_before = _head(old)
        old.close()
        with pytest.raises(RuleViolation, match="pg_dump"):
            open_database(url)  # a shared database is never upgraded silently
        assert upgrade_database(url) == (migrate.REVISIONS[0], migrate.HEAD)
        db = open_database(url, clock=TickingClock())
        try:
            upgraded = verify(db)
            assert upgraded.ok and (upgraded.head_seq, upgraded.head_hash) == head_before
            assert (upgraded.unsigned, upgraded.signed) == (3, 0)
            with pytest.raises(Exception, match="append-only"), db.engine.begin() as conn:
                conn.execute(text("UPDATE custody_event SET payload = '{}'"))
        finally:
            db.close()
    finally:
        with admin.connect() as conn:
            conn.execute(text(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)"))
        admin.dispose()


def test_explicit_upgrade_reports_revisions(tmp_path: Path) -> None:
    _database_at_first_revision(tmp_path).close()
    old, new = upgrade_database(tmp_path / "old.sqlite")
    assert (old, new) == (migrate.REVISIONS[0], migrate.HEAD)
    assert upgrade_database(tmp_path / "old.sqlite") == (migrate.HEAD, migrate.HEAD)


def test_database_from_a_newer_tracker_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "new.sqlite"
    setup.init_database(
        path, {"code": "boss", "name": "Bea Oswald"}, signer=keys.signer("boss")
    ).close()
    with create_engine(f"sqlite:///{path}").begin() as conn:
        conn.execute(text("UPDATE alembic_version SET version_num = '9999_future'"))
    with pytest.raises(RuleViolation, match="newer than this tracker"):
        open_database(path)
