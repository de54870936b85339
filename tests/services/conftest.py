"""Fixtures of the service tests beyond the suite's own (tests/conftest.py)."""

from tests.services.audit_lab import audited_lab_template, books, pg_audited_lab_template

__all__ = ["audited_lab_template", "books", "pg_audited_lab_template"]
