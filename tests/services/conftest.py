"""Fixtures of the service tests beyond the suite's own (tests/conftest.py)."""

from tests.services.audit_lab import books, lab_template, pg_lab_template

__all__ = ["books", "lab_template", "pg_lab_template"]
