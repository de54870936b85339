"""A throwaway PostgreSQL server for the test session.

Order of preference: ``TRACKER_TEST_PG_URL`` (CI starts a cluster and exports
it); else, where PostgreSQL's server binaries are installed, a private cluster
in a temporary directory, started here and stopped at the end; else the
PostgreSQL tests are skipped with the reason printed — unless
``TRACKER_REQUIRE_PG=1`` (CI), which turns that into a failure.

The cluster itself is started by :mod:`tracker.bench.pgserver`, which the
benchmark uses too.
"""

from __future__ import annotations

from tracker.bench.pgserver import private_cluster, server_binaries

__all__ = ["private_cluster", "server_binaries"]
