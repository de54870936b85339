"""Storage: engine factory, sessions, schema revisions (Alembic) and upgrades with backups.

Import the modules themselves (``tracker.db.database`` ...): the package re-exports nothing.
"""
