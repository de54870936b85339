"""Storage: engine factory, sessions, schema revisions (Alembic) and upgrades with backups."""

from tracker.db.database import Database, open_database

__all__ = ["Database", "open_database"]
