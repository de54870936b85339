"""Per-person logins on a shared PostgreSQL database: what the workstation group may do,
the SQL that sets it up, and who is connected.

Each person connects with a login of their own; revision 0010 binds a login to one
operator (``operator.login``) and makes the database hold it to that operator and to the
manager rules (see the revision's docstring). The logins are members of one group role,
the *workstation group*, which holds the privileges written here:

* SELECT on every table, INSERT on the tracker's tables (not ``alembic_version``);
* UPDATE only on the columns the services change (``UPDATABLE``); among them the measured
  values a correction replaces (``CORRECTED``) and the values derived from them
  (``DERIVED``), which the database lets change only with their correction or reduction;
* no DELETE, no TRUNCATE, on anything.

The tables' owner runs ``tracker db workstation-grants`` once and after every upgrade;
``tracker db add-login`` creates a person's login in the group and records its binding.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass

from sqlalchemy import Connection, text

from tracker.domain.models.instrument import RECOMPUTED

DEFAULT_GROUP = "tracker_staff"

# Names we create are plain lower-case identifiers: never quoted differently, never folded.
_NAME = re.compile(r"[a-z_][a-z0-9_]{0,62}")
NAME_RULE = "a login is 1 to 63 lower-case letters, digits or _, starting with a letter or _"

# Measured values: changed only by a correction recorded with the change (revision 0010).
CORRECTED: dict[str, tuple[str, ...]] = {
    "powder": ("tare_mg", "gross_mg", "readability_mg", "mass_mg", "mass_u_mg"),
    "solution": ("solution_mass_g", "solution_mass_u_g", "powder_mass_mg", "powder_mass_u_mg"),
    "aliquot": ("mass_g", "mass_u_g"),
    "cut": ("recovered_ug", "recovered_u_ug"),
}
# Values computed from measurements: changed only with a reduction or a correction.
DERIVED: dict[str, tuple[str, ...]] = {
    "batch_position": ("loaded_ug", "loaded_u_ug"),
    "result": RECOMPUTED,
    "instrument_session": ("flags",),
}
_SPECIMEN_TERMS = (
    "institution_code",
    "collection_code",
    "scientific_name",
    "skeletal_element",
    "locality",
    "formation",
    "earliest_epoch",
    "latest_epoch",
    "age_max_ma",
    "age_min_ma",
    "extra",
)
_HELD = ("status", "location_id")  # where a vial is and whether it is still in the lab
# Every column a workstation may UPDATE; any other UPDATE is refused by privilege.
UPDATABLE: dict[str, tuple[str, ...]] = {
    "specimen": (
        *_SPECIMEN_TERMS,  # a lender's corrected manifest
        *_HELD,
        "condition_in",
        "condition_out",
        "received_at",
        "returned_at",
        "return_shipment_id",
    ),
    "powder": (
        *_HELD,
        "return_shipment_id",
        "residual_mg",
        "residual_u_mg",
        "override_reason",
        *CORRECTED["powder"],
    ),
    "solution": (*_HELD, "residual_g", "residual_u_g", *CORRECTED["solution"]),
    "aliquot": (*_HELD, *CORRECTED["aliquot"]),
    "cut": (*_HELD, *CORRECTED["cut"]),
    **DERIVED,
    "batch_position": (*DERIVED["batch_position"], "removed_at", "removal_reason"),
    "column_batch": ("blank_deltas",),
    # an unmatched instrument row matched after its import (revision 0012)
    "measurement": ("role", "cut_id", "reference_material_id", "position_id"),
    "loan": ("status", "returned_on", "sr_curve_id"),
    "label": ("status", "job_id"),
    "label_job": ("pages", "sha256"),
    "lab_setting": ("value", "updated_by", "updated_at"),
    "operator": ("role", "active", "login"),
}


def name_problem(name: str) -> str | None:
    """Why ``name`` cannot be a login or group name we create, or None when it can."""
    return None if _NAME.fullmatch(name) else NAME_RULE


def _quoted(name: str) -> str:
    if name_problem(name):
        raise ValueError(f"not a checked role name: {name!r}")
    return f'"{name}"'


def _create_role(name: str, kind: str) -> str:
    return (
        f"DO $$ BEGIN CREATE ROLE {_quoted(name)} {kind}; "
        "EXCEPTION WHEN duplicate_object THEN NULL; END $$"
    )


def group_statements(database: str, schema: str, group: str, tables: Iterable[str]) -> list[str]:
    """The workstation group and its privileges, from scratch (run again after upgrades)."""
    who, where = _quoted(group), f'"{schema}"'
    writable = sorted(table for table in tables if table != "alembic_version")
    return [
        _create_role(group, "NOLOGIN"),
        f"REVOKE CREATE ON SCHEMA {where} FROM PUBLIC",
        f"REVOKE ALL ON ALL TABLES IN SCHEMA {where} FROM {who}",
        f'GRANT CONNECT ON DATABASE "{database}" TO {who}',
        f"GRANT USAGE ON SCHEMA {where} TO {who}",
        f"GRANT SELECT ON ALL TABLES IN SCHEMA {where} TO {who}",
        *(f"GRANT INSERT ON {where}.{table} TO {who}" for table in writable),
        *(
            f"GRANT UPDATE ({', '.join(columns)}) ON {where}.{table} TO {who}"
            for table, columns in UPDATABLE.items()
        ),
        f"GRANT USAGE, SELECT ON ALL SEQUENCES IN SCHEMA {where} TO {who}",
    ]


def login_statements(login: str, group: str) -> list[str]:
    """A person's login, a member of the workstation group (no password: see docs/storage.md)."""
    return [_create_role(login, "LOGIN"), f"GRANT {_quoted(group)} TO {_quoted(login)}"]


@dataclass(frozen=True)
class Connected:
    """The login a PostgreSQL connection was opened with."""

    login: str
    owner: bool  # owns the tables, or is a superuser: trusted with everything


def connected(connection: Connection) -> Connected:
    row = connection.execute(text("SELECT session_user, tracker_owner_session()")).one()
    return Connected(str(row[0]), bool(row[1]))


@dataclass(frozen=True)
class LoginFacts:
    """What the server says of a login a manager is about to bind."""

    exists: bool
    can_log_in: bool = False
    owner: bool = False  # the tables' owner or a superuser
    can_record: bool = False  # may append to the ledger (a member of the workstation group)


def login_facts(connection: Connection, login: str) -> LoginFacts:
    row = connection.execute(
        text(
            "SELECT r.rolcanlogin, r.rolsuper OR pg_has_role(r.oid, c.relowner, 'MEMBER'), "
            "has_table_privilege(r.oid, c.oid, 'INSERT') "
            "FROM pg_roles r, pg_class c "
            "WHERE r.rolname = :login AND c.oid = 'custody_event'::regclass"
        ),
        {"login": login},
    ).first()
    if row is None:
        return LoginFacts(exists=False)
    return LoginFacts(True, bool(row[0]), bool(row[1]), bool(row[2]))


def is_member(connection: Connection, login: str, group: str) -> bool:
    """Whether ``login`` exists and is (directly or not) a member of ``group``."""
    found = connection.execute(
        text(
            "SELECT pg_has_role(l.oid, g.oid, 'MEMBER') FROM pg_roles l, pg_roles g "
            "WHERE l.rolname = :login AND g.rolname = :group"
        ),
        {"login": login, "group": group},
    ).scalar()
    return bool(found)
