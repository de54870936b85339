"""Alembic environment: runs on the connection tracker hands it (never reads alembic.ini)."""

from __future__ import annotations

from alembic import context
from sqlalchemy import Connection

import tracker.domain.models  # noqa: F401  (registers every table)
from tracker.domain.base import Base

config = context.config
target_metadata = Base.metadata


def _run(connection: Connection) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        render_as_batch=connection.dialect.name == "sqlite",
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


connection = config.attributes.get("connection")
if connection is None:  # pragma: no cover - tracker always passes a connection
    raise RuntimeError("tracker migrations run only through tracker.db.migrate")
_run(connection)
