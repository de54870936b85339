"""One login per person on a shared PostgreSQL database.

* ``operator.login``: the PostgreSQL login (role name) bound to an operator. SQLite files
  have no logins; the column stays empty there and nothing else changes on SQLite.
* On PostgreSQL the database itself holds every login to the rules below. The role that
  owns the tables (it runs ``tracker db upgrade``) and superusers are exempt: whoever holds
  those credentials can rewrite anything anyway. For every other login:

  - it writes only as the operator bound to it, and only while that operator is active:
    a ledger event's ``operator`` and every row's author column (``drilled_by``,
    ``recorded_by`` ...) must be that operator;
  - what needs a manager needs a manager's login: operators (adding, roles, logins),
    loan amendments and closing, lab settings, accepted reference values, backdated
    entries, overriding a loan limit, correcting another operator's entry, and the
    ledger events of those actions (``MANAGER_ACTIONS``);
  - a measured value (``CORRECTED``) changes only by a correction: when the transaction
    commits, the new values must be exactly those of a correction row recorded in the same
    transaction for that row, naming the entry's real author (else a manager's login);
  - every other change (``EVENT_GUARDS``) needs its ledger event, recorded in the same
    transaction: values derived from measurements (element loaded, reduced results) only
    with a reduction or a correction, operators only with an operator event, and so on.

  Privileges do the rest (``tracker db workstation-grants``): workstation logins hold no
  DELETE or TRUNCATE on any table and UPDATE only on the columns the services change.

The functions run with the caller's rights and a fixed ``search_path`` (the schema, then
``pg_temp``), so a temporary table named like ours cannot stand in for it. "The same
transaction" is told by the row's ``xmin``: the custody and corrections tables are
append-only, so a row's ``xmin`` is the transaction that inserted it.

Self-contained: it needs no column added by another revision after 0008 (0009 adds only
the ledger's signature columns).

Revision ID: 0010_logins
Revises: 0009_signing
Create Date: 2026-12-10 09:00:00
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0010_logins"
down_revision: str | None = "0009_signing"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# Ledger actions only a manager records (LIKE patterns).
MANAGER_ACTIONS = (
    "operator.%",
    "key.%",
    "loan.amended",
    "loan.closed",
    "settings.%",
    "labels.uri_prefix_set",
    "reference.value_set",
)
# Measured values a correction replaces: table, ID prefix, correction quantity, the key in
# the correction's ``value``, the column. (Concentrations are rows: a correction adds one.)
CORRECTED = (
    ("powder", "PW", "powder mass", "tare_mg", "tare_mg"),
    ("powder", "PW", "powder mass", "gross_mg", "gross_mg"),
    ("powder", "PW", "powder mass", "readability_mg", "readability_mg"),
    ("powder", "PW", "powder mass", "mass_mg", "mass_mg"),
    ("powder", "PW", "powder mass", "mass_u_mg", "mass_u_mg"),
    ("solution", "SO", "solution mass", "mass_g", "solution_mass_g"),
    ("solution", "SO", "solution mass", "mass_u_g", "solution_mass_u_g"),
    ("solution", "SO", "powder taken", "powder_mass_mg", "powder_mass_mg"),
    ("solution", "SO", "powder taken", "powder_mass_u_mg", "powder_mass_u_mg"),
    ("aliquot", "AQ", "aliquot mass", "mass_g", "mass_g"),
    ("aliquot", "AQ", "aliquot mass", "mass_u_g", "mass_u_g"),
    ("cut", "CU", "cut recovery", "recovered_ug", "recovered_ug"),
    ("cut", "CU", "cut recovery", "recovered_u_ug", "recovered_u_ug"),
)
RECOMPUTING = ("session.reduced", "aliquot.corrected", "concentration.corrected", "cut.corrected")
OUTCOMES = ("consumed", "returned", "retained", "destroyed")  # how a vial leaves the lab


def _left(kind: str) -> tuple[str, ...]:
    """The events of a vial leaving the lab, when what was left in it is weighed."""
    return tuple(f"{kind}.{outcome}" for outcome in OUTCOMES)


SPECIMEN_TERMS = (
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
# Changes checked when the transaction commits: (table, name, events, columns or None for
# any column, the ledger actions that may make them). Every table the services update has
# a guard on any column with any event ("%"); some columns need a particular event. At
# COMMIT a table's checks run in the order of their names: the particular ones
# (``<table>_login_check_...``, corrections included) before ``<table>_login_event``, so a
# refusal names the most particular rule broken.
EVENT_GUARDS: tuple[tuple[str, str, str, tuple[str, ...] | None, tuple[str, ...]], ...] = (
    *(
        (table, "changed", "UPDATE", None, ("%",))
        for table in (
            "specimen",
            "powder",
            "solution",
            "aliquot",
            "cut",
            "batch_position",
            "result",
            "instrument_session",
            "column_batch",
            "loan",
            "label",
            "label_job",
            "lab_setting",
            "operator",
        )
    ),
    ("batch_position", "loaded", "UPDATE", ("loaded_ug", "loaded_u_ug"), RECOMPUTING[1:3]),
    ("result", "recomputed", "INSERT OR UPDATE", None, RECOMPUTING),
    ("instrument_session", "flags", "UPDATE", ("flags",), RECOMPUTING),
    ("column_batch", "blank", "UPDATE", ("blank_deltas",), ("batch.blank_delta_set",)),
    ("powder", "residual", "UPDATE", ("residual_mg", "residual_u_mg"), _left("powder")),
    ("solution", "residual", "UPDATE", ("residual_g", "residual_u_g"), _left("solution")),
    ("loan", "status", "UPDATE", ("status", "returned_on"), ("loan.returned", "loan.closed")),
    ("specimen", "terms", "UPDATE", SPECIMEN_TERMS, ("manifest.imported",)),
    ("operator", "people", "INSERT OR UPDATE", None, ("operator.%",)),
    ("loan_terms", "terms", "INSERT", None, ("loan.added", "loan.amended")),
    ("lab_setting", "setting", "INSERT OR UPDATE", None, ("settings.%", "labels.uri_prefix_set")),
    ("reference_value", "accepted", "INSERT", None, ("reference.value_set",)),
)
# Who recorded a new row: its author column must name the login's own operator.
AUTHORS = {
    "custody_event": "operator",
    "powder": "drilled_by",
    "solution": "dissolved_by",
    "aliquot": "taken_by",
    "concentration": "recorded_by",
    "column_batch": "operator",
    "instrument_session": "operator",
    "label": "queued_by",
    "label_job": "operator",
    "loan_terms": "recorded_by",
    "correction": "recorded_by",
    "reference_value": "recorded_by",
    "backdated_entry": "recorded_by",
}
# New rows only a manager's login adds: table → what the refusal says is being done.
MANAGER_ROWS = {
    "operator": "changing operators",
    "lab_setting": "changing a lab setting",
    "reference_value": "setting an accepted reference value",
    "backdated_entry": "dating an entry further back than the backdating window",
}
FUNCTIONS = (
    "tracker_owner_session()",
    "tracker_login_operator()",
    "tracker_require_manager(text)",
    "tracker_manager_only()",
    "tracker_check_authors()",
    "tracker_check_manager_events()",
    "tracker_check_amendment()",
    "tracker_check_override()",
    "tracker_check_correction_rows()",
    "tracker_check_superseded()",
    "tracker_corrected_columns()",
    "tracker_check_corrected()",
    "tracker_check_event()",
)
NOT_OWNER = "WHEN (NOT tracker_owner_session())"


def upgrade() -> None:
    with op.batch_alter_table("operator", schema=None) as batch_op:
        batch_op.add_column(sa.Column("login", sa.String(length=63), nullable=True))
        batch_op.create_unique_constraint(batch_op.f("uq_operator_login"), ["login"])
    if op.get_bind().dialect.name != "postgresql":
        return
    schema = op.get_bind().execute(sa.text("SELECT current_schema()")).scalar_one()
    setting = f'SET search_path = "{schema}", pg_temp'
    for definition in _functions():
        op.execute(definition.replace("{setting}", setting))
    _immediate_checks()
    _deferred_checks()


def _functions() -> list[str]:
    managers = ", ".join(f"'{pattern}'" for pattern in MANAGER_ACTIONS)
    measured = ", ".join(f"('{t}', '{p}', '{q}', '{k}', '{c}')" for t, p, q, k, c in CORRECTED)
    return [
        # The owner of the tables, and superusers, are trusted with everything.
        """CREATE FUNCTION tracker_owner_session() RETURNS boolean LANGUAGE sql STABLE {setting}
        AS $$ SELECT coalesce((SELECT rolsuper FROM pg_roles WHERE rolname = session_user), false)
            OR pg_has_role(session_user,
                (SELECT relowner FROM pg_class WHERE oid = 'custody_event'::regclass), 'MEMBER')
        $$""",
        """CREATE FUNCTION tracker_login_operator() RETURNS operator LANGUAGE plpgsql STABLE
        {setting} AS $$
        DECLARE person operator;
        BEGIN
            SELECT * INTO person FROM operator WHERE login = session_user::text;
            IF NOT FOUND THEN
                RAISE EXCEPTION 'the database login % is bound to no operator; a manager binds '
                    'it with tracker db add-login', session_user USING ERRCODE = '42501';
            END IF;
            IF NOT person.active THEN
                RAISE EXCEPTION 'operator % (login %) has been deactivated', person.code,
                    session_user USING ERRCODE = '42501';
            END IF;
            RETURN person;
        END $$""",
        """CREATE FUNCTION tracker_require_manager(what text) RETURNS operator LANGUAGE plpgsql
        STABLE {setting} AS $$
        DECLARE person operator := tracker_login_operator();
        BEGIN
            IF person.role <> 'manager' THEN
                RAISE EXCEPTION '% needs an operator with the manager role (% is a %)', what,
                    person.code, person.role USING ERRCODE = '42501';
            END IF;
            RETURN person;
        END $$""",
        """CREATE FUNCTION tracker_manager_only() RETURNS trigger LANGUAGE plpgsql {setting} AS $$
        BEGIN
            PERFORM tracker_require_manager(TG_ARGV[0]);
            RETURN NEW;
        END $$""",
        # Statement level, over the inserted rows: the author column names the login's own.
        """CREATE FUNCTION tracker_check_authors() RETURNS trigger LANGUAGE plpgsql {setting} AS $$
        DECLARE person operator := tracker_login_operator(); wrong text;
        BEGIN
            EXECUTE format('SELECT min(%1$I) FROM added WHERE %1$I IS DISTINCT FROM $1',
                TG_ARGV[0]) INTO wrong USING person.code;
            IF wrong IS NOT NULL THEN
                RAISE EXCEPTION '%.% %: the login % records only as %', TG_TABLE_NAME,
                    TG_ARGV[0], quote_literal(wrong), session_user, person.code
                    USING ERRCODE = '42501';
            END IF;
            RETURN NULL;
        END $$""",
        f"""CREATE FUNCTION tracker_check_manager_events() RETURNS trigger LANGUAGE plpgsql
        {{setting}} AS $$
        DECLARE action text;
        BEGIN
            SELECT min(a.action) INTO action FROM added a
                WHERE a.action LIKE ANY (ARRAY[{managers}]);
            IF action IS NOT NULL THEN
                PERFORM tracker_require_manager(format('recording %s', action));
            END IF;
            RETURN NULL;
        END $$""",
        """CREATE FUNCTION tracker_check_amendment() RETURNS trigger LANGUAGE plpgsql {setting}
        AS $$
        BEGIN
            IF EXISTS (SELECT 1 FROM added WHERE version > 1) THEN
                PERFORM tracker_require_manager('amending a loan');
            END IF;
            RETURN NULL;
        END $$""",
        """CREATE FUNCTION tracker_check_override() RETURNS trigger LANGUAGE plpgsql {setting} AS $$
        BEGIN
            IF EXISTS (SELECT 1 FROM added WHERE override_reason IS NOT NULL) THEN
                PERFORM tracker_require_manager('overriding a loan limit');
            END IF;
            RETURN NULL;
        END $$""",
        """CREATE FUNCTION tracker_check_correction_rows() RETURNS trigger LANGUAGE plpgsql
        {setting} AS $$
        DECLARE author text;
        BEGIN
            SELECT min(entry_by) INTO author FROM added WHERE entry_by <> recorded_by;
            IF author IS NOT NULL THEN
                PERFORM tracker_require_manager(format('correcting an entry of %s', author));
            END IF;
            RETURN NULL;
        END $$""",
        """CREATE FUNCTION tracker_check_superseded() RETURNS trigger LANGUAGE plpgsql {setting}
        AS $$
        DECLARE author text;
        BEGIN
            SELECT min(prior.recorded_by) INTO author FROM added a
                JOIN concentration prior ON prior.id = a.supersedes_id
                WHERE prior.recorded_by <> a.recorded_by;
            IF author IS NOT NULL THEN
                PERFORM tracker_require_manager(
                    format('correcting a concentration recorded by %s', author));
            END IF;
            RETURN NULL;
        END $$""",
        f"""CREATE FUNCTION tracker_corrected_columns() RETURNS TABLE (entry_table text,
            prefix text, quantity text, value_key text, column_name text)
        LANGUAGE sql IMMUTABLE {{setting}} AS $$ VALUES {measured} $$""",
        # Deferred to COMMIT, once the correction row and its event exist.
        """CREATE FUNCTION tracker_check_corrected() RETURNS trigger LANGUAGE plpgsql {setting}
        AS $$
        DECLARE
            fix correction; measured record; changed boolean; stored float8;
            touched boolean := false; author text; person operator;
        BEGIN
            SELECT c.* INTO fix FROM correction c
                WHERE c.entry_table = TG_TABLE_NAME AND c.entry_id = NEW.id
                  AND c.xmin = pg_current_xact_id()::xid
                ORDER BY c.id DESC LIMIT 1;
            FOR measured IN SELECT * FROM tracker_corrected_columns() m
                    WHERE m.entry_table = TG_TABLE_NAME LOOP
                EXECUTE format('SELECT ($1).%1$I IS DISTINCT FROM ($2).%1$I, ($1).%1$I::float8',
                    measured.column_name) INTO changed, stored USING NEW, OLD;
                CONTINUE WHEN NOT changed;
                touched := true;
                IF fix.id IS NULL THEN
                    RAISE EXCEPTION '% %: % is a measured value; it changes only by a '
                        'correction recorded with it', TG_TABLE_NAME, NEW.id,
                        measured.column_name USING ERRCODE = '42501';
                END IF;
                IF fix.quantity <> measured.quantity
                   OR split_part(fix.item_ref, '-', 1) <> measured.prefix
                   OR split_part(fix.item_ref, '-', 2) !~ '^[0-9]{5,}$'
                   OR split_part(fix.item_ref, '-', 2)::bigint <> NEW.id
                   OR stored IS DISTINCT FROM (fix.value ->> measured.value_key)::float8 THEN
                    RAISE EXCEPTION '% %: % is not what correction % records', TG_TABLE_NAME,
                        NEW.id, measured.column_name, fix.id USING ERRCODE = '42501';
                END IF;
            END LOOP;
            IF NOT touched THEN
                RETURN NULL;
            END IF;
            -- who recorded the values in force: the previous correction, else the item's
            -- first event (what the services read too)
            SELECT c.recorded_by INTO author FROM correction c
                WHERE c.item_ref = fix.item_ref AND c.quantity = fix.quantity AND c.id < fix.id
                ORDER BY c.id DESC LIMIT 1;
            IF author IS NULL THEN
                SELECT e.operator INTO author FROM custody_event e
                    WHERE e.object_ref = fix.item_ref
                       OR e.seq IN (SELECT r.seq FROM event_ref r WHERE r.ref = fix.item_ref)
                    ORDER BY e.seq LIMIT 1;
            END IF;
            IF author IS DISTINCT FROM fix.entry_by THEN
                RAISE EXCEPTION 'correction %: % was recorded by %, not %', fix.id, fix.item_ref,
                    author, fix.entry_by USING ERRCODE = '42501';
            END IF;
            person := tracker_login_operator();
            IF author IS DISTINCT FROM person.code THEN
                PERFORM tracker_require_manager(
                    format('correcting %s recorded by %s', fix.quantity, author));
            END IF;
            RETURN NULL;
        END $$""",
        """CREATE FUNCTION tracker_check_event() RETURNS trigger LANGUAGE plpgsql {setting} AS $$
        DECLARE latest record;
        BEGIN
            SELECT e.action, e.xmin AS made INTO latest FROM custody_event e
                ORDER BY e.seq DESC LIMIT 1;
            IF NOT FOUND OR NOT latest.made = pg_current_xact_id()::xid THEN
                RAISE EXCEPTION '%: a change needs its ledger event recorded in the same '
                    'transaction', TG_TABLE_NAME USING ERRCODE = '42501';
            END IF;
            IF NOT latest.action LIKE ANY (TG_ARGV) THEN
                RAISE EXCEPTION '%: changed with the event %; only % may change it',
                    TG_TABLE_NAME, latest.action,
                    replace(array_to_string(TG_ARGV, ', '), '%', '*') USING ERRCODE = '42501';
            END IF;
            RETURN NULL;
        END $$""",
    ]


def _statement(table: str, name: str, function: str, *args: str) -> None:
    """An AFTER INSERT check over the statement's new rows (the transition table ``added``)."""
    quoted = ", ".join(f"'{arg}'" for arg in args)
    op.execute(
        f"CREATE TRIGGER {table}_login_{name} AFTER INSERT ON {table} "
        f"REFERENCING NEW TABLE AS added FOR EACH STATEMENT {NOT_OWNER} "
        f"EXECUTE FUNCTION {function}({quoted})"
    )


