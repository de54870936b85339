"""What can never be true is refused by the schema; measured values are kept exactly; every
foreign key has an index.

* CHECK constraints on every value that can never be true (a mass at or below zero, a gross
  reading not above its tare, a negative uncertainty, a share beyond 0-1, a sequence number
  below 1 ...). ``tracker/domain/checks.py`` builds the same rules for the models and says
  each in words; this revision keeps their SQL as it was when it was written.
* Measured values (``EXACT``: masses, tares, gross readings, readabilities, their
  uncertainties, concentrations, recovered amounts, loan limits) become exact decimals:
  NUMERIC on PostgreSQL, their digits as text on SQLite (``tracker.domain.base.Exact``).
  Each stored float becomes its shortest round-trip text — Python's ``repr`` on SQLite,
  read in Python before the rebuild (SQLite's own cast keeps only 15 digits), and
  PostgreSQL's own float text (``::text``, shortest since PostgreSQL 12) there — so no
  value changes, and events that stated these values as JSON floats still agree with the
  rows (``domain.replay`` compares them through the same shortest text).
* An index on every foreign key (the ones not led by an index, unique key or primary key).
* Rows already breaking a rule stop the upgrade before anything is changed: one line naming
  the table, the row and its values (the whole upgrade is one transaction, rolled back).
* SQLite adds a CHECK only by rebuilding the table (Alembic's batch mode). A rebuild drops
  the table's triggers (the append-only ones of revisions 0002, 0007 and 0008) and its
  indexes: they are read from ``sqlite_master`` first and made again from that same text,
  so the table keeps exactly what the earlier revisions gave it.

Revision ID: 0011_checks
Revises: 0010_logins
Create Date: 2026-12-14 09:00:00
"""

import re
from decimal import Decimal
from collections.abc import Iterator, Sequence
from contextlib import contextmanager

import sqlalchemy as sa
from alembic import op
from alembic.operations import BatchOperations

from tracker.domain.errors import RuleViolation

