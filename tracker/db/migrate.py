"""Schema revisions: what this code expects, what a database has, and the upgrade itself.

``REVISIONS`` lists every Alembic revision in order; a test checks it against
the migration scripts. Knowing it without importing Alembic keeps start-up
fast: Alembic is loaded only when an upgrade actually runs.
"""

from __future__ import annotations

from pathlib import Path

from sqlalchemy import Connection, Engine, inspect, text

REVISIONS: tuple[str, ...] = (
    "0001_initial",
    "0002_append_only_ledger",
    "0003_materials_residuals",
    "0004_instrument",
    "0005_labels",
    "0006_reports",
    "0007_reliability",
    "0008_backdating",
    "0009_signing",
    "0010_logins",
    "0011_checks",
    "0012_removed_positions",
    "0013_matched_runs",
)
HEAD = REVISIONS[-1]
MIGRATIONS_DIR = Path(__file__).with_name("migrations")


def current_revision(connection: Connection) -> str | None:
    """The revision stamped in the database, or None for an empty database."""
    if not inspect(connection).has_table("alembic_version"):
        return None
    return connection.execute(text("SELECT version_num FROM alembic_version")).scalar()


def upgrade(engine: Engine, target: str = "head") -> None:
    """Run Alembic migrations up to ``target`` in one transaction."""
    from alembic import command  # imported lazily: it costs ~0.5 s at start-up
    from alembic.config import Config

    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS_DIR))
    with engine.connect() as connection:
        sqlite = connection.dialect.name == "sqlite"
        if sqlite:  # table rebuilds drop and re-create tables: pause FK checks, verify after
            _pragma(connection, "foreign_keys = OFF")
        try:
            with connection.begin():
                config.attributes["connection"] = connection
                command.upgrade(config, target)
                if sqlite:
                    _check_foreign_keys(connection)
        finally:
            if sqlite:
                _pragma(connection, "foreign_keys = ON")


def _pragma(connection: Connection, setting: str) -> None:
    """A PRAGMA on the raw driver connection, outside SQLAlchemy's transaction."""
    raw = connection.connection.driver_connection
    assert raw is not None
    raw.execute(f"PRAGMA {setting}")


def _check_foreign_keys(connection: Connection) -> None:
    broken = connection.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
    if broken:
        raise RuntimeError(f"migration left {len(broken)} broken foreign keys: {broken[:3]}")


def is_known(revision: str) -> bool:
    return revision in REVISIONS