def _immediate_checks() -> None:
    for table, column in AUTHORS.items():
        _statement(table, "author", "tracker_check_authors", column)
    _statement("custody_event", "manager", "tracker_check_manager_events")
    _statement("loan_terms", "amendment", "tracker_check_amendment")
    _statement("powder", "override", "tracker_check_override")
    _statement("correction", "others", "tracker_check_correction_rows")
    _statement("concentration", "superseded", "tracker_check_superseded")
    for table, what in MANAGER_ROWS.items():  # BEFORE: the roles as they stood
        events = "INSERT OR UPDATE" if table in ("operator", "lab_setting") else "INSERT"
        op.execute(
            f"CREATE TRIGGER {table}_login_manager BEFORE {events} ON {table} "
            f"FOR EACH STATEMENT {NOT_OWNER} EXECUTE FUNCTION tracker_manager_only('{what}')"
        )
    op.execute(
        "CREATE TRIGGER powder_login_override_changed BEFORE UPDATE OF override_reason ON powder "
        "FOR EACH ROW WHEN (NEW.override_reason IS DISTINCT FROM OLD.override_reason "
        "AND NOT tracker_owner_session()) "
        "EXECUTE FUNCTION tracker_manager_only('overriding a loan limit')"
    )
    op.execute(
        "CREATE TRIGGER loan_login_closing BEFORE UPDATE OF status ON loan FOR EACH ROW "
        "WHEN (NEW.status = 'closed' AND OLD.status IS DISTINCT FROM 'closed' "
        "AND NOT tracker_owner_session()) EXECUTE FUNCTION tracker_manager_only('closing a loan')"
    )


