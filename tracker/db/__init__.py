"""Storage: engine factory, sessions, schema revisions (Alembic) and upgrades with backups.

Import the modules themselves (``tracker.db.database`` ...): this package loads nothing,
so the console script can ask :mod:`tracker.db.location` without loading SQLAlchemy.
"""