revision: str = "0011_checks"
down_revision: str | None = "0010_logins"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# table -> (constraint, condition): the rules of tracker/domain/checks.py as written here.
CHECKS: dict[str, tuple[tuple[str, str], ...]] = {
    "document": (("ck_document_size_bytes_count", "size_bytes >= 0"),),
    "user_material": (
        (
            "ck_user_material_fraction_high_share",
            "CAST(fraction_high AS NUMERIC) > 0 AND CAST(fraction_high AS NUMERIC) <= 1",
        ),
        (
            "ck_user_material_fraction_low_not_above_fraction_high",
            "CAST(fraction_low AS NUMERIC) <= CAST(fraction_high AS NUMERIC)",
        ),
        (
            "ck_user_material_fraction_low_share",
            "CAST(fraction_low AS NUMERIC) > 0 AND CAST(fraction_low AS NUMERIC) <= 1",
        ),
    ),
    "column_batch": (
        (
            "ck_column_batch_blank_limit_share",
            "CAST(blank_limit AS NUMERIC) > 0 AND CAST(blank_limit AS NUMERIC) <= 1",
        ),
        (
            "ck_column_batch_yield_threshold_share",
            "CAST(yield_threshold AS NUMERIC) > 0 AND CAST(yield_threshold AS NUMERIC) <= 1",
        ),
    ),
    "correction": (
        ("ck_correction_entry_id_from_one", "entry_id >= 1"),
        ("ck_correction_event_seq_from_one", "event_seq >= 1"),
        ("ck_correction_supersedes_event_seq_from_one", "supersedes_event_seq >= 1"),
    ),
    "custody_event": (("ck_custody_event_seq_from_one", "seq >= 1"),),
    "label_job": (
        ("ck_label_job_labels_count", "labels >= 0"),
        ("ck_label_job_pages_count", "pages >= 0"),
        ("ck_label_job_start_from_one", "start >= 1"),
    ),
    "reference_value": (
        ("ck_reference_value_two_sd_above_zero", "CAST(two_sd AS NUMERIC) > 0"),
        (
            "ck_reference_value_value_ratio_above_zero",
            "kind <> 'ratio' OR CAST(value AS NUMERIC) > 0",
        ),
    ),
    "event_ref": (("ck_event_ref_seq_from_one", "seq >= 1"),),
    "label": (("ck_label_queued_event_seq_from_one", "queued_event_seq >= 1"),),
    "loan_terms": (
        (
            "ck_loan_terms_max_mass_per_specimen_mg_above_zero",
            "CAST(max_mass_per_specimen_mg AS NUMERIC) > 0",
        ),
        ("ck_loan_terms_max_specimens_sampled_from_one", "max_specimens_sampled >= 1"),
        ("ck_loan_terms_max_total_mass_mg_above_zero", "CAST(max_total_mass_mg AS NUMERIC) > 0"),
        ("ck_loan_terms_version_from_one", "version >= 1"),
    ),
    "specimen": (
        ("ck_specimen_age_max_ma_not_negative", "CAST(age_max_ma AS NUMERIC) >= 0"),
        (
            "ck_specimen_age_min_ma_not_above_age_max_ma",
            "CAST(age_min_ma AS NUMERIC) <= CAST(age_max_ma AS NUMERIC)",
        ),
        ("ck_specimen_age_min_ma_not_negative", "CAST(age_min_ma AS NUMERIC) >= 0"),
    ),
    "backdated_entry": (
        ("ck_backdated_entry_event_seq_from_one", "event_seq >= 1"),
        ("ck_backdated_entry_window_hours_count", "window_hours >= 0"),
    ),
    "powder": (
        (
            "ck_powder_gross_mg_above_tare_mg",
            "CAST(gross_mg AS NUMERIC) > CAST(tare_mg AS NUMERIC)",
        ),
        ("ck_powder_mass_mg_above_zero", "CAST(mass_mg AS NUMERIC) > 0"),
        ("ck_powder_mass_u_mg_not_negative", "CAST(mass_u_mg AS NUMERIC) >= 0"),
        ("ck_powder_readability_mg_above_zero", "CAST(readability_mg AS NUMERIC) > 0"),
        ("ck_powder_residual_mg_not_negative", "CAST(residual_mg AS NUMERIC) >= 0"),
        ("ck_powder_residual_u_mg_not_negative", "CAST(residual_u_mg AS NUMERIC) >= 0"),
        ("ck_powder_tare_mg_above_zero", "CAST(tare_mg AS NUMERIC) > 0"),
    ),
    "solution": (
        ("ck_solution_powder_mass_mg_above_zero", "CAST(powder_mass_mg AS NUMERIC) > 0"),
        ("ck_solution_powder_mass_u_mg_not_negative", "CAST(powder_mass_u_mg AS NUMERIC) >= 0"),
        ("ck_solution_residual_g_not_negative", "CAST(residual_g AS NUMERIC) >= 0"),
        ("ck_solution_residual_u_g_not_negative", "CAST(residual_u_g AS NUMERIC) >= 0"),
        ("ck_solution_solution_mass_g_above_zero", "CAST(solution_mass_g AS NUMERIC) > 0"),
        ("ck_solution_solution_mass_u_g_not_negative", "CAST(solution_mass_u_g AS NUMERIC) >= 0"),
    ),
    "aliquot": (
        ("ck_aliquot_mass_g_above_zero", "CAST(mass_g AS NUMERIC) > 0"),
        ("ck_aliquot_mass_u_g_not_negative", "CAST(mass_u_g AS NUMERIC) >= 0"),
    ),
    "concentration": (
        ("ck_concentration_u_ug_per_g_not_negative", "CAST(u_ug_per_g AS NUMERIC) >= 0"),
        ("ck_concentration_value_ug_per_g_above_zero", "CAST(value_ug_per_g AS NUMERIC) > 0"),
    ),
    "batch_position": (
        ("ck_batch_position_loaded_u_ug_not_negative", "CAST(loaded_u_ug AS NUMERIC) >= 0"),
        ("ck_batch_position_loaded_ug_not_negative", "CAST(loaded_ug AS NUMERIC) >= 0"),
        ("ck_batch_position_slot_from_one", "slot >= 1"),
    ),
    "cut": (
        ("ck_cut_recovered_u_ug_not_negative", "CAST(recovered_u_ug AS NUMERIC) >= 0"),
        ("ck_cut_recovered_ug_not_negative", "CAST(recovered_ug AS NUMERIC) >= 0"),
    ),
    "measurement": (("ck_measurement_run_order_count", "run_order >= 0"),),
    "result": (
        (
            "ck_result_delta_permil_ratio_above_zero",
            "kind <> 'ratio' OR CAST(delta_permil AS NUMERIC) > 0",
        ),
        ("ck_result_n_from_one", "n >= 1"),
        ("ck_result_sd_permil_not_negative", "CAST(sd_permil AS NUMERIC) >= 0"),
        ("ck_result_two_se_permil_not_negative", "CAST(two_se_permil AS NUMERIC) >= 0"),
    ),
}
# Measured values kept exactly from this revision on: table -> columns.
EXACT: dict[str, tuple[str, ...]] = {
    "powder": (
        "tare_mg",
        "gross_mg",
        "readability_mg",
        "mass_mg",
        "mass_u_mg",
        "residual_mg",
        "residual_u_mg",
    ),
    "solution": (
        "powder_mass_mg",
        "powder_mass_u_mg",
        "solution_mass_g",
        "solution_mass_u_g",
        "residual_g",
        "residual_u_g",
    ),
    "aliquot": ("mass_g", "mass_u_g"),
    "concentration": ("value_ug_per_g", "u_ug_per_g"),
    "cut": ("recovered_ug", "recovered_u_ug"),
    "loan_terms": ("max_mass_per_specimen_mg", "max_total_mass_mg"),
}
NULLABLE = {
    "residual_mg",
    "residual_u_mg",
    "residual_g",
    "residual_u_g",
    "recovered_ug",
    "recovered_u_ug",
    "max_mass_per_specimen_mg",
    "max_total_mass_mg",
}
# Foreign keys that had no index leading with their column.
INDEXES: tuple[tuple[str, str], ...] = (
    ("aliquot", "taken_by"),
    ("backdated_entry", "recorded_by"),
    ("batch_position", "reference_material_id"),
    ("column_batch", "operator"),
    ("concentration", "recorded_by"),
    ("concentration", "supersedes_id"),
    ("correction", "entry_by"),
    ("correction", "recorded_by"),
    ("correction", "supersedes_id"),
    ("custody_event", "operator"),
    ("instrument_session", "operator"),
    ("lab_setting", "updated_by"),
    ("label", "queued_by"),
    ("label_job", "operator"),
    ("loan", "sr_curve_id"),
    ("loan_document", "document_id"),
    ("loan_terms", "document_id"),
    ("loan_terms", "recorded_by"),
    ("measurement", "position_id"),
    ("measurement", "reference_material_id"),
    ("powder", "drilled_by"),
    ("powder", "return_shipment_id"),
    ("reference_value", "recorded_by"),
    ("result", "position_id"),
    ("result", "reference_material_id"),
    ("solution", "dissolved_by"),
    ("specimen", "return_shipment_id"),
    ("specimen_photo", "document_id"),
)