def _deferred_checks() -> None:
    for table in dict.fromkeys(row[0] for row in CORRECTED):
        measured = ", ".join(c for t, _, _, _, c in CORRECTED if t == table)
        op.execute(
            f"CREATE CONSTRAINT TRIGGER {table}_login_check_corrected AFTER UPDATE OF {measured} "
            f"ON {table} DEFERRABLE INITIALLY DEFERRED FOR EACH ROW {NOT_OWNER} "
            "EXECUTE FUNCTION tracker_check_corrected()"
        )
    for table, name, events, columns, actions in EVENT_GUARDS:
        of = f" OF {', '.join(columns)}" if columns else ""
        events = events.replace("UPDATE", f"UPDATE{of}")
        patterns = ", ".join(f"'{action}'" for action in actions)
        name = "event" if name == "changed" else f"check_{name}"  # fired in name order
        op.execute(
            f"CREATE CONSTRAINT TRIGGER {table}_login_{name} AFTER {events} ON {table} "
            f"DEFERRABLE INITIALLY DEFERRED FOR EACH ROW {NOT_OWNER} "
            f"EXECUTE FUNCTION tracker_check_event({patterns})"
        )


def downgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        for function in reversed(FUNCTIONS):  # CASCADE: the triggers that call them go too
            op.execute(f"DROP FUNCTION IF EXISTS {function} CASCADE")
    with op.batch_alter_table("operator", schema=None) as batch_op:
        batch_op.drop_constraint(batch_op.f("uq_operator_login"), type_="unique")
        batch_op.drop_column("login")