def upgrade() -> None:
    bind = op.get_bind()
    for table, rules in CHECKS.items():
        _refuse_rows_breaking(bind, table, rules)
    sqlite = bind.dialect.name == "sqlite"
    for table, rules in CHECKS.items():
        exact = EXACT.get(table, ())
        digits = _shortest_texts(bind, table, exact) if sqlite else []
        with _rebuilt(bind, table) as batch_op:
            for column in exact:
                batch_op.alter_column(
                    column,
                    existing_type=sa.Double(),
                    existing_nullable=column in NULLABLE,
                    type_=sa.String() if sqlite else sa.Numeric(),
                    postgresql_using=f"{column}::text::numeric",
                )
            for name, condition in rules:
                batch_op.create_check_constraint(op.f(name), condition)
        for column, rows in digits:
            if not rows:
                continue
            bind.execute(
                sa.text(f"UPDATE {table} SET {column} = :digits WHERE id = :id"), rows
            )
    for table, column in INDEXES:
        op.create_index(op.f(f"ix_{table}_{column}"), table, [column], unique=False)


def downgrade() -> None:
    bind = op.get_bind()
    for table, column in reversed(INDEXES):
        op.drop_index(op.f(f"ix_{table}_{column}"), table_name=table)
    for table, rules in CHECKS.items():
        with _rebuilt(bind, table) as batch_op:
            for name, _ in rules:
                batch_op.drop_constraint(op.f(name), type_="check")
            for column in EXACT.get(table, ()):
                batch_op.alter_column(
                    column,
                    existing_nullable=column in NULLABLE,
                    type_=sa.Double(),
                    postgresql_using=f"{column}::float8",
                )


def _refuse_rows_breaking(
    bind: sa.Connection, table: str, rules: tuple[tuple[str, str], ...]
) -> None:
    """The first stored row a new rule would refuse, said in one line (nothing changed)."""
    inspector = sa.inspect(bind)
    key = inspector.get_pk_constraint(table)["constrained_columns"]
    columns = {column["name"] for column in inspector.get_columns(table)}
    for name, condition in rules:
        words = re.findall(r"[a-z_]+", re.sub(r"'[^']*'", "", condition))
        used = [word for word in dict.fromkeys(words) if word in columns and word not in key]
        found = bind.execute(
            sa.text(
                f"SELECT {', '.join([*key, *used])} FROM {table} WHERE NOT ({condition}) LIMIT 1"
            )
        ).first()
        if found is None:
            continue
        row = "/".join(str(value) for value in found[: len(key)])
        values = ", ".join(f"{column} = {value}" for column, value in zip(used, found[len(key) :], strict=True))
        rule = name.removeprefix(f"ck_{table}_").replace("_", " ")
        raise RuleViolation(
            f"{table} row {row}",
            values,
            f"can never be true (rule: {rule}); the upgrade changed nothing: correct the row, "
            "then upgrade again",
        )


def _shortest_texts(
    bind: sa.Connection, table: str, columns: tuple[str, ...]
) -> list[tuple[str, list[dict[str, object]]]]:
    """Each stored float of ``columns`` as its shortest round-trip text (``repr``), by row,
    read before the rebuild turns them into text by SQLite's 15-digit cast."""
    found = []
    for column in columns:
        rows = bind.execute(
            sa.text(f"SELECT id, {column} FROM {table} WHERE {column} IS NOT NULL")
        ).all()
        found.append((column, [{"id": id_, "digits": _digits(value)} for id_, value in rows]))
    return found


def _digits(value: object) -> str:
    """A stored number's shortest text: a float's ``repr``, written without an exponent
    (``1e-05`` is ``0.00001``), as ``base.decimal_text`` writes every exact value."""
    return format(Decimal(repr(value) if isinstance(value, float) else str(value)), "f")


@contextmanager
def _rebuilt(bind: sa.Connection, table: str) -> Iterator[BatchOperations]:
    """``op.batch_alter_table`` for ``table``; on SQLite the table is rebuilt, and its
    triggers and indexes are made again afterwards from their own stored text (on
    PostgreSQL the triggers of a table whose columns change type, likewise)."""
    kept: list[str] = []
    if bind.dialect.name == "postgresql" and table in EXACT:
        # a column a trigger names (revision 0010's checks of measured values) cannot
        # change its type: the table's triggers are made again afterwards, as they were
        found = bind.execute(
            sa.text(
                "SELECT tgname, pg_get_triggerdef(oid) FROM pg_trigger "
                "WHERE tgrelid = CAST(:table AS regclass) AND NOT tgisinternal ORDER BY tgname"
            ),
            {"table": table},
        ).all()
        for name, sql in found:
            op.execute(f'DROP TRIGGER "{name}" ON {table}')
            kept.append(sql)
    if bind.dialect.name == "sqlite":
        found = bind.execute(
            sa.text(
                "SELECT type, name, sql FROM sqlite_master WHERE tbl_name = :table "
                "AND type IN ('trigger', 'index') AND sql IS NOT NULL ORDER BY type, name"
            ),
            {"table": table},
        ).all()
        for kind, name, sql in found:
            op.execute(f"DROP {kind.upper()} {name}")
            kept.append(sql)
    with op.batch_alter_table(table, recreate="auto") as batch_op:
        yield batch_op
    for sql in kept:
        op.execute(sql)
